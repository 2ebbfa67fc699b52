//! `spinfall map`: the per-face surface map of a scenario's body, as CSV (with the sunlight
//! columns when the scenario has a Sun).

use std::process::ExitCode;

use spinfall_workflow::export::write_surface_map_csv;
use spinfall_workflow::output::{OutputTarget, check_file};
use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare_with_hooks};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};
use spinfall_workflow::surface::compute_scenario_surface_map;

use super::{announce_field, field_hooks, gravity_options, scenario_warnings};
use crate::cli::MapArgs;
use crate::exit::{CmdResult, note};

pub fn run(args: &MapArgs) -> CmdResult<ExitCode> {
    let out = check_file(&OutputTarget::from_arg(&args.out))?;
    let loaded = read_scenario(&ScenarioSource::from_spec(&args.scenario))?;
    scenario_warnings(&loaded.scenario);
    let options = PrepareOptions {
        gravity: gravity_options(&args.field),
        ..PrepareOptions::new(Purpose::BodyOnly)
    };
    let prepared = prepare_with_hooks(loaded, &options, &field_hooks())?;
    announce_field(&prepared.field);
    let cancel = spinfall_dynamics::Cancel::new(false);
    let map =
        compute_scenario_surface_map(&prepared.body, prepared.scenario(), &|_, _| {}, &cancel)?;
    out.write(|w| write_surface_map_csv(w, &prepared.body, &map))?;
    note(&format!("wrote {} faces to {}", map.len(), out.describe()));
    Ok(ExitCode::SUCCESS)
}
