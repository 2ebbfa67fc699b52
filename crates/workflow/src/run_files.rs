//! The files of a run's output folder (`spinfall fly --out DIR`), written as one set.

use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

use sha2::{Digest, Sha256};
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::Scenario;

use crate::error::Result;
use crate::export::{
    write_landing_density_csv, write_results_csv, write_results_json_embedding,
    write_statistics_json, write_trajectories_csv,
};
use crate::gravity_method::FieldUsed;
use crate::output::{OutputFolder, RUN_MANIFEST, RunInfo, SetFile, ShardRecord};
use crate::prepare::PreparedRun;
use crate::results_file::EmbeddedScenario;
use crate::statistics::{LandingDensity, RunStatistics};

/// Names of the files of a run folder (besides the manifest).
pub const RUN_FILES: [&str; 3] = ["results.json", "results.csv", "trajectories.csv"];

/// Names of the statistics files, written beside the results when the run has a fan or a
/// dispersion group (and by `spinfall stats`).
pub const STATISTICS_FILES: [&str; 2] = ["statistics.json", "landing_density.csv"];

/// Manifest of a folder written by `spinfall stats`.
pub const STATISTICS_MANIFEST: &str = "spinfall-statistics-manifest.json";

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
        embedded: scenario.map(|s| EmbeddedScenario {
            scenario: s.clone(),
            scenario_dir: None,
            shape_check: None,
        }),
        shard: None,
        merged_from: None,
    }
}

/// [`run_info`] of a prepared run, with the scenario embedded in full (its folder and the
/// shape check; see [`crate::results_file`]), and a shard's record for a shard.
pub fn run_info_of(run: &PreparedRun) -> RunInfo {
    RunInfo {
        embedded: Some(EmbeddedScenario::of_run(run)),
        shard: run.shard.map(|plan| ShardRecord {
            index: plan.shard.index(),
            count: plan.shard.count(),
            launch_count: plan.launch_count as u64,
            field_method: run.field.describe_method(),
            launch_ids: run.launches.iter().map(|l| l.id.clone()).collect(),
        }),
        ..run_info(Some(run.scenario()), &run.field)
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
            move |w| {
                write_results_json_embedding(
                    w,
                    reports,
                    info.field.as_ref(),
                    info.embedded.as_ref(),
                )
            },
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

/// The statistics of a run with the body they were computed on, for writing.
#[derive(Debug, Clone)]
pub struct StatisticsOutput<'a> {
    /// The body (faces, areas, latitude and longitude).
    pub body: &'a spinfall_dynamics::Body,
    /// statistics.json.
    pub statistics: &'a RunStatistics,
    /// landing_density.csv.
    pub density: &'a LandingDensity,
}

/// statistics.json and landing_density.csv, named with `prefix`.
pub fn statistics_files<'a>(out: &StatisticsOutput<'a>, prefix: &str) -> Vec<SetFile<'a>> {
    let (stats, body, density) = (out.statistics, out.body, out.density);
    vec![
        SetFile::new(format!("{prefix}{}", STATISTICS_FILES[0]), move |w| {
            write_statistics_json(w, stats)
        }),
        SetFile::new(format!("{prefix}{}", STATISTICS_FILES[1]), move |w| {
            write_landing_density_csv(w, body, density)
        }),
    ]
}

/// The files of a run folder, in the manifest's order: results.json, results.csv,
/// trajectories.csv (from the reports' trajectories, or `trajectories` when given: a merge
/// streams them), then the statistics files when there are statistics. `spinfall fly` and
/// `spinfall merge` both write this set.
pub fn run_set_files<'a>(
    reports: &'a [FlightReport],
    info: &'a RunInfo,
    trajectories: Option<SetFile<'a>>,
    statistics: Option<&StatisticsOutput<'a>>,
) -> Vec<SetFile<'a>> {
    let mut files = match trajectories {
        None => result_files(reports, info, "", ResultSelection::ALL),
        Some(streamed) => {
            let mut files = result_files(
                reports,
                info,
                "",
                ResultSelection {
                    results: true,
                    trajectories: false,
                },
            );
            files.push(streamed);
            files
        }
    };
    if let Some(out) = statistics {
        files.extend(statistics_files(out, ""));
    }
    files
}

/// As [`write_run_folder`], with the statistics files when there are statistics.
pub fn write_run_folder_with_statistics(
    folder: &OutputFolder,
    reports: &[FlightReport],
    info: &RunInfo,
    statistics: Option<&StatisticsOutput<'_>>,
) -> Result<Vec<PathBuf>> {
    let files = run_set_files(reports, info, None, statistics);
    folder.write_set(RUN_MANIFEST, files, info, &AtomicBool::new(false))
}

/// Writes the statistics files of `spinfall stats` with their own manifest.
pub fn write_statistics_folder(
    folder: &OutputFolder,
    out: &StatisticsOutput<'_>,
    info: &RunInfo,
) -> Result<Vec<PathBuf>> {
    folder.write_set(
        STATISTICS_MANIFEST,
        statistics_files(out, ""),
        info,
        &AtomicBool::new(false),
    )
}
