//! Shared builders for the integration tests.
#![allow(dead_code)]

use std::sync::Arc;

use nalgebra::{Point3, Vector3};
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
