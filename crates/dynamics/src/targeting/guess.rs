//! The starting guess: free flight over a sphere through the launch point and the target, in
//! the field of a point mass with the local effective gravity.
//!
//! The trajectory is a conic about the body's centre of mass. From the orbit equation
//! `1/r(θ) = μ/h² + A cos θ + B sin θ` with `h = r₁ v cos γ` (γ the elevation above the local
//! horizontal) and the launch conditions `r(0) = r₁`, `ṙ(0) = v sin γ`, the radius after a
//! range angle `Ψ` is
//!
//! `1/r₂ = μ (1 − cos Ψ) / (r₁² v² cos² γ) + cos(Ψ + γ) / (r₁ cos γ)`,
//!
//! so the speed that reaches radius `r₂` at range angle `Ψ` with elevation `γ` is
//!
//! `v² = μ r₂ (1 − cos Ψ) / (r₁ cos γ (r₁ cos γ − r₂ cos(Ψ + γ)))`.
//!
//! With `r₁ = r₂` this is the free-flight range equation of Bate, Mueller & White (1971, ch. 6).
//! `μ` is the local effective gravity along the radius (gravity plus the centrifugal term of the
//! spin) times `r₁²`; the Coriolis force and the shape are left to the shooting method.

use std::f64::consts::FRAC_PI_2;

/// The sphere model of one launch: radii, range angle and gravitational parameter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct SphereModel {
    /// Distance of the launch point from the centre of mass, m.
    pub r1_m: f64,
    /// Distance of the target from the centre of mass, m.
    pub r2_m: f64,
    /// Angle between the launch point and the target seen from the centre of mass, rad.
    pub psi_rad: f64,
    /// Effective gravitational parameter, m³/s².
    pub mu_m3_s2: f64,
}

/// Smallest and largest elevation the guesses and the shooting consider, rad.
pub(crate) const MIN_ELEVATION_RAD: f64 = 0.5 * std::f64::consts::PI / 180.0;
/// See [`MIN_ELEVATION_RAD`].
pub(crate) const MAX_ELEVATION_RAD: f64 = FRAC_PI_2 - MIN_ELEVATION_RAD;

impl SphereModel {
    /// The speed that reaches the target at elevation `gamma_rad`, m/s (`None` where no conic
    /// through the launch point at that elevation reaches it).
    pub fn speed_for_elevation(&self, gamma_rad: f64) -> Option<f64> {
        let (r1, r2, psi) = (self.r1_m, self.r2_m, self.psi_rad);
        let c = gamma_rad.cos();
        let denom = r1 * c * (r1 * c - r2 * (psi + gamma_rad).cos());
        let v2 = self.mu_m3_s2 * r2 * (1.0 - psi.cos()) / denom;
        (denom > 0.0 && v2.is_finite() && v2 > 0.0).then(|| v2.sqrt())
    }

    /// The elevation of least speed and that speed (golden-section search on
    /// [`SphereModel::speed_for_elevation`], which has a single minimum).
    pub fn min_speed(&self) -> Option<(f64, f64)> {
        let f = |g: f64| self.speed_for_elevation(g).unwrap_or(f64::INFINITY);
        let (mut a, mut b) = (MIN_ELEVATION_RAD, MAX_ELEVATION_RAD);
        let k = (5f64.sqrt() - 1.0) / 2.0;
        let (mut x1, mut x2) = (b - k * (b - a), a + k * (b - a));
        let (mut f1, mut f2) = (f(x1), f(x2));
        for _ in 0..80 {
            if f1 < f2 {
                b = x2;
                (x2, f2) = (x1, f1);
                x1 = b - k * (b - a);
                f1 = f(x1);
            } else {
                a = x1;
                (x1, f1) = (x2, f2);
                x2 = a + k * (b - a);
                f2 = f(x2);
            }
        }
        let g = 0.5 * (a + b);
        self.speed_for_elevation(g).map(|v| (g, v))
    }

