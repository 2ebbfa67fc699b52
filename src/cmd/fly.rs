//! `spinfall fly`: every launch of a scenario; writes results.json, results.csv,
//! trajectories.csv and the manifest into a folder, as one set.

use std::process::ExitCode;

use spinfall_workflow::output::OutputFolder;
use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare_with_hooks};
use spinfall_workflow::run_files::{run_info, write_run_folder};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};

use super::{
    announce, announce_field, field_hooks, fly_with_progress, gravity_options, limits,
    run_exit_code, scenario_warnings,
};
use crate::cli::FlyArgs;
use crate::exit::{CmdResult, note};

pub fn run(args: &FlyArgs) -> CmdResult<ExitCode> {
    // The folder first: a bad --out is refused before any work.
    let folder = OutputFolder::prepare(&args.out)?;
    let loaded = read_scenario(&ScenarioSource::from_spec(&args.scenario))?;
    scenario_warnings(&loaded.scenario);
    let options = PrepareOptions {
        limits: limits(&args.limits),
        gravity: gravity_options(&args.field),
        ..PrepareOptions::new(Purpose::Fly)
    };
    let prepared = prepare_with_hooks(loaded, &options, &field_hooks())?;
    announce_field(&prepared.field);
    for w in &prepared.shape.warnings {
        note(&format!("warning: shape model: {w}"));
    }
    for w in prepared.contact.iter().flat_map(|c| &c.warnings) {
        note(&format!("warning: contact shape: {w}"));
    }
    announce(&prepared.estimate);
    folder.check_space(prepared.estimate.output_min_bytes)?;
    let done = fly_with_progress(&prepared)?;
    let info = run_info(Some(prepared.scenario()), &prepared.field);
    let written = write_run_folder(&folder, &done.reports, &info)?;
    let names: Vec<String> = written
        .iter()
        .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
        .collect();
    note(&format!(
        "wrote {} launches to {} ({})",
        done.reports.len(),
        args.out.display(),
        names.join(", ")
    ));
    Ok(run_exit_code(&done.reports))
}
