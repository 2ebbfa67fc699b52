//! `spinfall stats RESULTS.json --out DIR`: landing dispersion statistics recomputed from a
//! results file alone (its embedded scenario reopens the body), for every group or one, with an
//! optional target and radius.

use std::process::ExitCode;

use spinfall_dynamics::statistics::{StatisticsOptions, Target};
use spinfall_workflow::output::{OutputFolder, RunInfo};
use spinfall_workflow::results_file::{open_results_body, read_results};
use spinfall_workflow::run_files::scenario_sha256;
use spinfall_workflow::run_files::{StatisticsOutput, write_statistics_folder};
use spinfall_workflow::statistics::{StatisticsRequest, compute_statistics};

use crate::cli::StatsArgs;
use crate::exit::{CliError, CmdResult, note};

/// `X,Y,Z` in metres.
fn point_m(text: &str) -> CmdResult<[f64; 3]> {
    let bad = || {
        CliError::input(format!(
            "--target-point-m {text:?}: expected three finite numbers X,Y,Z in m"
        ))
    };
    let values: Vec<f64> = text
        .split(',')
        .map(|v| v.trim().parse::<f64>().map_err(|_| bad()))
        .collect::<CmdResult<_>>()?;
    match values.as_slice() {
        [x, y, z] if values.iter().all(|v| v.is_finite()) => Ok([*x, *y, *z]),
        _ => Err(bad()),
    }
}

pub fn run(args: &StatsArgs) -> CmdResult<ExitCode> {
    let target = match (
        args.target_lat_deg,
        args.target_lon_deg,
        &args.target_point_m,
    ) {
        (Some(lat_deg), Some(lon_deg), None) => Some(Target::LatLon { lat_deg, lon_deg }),
        (None, None, Some(p)) => Some(Target::PointM(point_m(p)?)),
        (None, None, None) => None,
        _ => {
            return Err(CliError::input(
                "give the target as --target-lat-deg with --target-lon-deg, or as --target-point-m",
            ));
        }
    };
    let options = StatisticsOptions {
        target,
        radius_m: args.radius_m,
    };
    options
        .validate()
        .map_err(|e| CliError::input(format!("{e}")))?;
    if target.is_some() && args.radius_m.is_none() {
        note("warning: a target without --radius-m is not used");
    }
    let folder = OutputFolder::prepare(&args.out)?;
    let stored = read_results(&args.results)?;
    let run = open_results_body(&stored, args.shape.as_deref())?;
    for w in &run.shape.warnings {
        note(&format!("warning: shape model: {w}"));
    }
    let request = StatisticsRequest {
        group: args.group.clone(),
        options,
    };
    let Some((statistics, density)) =
        compute_statistics(&run.body, run.scenario(), &stored.reports, &request)?
    else {
        return Err(CliError::input(format!(
            "{}: the scenario has no fan or dispersion group to give statistics of",
            args.results.display()
        )));
    };
    let info = RunInfo {
        scenario_sha256: scenario_sha256(run.scenario()),
        kernel: "not used (statistics read the results file)".into(),
        ..RunInfo::default()
    };
    let out = StatisticsOutput {
        body: &run.body,
        statistics: &statistics,
        density: &density,
    };
    write_statistics_folder(&folder, &out, &info)?;
    let too_few = statistics
        .groups
        .iter()
        .filter(|g| g.rest.spread().is_none())
        .count();
    note(&format!(
        "wrote statistics of {} group(s) to {}{}",
        statistics.groups.len(),
        args.out.display(),
        if too_few > 0 {
            format!(" ({too_few} without a rest spread: too few landed members or no mean point)")
        } else {
            String::new()
        }
    ));
    Ok(ExitCode::SUCCESS)
}
