//! Exit codes: bad input is told apart from a run that failed.

use std::process::ExitCode;

/// Exit code for bad input: unreadable or malformed files, invalid parameters.
pub const BAD_INPUT: u8 = 2;
/// Exit code for a run that completed but in which some launch failed.
pub const RUN_FAILED: u8 = 3;
/// Exit code for an internal or output error (disk full, cannot write).
pub const OUTPUT_FAILED: u8 = 4;

/// A command's error with the exit code it maps to.
#[derive(Debug)]
pub struct CliError {
    code: u8,
    error: anyhow::Error,
}

impl CliError {
    /// Bad input (exit 2).
    pub fn input(error: impl Into<anyhow::Error>) -> Self {
        Self {
            code: BAD_INPUT,
            error: error.into(),
        }
    }

    /// Output could not be written (exit 4).
    pub fn output(error: impl Into<anyhow::Error>) -> Self {
        Self {
            code: OUTPUT_FAILED,
            error: error.into(),
        }
    }

    /// Prints the error chain on stderr and returns the exit code.
    pub fn report(self) -> ExitCode {
        eprintln!("error: {:#}", self.error);
        ExitCode::from(self.code)
    }
}

/// Result of a command.
pub type CmdResult<T> = Result<T, CliError>;

/// Attaches "bad input" to any error.
pub trait InputContext<T> {
    /// Maps the error to exit code 2 with a context line.
    fn input_context(self, context: impl std::fmt::Display) -> CmdResult<T>;
}

impl<T, E: Into<anyhow::Error>> InputContext<T> for Result<T, E> {
    fn input_context(self, context: impl std::fmt::Display) -> CmdResult<T> {
        self.map_err(|e| CliError::input(e.into().context(context.to_string())))
    }
}
