//! Trajectory samples of every launch in both frames, as CSV.

use std::io::Write;

use spinfall_dynamics::FlightReport;

use super::{csv_error, csv_writer};
use crate::error::Result;

/// Writes every trajectory sample of every report, body frame then inertial frame, with the
/// header `launch_id,frame,t_s,x_m,y_m,z_m,vx_m_s,vy_m_s,vz_m_s` (frame = `body` | `inertial`).
pub fn write_trajectories_csv(w: &mut dyn Write, reports: &[FlightReport]) -> Result<()> {
    let mut csv = csv_writer(w);
    csv.write_record([
        "launch_id",
        "frame",
        "t_s",
        "x_m",
        "y_m",
        "z_m",
        "vx_m_s",
        "vy_m_s",
        "vz_m_s",
    ])
    .map_err(csv_error)?;
    for r in reports {
        for (frame, samples) in [
            ("body", &r.trajectory_body),
            ("inertial", &r.trajectory_inertial),
        ] {
            for s in samples {
                csv.serialize((
                    &r.id,
                    frame,
                    s.t_s,
                    s.pos_m[0],
                    s.pos_m[1],
                    s.pos_m[2],
                    s.vel_m_s[0],
                    s.vel_m_s[1],
                    s.vel_m_s[2],
                ))
                .map_err(csv_error)?;
            }
        }
    }
    csv.flush().map_err(crate::output::io_error)?;
    Ok(())
}
