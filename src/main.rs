//! The `spinfall` binary: command-line definition and glue.
//!
//! With no subcommand it opens the desktop app; the subcommands are headless and
//! machine-readable, for scripts and tests. All file I/O of the project happens here and in the
//! GUI crate; the library crates take readers and writers.

mod cli;
mod cmd;
mod exit;
mod io;

use clap::Parser;

fn main() -> std::process::ExitCode {
    let cli = cli::Cli::parse();
    match cmd::run(cli) {
        Ok(code) => code,
        Err(err) => err.report(),
    }
}
