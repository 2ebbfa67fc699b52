//! `spinfall.Shape`: a validated shape model, opened by the workflow's loader exactly as the
//! command line opens it (same formats, units, repairs and recentring).

use std::path::PathBuf;
use std::sync::Arc;

use numpy::{PyArray1, PyArray2};
use pyo3::prelude::*;
use pyo3::types::PyDict;
use spinfall_gravity::LengthUnit;
use spinfall_workflow::export::shape_info;
use spinfall_workflow::shape::{OpenedShape, ShapeRequest, ShapeSource, open_shape};

use crate::arrays;
use crate::convert::to_py_value;
use crate::errors::{IntoPyResult, invalid};

/// A closed, outward-oriented shape model in metres, with its mass properties.
///
/// Open one with `Shape.load(path, unit="km", recenter=False)` (OBJ, PLY or STL, ASCII or
/// binary; the format is chosen by the extension and confirmed by the content),
/// `Shape.from_bytes(data, name, ...)`, or `Shape.builtin()` for the demo body. Loading
/// repairs what the command line repairs (the repairs are in `warnings` and raised as
/// `SpinfallWarning`s) and refuses what it refuses, with the same message.
///
/// Mass properties are per unit density where they scale with it (`inertia_per_density_m5`);
/// `mass_kg(density)` and `inertia_kg_m2(density)` scale them.
#[pyclass(name = "Shape", module = "spinfall", frozen)]
pub struct PyShape {
    /// The model as the workflow opened it.
    pub opened: OpenedShape,
}

/// The length unit named `unit` ("km" or "m").
pub fn parse_unit(unit: &str) -> PyResult<LengthUnit> {
    unit.parse::<LengthUnit>().map_err(invalid)
}

impl PyShape {
    /// Opens `request` with the GIL released, raising the repairs as warnings.
    pub fn open(py: Python<'_>, request: ShapeRequest) -> PyResult<PyShape> {
        let opened = py.detach(|| open_shape(&request)).py()?;
        for w in &opened.warnings {
            crate::warn(
                py,
                &format!("shape model {}: {w}", request.source.describe()),
            )?;
        }
        Ok(PyShape { opened })
    }

    /// The validated model.
    pub fn model(&self) -> &Arc<spinfall_gravity::ShapeModel> {
        &self.opened.shape
    }

    fn density(density_kg_m3: f64) -> PyResult<f64> {
        if density_kg_m3.is_finite() && density_kg_m3 > 0.0 {
            Ok(density_kg_m3)
        } else {
            Err(invalid(format!(
                "density_kg_m3 must be a positive number of kg/m^3, got {density_kg_m3}"
            )))
        }
    }
}

#[pymethods]
impl PyShape {
    /// Opens a shape-model file (OBJ, PLY or STL) whose coordinates are in `unit` ("km" or
    /// "m"); with `recenter=True` the model is moved so its centre of mass is the origin (the
    /// command line's `--recenter`).
    ///
    /// Raises `SpinfallOSError` when the file cannot be read and `SpinfallError` when the
    /// model is refused (the message names the line, face or edge).
    #[staticmethod]
    #[pyo3(signature = (path, unit = "km", recenter = false))]
    fn load(py: Python<'_>, path: PathBuf, unit: &str, recenter: bool) -> PyResult<PyShape> {
        let request = ShapeRequest {
            source: ShapeSource::File(path),
            unit: parse_unit(unit)?,
            recenter,
        };
        PyShape::open(py, request)
    }

    /// Opens a shape model from the bytes of a file; `name` (e.g. "rock.ply") names it in
    /// messages and its extension chooses the format.
    #[staticmethod]
    #[pyo3(signature = (data, name, unit = "km", recenter = false))]
    fn from_bytes(
        py: Python<'_>,
        data: Vec<u8>,
        name: String,
        unit: &str,
        recenter: bool,
    ) -> PyResult<PyShape> {
        let request = ShapeRequest {
            source: ShapeSource::Bytes {
                name,
                bytes: Arc::new(data),
            },
            unit: parse_unit(unit)?,
            recenter,
        };
        PyShape::open(py, request)
    }

    /// The built-in demo body (`builtin:quillon`, an invented bilobed body of 5,120 faces,
    /// stored in km).
    #[staticmethod]
    #[pyo3(signature = (recenter = false))]
    fn builtin(py: Python<'_>, recenter: bool) -> PyResult<PyShape> {
        let request = ShapeRequest {
            source: ShapeSource::Builtin,
            unit: LengthUnit::Kilometre,
            recenter,
        };
        PyShape::open(py, request)
    }

    /// The body's default name: the file stem, or the demo body's name.
    #[getter]
    fn name(&self) -> String {
        self.opened.name()
    }

    /// Where the model came from: the path, the name given to `from_bytes`, or
    /// "builtin:quillon".
    #[getter]
    fn source(&self) -> String {
        self.opened.request.source.describe()
    }

    /// The unit the coordinates were read in ("km" or "m").
    #[getter]
    fn unit(&self) -> String {
        self.opened.unit().to_string()
    }

    /// Whether the model was recentred on its centre of mass.
    #[getter]
    fn recentered(&self) -> bool {
        self.opened.request.recenter
    }

