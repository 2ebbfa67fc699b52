//! The gravity field seen by the dynamics: the polyhedron or an exact point mass.

use nalgebra::{Point3, Vector3};
use spinfall_gravity::{FieldSample, InterpolatedGravity, PolyhedronGravity};

/// A gravity field in the body frame.
///
/// The potential is in the positive convention of geodesy: `U > 0`, `U -> GM/r` far away, and the
/// acceleration is `grad U`.
pub trait GravityModel: Send + Sync {
    /// Potential `U` (m^2/s^2, positive) and acceleration (m/s^2) at `p_body_m`.
    fn potential_acceleration(&self, p_body_m: &Point3<f64>) -> (f64, Vector3<f64>);
    /// Gravitational parameter GM of the whole body, m^3/s^2.
    fn gm_m3_s2(&self) -> f64;
    /// [`GravityModel::potential_acceleration`] for many points at once (`out[k]` for
    /// `points[k]`; the slices have equal lengths). Models with a batch kernel override it; each
    /// entry must equal the single-point value bit for bit, whatever the batch.
    fn potential_acceleration_batch(
        &self,
        points: &[Point3<f64>],
        out: &mut [(f64, Vector3<f64>)],
    ) {
        for (o, p) in out.iter_mut().zip(points) {
            *o = self.potential_acceleration(p);
        }
    }
    /// Potential, acceleration, gradient tensor, Laplacian and inside flag at many points, for
    /// models that give them (`None` otherwise).
    fn evaluate_batch(&self, _points: &[Point3<f64>]) -> Option<Vec<FieldSample>> {
        None
    }
}

impl GravityModel for PolyhedronGravity {
    fn potential_acceleration(&self, p_body_m: &Point3<f64>) -> (f64, Vector3<f64>) {
        PolyhedronGravity::potential_acceleration(self, p_body_m)
    }
    fn gm_m3_s2(&self) -> f64 {
        PolyhedronGravity::gm_m3_s2(self)
    }
    fn potential_acceleration_batch(
        &self,
        points: &[Point3<f64>],
        out: &mut [(f64, Vector3<f64>)],
    ) {
        self.potential_acceleration_batch_into(points, out);
    }
    fn evaluate_batch(&self, points: &[Point3<f64>]) -> Option<Vec<FieldSample>> {
        Some(PolyhedronGravity::evaluate_batch(self, points))
    }
}

impl GravityModel for InterpolatedGravity {
    fn potential_acceleration(&self, p_body_m: &Point3<f64>) -> (f64, Vector3<f64>) {
        InterpolatedGravity::potential_acceleration(self, p_body_m)
    }
    fn gm_m3_s2(&self) -> f64 {
        self.exact().gm_m3_s2()
    }
    fn potential_acceleration_batch(
        &self,
        points: &[Point3<f64>],
        out: &mut [(f64, Vector3<f64>)],
    ) {
        self.potential_acceleration_batch_into(points, out);
    }
    fn evaluate_batch(&self, points: &[Point3<f64>]) -> Option<Vec<FieldSample>> {
        Some(InterpolatedGravity::evaluate_batch(self, points))
    }
}

/// The exact field of a point mass at the origin of the body frame.
///
/// Handy for checks against Kepler's laws and for quick studies far from the body.
/// At the origin itself it returns a zero acceleration and an infinite potential.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointMass {
    /// Gravitational parameter, m^3/s^2.
    pub gm_m3_s2: f64,
}

impl GravityModel for PointMass {
    fn potential_acceleration(&self, p_body_m: &Point3<f64>) -> (f64, Vector3<f64>) {
        let r2 = p_body_m.coords.norm_squared();
        if r2 == 0.0 {
            return (f64::INFINITY, Vector3::zeros());
        }
        let r = r2.sqrt();
        (
            self.gm_m3_s2 / r,
            -p_body_m.coords * (self.gm_m3_s2 / (r2 * r)),
        )
    }
    fn gm_m3_s2(&self) -> f64 {
        self.gm_m3_s2
    }
}
