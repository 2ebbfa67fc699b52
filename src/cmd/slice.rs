//! `spinfall slice`: the geopotential on a plane grid through a scenario's body, as CSV.

use std::process::ExitCode;

use spinfall_dynamics::zero_velocity::{SlicePlane, SliceSpec, jacobi_constant};
use spinfall_workflow::export::write_slice_csv;
use spinfall_workflow::output::{OutputTarget, check_file};
use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare_with_hooks};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};
use spinfall_workflow::zero_velocity::{compute_slice, find_launch};

use super::{announce_field, field_hooks, gravity_options, progress_printer};
use crate::cli::SliceArgs;
use crate::exit::{CliError, CmdResult, note};

pub fn run(args: &SliceArgs) -> CmdResult<ExitCode> {
    let plane: SlicePlane = args
        .plane
        .parse()
        .map_err(|e| CliError::input(format!("--plane: {e}")))?;
    if let Some(c) = args.jacobi
        && !c.is_finite()
    {
        return Err(CliError::input(format!("--jacobi must be finite, got {c}")));
    }
    let out = check_file(&OutputTarget::from_arg(&args.out))?;
    let loaded = read_scenario(&ScenarioSource::from_spec(&args.scenario))?;
    let purpose = if args.launch.is_some() {
        Purpose::Fly
    } else {
        Purpose::BodyOnly
    };
    let options = PrepareOptions {
        gravity: gravity_options(&args.field),
        ..PrepareOptions::new(purpose)
    };
    let prepared = prepare_with_hooks(loaded, &options, &field_hooks())?;
    announce_field(&prepared.field);
    let body = &prepared.body;
    let spec = SliceSpec {
        plane,
        extent_m: args.extent_m.unwrap_or(4.0 * body.brillouin_radius_m()),
        cells: args.cells,
    };
    spec.validate()
        .map_err(|e| CliError::input(format!("slice: {e}")))?;
    let jacobi = match &args.launch {
        Some(id) => {
            let launch = find_launch(&prepared.launches, id)?;
            let c = jacobi_constant(body, launch);
            note(&format!("launch {id:?}: Jacobi constant {c:.9e} m^2/s^2"));
            Some(c)
        }
        None => args.jacobi,
    };
    let cancel = spinfall_dynamics::Cancel::new(false);
    let progress = progress_printer("slice", "points");
    let slice = compute_slice(body, &spec, &progress, &cancel)?;
    out.write(|w| write_slice_csv(w, &slice, jacobi))?;
    note(&format!(
        "wrote {} x {} cells on the plane {} ({} m wide) to {}",
        spec.cells,
        spec.cells,
        spec.plane,
        spec.extent_m,
        out.describe()
    ));
    Ok(ExitCode::SUCCESS)
}
