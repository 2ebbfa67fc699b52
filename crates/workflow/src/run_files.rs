//! The files of a run's output folder (`spinfall fly --out DIR`), written as one set.

use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use sha2::{Digest, Sha256};
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::Scenario;

use crate::error::Result;
use crate::export::{write_results_csv, write_results_json, write_trajectories_csv};
use crate::gravity_method::FieldUsed;
use crate::output::{OutputFolder, RUN_MANIFEST, RunInfo, SetFile};

/// Names of the files of a run folder (besides the manifest).
pub const RUN_FILES: [&str; 3] = ["results.json", "results.csv", "trajectories.csv"];

/// SHA-256 of a scenario's canonical JSON, lowercase hex.
pub fn scenario_sha256(scenario: &Scenario) -> Option<String> {
    let text = scenario.to_json_string_pretty().ok()?;
    Some(crate::output::manifest_hex(&Sha256::digest(
        text.as_bytes(),
    )))
}

/// What a run's manifest (and results.json) say about it: the scenario's digest and how its
/// gravity was computed.
pub fn run_info(scenario: Option<&Scenario>, field: &FieldUsed) -> RunInfo {
    RunInfo {
        scenario_sha256: scenario.and_then(scenario_sha256),
        kernel: field.describe(),
        field: Some(field.clone()),
    }
}

/// Which result files to write.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ResultSelection {
    /// results.json and results.csv (one record per launch).
    pub results: bool,
    /// trajectories.csv (every sample in both frames).
    pub trajectories: bool,
}

impl ResultSelection {
    /// Every result file.
    pub const ALL: ResultSelection = ResultSelection {
        results: true,
        trajectories: true,
    };
}

/// The result files of `reports` named with `prefix` (empty for a run folder, `stem_` for an
/// export).
pub fn result_files<'a>(
    reports: &'a [FlightReport],
    info: &'a RunInfo,
    prefix: &str,
    selection: ResultSelection,
) -> Vec<SetFile<'a>> {
    let mut files = Vec::new();
    if selection.results {
        files.push(SetFile::new(
            format!("{prefix}{}", RUN_FILES[0]),
            move |w| write_results_json(w, reports, info.field.as_ref()),
        ));
        files.push(SetFile::new(
            format!("{prefix}{}", RUN_FILES[1]),
            move |w| write_results_csv(w, reports),
        ));
    }
    if selection.trajectories {
        files.push(SetFile::new(
            format!("{prefix}{}", RUN_FILES[2]),
            move |w| write_trajectories_csv(w, reports),
        ));
    }
    files
}

/// Writes a run folder: results.json, results.csv, trajectories.csv and the manifest.
pub fn write_run_folder(
    folder: &OutputFolder,
    reports: &[FlightReport],
    info: &RunInfo,
) -> Result<Vec<PathBuf>> {
    folder.write_set(
        RUN_MANIFEST,
        result_files(reports, info, "", ResultSelection::ALL),
        info,
        &AtomicBool::new(false),
    )
}
