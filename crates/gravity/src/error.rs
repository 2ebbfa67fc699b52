//! Errors of the gravity core.

/// Result with [`GravityError`].
pub type Result<T> = std::result::Result<T, GravityError>;

/// Everything that can go wrong loading a shape model or building its gravity field.
///
/// Each message names the problem and one place where it occurs.
#[derive(Debug, thiserror::Error)]
pub enum GravityError {
    /// The reader failed. (The I/O error is part of the message and not also given as the
    /// source, so that printing the error chain does not say it twice.)
    #[error("could not read the shape model: {0}")]
    Io(std::io::Error),
    /// The file is not text Spinfall reads (UTF-16, UTF-32).
    #[error(transparent)]
    Encoding(#[from] crate::text::EncodingError),
    /// Malformed OBJ text.
    #[error("malformed OBJ at line {line}: {message}")]
    Parse {
        /// 1-based line number.
        line: usize,
        /// What is wrong there.
        message: String,
    },
    /// Malformed PLY or STL data.
    #[error("malformed {format} at {at}: {message}")]
    Malformed {
        /// The format, `PLY` or `STL`.
        format: &'static str,
        /// Where: `line N` (text), `byte N` (binary data), with the element when known.
        at: String,
        /// What is wrong there.
        message: String,
    },
    /// The file's content is another format than its name says.
    #[error("the file is named as {named} but its content is {}", content_of(.found))]
    FormatMismatch {
        /// The format the file's extension names.
        named: crate::ShapeFormat,
        /// The format its content shows.
        found: crate::ShapeFormat,
    },
    /// The mesh cannot be used for a polyhedron gravity model.
    #[error("unusable mesh: {0}")]
    InvalidMesh(String),
    /// A stored field cannot be used (damaged, truncated, or built for other inputs).
    #[error("stored field unusable: {0}")]
    Stored(String),
    /// Work stopped because the caller asked.
    #[error("cancelled")]
    Cancelled,
    /// A structure would need more memory than allowed.
    #[error(
        "{what} needs about {needed_mb} MB, more than the limit of {limit_mb} MB; raise the \
         limit or loosen the error bound"
    )]
    MemoryLimit {
        /// What was being built.
        what: String,
        /// Memory it had reached when stopped, MB.
        needed_mb: usize,
        /// The limit, MB.
        limit_mb: usize,
    },
    /// A physical parameter is out of range (negative density, NaN, ...).
    #[error("invalid {name}: {message}")]
    InvalidParameter {
        /// Parameter name with its unit, e.g. `density_kg_m3`.
        name: &'static str,
        /// What is wrong with it.
        message: String,
    },
}

impl From<std::io::Error> for GravityError {
    fn from(e: std::io::Error) -> Self {
        GravityError::Io(e)
    }
}

fn content_of(found: &crate::ShapeFormat) -> String {
    match found {
        crate::ShapeFormat::Obj => "not PLY or STL (read as OBJ it would be)".to_string(),
        other => other.to_string(),
    }
}
