//! Exporters of flight results and surface maps (JSON and CSV) to any `Write`.

use std::io::Write;

use serde::Serialize;

use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::flight::{Contact, FlightReport, LandingPoint, Outcome};
use crate::site::lat_lon_deg;
use crate::surface_map::{SurfaceField, SurfaceMap};

/// One launch in the results file: the report without its trajectories.
#[derive(Serialize)]
struct ResultRecord<'a> {
    id: &'a str,
    outcome: &'a Outcome,
    launch_pos_body_m: [f64; 3],
    launch_vel_body_m_s: [f64; 3],
    first_contact_time_s: Option<f64>,
    rest_time_s: Option<f64>,
    end_time_s: f64,
    landing: &'a Option<LandingPoint>,
    downrange_m: Option<f64>,
    max_altitude_m: f64,
    contacts: &'a [Contact],
    jacobi_rel_drift: f64,
    frame_agreement_m: f64,
    gravity_evaluations: u64,
    steps: u64,
    rejected_steps: u64,
    final_pos_body_m: [f64; 3],
    final_vel_body_m_s: [f64; 3],
}

#[derive(Serialize)]
struct ResultsFile<'a> {
    format: &'static str,
    version: u32,
    note: &'static str,
    launches: Vec<ResultRecord<'a>>,
}

/// Writes one JSON record per launch (SI units, keys named with units; trajectories left out,
/// see [`write_trajectories_csv`]).
pub fn write_results_json(mut w: impl Write, reports: &[FlightReport]) -> Result<()> {
    let file = ResultsFile {
        format: "spinfall-results",
        version: 1,
        note: "Spinfall is for research and planning, not flight-certified.",
        launches: reports
            .iter()
            .map(|r| ResultRecord {
                id: &r.id,
                outcome: &r.outcome,
                launch_pos_body_m: r.launch_pos_body_m,
                launch_vel_body_m_s: r.launch_vel_body_m_s,
                first_contact_time_s: r.first_contact_time_s,
                rest_time_s: r.rest_time_s,
                end_time_s: r.end_time_s,
                landing: &r.landing,
                downrange_m: r.downrange_m,
                max_altitude_m: r.max_altitude_m,
                contacts: &r.contacts,
                jacobi_rel_drift: r.jacobi_rel_drift,
                frame_agreement_m: r.frame_agreement_m,
                gravity_evaluations: r.gravity_evaluations,
                steps: r.steps,
                rejected_steps: r.rejected_steps,
                final_pos_body_m: r.final_pos_body_m,
                final_vel_body_m_s: r.final_vel_body_m_s,
            })
            .collect(),
    };
    serde_json::to_writer_pretty(&mut w, &file)?;
    w.write_all(b"\n")?;
    Ok(())
}

/// Quotes a CSV field when needed (RFC 4180).
fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Writes every trajectory sample of every report, body frame then inertial frame, with the
/// header `launch_id,frame,t_s,x_m,y_m,z_m,vx_m_s,vy_m_s,vz_m_s` (frame = `body` | `inertial`).
pub fn write_trajectories_csv(mut w: impl Write, reports: &[FlightReport]) -> Result<()> {
    writeln!(w, "launch_id,frame,t_s,x_m,y_m,z_m,vx_m_s,vy_m_s,vz_m_s")?;
    for r in reports {
        let id = csv_field(&r.id);
        for (frame, samples) in [
            ("body", &r.trajectory_body),
            ("inertial", &r.trajectory_inertial),
        ] {
            for s in samples {
                writeln!(
                    w,
                    "{id},{frame},{},{},{},{},{},{},{}",
                    s.t_s,
                    s.pos_m[0],
                    s.pos_m[1],
                    s.pos_m[2],
                    s.vel_m_s[0],
                    s.vel_m_s[1],
                    s.vel_m_s[2]
                )?;
            }
        }
    }
    Ok(())
}

/// Writes one row per face of `body`'s shape: index, centroid, planetocentric lat/lon (about the
/// spin axis, which is why it takes the body rather than only the shape), the effective
/// acceleration vector and every map quantity, with units in the header.
pub fn write_surface_map_csv(mut w: impl Write, body: &Body, map: &SurfaceMap) -> Result<()> {
    let shape = body.shape.as_ref();
    if map.len() != shape.face_count() {
        return Err(DynamicsError::param(
            "surface map",
            format!(
                "has {} faces but the shape has {}",
                map.len(),
                shape.face_count()
            ),
        ));
    }
    write!(
        w,
        "face,centroid_x_m,centroid_y_m,centroid_z_m,lat_deg,lon_deg,eff_acc_x_m_s2,eff_acc_y_m_s2,eff_acc_z_m_s2"
    )?;
    for f in SurfaceField::ALL {
        write!(w, ",{}", f.column())?;
    }
    writeln!(w)?;
    for face in 0..shape.face_count() {
        let c = shape.face_centroid(face);
        let (lat, lon) = lat_lon_deg(body, &c);
        let a = map.effective_acceleration_m_s2[face];
        write!(
            w,
            "{face},{},{},{},{lat},{lon},{},{},{}",
            c.x, c.y, c.z, a[0], a[1], a[2]
        )?;
        for f in SurfaceField::ALL {
            write!(w, ",{}", map.values(f)[face])?;
        }
        writeln!(w)?;
    }
    Ok(())
}
