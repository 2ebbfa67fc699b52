//! The package's exceptions and the one mapping of workflow errors onto them.
//!
//! Bad input (a refused shape model, a malformed scenario, an invalid value or array) is
//! `SpinfallError`, a `ValueError`; a file that cannot be read or written is `SpinfallOSError`,
//! an `OSError`. The message is the workflow's own, word for word, as the command line prints
//! it after `error: `. A cancelled run is `KeyboardInterrupt`.

use pyo3::exceptions::{PyKeyboardInterrupt, PyOSError, PyValueError};
use pyo3::prelude::*;
use spinfall_workflow::WorkflowError;

pyo3::create_exception!(
    spinfall,
    SpinfallError,
    PyValueError,
    "Bad input refused by Spinfall: a shape model, scenario, value or array it cannot use. The \
     message names the file, line, field or value, as the command line does."
);

pyo3::create_exception!(
    spinfall,
    SpinfallOSError,
    PyOSError,
    "A file Spinfall could not read or write. The message names the file and the operating \
     system's reason; `path` is the file (a pathlib.Path) and `errno` the system's error \
     number when it gave one."
);

/// A `SpinfallError` with `message`.
pub fn invalid(message: impl Into<String>) -> PyErr {
    SpinfallError::new_err(message.into())
}

/// The Python exception of a workflow error (see the module docs).
pub fn to_py(error: WorkflowError) -> PyErr {
    let message = error.to_string();
    match error {
        WorkflowError::Read { path, error } => os_error(message, path, error.raw_os_error()),
        WorkflowError::Output { path, .. } => os_error(message, path, None),
        WorkflowError::NotEnoughSpace { folder, .. } | WorkflowError::Busy { folder, .. } => {
            os_error(message, folder, None)
        }
        WorkflowError::Cancelled => PyKeyboardInterrupt::new_err(message),
        _ => SpinfallError::new_err(message),
    }
}

/// A `SpinfallOSError` with `message` (its `str`), its `path`, and its `errno` when the
/// operating system gave one. (`filename` is left unset: Python would then print
/// "[Errno ...]" instead of the workflow's message.)
fn os_error(message: String, path: std::path::PathBuf, errno: Option<i32>) -> PyErr {
    Python::attach(|py| {
        let err = SpinfallOSError::new_err(message);
        let value = err.value(py);
        // Setting attributes of a fresh exception cannot fail in practice; if it did, the
        // message still names the file.
        let _ = value.setattr("path", path);
        if let Some(errno) = errno {
            let _ = value.setattr("errno", errno);
        }
        err
    })
}

/// The result of a workflow call as a Python result.
pub trait IntoPyResult<T> {
    /// Maps the error with [`to_py`].
    fn py(self) -> PyResult<T>;
}

impl<T> IntoPyResult<T> for Result<T, WorkflowError> {
    fn py(self) -> PyResult<T> {
        self.map_err(to_py)
    }
}
