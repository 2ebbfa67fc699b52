//! Trajectory helpers: interpolation at a time, cutting a trace at a time, frame changes.
//!
//! Everything that reads a [`spinfall_dynamics::FlightReport`]'s samples goes through here, so a change in the
//! dynamics crate's report layout touches one file.

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::{Body, TrajectorySample};

/// Position of a sample, metres.
pub(crate) fn pos(s: &TrajectorySample) -> Point3<f64> {
    Point3::from(s.pos_m)
}

/// A point as an array.
pub(crate) fn arr(p: Point3<f64>) -> [f64; 3] {
    [p.x, p.y, p.z]
}

/// Velocity of a sample, m/s.
pub(crate) fn vel(s: &TrajectorySample) -> Vector3<f64> {
    Vector3::from(s.vel_m_s)
}

/// Position at `t_s` by cubic Hermite interpolation between the bracketing samples (positions
/// and velocities are both stored, so the curve is C1). Clamped to the first/last sample.
pub fn position_at(samples: &[TrajectorySample], t_s: f64) -> Option<Point3<f64>> {
    let first = samples.first()?;
    let last = samples.last()?;
    if !t_s.is_finite() || t_s <= first.t_s {
        return Some(pos(first));
    }
    if t_s >= last.t_s {
        return Some(pos(last));
    }
    // First sample with time > t_s; index >= 1 since t_s > first.t_s.
    let i = samples.partition_point(|s| s.t_s <= t_s);
    let (a, b) = (&samples[i - 1], &samples[i]);
    let h = b.t_s - a.t_s;
    if h <= 0.0 {
        return Some(pos(b));
    }
    let s = (t_s - a.t_s) / h;
    let (s2, s3) = (s * s, s * s * s);
    let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
    let h10 = s3 - 2.0 * s2 + s;
    let h01 = -2.0 * s3 + 3.0 * s2;
    let h11 = s3 - s2;
    let p = pos(a).coords * h00 + vel(a) * (h10 * h) + pos(b).coords * h01 + vel(b) * (h11 * h);
    Some(Point3::from(p))
}

/// The points of a trace up to `t_end_s` (with the interpolated end point), or all of it when
/// `t_end_s` is `None`.
pub fn points_until(samples: &[TrajectorySample], t_end_s: Option<f64>) -> Vec<[f64; 3]> {
    let mut out: Vec<[f64; 3]> = Vec::with_capacity(samples.len() + 1);
    match t_end_s {
        None => out.extend(samples.iter().map(|s| arr(pos(s)))),
        Some(t) => {
            for s in samples.iter().take_while(|s| s.t_s <= t) {
                out.push(arr(pos(s)));
            }
            if let (Some(last), Some(p)) = (samples.last(), position_at(samples, t))
                && t > samples[0].t_s
                && t < last.t_s
            {
                out.push(arr(p));
            }
        }
    }
    out
}

/// Which way to move a trace between frames.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FrameChange {
    /// Inertial samples into the body frame (each at its own time).
    InertialToBody,
    /// Body-frame samples into the inertial frame (each at its own time).
    BodyToInertial,
}

/// A trace moved into the other frame, sample by sample at each sample's time.
pub fn change_frame(
    body: &Body,
    samples: &[TrajectorySample],
    change: FrameChange,
) -> Vec<TrajectorySample> {
    samples
        .iter()
        .map(|s| {
            let (p, v) = match change {
                FrameChange::InertialToBody => (
                    body.pos_body_from_inertial(s.t_s, &pos(s)),
                    body.vel_body_from_inertial(s.t_s, &pos(s), &vel(s)),
                ),
                FrameChange::BodyToInertial => (
                    body.pos_inertial_from_body(s.t_s, &pos(s)),
                    body.vel_inertial_from_body(s.t_s, &pos(s), &vel(s)),
                ),
            };
            TrajectorySample {
                t_s: s.t_s,
                pos_m: p.into(),
                vel_m_s: v.into(),
            }
        })
        .collect()
}
