//! Per-launch results: the JSON document (everything but the trajectories) and the CSV table
//! (the app's results table, one row per launch).

use std::io::Write;

use serde::Serialize;
use spinfall_dynamics::targeting::TargetingReport;
use spinfall_dynamics::{Contact, FlightReport, LandingPoint, Outcome, ShadowEvent};

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
    jacobi_rel_drift: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    jacobi_rel_drift_note: Option<&'static str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    energy_added_m2_s2: Option<f64>,
    #[serde(skip_serializing_if = "<[ShadowEvent]>::is_empty")]
    shadow_events: &'a [ShadowEvent],
    frame_agreement_m: f64,
    gravity_evaluations: u64,
    steps: u64,
    rejected_steps: u64,
    final_pos_body_m: [f64; 3],
    final_vel_body_m_s: [f64; 3],
    final_pos_inertial_m: [f64; 3],
    final_vel_inertial_m_s: [f64; 3],
    #[serde(skip_serializing_if = "Option::is_none")]
    targeting: Option<&'a TargetingReport>,
}

#[derive(Serialize)]
struct ResultsFile<'a> {
    format: &'static str,
    version: u32,
    note: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    field: Option<&'a FieldUsed>,
    #[serde(skip_serializing_if = "Option::is_none")]
    scenario: Option<&'a spinfall_dynamics::scenario::Scenario>,
    #[serde(skip_serializing_if = "Option::is_none")]
    scenario_dir: Option<&'a std::path::Path>,
    #[serde(skip_serializing_if = "Option::is_none")]
    shape_check: Option<&'a crate::results_file::ShapeCheck>,
    launches: Vec<ResultRecord<'a>>,
}

/// Why a launch has no Jacobi drift, in results.json.
const NOT_APPLICABLE: &str = "not applicable: the Sun's radiation pressure and tide change the \
     Jacobi integral (see energy_added_m2_s2)";

/// Writes one JSON record per launch (SI units, keys named with units; trajectories left out,
/// see [`super::write_trajectories_csv`]), after how the gravity was computed (`field`).
///
/// A launch of a targeted entry has `targeting`: the solution or why the target is unreachable
/// ([`TargetingReport`]).
///
/// With the Sun's forces a record has `jacobi_rel_drift: null` with a `jacobi_rel_drift_note`
/// saying why, `energy_added_m2_s2` and, with shadow, `shadow_events`.
pub fn write_results_json(
    w: &mut dyn Write,
    reports: &[FlightReport],
    field: Option<&FieldUsed>,
) -> Result<()> {
    write_results_json_embedding(w, reports, field, None)
}

