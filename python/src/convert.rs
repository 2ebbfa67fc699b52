//! Plain values to Python: serde JSON values (records the workflow serialises, such as how the
//! field was computed or a targeting report) to dicts, lists and numbers.

use pyo3::IntoPyObjectExt;
use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList};
use serde_json::Value;

use crate::errors::invalid;

/// A JSON value as Python objects: objects become dicts (key order kept), arrays lists,
/// numbers int or float, `null` None.
pub fn json_to_py<'py>(py: Python<'py>, value: &Value) -> PyResult<Bound<'py, PyAny>> {
    Ok(match value {
        Value::Null => py.None().into_bound(py),
        Value::Bool(b) => b.into_bound_py_any(py)?,
        Value::Number(n) => {
            if let Some(i) = n.as_i64() {
                i.into_bound_py_any(py)?
            } else if let Some(u) = n.as_u64() {
                u.into_bound_py_any(py)?
            } else {
                n.as_f64().unwrap_or(f64::NAN).into_bound_py_any(py)?
            }
        }
        Value::String(s) => s.into_bound_py_any(py)?,
        Value::Array(items) => {
            let list = PyList::empty(py);
            for item in items {
                list.append(json_to_py(py, item)?)?;
            }
            list.into_any()
        }
        Value::Object(map) => {
            let dict = PyDict::new(py);
            for (k, v) in map {
                dict.set_item(k, json_to_py(py, v)?)?;
            }
            dict.into_any()
        }
    })
}

/// Any serialisable record as Python objects (through [`json_to_py`]).
pub fn to_py_value<'py, T: serde::Serialize>(
    py: Python<'py>,
    value: &T,
) -> PyResult<Bound<'py, PyAny>> {
    let json = serde_json::to_value(value)
        .map_err(|e| invalid(format!("internal error: cannot convert a record: {e}")))?;
    json_to_py(py, &json)
}
