//! Errors of the workflow, each with the kind a front end needs (exit code, message colour).

use std::path::PathBuf;

use crate::limits::Estimate;

/// Result with [`WorkflowError`].
pub type Result<T> = std::result::Result<T, WorkflowError>;

/// What kind of failure an error is, for exit codes and the way the app shows it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// The input is bad: a file that cannot be read or parsed, an invalid parameter, a run
    /// beyond a limit (exit code 2 of the command line).
    BadInput,
    /// An output could not be written (exit code 4).
    Output,
    /// The user cancelled.
    Cancelled,
}

/// Everything that can go wrong between a front end and the physics.
///
/// Each message names the file, field or value it is about, quotes at most about 80 characters
/// of user text, and says each operating-system error once (no source chain repeats it).
#[derive(Debug, thiserror::Error)]
pub enum WorkflowError {
    /// A file could not be read.
    #[error("cannot read {}: {error}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// Why.
        error: std::io::Error,
    },
    /// A shape model was refused by the gravity core.
    #[error("shape model {what}: {error}")]
    Shape {
        /// Which model (path or built-in name).
        what: String,
        /// Why.
        error: spinfall_gravity::GravityError,
    },
    /// A scenario is malformed or cannot be built.
    #[error("scenario {what}: {error}")]
    Scenario {
        /// Which scenario (path or built-in name).
        what: String,
        /// Why, with the field path.
        error: spinfall_dynamics::DynamicsError,
    },
    /// A parameter or input value is invalid.
    #[error("{0}")]
    Invalid(String),
    /// A result is not finite: the input that caused it is named.
    #[error("{0}")]
    NonFinite(String),
    /// The run has more launches than the limit allows.
    #[error(
        "the run has {launches} launches, more than the limit of {limit} ({estimate}); raise the \
         limit with --max-launches or \"limits\": {{\"max_launches\": N}} in the scenario if \
         this is intended"
    )]
    TooManyLaunches {
        /// Launches after expansion.
        launches: u64,
        /// The limit in force.
        limit: u64,
        /// What the run would need.
        estimate: Estimate,
    },
    /// The run would need more memory than the machine has available.
    #[error(
        "the run would need up to {} of memory ({estimate}) but only {} is available; fly \
         fewer launches (fan and dispersion counts) or shorter flights",
        crate::limits::bytes_text(estimate.memory_bytes),
        crate::limits::bytes_text(*available_bytes)
    )]
    NotEnoughMemory {
        /// What the run would need.
        estimate: Estimate,
        /// Memory available now, bytes.
        available_bytes: u64,
    },
    /// The output folder lacks space for even the smallest possible output.
    #[error(
        "{} has {} free but the output needs at least {}; free some space or choose another \
         folder",
        folder.display(),
        crate::limits::bytes_text(*free_bytes),
        crate::limits::bytes_text(*needed_bytes)
    )]
    NotEnoughSpace {
        /// The output folder.
        folder: PathBuf,
        /// Free space, bytes.
        free_bytes: u64,
        /// The least the output needs, bytes.
        needed_bytes: u64,
    },
    /// An output could not be written.
    #[error("cannot write {}: {message}", path.display())]
    Output {
        /// The file or folder.
        path: PathBuf,
        /// Why (the operating system's reason included).
        message: String,
    },
    /// Another run holds the output folder's lock.
    #[error(
        "another Spinfall run is writing to {} (its lock file {} is held); wait for it to end or \
         choose another folder",
        folder.display(),
        lock.display()
    )]
    Busy {
        /// The output folder.
        folder: PathBuf,
        /// The lock file.
        lock: PathBuf,
    },
    /// Cancelled by the user; nothing was written.
    #[error("cancelled")]
    Cancelled,
}

impl WorkflowError {
    /// A physics error of the work called `what`: a cancellation stays [`WorkflowError::Cancelled`],
    /// anything else is [`WorkflowError::Invalid`] prefixed with `what`.
    pub fn from_dynamics(what: &str, e: spinfall_dynamics::DynamicsError) -> WorkflowError {
        match e {
            spinfall_dynamics::DynamicsError::Cancelled => WorkflowError::Cancelled,
            other => WorkflowError::Invalid(format!("{what}: {other}")),
        }
    }

    /// The kind of failure.
    pub fn kind(&self) -> ErrorKind {
        match self {
            WorkflowError::Output { .. } | WorkflowError::Busy { .. } => ErrorKind::Output,
            WorkflowError::Cancelled => ErrorKind::Cancelled,
            _ => ErrorKind::BadInput,
        }
    }

    /// Whether the user cancelled.
    pub fn is_cancelled(&self) -> bool {
        matches!(self, WorkflowError::Cancelled)
    }

    /// An output error for `path` from an I/O error.
    pub(crate) fn output(path: impl Into<PathBuf>, error: &std::io::Error) -> Self {
        WorkflowError::Output {
            path: path.into(),
            message: error.to_string(),
        }
    }

    /// An output error for `path` with a message.
    pub fn output_msg(path: impl Into<PathBuf>, message: impl Into<String>) -> Self {
        WorkflowError::Output {
            path: path.into(),
            message: message.into(),
        }
    }
}
