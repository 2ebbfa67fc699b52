//! The `spinfall` binary: command-line definition and glue.
//!
//! With no subcommand it opens the desktop app; the subcommands are headless and
//! machine-readable, for scripts and tests. The work, the files it reads and writes and its
//! errors live in `spinfall-workflow`; this binary parses arguments, reports progress and
//! chooses exit codes.

mod cli;
mod cmd;
mod exit;

use clap::Parser;

fn main() -> std::process::ExitCode {
    let cli = match cli::Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            // Help and version go to stdout with exit 0; usage errors exit 2. A closed stdout
            // must not panic either.
            let _ = e.print();
            return std::process::ExitCode::from(if e.use_stderr() { exit::BAD_INPUT } else { 0 });
        }
    };
    match cmd::run(cli) {
        Ok(code) => code,
        Err(err) => err.report(),
    }
}
