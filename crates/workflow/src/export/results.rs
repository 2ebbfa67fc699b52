//! Per-launch results: the JSON document (everything but the trajectories) and the CSV table
//! (the app's results table, one row per launch).

use std::io::Write;

use serde::Serialize;
use spinfall_dynamics::{Contact, FlightReport, LandingPoint, Outcome};

use super::{csv_error, csv_writer, json_error};
use crate::error::Result;
use crate::gravity_method::FieldUsed;

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
    final_pos_inertial_m: [f64; 3],
    final_vel_inertial_m_s: [f64; 3],
}

#[derive(Serialize)]
struct ResultsFile<'a> {
    format: &'static str,
    version: u32,
    note: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    field: Option<&'a FieldUsed>,
    launches: Vec<ResultRecord<'a>>,
}

/// Writes one JSON record per launch (SI units, keys named with units; trajectories left out,
/// see [`super::write_trajectories_csv`]), after how the gravity was computed (`field`).
pub fn write_results_json(
    w: &mut dyn Write,
    reports: &[FlightReport],
    field: Option<&FieldUsed>,
) -> Result<()> {
    let file = ResultsFile {
        format: "spinfall-results",
        version: 1,
        note: crate::CAUTION,
        field,
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
                final_pos_inertial_m: r.final_pos_inertial_m,
                final_vel_inertial_m_s: r.final_vel_inertial_m_s,
            })
            .collect(),
    };
    serde_json::to_writer_pretty(&mut *w, &file).map_err(json_error)?;
    w.write_all(b"\n").map_err(crate::output::io_error)?;
    Ok(())
}

/// An outcome as short text (`landed`, `escaped`, `still flying`, `failed: why`).
pub fn outcome_text(o: &Outcome) -> String {
    match o {
        Outcome::Landed => "landed".into(),
        Outcome::Escaped => "escaped".into(),
        Outcome::StillFlying => "still flying".into(),
        Outcome::Failed { reason } => format!("failed: {reason}"),
    }
}

/// Header of the results table.
const RESULTS_HEADER: [&str; 13] = [
    "id",
    "outcome",
    "first_contact_time_s",
    "rest_time_s",
    "landing_lat_deg",
    "landing_lon_deg",
    "downrange_m",
    "max_altitude_m",
    "first_impact_speed_m_s",
    "first_impact_angle_deg",
    "contacts",
    "jacobi_rel_drift",
    "frame_agreement_m",
];

/// The results table as CSV: one row per launch, units in the header, empty cells for values a
/// launch does not have.
pub fn write_results_csv(w: &mut dyn Write, reports: &[FlightReport]) -> Result<()> {
    let mut csv = csv_writer(w);
    csv.write_record(RESULTS_HEADER).map_err(csv_error)?;
    for r in reports {
        let first = r.contacts.first();
        csv.serialize((
            &r.id,
            outcome_text(&r.outcome),
            r.first_contact_time_s,
            r.rest_time_s,
            r.landing.as_ref().map(|l| l.lat_deg),
            r.landing.as_ref().map(|l| l.lon_deg),
            r.downrange_m,
            r.max_altitude_m,
            first.map(|c| c.impact_speed_m_s),
            first.map(|c| c.impact_angle_deg),
            r.contacts.len(),
            r.jacobi_rel_drift,
            r.frame_agreement_m,
        ))
        .map_err(csv_error)?;
    }
    csv.flush().map_err(crate::output::io_error)?;
    Ok(())
}
