//! `spinfall equilibria`: the equilibrium points of a scenario's body, as JSON.

use std::process::ExitCode;

use spinfall_dynamics::equilibria::EquilibriumSearch;
use spinfall_workflow::equilibria::compute_equilibria;
use spinfall_workflow::export::write_equilibria_json;
use spinfall_workflow::output::{OutputTarget, check_file};
use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare_with_hooks};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};

use super::{announce_field, field_hooks, gravity_options, progress_printer};
use crate::cli::EquilibriaArgs;
use crate::exit::{CliError, CmdResult, note};

pub fn run(args: &EquilibriaArgs) -> CmdResult<ExitCode> {
    let search = EquilibriumSearch {
        max_reported: args
            .max_points
            .unwrap_or(EquilibriumSearch::default().max_reported),
        ..EquilibriumSearch::default()
    };
    search
        .check()
        .map_err(|e| CliError::input(format!("--max-points {}: {e}", search.max_reported)))?;
    let out = check_file(&OutputTarget::from_arg(&args.out))?;
    let loaded = read_scenario(&ScenarioSource::from_spec(&args.scenario))?;
    let options = PrepareOptions {
        gravity: gravity_options(&args.field),
        ..PrepareOptions::new(Purpose::BodyOnly)
    };
    let prepared = prepare_with_hooks(loaded, &options, &field_hooks())?;
    announce_field(&prepared.field);
    let cancel = spinfall_dynamics::Cancel::new(false);
    let progress = progress_printer("searching for equilibria", "steps");
    let set = compute_equilibria(&prepared.body, &search, &progress, &cancel)?;
    out.write(|w| write_equilibria_json(w, &prepared.body, &set, Some(&prepared.field)))?;
    for n in &set.notes {
        note(n);
    }
    if set.equilibria.is_empty() {
        note(&format!(
            "no equilibrium point found outside the body; wrote an empty list to {}",
            out.describe()
        ));
    } else {
        let stable = set.equilibria.iter().filter(|e| e.linearly_stable).count();
        note(&format!(
            "wrote {} equilibrium points ({stable} linearly stable) to {}",
            set.equilibria.len(),
            out.describe()
        ));
    }
    Ok(ExitCode::SUCCESS)
}
