//! `spinfall animate`: the views over time as an animated GIF, APNG or numbered PNG frames.

use std::process::ExitCode;

pub fn run(_args: &crate::cli::PlotArgs) -> crate::exit::CmdResult<ExitCode> {
    Err(crate::exit::CliError::input(anyhow::anyhow!("not yet")))
}
