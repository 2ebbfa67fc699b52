//! `spinfall slurm`: the bash driver script of a sharded run on a Slurm cluster, after the
//! scenario was checked here (so a bad scenario fails now, not on the cluster).

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use spinfall_workflow::output::{OutputTarget, check_file};
use spinfall_workflow::prepare::{PrepareOptions, Purpose, check_scenario};
use spinfall_workflow::scenario_file::{BUILTIN_SCENARIO, ScenarioSource, read_scenario};
use spinfall_workflow::shard::Shard;
use spinfall_workflow::slurm::{SlurmRequest, check_options, driver_script};

use super::{gravity_options, limits, scenario_warnings};
use crate::cli::SlurmArgs;
use crate::exit::{CliError, CmdResult, note};

pub fn run(args: &SlurmArgs) -> CmdResult<ExitCode> {
    let target = match &args.out {
        Some(p) => OutputTarget::from_arg(p),
        None => OutputTarget::Stdout,
    };
    let output = check_file(&target)?;
    let program = std::env::current_exe()
        .and_then(std::fs::canonicalize)
        .map_err(|e| CliError::input(format!("cannot find the spinfall binary's path: {e}")))?;
    let work_dir = absolute(
        args.work_dir
            .as_deref()
            .unwrap_or(Path::new("spinfall-work")),
    )?;
    let mut gravity = gravity_options(&args.field);
    if let Some(dir) = &gravity.cache_dir {
        gravity.cache_dir = Some(absolute(dir)?);
    }
    let mut request = SlurmRequest {
        program,
        scenario: args.scenario.clone(),
        launches: u64::MAX,
        shards: args.shards,
        partition: args.partition.clone(),
        time: args.time.clone(),
        cpus_per_task: args.cpus_per_task,
        work_dir,
        gravity: gravity.clone(),
        method: spinfall_dynamics::scenario::FieldMethodSpec::Direct,
        max_launches: args.limits.max_launches,
    };
    // The options first, then the scenario: read, and checked as a task would prepare it.
    check_options(&request)?;
    let loaded = read_scenario(&ScenarioSource::from_spec(&args.scenario))?;
    scenario_warnings(&loaded.scenario);
    let options = PrepareOptions {
        limits: limits(&args.limits),
        gravity,
        // Shard 0 has the largest share: the limits hold for every shard if they hold for it.
        shard: Some(Shard::new(0, args.shards)?),
        ..PrepareOptions::new(Purpose::Fly)
    };
    let checked = check_scenario(&loaded, &options)?;
    for w in &checked.warnings {
        note(&format!("warning: {w}"));
    }
    request.launches = checked.launches;
    request.method = checked.field.method;
    if args.scenario != BUILTIN_SCENARIO {
        request.scenario = std::fs::canonicalize(&args.scenario)
            .map_err(|e| CliError::input(format!("scenario {}: {e}", args.scenario)))?
            .to_string_lossy()
            .into_owned();
    }
    let script = driver_script(&request)?;
    output.write(move |w| {
        w.write_all(script.as_bytes())
            .map_err(spinfall_workflow::output::io_error)
    })?;
    if !output.is_stdout() {
        note(&format!(
            "wrote the driver script to {}: run it on a login node with `bash {}` ({} launches \
             in {} shards; results in {})",
            output.describe(),
            output.describe(),
            request.launches,
            request.shards,
            request
                .work_dir
                .join(spinfall_workflow::slurm::MERGED_DIR)
                .display()
        ));
    }
    Ok(ExitCode::SUCCESS)
}

/// `path` made absolute against the current folder (it need not exist yet).
fn absolute(path: &Path) -> CmdResult<PathBuf> {
    std::path::absolute(path).map_err(|e| {
        CliError::input(format!(
            "{}: cannot make the path absolute: {e}",
            path.display()
        ))
    })
}