    /// How far the model was moved to put its centre of mass at the origin, m, shape (3,)
    /// (zeros when not recentred).
    #[getter]
    fn recentred_by_m<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        arrays::vec3(py, self.opened.recentred_by_m)
    }

    /// What validation repaired (also raised as warnings when the model was opened).
    #[getter]
    fn warnings(&self) -> Vec<String> {
        self.opened
            .warnings
            .iter()
            .map(ToString::to_string)
            .collect()
    }

    /// Number of triangular faces.
    #[getter]
    fn face_count(&self) -> usize {
        self.model().face_count()
    }

    /// Number of vertices.
    #[getter]
    fn vertex_count(&self) -> usize {
        self.model().vertex_count()
    }

    /// Enclosed volume, m^3.
    #[getter]
    fn volume_m3(&self) -> f64 {
        self.model().mass_properties().volume_m3
    }

    /// Surface area, m^2.
    #[getter]
    fn area_m2(&self) -> f64 {
        self.model().mass_properties().area_m2
    }

    /// Centre of mass of the solid (its centroid at constant density), m, shape (3,).
    #[getter]
    fn centroid_m<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        let c = self.model().mass_properties().center_of_mass_m;
        arrays::vec3(py, [c.x, c.y, c.z])
    }

    /// Inertia tensor about the centre of mass per unit density, m^5, shape (3, 3).
    #[getter]
    fn inertia_per_density_m5<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        arrays::matrix3(py, &self.model().mass_properties().inertia_per_density_m5)
    }

    /// Principal moments per unit density, m^5, ascending, shape (3,).
    #[getter]
    fn principal_moments_per_density_m5<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        let m = self
            .model()
            .mass_properties()
            .principal_moments_per_density_m5;
        arrays::vec3(py, arrays::xyz(&m))
    }

    /// Principal axes, one unit axis per row (row i goes with principal moment i), shape
    /// (3, 3), as `spinfall info` writes them.
    #[getter]
    fn principal_axes<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        arrays::matrix3(
            py,
            &self.model().mass_properties().principal_axes.transpose(),
        )
    }

    /// Radius of the sphere of equal volume, m.
    #[getter]
    fn equivalent_radius_m(&self) -> f64 {
        self.model().mass_properties().equivalent_radius_m
    }

    /// Radius of the smallest sphere about the centre of mass enclosing every vertex, m.
    #[getter]
    fn brillouin_radius_m(&self) -> f64 {
        self.model().mass_properties().brillouin_radius_m
    }

    /// Axis-aligned bounds of the vertices, m, shape (2, 3): the minimum corner, then the
    /// maximum corner.
    #[getter]
    fn bounds_m<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        let mut lo = [f64::INFINITY; 3];
        let mut hi = [f64::NEG_INFINITY; 3];
        for v in &self.model().mesh().vertices_m {
            for i in 0..3 {
                lo[i] = lo[i].min(v[i]);
                hi[i] = hi[i].max(v[i]);
            }
        }
        arrays::rows3(py, [lo, hi].into_iter())
    }

    /// Vertex positions in the body frame, m, shape (vertex_count, 3) (a copy).
    #[getter]
    fn vertices_m<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray2<f64>> {
        let mesh = self.model().mesh();
        arrays::rows3(py, mesh.vertices_m.iter().map(|v| [v.x, v.y, v.z]))
    }

    /// Faces as vertex indices, counter-clockwise seen from outside, shape (face_count, 3),
    /// int64 (a copy).
    #[getter]
    fn faces<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyArray2<i64>>> {
        let mesh = self.model().mesh();
        let flat: Vec<i64> = mesh.faces.iter().flat_map(|f| f.map(i64::from)).collect();
        numpy::ndarray::Array2::from_shape_vec((mesh.faces.len(), 3), flat)
            .map(|a| numpy::IntoPyArray::into_pyarray(a, py))
            .map_err(|e| invalid(format!("internal error: faces array: {e}")))
    }

    /// Mass at `density_kg_m3`, kg.
    fn mass_kg(&self, density_kg_m3: f64) -> PyResult<f64> {
        Ok(PyShape::density(density_kg_m3)? * self.volume_m3())
    }

    /// Inertia tensor about the centre of mass at `density_kg_m3`, kg m^2, shape (3, 3).
    fn inertia_kg_m2<'py>(
        &self,
        py: Python<'py>,
        density_kg_m3: f64,
    ) -> PyResult<Bound<'py, PyArray2<f64>>> {
        let d = PyShape::density(density_kg_m3)?;
        let m = self.model().mass_properties().inertia_per_density_m5 * d;
        Ok(arrays::matrix3(py, &m))
    }

    /// Everything `spinfall info` reports, as a dict with the same keys and values (mass and
    /// inertia too when `density_kg_m3` is given).
    #[pyo3(signature = (density_kg_m3 = None))]
    fn info<'py>(
        &self,
        py: Python<'py>,
        density_kg_m3: Option<f64>,
    ) -> PyResult<Bound<'py, PyDict>> {
        let info = shape_info(&self.opened, density_kg_m3).py()?;
        Ok(to_py_value(py, &info)?.cast_into::<PyDict>()?)
    }

    fn __repr__(&self) -> String {
        format!(
            "Shape({:?}, unit={:?}, faces={}, volume_m3={:e})",
            self.source(),
            self.unit(),
            self.face_count(),
            self.volume_m3()
        )
    }
}
