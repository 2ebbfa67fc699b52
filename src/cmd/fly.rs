//! `spinfall fly`: every launch of a scenario; writes results.json and trajectories.csv.

use std::process::ExitCode;

use spinfall_dynamics::export::{write_results_json, write_trajectories_csv};

use super::scenario::{fly_with_progress, prepare, run_exit_code};
use crate::cli::FlyArgs;
use crate::exit::{CliError, CmdResult};
use crate::io::write_atomic;

pub fn run(args: &FlyArgs) -> CmdResult<ExitCode> {
    let prepared = prepare(&args.scenario)?;
    std::fs::create_dir_all(&args.out).map_err(|e| {
        CliError::output(anyhow::Error::from(e).context(format!("creating {}", args.out.display())))
    })?;
    let reports = fly_with_progress(&prepared);
    write_atomic(&args.out.join("results.json"), |w| {
        Ok(write_results_json(w, &reports)?)
    })?;
    write_atomic(&args.out.join("trajectories.csv"), |w| {
        Ok(write_trajectories_csv(w, &reports)?)
    })?;
    eprintln!(
        "wrote {} launches to {} (results.json, trajectories.csv)",
        reports.len(),
        args.out.display()
    );
    Ok(run_exit_code(&reports))
}
