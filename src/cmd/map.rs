//! `spinfall map`: the per-face surface map of a scenario's body, as CSV.

use std::process::ExitCode;
use std::sync::atomic::AtomicBool;

use spinfall_dynamics::export::write_surface_map_csv;
use spinfall_dynamics::surface_map::surface_map;

use super::scenario::prepare;
use crate::cli::MapArgs;
use crate::exit::{CliError, CmdResult};
use crate::io::write_atomic;

pub fn run(args: &MapArgs) -> CmdResult<ExitCode> {
    let prepared = prepare(&args.scenario)?;
    let cancel = AtomicBool::new(false);
    let map = surface_map(&prepared.body, &|_, _| {}, &cancel).map_err(CliError::output)?;
    write_atomic(&args.out, |w| {
        Ok(write_surface_map_csv(w, &prepared.body, &map)?)
    })?;
    eprintln!("wrote {} faces to {}", map.len(), args.out.display());
    Ok(ExitCode::SUCCESS)
}
