//! Exit codes: bad input is told apart from a run that failed and from output that could not
//! be written. Every message goes to standard error without ever panicking (a closed or full
//! standard error is ignored).

use std::io::Write;
use std::process::ExitCode;

use spinfall_workflow::{ErrorKind, WorkflowError};

/// Exit code for bad input: unreadable or malformed files, invalid parameters, a run beyond a
/// limit, an unknown command.
pub const BAD_INPUT: u8 = 2;
/// Exit code for a run that completed but in which some launch failed.
pub const RUN_FAILED: u8 = 3;
/// Exit code for output that could not be written (disk full, closed pipe, no permission).
pub const OUTPUT_FAILED: u8 = 4;
/// Exit code when the desktop app cannot open its window (no graphical display).
pub const NO_DISPLAY: u8 = 5;

/// A command's error with the exit code it maps to.
#[derive(Debug)]
pub struct CliError {
    code: u8,
    message: String,
}

impl CliError {
    /// Bad input (exit 2).
    pub fn input(message: impl Into<String>) -> Self {
        Self {
            code: BAD_INPUT,
            message: message.into(),
        }
    }

    /// An error with an exit code of its own.
    pub fn with_code(code: u8, message: impl Into<String>) -> Self {
        Self {
            code,
            message: message.into(),
        }
    }

    /// Prints the message on stderr and returns the exit code.
    pub fn report(self) -> ExitCode {
        note(&format!("error: {}", self.message));
        ExitCode::from(self.code)
    }
}

impl From<WorkflowError> for CliError {
    fn from(e: WorkflowError) -> Self {
        let code = match e.kind() {
            ErrorKind::BadInput => BAD_INPUT,
            ErrorKind::Output | ErrorKind::Cancelled => OUTPUT_FAILED,
        };
        CliError {
            code,
            message: e.to_string(),
        }
    }
}

/// Result of a command.
pub type CmdResult<T> = Result<T, CliError>;

/// Writes one line to standard error; never panics (a lost diagnostic is not worth a crash).
pub fn note(line: &str) {
    let mut err = std::io::stderr().lock();
    let _ = writeln!(err, "{line}");
}
