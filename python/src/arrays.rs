//! numpy at the edge: checking arrays that come in, building the arrays that go out.
//!
//! Arrays going out are fresh, owned by Python, and hold SI values in the workflow's units.

use nalgebra::{Matrix3, Point3, Vector3};
use numpy::ndarray::{Array1, Array2, Array3};
use numpy::prelude::*;
use numpy::{PyArray1, PyArray2, PyArray3, PyUntypedArray};
use pyo3::prelude::*;

use crate::errors::invalid;

/// Points in metres from an `(n, 3)` float64 numpy array named `what` in messages; every
/// coordinate must be finite.
///
/// # Errors
/// `SpinfallError` naming what is wrong: not a numpy array, the dtype, the shape, or the first
/// row with a non-finite coordinate.
pub fn points_m(obj: &Bound<'_, PyAny>, what: &str) -> PyResult<Vec<Point3<f64>>> {
    let untyped = obj.cast::<PyUntypedArray>().map_err(|_| {
        let ty = obj
            .get_type()
            .name()
            .map(|n| n.to_string())
            .unwrap_or_else(|_| "?".into());
        invalid(format!(
            "{what} must be a numpy array of shape (n, 3) and dtype float64 (metres), got a \
             {ty}; use numpy.asarray({what}, dtype=numpy.float64)"
        ))
    })?;
    let dtype = untyped.dtype();
    if !dtype.is_equiv_to(&numpy::dtype::<f64>(obj.py())) {
        return Err(invalid(format!(
            "{what} must have dtype float64 (metres), got {}; convert it with \
             {what}.astype(numpy.float64)",
            dtype.str().map(|s| s.to_string()).unwrap_or_default()
        )));
    }
    let shape = untyped.shape();
    if shape.len() != 2 || shape[1] != 3 {
        return Err(invalid(format!(
            "{what} must have shape (n, 3) (one x, y, z row per point), got {shape:?}; a single \
             point is {what}.reshape(1, 3)"
        )));
    }
    let array = obj
        .cast::<PyArray2<f64>>()
        .map_err(|_| invalid(format!("{what} is not a two-dimensional float64 array")))?
        .try_readonly()
        .map_err(|e| invalid(format!("{what} cannot be read: {e}")))?;
    let view = array.as_array();
    let mut out = Vec::with_capacity(view.nrows());
    for (k, row) in view.rows().into_iter().enumerate() {
        let p = Point3::new(row[0], row[1], row[2]);
        if !(p.x.is_finite() && p.y.is_finite() && p.z.is_finite()) {
            return Err(invalid(format!(
                "{what}[{k}] = ({}, {}, {}) m: every coordinate must be a finite number",
                p.x, p.y, p.z
            )));
        }
        out.push(p);
    }
    Ok(out)
}

/// A `(n,)` float64 array.
pub fn scalars<'py>(py: Python<'py>, values: Vec<f64>) -> Bound<'py, PyArray1<f64>> {
    PyArray1::from_vec(py, values)
}

/// A `(3,)` float64 array.
pub fn vec3<'py>(py: Python<'py>, v: [f64; 3]) -> Bound<'py, PyArray1<f64>> {
    PyArray1::from_slice(py, &v)
}

/// A `(n, 3)` float64 array, one row per vector.
pub fn rows3<'py>(
    py: Python<'py>,
    rows: impl ExactSizeIterator<Item = [f64; 3]>,
) -> Bound<'py, PyArray2<f64>> {
    let n = rows.len();
    let flat: Vec<f64> = rows.flatten().collect();
    Array2::from_shape_vec((n, 3), flat)
        .map(|a| a.into_pyarray(py))
        .unwrap_or_else(|_| PyArray2::zeros(py, [0, 3], false))
}

/// A `(3, 3)` float64 array of a matrix, row by row.
pub fn matrix3<'py>(py: Python<'py>, m: &Matrix3<f64>) -> Bound<'py, PyArray2<f64>> {
    let a = Array2::from_shape_fn((3, 3), |(i, j)| m[(i, j)]);
    a.into_pyarray(py)
}

/// A `(n, 3, 3)` float64 array of matrices, each row by row.
pub fn matrices3<'py>(py: Python<'py>, ms: &[Matrix3<f64>]) -> Bound<'py, PyArray3<f64>> {
    let a = Array3::from_shape_fn((ms.len(), 3, 3), |(k, i, j)| ms[k][(i, j)]);
    a.into_pyarray(py)
}

/// A `(n,)` bool array.
pub fn flags<'py>(py: Python<'py>, values: Vec<bool>) -> Bound<'py, PyArray1<bool>> {
    Array1::from_vec(values).into_pyarray(py)
}

/// A `(n,)` int64 array.
pub fn integers<'py>(py: Python<'py>, values: Vec<i64>) -> Bound<'py, PyArray1<i64>> {
    PyArray1::from_vec(py, values)
}

/// A vector's components.
pub fn xyz(v: &Vector3<f64>) -> [f64; 3] {
    [v.x, v.y, v.z]
}
