//! Where equilibria can be: bounds from the mass lying inside the Brillouin sphere and between
//! two planes normal to the spin axis.
//!
//! Let `R_B` be the Brillouin radius (every bit of mass within `R_B` of the origin), `r_s` the
//! synchronous radius (`r_s^3 = GM / w^2`), `r = |p|` and `rho` the distance of `p` from the spin
//! axis. At an equilibrium the gravity balances the centrifugal acceleration, `g = -w^2 rho_vec`,
//! so `|g| = w^2 rho` and `-g . p/r = w^2 rho^2 / r`. For `r > R_B` every mass element is at a
//! distance between `r - R_B` and `r + R_B` and on the near side of the plane through `p` normal
//! to `p`, which gives
//!
//! - `|g| <= GM / (r - R_B)^2`, hence `rho <= r_s^3 / (r - R_B)^2`;
//! - `-g . p/r >= GM (r - R_B) / (r + R_B)^3`, hence `rho^2 >= r_s^3 r (r - R_B) / (r + R_B)^3`;
//! - together: `r (r - R_B)^5 <= r_s^3 (r + R_B)^3`, whose left side over the right grows
//!   with `r`: an **outer radius** `r_out` beyond which there is no equilibrium;
//! - with `rho <= r`: `r_s^3 (r - R_B) <= r (r + R_B)^3`, which fails on an interval
//!   `(r_1, r_2)` when the body is small beside `r_s` (an **empty shell**; none when
//!   `R_B` is larger than about `0.3 r_s`).
//!
//! Along the spin axis: above the highest point of the body every mass element pulls toward
//! the equatorial side, so the axial gravity cannot vanish (the centrifugal acceleration has no
//! axial part); the same below the lowest point. Equilibria lie in the **slab** between them.
//! These are proofs, not rules of thumb: a grid over this region misses nothing but what falls
//! between its nodes.

use nalgebra::{Point3, Vector3};
use serde::{Deserialize, Serialize};

/// The region searched, from the bounds in the module docs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SearchRegion {
    /// Brillouin radius about the body-frame origin, m.
    pub brillouin_radius_m: f64,
    /// Synchronous radius `(GM / w^2)^(1/3)`, m.
    pub synchronous_radius_m: f64,
    /// No equilibrium lies farther than this from the origin, m.
    pub outer_radius_m: f64,
    /// A shell `[r_1, r_2]` (m, from the origin) that holds no equilibrium, if there is one.
    pub empty_shell_m: Option<[f64; 2]>,
    /// Extent of the body along the spin axis (lowest, highest), m: equilibria lie between.
    pub axial_range_m: [f64; 2],
}

impl SearchRegion {
    /// The region for a body with Brillouin radius `rb`, synchronous radius `rs` and the
    /// given extent along the spin axis.
    pub(crate) fn new(rb: f64, rs: f64, axial_range_m: [f64; 2]) -> SearchRegion {
        let rs3 = rs.powi(3);
        // Outer radius: the one root of r (r - R_B)^5 = r_s^3 (r + R_B)^3 above R_B.
        let outer = |r: f64| r * (r - rb).powi(5) - rs3 * (r + rb).powi(3);
        let mut hi = rb + rs;
        while outer(hi) < 0.0 {
            hi *= 2.0;
        }
        let outer_radius_m = bisect(outer, rb, hi);
        // Empty shell: where r_s^3 (r - R_B) > r (r + R_B)^3 (a concave function of r, so the
        // set is one interval around its maximum).
        let shell = |r: f64| rs3 * (r - rb) - r * (r + rb).powi(3);
        let peak = golden_max(shell, rb, outer_radius_m.max(rb));
        let empty_shell_m = if shell(peak) > 0.0 {
            // shell < 0 at R_B, > 0 at the peak, < 0 again beyond r_2 (if r_2 were beyond
            // r_out, r_out is kept: the shell claimed is then only smaller).
            let r1 = bisect(shell, rb, peak);
            let r2 = bisect(|r| -shell(r), peak, outer_radius_m.max(peak));
            Some([r1, r2])
        } else {
            None
        };
        SearchRegion {
            brillouin_radius_m: rb,
            synchronous_radius_m: rs,
            outer_radius_m,
            empty_shell_m,
            axial_range_m,
        }
    }

    /// Whether the bounds allow an equilibrium at `p`: `axial` is the unit spin axis.
    pub(crate) fn allows(&self, p: &Point3<f64>, axial: &Vector3<f64>) -> bool {
        let r = p.coords.norm();
        let z = p.coords.dot(axial);
        if !(r.is_finite() && r <= self.outer_radius_m) {
            return false;
        }
        if z <= self.axial_range_m[0] || z >= self.axial_range_m[1] {
            return false;
        }
        let rb = self.brillouin_radius_m;
        if r <= rb {
            return true;
        }
        if let Some([r1, r2]) = self.empty_shell_m
            && r > r1
            && r < r2
        {
            return false;
        }
        let rs3 = self.synchronous_radius_m.powi(3);
        let rho2 = (r * r - z * z).max(0.0);
        rho2.sqrt() <= rs3 / (r - rb).powi(2) && rho2 >= rs3 * r * (r - rb) / (r + rb).powi(3)
    }
}

/// The root of `f` in `[lo, hi]` where `f(lo) <= 0 <= f(hi)`, by bisection to the last bit.
fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if f(mid) <= 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// The maximiser of a unimodal `f` on `[lo, hi]` by golden-section search.
fn golden_max(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    let k = 0.5 * (5f64.sqrt() - 1.0);
    for _ in 0..200 {
        let a = hi - k * (hi - lo);
        let b = lo + k * (hi - lo);
        if f(a) < f(b) {
            lo = a;
        } else {
            hi = b;
        }
        if hi - lo <= 1e-14 * hi.abs() {
            break;
        }
    }
    0.5 * (lo + hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_small_body_has_an_empty_shell_and_an_outer_radius_near_synchronous() {
        let r = SearchRegion::new(100.0, 1000.0, [-100.0, 100.0]);
        assert!(
            r.outer_radius_m > 1000.0 && r.outer_radius_m < 1300.0,
            "{r:?}"
        );
        let [r1, r2] = r.empty_shell_m.unwrap_or([0.0, 0.0]);
        assert!(
            r1 > 100.0 && r1 < 120.0 && r2 > 800.0 && r2 < 1000.0,
            "{r:?}"
        );
        // The synchronous circle itself is allowed, the axis above the body is not.
        let z = Vector3::z();
        assert!(r.allows(&Point3::new(1000.0, 0.0, 0.0), &z));
        assert!(!r.allows(&Point3::new(1000.0, 0.0, 150.0), &z));
        assert!(!r.allows(&Point3::new(500.0, 0.0, 0.0), &z));
    }

    #[test]
    fn a_large_body_has_no_empty_shell() {
        let r = SearchRegion::new(1000.0, 2000.0, [-500.0, 500.0]);
        assert!(r.empty_shell_m.is_none());
        assert!(r.outer_radius_m > 2000.0);
    }
}
