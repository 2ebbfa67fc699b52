//! Shared builders for the integration tests.
#![allow(dead_code)]

use std::sync::Arc;

use nalgebra::{Matrix3, Point3, Vector3};
use spinfall_dynamics::{Body, GravityModel, PointMass, Spin};
use spinfall_gravity::{ShapeModel, generate};

/// A spin so slow that the body is effectively not rotating (period 10^15 s).
pub fn no_spin() -> Spin {
    Spin {
        period_s: 1e15,
        axis_body: Vector3::z_axis(),
        phase_rad: 0.0,
    }
}

/// A spin about +z with `period_s`.
pub fn spin_z(period_s: f64) -> Spin {
    Spin {
        period_s,
        axis_body: Vector3::z_axis(),
        phase_rad: 0.3,
    }
}

pub fn shape(mesh: spinfall_gravity::Mesh) -> Arc<ShapeModel> {
    Arc::new(ShapeModel::new(mesh).unwrap().0)
}

/// Sphere shape (icosphere) of radius `r_m` with an exact point-mass field.
pub fn point_mass_sphere(r_m: f64, subdiv: u32, gm: f64, spin: Spin) -> Body {
    Body::with_gravity(
        "test sphere",
        shape(generate::icosphere(r_m, subdiv)),
        Arc::new(PointMass { gm_m3_s2: gm }),
        spin,
    )
    .unwrap()
}

/// A field that is zero everywhere (GM only nominal), for straight-line tests.
pub struct NoGravity;
impl GravityModel for NoGravity {
    fn potential_acceleration(&self, _p: &Point3<f64>) -> (f64, Vector3<f64>) {
        (0.0, Vector3::zeros())
    }
    fn gm_m3_s2(&self) -> f64 {
        1e-30
    }
}

/// A 2 m cube with no gravity and no spin.
pub fn gravity_free_box() -> Body {
    Body::with_gravity(
        "box",
        shape(generate::box_mesh(2.0, 2.0, 2.0)),
        Arc::new(NoGravity),
        no_spin(),
    )
    .unwrap()
}

// Carlson symmetric elliptic integrals R_F and R_D (Carlson 1995, Numerical Algorithms 10),
// the file the gravity crate's tests check them in.
#[path = "../../../gravity/tests/field_support/carlson.rs"]
mod carlson;
pub use carlson::{carlson_rd, carlson_rf};

/// The homogeneous triaxial ellipsoid `x^2/a^2 + y^2/b^2 + z^2/c^2 <= 1` of gravitational
/// parameter `gm`, with its exact exterior field (MacMillan 1930, "The Theory of the
/// Potential", ch. 2; Chandrasekhar 1969, "Ellipsoidal Figures of Equilibrium", ch. 3):
/// `U = 3/4 GM int_l^inf (1 - sum x_k^2/(a_k^2+s)) ds / D(s)`, `D(s) = sqrt(prod (a_k^2+s))`,
/// `l` the confocal parameter (largest root of `sum x_k^2/(a_k^2+l) = 1`; 0 inside). With
/// Carlson's integrals, `int_l^inf ds/D = 2 R_F(A, B, C)` and
/// `I_x = int_l^inf ds/((a^2+s) D) = 2/3 R_D(B, C, A)` (A = a^2 + l, ...), so
/// `U = 3/4 GM (2 R_F - sum x_k^2 I_k)` and `g_k = -3/2 GM x_k I_k`.
#[derive(Debug, Clone, Copy)]
pub struct ExactEllipsoid {
    pub abc_m: [f64; 3],
    pub gm_m3_s2: f64,
}

impl ExactEllipsoid {
    /// The confocal parameter `l` of `p` (0 inside or on the surface).
    pub fn confocal(&self, p: &Point3<f64>) -> f64 {
        let [a, b, c] = self.abc_m.map(|v| v * v);
        let q = |l: f64| p.x * p.x / (a + l) + p.y * p.y / (b + l) + p.z * p.z / (c + l) - 1.0;
        if q(0.0) <= 0.0 {
            return 0.0;
        }
        let (mut lo, mut hi) = (0.0, p.coords.norm_squared());
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if q(mid) > 0.0 { lo = mid } else { hi = mid }
        }
        0.5 * (lo + hi)
    }

    /// `I_k(l)`, k = 0, 1, 2.
    pub fn i_k(&self, l: f64) -> [f64; 3] {
        let [a, b, c] = self.abc_m.map(|v| v * v + l);
        [
            2.0 / 3.0 * carlson_rd(b, c, a),
            2.0 / 3.0 * carlson_rd(c, a, b),
            2.0 / 3.0 * carlson_rd(a, b, c),
        ]
    }

    /// The Hessian of `U` outside the body, differentiating `g_i = -3/2 GM x_i I_i(l(x))`
    /// (derived here; checked against differences of `g` in the tests):
    /// `U_ij = -3/2 GM [delta_ij I_i - 2 x_i x_j / ((a_i^2+l)(a_j^2+l) D(l) Q)]`, with
    /// `dI_i/dl = -1/((a_i^2+l) D(l))`, `dl/dx_j = 2 x_j / ((a_j^2+l) Q)` and
    /// `Q = sum x_k^2/(a_k^2+l)^2`.
    pub fn hessian(&self, p: &Point3<f64>) -> Matrix3<f64> {
        let l = self.confocal(p);
        let i = self.i_k(l);
        let s = self.abc_m.map(|v| v * v + l);
        let d = (s[0] * s[1] * s[2]).sqrt();
        let q: f64 = (0..3).map(|k| p[k] * p[k] / (s[k] * s[k])).sum();
        Matrix3::from_fn(|r, c| {
            let delta = if r == c { i[r] } else { 0.0 };
            let outer = if l > 0.0 {
                2.0 * p[r] * p[c] / (s[r] * s[c] * d * q)
            } else {
                0.0
            };
            -1.5 * self.gm_m3_s2 * (delta - outer)
        })
    }
}

impl GravityModel for ExactEllipsoid {
    fn potential_acceleration(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        let l = self.confocal(p);
        let [a, b, c] = self.abc_m.map(|v| v * v + l);
        let i = self.i_k(l);
        let u = 0.75
            * self.gm_m3_s2
            * (2.0 * carlson_rf(a, b, c)
                - (p.x * p.x * i[0] + p.y * p.y * i[1] + p.z * p.z * i[2]));
        let g = Vector3::new(p.x * i[0], p.y * i[1], p.z * i[2]) * (-1.5 * self.gm_m3_s2);
        (u, g)
    }
    fn gm_m3_s2(&self) -> f64 {
        self.gm_m3_s2
    }
}
