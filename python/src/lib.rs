//! Python bindings of Spinfall: the compiled module `spinfall._spinfall` behind the Python
//! package `spinfall` (built with maturin: `pip install ./python`).
//!
//! What it is: a thin skin over the library crates, like the command line and the desktop app.
//! Shape models are opened by `spinfall_workflow::shape`, the gravity method is chosen by
//! `spinfall_workflow::gravity_method`, fields are evaluated by the same batch kernel and check
//! as `spinfall gravity` (`spinfall_workflow::export::evaluate_points`), and scenarios are
//! prepared, flown and mapped by `spinfall_workflow::{prepare, run, surface}`. So the same
//! inputs give the same numbers, bit for bit, as the command line on the same machine.
//!
//! - [`shape::PyShape`] (`spinfall.Shape`): a validated shape model and its mass properties;
//! - [`field::PyField`] (`spinfall.Field`): the direct or interpolated field, `evaluate(points)`
//!   on an (n, 3) numpy array with the GIL released;
//! - [`scenario::PyScenario`] (`spinfall.Scenario`): `fly()` and `surface_map()`, run off the
//!   Python thread ([`background`]) with progress and Ctrl+C;
//! - [`flights::PyFlightResults`] (`spinfall.FlightResults`): per-launch dicts of numpy arrays
//!   with the trajectories of both frames;
//! - [`errors`]: `SpinfallError` (a `ValueError`) and `SpinfallOSError` (an `OSError`) with the
//!   workflow's messages; no panic reaches Python as a panic.
//!
//! What it is not: no physics, file formats or method choices of its own, no subprocesses, and
//! no output files (results come back as arrays; write them with numpy or run `spinfall fly`).
//! It is tested from Python (`python/tests`, pytest) against the command line and against
//! closed forms, not by `cargo test`.
//!
//! ```python
//! import numpy as np, spinfall
//! field = spinfall.Field(spinfall.Shape.builtin(), density_kg_m3=1900.0)
//! print(field.evaluate(np.array([[4000.0, 0.0, 0.0]]))["acceleration_m_s2"])
//! ```
//!
//! Spinfall is a research and planning tool, **not flight-certified**.
//!
//! The workspace's `unsafe_code = "deny"` holds here too: the FFI glue is PyO3's, generated
//! by its macros (which the lint does not count as this crate's code), and this crate has no
//! `unsafe` of its own.
#![warn(missing_docs)]

pub mod arrays;
pub mod background;
pub mod convert;
pub mod errors;
pub mod field;
pub mod flights;
pub mod scenario;
pub mod shape;

use std::ffi::CString;

use pyo3::prelude::*;

pyo3::create_exception!(
    spinfall,
    SpinfallWarning,
    pyo3::exceptions::PyUserWarning,
    "A warning that does not stop the work: a shape model repaired, a scenario setting without \
     effect, a cache folder that cannot be used (the command line prints these on stderr)."
);

/// Raises `message` as a `spinfall.SpinfallWarning` (through Python's `warnings` module, so
/// filters apply; an "error" filter turns it into an exception).
pub fn warn(py: Python<'_>, message: &str) -> PyResult<()> {
    let text =
        CString::new(message.replace('\0', " ")).unwrap_or_else(|_| CString::from(c"warning"));
    let category = py.get_type::<SpinfallWarning>();
    PyErr::warn(py, category.as_any(), &text, 2)
}

/// The compiled part of the `spinfall` package.
#[pymodule]
fn _spinfall(m: &Bound<'_, PyModule>) -> PyResult<()> {
    let py = m.py();
    m.add_class::<shape::PyShape>()?;
    m.add_class::<field::PyField>()?;
    m.add_class::<scenario::PyScenario>()?;
    m.add_class::<flights::PyFlightResults>()?;
    m.add("SpinfallError", py.get_type::<errors::SpinfallError>())?;
    m.add("SpinfallOSError", py.get_type::<errors::SpinfallOSError>())?;
    m.add("SpinfallWarning", py.get_type::<SpinfallWarning>())?;
    m.add("CAUTION", spinfall_workflow::CAUTION)?;
    m.add("G_SI", spinfall_gravity::G_SI)?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    Ok(())
}
