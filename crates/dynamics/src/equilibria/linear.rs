//! The linearised motion about an equilibrium in the rotating frame and its stability class.
//!
//! Small displacements `dr` obey `dr'' + 2 w x dr' = -H dr` with `H` the Hessian of the
//! geopotential. With the state `(dr, dr')` this is `x' = A x`,
//! `A = [[0, I], [-H, -2 [w]x]]`; the eigenvalues of `A` come in pairs `+-lambda` and in
//! complex-conjugate pairs (the system is Hamiltonian), so the six group into three "modes":
//!
//! - an **oscillatory pair** `+- i b`: a bounded oscillation (a centre);
//! - a **hyperbolic pair** `+- a`: one growing and one decaying direction (a saddle);
//! - a **spiral quadruplet** `+- a +- i b`: growth with rotation (a complex saddle), which
//!   takes two of the three modes.
//!
//! The point is **linearly stable** when every eigenvalue is purely imaginary: `|Re lambda| <=
//! tol * max(w, max |lambda|)`, `tol` the search's `imaginary_tolerance` (1e-6 by default,
//! far above the ~1e-13 of the eigen solver on a matrix scaled by `w`, and far below the growth
//! rates that matter over the days a particle is followed). Linear stability is not proof of
//! stability (the nonlinear terms decide a pure centre); linear instability is.

use nalgebra::{Complex, Matrix3, Matrix6, Schur, Vector3};
use serde::{Deserialize, Serialize};

/// How the three modes of the linearised motion about an equilibrium behave (see the module
/// docs of [`crate::equilibria`]). The counts add up to three, a spiral quadruplet counting
/// twice.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct StabilityClass {
    /// Pairs of purely imaginary eigenvalues: bounded oscillations (centres).
    pub oscillatory_pairs: u8,
    /// Pairs of real eigenvalues `+-a`: exponential departure along a line (saddles).
    pub hyperbolic_pairs: u8,
    /// Quadruplets `+-a +-ib`: departure while circling (complex saddles).
    pub spiral_quadruplets: u8,
    /// The class in words, e.g. "stable: 3 oscillatory pairs" or "unstable: 1 hyperbolic
    /// pair, 2 oscillatory pairs".
    pub summary: String,
}

impl StabilityClass {
    /// The class with these counts, with its summary.
    pub fn new(oscillatory_pairs: u8, hyperbolic_pairs: u8, spiral_quadruplets: u8) -> Self {
        let mut parts = Vec::new();
        let mut part = |n: u8, one: &str, many: &str| {
            if n > 0 {
                parts.push(format!("{n} {}", if n == 1 { one } else { many }));
            }
        };
        part(
            spiral_quadruplets,
            "spiral quadruplet",
            "spiral quadruplets",
        );
        part(hyperbolic_pairs, "hyperbolic pair", "hyperbolic pairs");
        part(oscillatory_pairs, "oscillatory pair", "oscillatory pairs");
        let stable = hyperbolic_pairs == 0 && spiral_quadruplets == 0;
        let summary = format!(
            "{}: {}",
            if stable { "stable" } else { "unstable" },
            parts.join(", ")
        );
        StabilityClass {
            oscillatory_pairs,
            hyperbolic_pairs,
            spiral_quadruplets,
            summary,
        }
    }

    /// Whether every mode is oscillatory (linear stability).
    pub fn is_stable(&self) -> bool {
        self.hyperbolic_pairs == 0 && self.spiral_quadruplets == 0
    }
}

/// Eigenvalues (1/s) of the linearised motion with geopotential Hessian `hess_phi_s2` and
/// angular velocity `w_rad_s`, and their class; `None` if the eigen solver did not converge.
pub(crate) fn linear_modes(
    hess_phi_s2: &Matrix3<f64>,
    w_rad_s: &Vector3<f64>,
    imaginary_tolerance: f64,
) -> Option<([Complex<f64>; 6], StabilityClass)> {
    let w = w_rad_s.norm();
    if !(w.is_finite() && w > 0.0) {
        return None;
    }
    // Time in units of 1/w, so that every entry of A is of order one.
    let h = hess_phi_s2 / (w * w);
    let k = w_rad_s.cross_matrix() * (2.0 / w);
    let mut a = Matrix6::zeros();
    a.fixed_view_mut::<3, 3>(0, 3)
        .copy_from(&Matrix3::identity());
    a.fixed_view_mut::<3, 3>(3, 0).copy_from(&(-h));
    a.fixed_view_mut::<3, 3>(3, 3).copy_from(&(-k));
    if !a.iter().all(|v| v.is_finite()) {
        return None;
    }
    let schur = Schur::try_new(a, f64::EPSILON, 10_000)?;
    let ev = schur.complex_eigenvalues();
    let mut out: [Complex<f64>; 6] = std::array::from_fn(|i| ev[i] * w);
    out.sort_by(|x, y| x.im.total_cmp(&y.im).then_with(|| x.re.total_cmp(&y.re)));
    let scale = ev.iter().map(|z| z.norm()).fold(1.0, f64::max);
    let tol = imaginary_tolerance * scale;
    let (mut hyp, mut spi) = (0u8, 0u8);
    for z in ev.iter() {
        if z.re.abs() <= tol {
            continue;
        }
        if z.im.abs() <= tol {
            hyp += 1;
        } else {
            spi += 1;
        }
    }
    // Eigenvalues come in pairs; round the counts so that the modes add up to three.
    let quads = ((spi + 2) / 4).min(1);
    let pairs = hyp.div_ceil(2).min(3 - 2 * quads);
    let oscillatory = 3 - 2 * quads - pairs;
    Some((out, StabilityClass::new(oscillatory, pairs, quads)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_and_words() {
        let c = StabilityClass::new(2, 1, 0);
        assert!(!c.is_stable());
        assert_eq!(
            c.summary,
            "unstable: 1 hyperbolic pair, 2 oscillatory pairs"
        );
        assert_eq!(
            StabilityClass::new(3, 0, 0).summary,
            "stable: 3 oscillatory pairs"
        );
    }

    #[test]
    fn the_synchronous_circle_of_a_point_mass_is_marginally_stable() {
        // The synchronous circle of a point mass, radial direction x: H = diag(-3, 0, 1) w^2
        // (Hess U = diag(2, -1, -1) w^2 plus the centrifugal diag(1, 1, 0) w^2, negated). The
        // planar characteristic polynomial l^4 + (H_xx + H_yy + 4 w^2) l^2 + H_xx H_yy = l^2
        // (l^2 + w^2): eigenvalues 0, 0, +-i w, and +-i w out of the plane.
        let w = Vector3::new(0.0, 0.0, 1e-4);
        let h = Matrix3::from_diagonal(&Vector3::new(-3.0, 0.0, 1.0)) * 1e-8;
        let (ev, class) = linear_modes(&h, &w, 1e-6).unwrap_or_else(|| panic!("no eigen"));
        assert!(class.is_stable(), "{ev:?} {class:?}");
        for z in ev {
            assert!(z.re.abs() < 1e-6 * w.z, "{ev:?}");
        }
    }
}
