//! One module per subcommand; `run` dispatches.

mod animate;
mod fly;
mod gravity;
mod info;
mod map;
mod plot;
mod render;
mod scenario;

use std::process::ExitCode;

use crate::cli::{Cli, Command};
use crate::exit::{CliError, CmdResult};

/// Runs the command line; no subcommand opens the desktop app.
pub fn run(cli: Cli) -> CmdResult<ExitCode> {
    match cli.command {
        Some(Command::Info(args)) => info::run(&args),
        Some(Command::Gravity(args)) => gravity::run(&args),
        Some(Command::Fly(args)) => fly::run(&args),
        Some(Command::Map(args)) => map::run(&args),
        Some(Command::Render(args)) => render::run(&args),
        Some(Command::Animate(args)) => animate::run(&args),
        Some(Command::Plot(args)) => plot::run(&args),
        None => {
            let options = spinfall_gui::GuiOptions {
                shape_path: cli.shape,
                unit: cli.unit.into(),
            };
            spinfall_gui::run(options).map_err(CliError::output)?;
            Ok(ExitCode::SUCCESS)
        }
    }
}

/// Converts a nalgebra matrix to nested rows for JSON.
fn rows(m: &nalgebra::Matrix3<f64>) -> [[f64; 3]; 3] {
    [0, 1, 2].map(|i| [m[(i, 0)], m[(i, 1)], m[(i, 2)]])
}
