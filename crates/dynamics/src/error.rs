//! Errors of the dynamics crate.

/// Result with [`DynamicsError`].
pub type Result<T> = std::result::Result<T, DynamicsError>;

/// Everything that can go wrong setting up bodies, launches and scenarios.
///
/// Each message names the problem and one place where it occurs (a field path, a face, a launch).
/// Problems during a flight are not errors: they end the flight with
/// [`crate::Outcome::Failed`].
#[derive(Debug, thiserror::Error)]
pub enum DynamicsError {
    /// The gravity core refused the shape model or the mass.
    #[error(transparent)]
    Gravity(#[from] spinfall_gravity::GravityError),
    /// A parameter is out of range or not finite.
    #[error("invalid {name}: {message}")]
    InvalidParameter {
        /// Parameter name with its unit, e.g. `period_s`.
        name: String,
        /// What is wrong with it.
        message: String,
    },
    /// A launch site could not be placed on the surface.
    #[error("launch site: {0}")]
    Site(String),
    /// A scenario document is malformed or inconsistent.
    #[error("{path}: {message}")]
    Scenario {
        /// Path of the offending field, e.g. `launches[2].speed_m_s` (`(document)` for the root).
        path: String,
        /// What is wrong there (serde's message with line and column when it comes from parsing).
        message: String,
    },
    /// Writing an export failed.
    #[error("could not write the export: {0}")]
    Io(#[from] std::io::Error),
    /// Serialising to JSON failed.
    #[error("could not serialise to JSON: {0}")]
    Json(#[from] serde_json::Error),
    /// The work was cancelled through its cancel flag.
    #[error("cancelled")]
    Cancelled,
}

impl DynamicsError {
    /// Shorthand for [`DynamicsError::InvalidParameter`].
    pub(crate) fn param(name: impl Into<String>, message: impl Into<String>) -> Self {
        DynamicsError::InvalidParameter {
            name: name.into(),
            message: message.into(),
        }
    }
}

/// Checks that `value` is finite and strictly positive.
pub(crate) fn positive(name: &str, value: f64) -> Result<f64> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(DynamicsError::param(
            name,
            format!("must be a finite number > 0, got {value}"),
        ))
    }
}