    /// The elevation on the low (`high == false`) or high arc that reaches the target with
    /// `speed_m_s` (`None` when the speed is below the least speed).
    pub fn elevation_for_speed(&self, speed_m_s: f64, high: bool) -> Option<f64> {
        let (g_min, v_min) = self.min_speed()?;
        if speed_m_s < v_min {
            return None;
        }
        // The speed falls from the low end to g_min and rises again to the high end.
        let (mut lo, mut hi) = if high {
            (g_min, MAX_ELEVATION_RAD)
        } else {
            (MIN_ELEVATION_RAD, g_min)
        };
        let above = |g: f64| self.speed_for_elevation(g).is_none_or(|v| v > speed_m_s);
        for _ in 0..80 {
            let mid = 0.5 * (lo + hi);
            let mid_above = above(mid);
            if high == mid_above {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        Some(0.5 * (lo + hi))
    }

    /// Time of flight on the conic of `speed_m_s` at `gamma_rad` to the range angle, s (Kepler's
    /// equation; `None` for an open orbit).
    pub fn flight_time_s(&self, speed_m_s: f64, gamma_rad: f64) -> Option<f64> {
        let (r1, mu) = (self.r1_m, self.mu_m3_s2);
        let energy = 0.5 * speed_m_s * speed_m_s - mu / r1;
        if energy >= 0.0 {
            return None;
        }
        let a = -mu / (2.0 * energy);
        let h = r1 * speed_m_s * gamma_rad.cos();
        let p = h * h / mu;
        let e = (1.0 - p / a).max(0.0).sqrt();
        if e < 1e-9 {
            return Some(self.psi_rad * (a * a * a / mu).sqrt());
        }
        let cos_nu1 = ((p / r1 - 1.0) / e).clamp(-1.0, 1.0);
        let nu1 = if gamma_rad >= 0.0 {
            cos_nu1.acos()
        } else {
            -cos_nu1.acos()
        };
        let nu2 = nu1 + self.psi_rad;
        let anomaly = |nu: f64| {
            let big_e = 2.0
                * ((1.0 - e).sqrt() * (0.5 * nu).sin()).atan2((1.0 + e).sqrt() * (0.5 * nu).cos());
            big_e - e * big_e.sin()
        };
        let t = (a * a * a / mu).sqrt() * (anomaly(nu2) - anomaly(nu1));
        (t.is_finite() && t > 0.0).then_some(t)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn symmetric_case_is_the_range_equation_of_bate_mueller_white() {
        // Bate, Mueller & White (1971) ch. 6: cos(Ψ/2) = (1 − Q cos²γ) / sqrt(1 + Q(Q − 2) cos²γ)
        // with Q = v² r / μ, for launch and impact at the same radius.
        let m = SphereModel {
            r1_m: 1000.0,
            r2_m: 1000.0,
            psi_rad: 0.7,
            mu_m3_s2: 5.0,
        };
        for gamma_deg in [10.0_f64, 30.0, 45.0, 70.0] {
            let g = gamma_deg.to_radians();
            let v = m.speed_for_elevation(g).unwrap_or(f64::NAN);
            let q = v * v * m.r1_m / m.mu_m3_s2;
            let c2 = g.cos().powi(2);
            let cos_half = (1.0 - q * c2) / (1.0 + q * (q - 2.0) * c2).sqrt();
            assert!(
                (cos_half - (0.5 * m.psi_rad).cos()).abs() < 1e-12,
                "{gamma_deg}"
            );
        }
        // Minimum energy (same source): γ = (π − Ψ)/4 and Q = 2 sin(Ψ/2) / (1 + sin(Ψ/2)).
        let (g, v) = m.min_speed().unwrap_or((f64::NAN, f64::NAN));
        assert!((g - (std::f64::consts::PI - m.psi_rad) / 4.0).abs() < 1e-6);
        let s = (0.5 * m.psi_rad).sin();
        let q = v * v * m.r1_m / m.mu_m3_s2;
        assert!((q - 2.0 * s / (1.0 + s)).abs() < 1e-10);
        let low = m.elevation_for_speed(1.1 * v, false).unwrap_or(f64::NAN);
        let high = m.elevation_for_speed(1.1 * v, true).unwrap_or(f64::NAN);
        assert!(low < g && g < high);
        for e in [low, high] {
            let ve = m.speed_for_elevation(e).unwrap_or(f64::NAN);
            assert!((ve / (1.1 * v) - 1.0).abs() < 1e-9);
        }
        assert!(m.elevation_for_speed(0.9 * v, false).is_none());
    }
}
