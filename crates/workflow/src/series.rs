//! Time series of one flight for plots: altitude above the surface, speed relative to the
//! surface and in the inertial frame, and the drift of the Jacobi constant.
//!
//! The speeds come straight from the report's samples in each frame; the altitude (a ray cast
//! toward the body's centre) and the Jacobi constant (which needs the potential) are derived
//! here, on the caller's thread (a worker in the app).

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::{Body, FlightReport};

/// Time series of one launch.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FlightSeries {
    /// `[t_s, altitude_m]`: height above the surface along the radial line.
    pub altitude_m: Vec<[f64; 2]>,
    /// `[t_s, speed relative to the surface m/s]` (body-frame samples).
    pub speed_body_m_s: Vec<[f64; 2]>,
    /// `[t_s, inertial speed m/s]` (inertial-frame samples).
    pub speed_inertial_m_s: Vec<[f64; 2]>,
    /// `[t_s, (C - C0)/|C0|]` of the Jacobi constant in the body frame.
    pub jacobi_rel: Vec<[f64; 2]>,
}

/// Every `k`-th sample and the last, so at most about `max` remain.
fn thinned<T>(samples: &[T], max: usize) -> impl Iterator<Item = &T> {
    let step = samples.len().div_ceil(max.max(1)).max(1);
    let last = samples.len().checked_sub(1);
    samples
        .iter()
        .enumerate()
        .filter(move |(i, _)| i % step == 0 || Some(*i) == last)
        .map(|(_, s)| s)
}

/// The series of `report` on `body`, at most about `max_samples` points each.
///
/// The Jacobi constant is `C = v²/2 − |ω × r|²/2 − U` (body frame, `U > 0`), conserved by the
/// equations of motion in a uniformly rotating frame between contacts.
pub fn flight_series(body: &Body, report: &FlightReport, max_samples: usize) -> FlightSeries {
    let omega = body.omega_body_rad_s();
    let far = body.brillouin_radius_m() * 3.0 + 1.0;
    let mut out = FlightSeries::default();
    let mut c0 = None;
    for s in thinned(&report.trajectory_body, max_samples) {
        let p = Point3::from(s.pos_m);
        let v = Vector3::from(s.vel_m_s);
        let r = p.coords.norm();
        if r > 0.0 {
            let dir = p.coords / r;
            let origin = Point3::from(dir * far);
            if let Some(hit) = body.shape.ray_first_hit(&origin, &(-dir), far) {
                out.altitude_m.push([s.t_s, r - (far - hit.t)]);
            }
        }
        out.speed_body_m_s.push([s.t_s, v.norm()]);
        let (u, _) = body.gravity.potential_acceleration(&p);
        let c = 0.5 * v.norm_squared() - 0.5 * omega.cross(&p.coords).norm_squared() - u;
        let c0v = *c0.get_or_insert(c);
        if c0v != 0.0 {
            out.jacobi_rel.push([s.t_s, (c - c0v) / c0v.abs()]);
        }
    }
    for s in thinned(&report.trajectory_inertial, max_samples) {
        out.speed_inertial_m_s
            .push([s.t_s, Vector3::from(s.vel_m_s).norm()]);
    }
    out
}

/// The series of the launches `launches` of `reports`, for the plot figures of
/// `spinfall_scene::plots` (the same numbers as the app's plots).
pub fn plot_series(
    body: &Body,
    reports: &[FlightReport],
    launches: &[usize],
    max_samples: usize,
) -> Vec<spinfall_scene::plots::PlotSeries> {
    use rayon::prelude::*;
    launches
        .par_iter()
        .filter(|&&i| i < reports.len())
        .map(|&i| {
            let s = flight_series(body, &reports[i], max_samples);
            spinfall_scene::plots::PlotSeries {
                launch: i,
                altitude_m: s.altitude_m,
                speed_body_m_s: s.speed_body_m_s,
                speed_inertial_m_s: s.speed_inertial_m_s,
                jacobi_rel: s.jacobi_rel,
            }
        })
        .collect()
}