/// As [`write_results_json`], with the scenario the run flew embedded after `field`
/// (`scenario`, `scenario_dir`: the absolute folder its relative shape path meant, and
/// `shape_check`: the model's face count and volume), so that the file describes itself (see
/// [`crate::results_file`]).
pub fn write_results_json_embedding(
    w: &mut dyn Write,
    reports: &[FlightReport],
    field: Option<&FieldUsed>,
    embedded: Option<&crate::results_file::EmbeddedScenario>,
) -> Result<()> {
    let file = ResultsFile {
        format: "spinfall-results",
        version: 1,
        note: crate::CAUTION,
        field,
        scenario: embedded.map(|e| &e.scenario),
        scenario_dir: embedded.and_then(|e| e.scenario_dir.as_deref()),
        shape_check: embedded.and_then(|e| e.shape_check.as_ref()),
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
                jacobi_rel_drift_note: r.jacobi_rel_drift.is_none().then_some(NOT_APPLICABLE),
                energy_added_m2_s2: r.energy_added_m2_s2,
                shadow_events: &r.shadow_events,
                frame_agreement_m: r.frame_agreement_m,
                gravity_evaluations: r.gravity_evaluations,
                steps: r.steps,
                rejected_steps: r.rejected_steps,
                final_pos_body_m: r.final_pos_body_m,
                final_vel_body_m_s: r.final_vel_body_m_s,
                final_pos_inertial_m: r.final_pos_inertial_m,
                final_vel_inertial_m_s: r.final_vel_inertial_m_s,
                targeting: r.targeting.as_deref(),
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
/// launch does not have. `jacobi_rel_drift` reads `n/a` for a launch under the Sun's forces;
/// when any launch has them, two columns follow: `energy_added_m2_s2` and `shadow_events`
/// (the number of entries into and exits from the shadow).
pub fn write_results_csv(w: &mut dyn Write, reports: &[FlightReport]) -> Result<()> {
    let mut csv = csv_writer(w);
    let sun = reports.iter().any(|r| r.energy_added_m2_s2.is_some());
    let targeted = reports.iter().any(|r| r.targeting.is_some());
    let mut header = RESULTS_HEADER.to_vec();
    if sun {
        header.extend(["energy_added_m2_s2", "shadow_events"]);
    }
    if targeted {
        header.extend(TARGETING_HEADER);
    }
    csv.write_record(&header).map_err(csv_error)?;
    for r in reports {
        let drift = match r.jacobi_rel_drift {
            Some(d) => csv_number(d),
            None => "n/a".to_string(),
        };
        let first = r.contacts.first();
        let row = (
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
            drift,
            r.frame_agreement_m,
        );
        let mut record: Vec<String> = Vec::with_capacity(header.len());
        record.extend(csv_fields(&row)?);
        if sun {
            record.extend(csv_fields(&(r.energy_added_m2_s2, r.shadow_events.len()))?);
        }
        if targeted {
            record.extend(targeting_fields(r)?);
        }
        csv.write_record(&record).map_err(csv_error)?;
    }
    csv.flush().map_err(crate::output::io_error)?;
    Ok(())
}

/// Columns of results.csv for runs with targeted launches (empty on other launches): the
/// solution's status, launch speed, azimuth and elevation, and miss distance.
const TARGETING_HEADER: [&str; 5] = [
    "target_status",
    "target_speed_m_s",
    "target_azimuth_deg",
    "target_elevation_deg",
    "target_miss_m",
];

/// The targeting columns of one launch.
fn targeting_fields(r: &FlightReport) -> Result<Vec<String>> {
    let Some(t) = &r.targeting else {
        return Ok(vec![String::new(); TARGETING_HEADER.len()]);
    };
    let status = match t.status {
        spinfall_dynamics::targeting::TargetingStatus::Solved => "solved",
        spinfall_dynamics::targeting::TargetingStatus::Unreachable => "unreachable",
    };
    let v = t.launch.as_ref();
    let mut out = vec![status.to_string()];
    out.extend(csv_fields(&(
        v.map(|v| v.speed_m_s),
        v.map(|v| v.azimuth_deg),
        v.map(|v| v.elevation_deg),
        t.miss_m,
    ))?);
    Ok(out)
}

/// The fields of one serialisable record as the CSV writer writes them.
fn csv_fields<T: Serialize>(record: &T) -> Result<Vec<String>> {
    let mut w = csv::WriterBuilder::new()
        .has_headers(false)
        .from_writer(Vec::new());
    w.serialize(record).map_err(csv_error)?;
    let bytes = w
        .into_inner()
        .map_err(|e| crate::output::io_error(e.into_error()))?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(bytes.as_slice());
    let mut fields = csv::StringRecord::new();
    if !reader.read_record(&mut fields).map_err(csv_error)? {
        return Ok(Vec::new());
    }
    Ok(fields.iter().map(str::to_string).collect())
}

/// A number as the CSV writer writes it (shortest form that reads back exactly).
fn csv_number(v: f64) -> String {
    csv_fields(&v)
        .ok()
        .and_then(|f| f.into_iter().next())
        .unwrap_or_else(|| v.to_string())
}
