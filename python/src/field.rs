//! `spinfall.Field`: the gravity field of a shape model at constant density, chosen by the
//! workflow's one gravity-method switch and evaluated by the same batch kernel as
//! `spinfall gravity`.

use std::path::PathBuf;
use std::sync::Arc;

use pyo3::prelude::*;
use pyo3::types::PyDict;
use spinfall_dynamics::GravityModel;
use spinfall_dynamics::scenario::FieldMethodSpec;
use spinfall_gravity::{FieldSample, MassSpec};
use spinfall_workflow::export::evaluate_points;
use spinfall_workflow::gravity_method::{FieldUsed, GravityOptions, gravity_model};

use crate::arrays;
use crate::background::run_in_background;
use crate::convert::to_py_value;
use crate::errors::{IntoPyResult, invalid};
use crate::shape::PyShape;

/// The method named `method` ("direct" or "interpolated").
pub fn parse_method(method: &str) -> PyResult<FieldMethodSpec> {
    match method {
        "direct" => Ok(FieldMethodSpec::Direct),
        "interpolated" => Ok(FieldMethodSpec::Interpolated),
        other => Err(invalid(format!(
            "method must be \"direct\" or \"interpolated\", got {other:?}"
        ))),
    }
}

/// The gravity field of a constant-density polyhedron (Werner & Scheeres 1997).
///
/// `Field(shape, density_kg_m3)` sums the exact face and edge terms (`method="direct"`, the
/// default). `method="interpolated"` builds (or reads from the cache folder) a field fitted to
/// a relative acceleration error of at most `max_rel_error` (in [1e-12, 1e-3]): slow to build
/// once per body, mass and bound, then much faster. Give the mass as exactly one of
/// `density_kg_m3`, `mass_kg` or `gm_m3_s2`. `cache_dir` is the folder of stored fields
/// (default: `$SPINFALL_CACHE_DIR`, else the per-user cache folder), as the command line's
/// `--cache-dir`. A build can be interrupted with Ctrl+C; `progress(stage, done, total)` is
/// called during it with stage "field" (cells done of the current octree level).
///
/// The potential is positive (`GM/r` far away) and the acceleration is its gradient, in the
/// shape's body frame. Spinfall is for research and planning, not flight-certified.
#[pyclass(name = "Field", module = "spinfall", frozen)]
pub struct PyField {
    model: Arc<dyn GravityModel>,
    used: FieldUsed,
    face_count: usize,
}

/// Facet-point pairs evaluated between two checks for Ctrl+C in `evaluate` (a few tenths of a
/// second with the direct kernel). Points are independent, so the chunking changes no bit.
const CHUNK_FACET_POINTS: usize = 100_000_000;

/// The mass given as exactly one of the three keywords.
pub fn mass_spec(
    density_kg_m3: Option<f64>,
    mass_kg: Option<f64>,
    gm_m3_s2: Option<f64>,
) -> PyResult<MassSpec> {
    match (density_kg_m3, mass_kg, gm_m3_s2) {
        (Some(d), None, None) => Ok(MassSpec::DensityKgM3(d)),
        (None, Some(m), None) => Ok(MassSpec::MassKg(m)),
        (None, None, Some(gm)) => Ok(MassSpec::GmM3S2(gm)),
        _ => Err(invalid(
            "give exactly one of density_kg_m3, mass_kg, gm_m3_s2",
        )),
    }
}

#[pymethods]
impl PyField {
    /// Builds the field of `shape` (see the class docs).
    #[new]
    #[pyo3(signature = (
        shape,
        density_kg_m3 = None,
        *,
        mass_kg = None,
        gm_m3_s2 = None,
        method = "direct",
        max_rel_error = 1e-9,
        max_memory_mb = None,
        cache_dir = None,
        progress = None,
    ))]
    #[allow(clippy::too_many_arguments, reason = "Python keyword arguments")]
    fn new(
        py: Python<'_>,
        shape: PyRef<'_, PyShape>,
        density_kg_m3: Option<f64>,
        mass_kg: Option<f64>,
        gm_m3_s2: Option<f64>,
        method: &str,
        max_rel_error: f64,
        max_memory_mb: Option<u64>,
        cache_dir: Option<PathBuf>,
        progress: Option<Bound<'_, PyAny>>,
    ) -> PyResult<PyField> {
        let mass = mass_spec(density_kg_m3, mass_kg, gm_m3_s2)?;
        let options = GravityOptions {
            method: Some(parse_method(method)?),
            max_rel_error: Some(max_rel_error),
            max_memory_mb,
            cache_dir,
        };
        let model_shape = Arc::clone(shape.model());
        let face_count = model_shape.face_count();
        drop(shape);
        let (model, used) = run_in_background(py, progress.as_ref(), move |job| {
            let spec = options.resolve(None);
            gravity_model(&model_shape, mass, &spec, &options, &job.build_hooks())
        })?;
        Ok(PyField {
            model,
            used,
            face_count,
        })
    }

    /// The field at `points`, an (n, 3) float64 numpy array of positions in metres in the
    /// shape's body frame. Returns a dict of new arrays named as `spinfall gravity`'s output:
    /// `potential_m2_s2` (n,), `acceleration_m_s2` (n, 3), `gradient_s2` (n, 3, 3) (second
    /// derivatives of the potential, 1/s^2), `laplacian_s2` (n,) (`-4 pi G rho` inside, 0
    /// outside) and `inside` (n,) bool. The GIL is released while the points are evaluated
    /// (in parallel); a large batch runs in chunks with a check for Ctrl+C between them
    /// (`KeyboardInterrupt`).
    ///
    /// Raises `SpinfallError` for an array of another shape or dtype, a non-finite coordinate,
    /// or a point so far away that the result is not a finite number.
    fn evaluate<'py>(
        &self,
        py: Python<'py>,
        points: &Bound<'py, PyAny>,
    ) -> PyResult<Bound<'py, PyDict>> {
        let points_m = arrays::points_m(points, "points")?;
        let chunk = (CHUNK_FACET_POINTS / self.face_count.max(1)).max(1024);
        let mut samples = Vec::with_capacity(points_m.len());
        for (c, part) in points_m.chunks(chunk).enumerate() {
            let model = self.model.as_ref();
            let first = c * chunk;
            let done = py
                .detach(|| evaluate_points(model, part, &|k| format!("points[{}]", first + k)))
                .py()?;
            samples.extend(done);
            py.check_signals()?;
        }
        samples_dict(py, &samples)
    }

    /// Gravitational parameter GM of the body, m^3/s^2.
    #[getter]
    fn gm_m3_s2(&self) -> f64 {
        self.model.gm_m3_s2()
    }

    /// "direct" or "interpolated".
    #[getter]
    fn method(&self) -> String {
        self.used.method.clone()
    }

    /// The interpolated field's bound of the relative acceleration error (None for direct).
    #[getter]
    fn max_rel_error(&self) -> Option<f64> {
        self.used.max_rel_error
    }

    /// How the field was computed: the `field` record of results.json (method, bound, the
    /// vector kernel of this machine, an interpolated field's build statistics) plus, for an
    /// interpolated field, `store` (read from the cache folder, or built and stored, or built
    /// without storing, and why) and `build_s` (this process's build time, when it built it).
    #[getter]
    fn info<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        let info = to_py_value(py, &self.used)?;
        // What this process did (kept out of results files, which must not depend on the
        // process; here it tells the user whether the cache worked).
        if let Ok(dict) = info.cast::<PyDict>() {
            if let Some(store) = &self.used.store {
                dict.set_item("store", store)?;
            }
            if let Some(build_s) = self.used.build_s {
                dict.set_item("build_s", build_s)?;
            }
        }
        Ok(info)
    }

    /// One line saying how the field is computed (as in manifests).
    fn describe(&self) -> String {
        self.used.describe()
    }

    fn __repr__(&self) -> String {
        format!(
            "Field(method={:?}, gm_m3_s2={:e})",
            self.used.method,
            self.model.gm_m3_s2()
        )
    }
}

/// The samples as the dict `evaluate` returns.
fn samples_dict<'py>(py: Python<'py>, samples: &[FieldSample]) -> PyResult<Bound<'py, PyDict>> {
    let dict = PyDict::new(py);
    dict.set_item(
        "potential_m2_s2",
        arrays::scalars(py, samples.iter().map(|s| s.potential_m2_s2).collect()),
    )?;
    dict.set_item(
        "acceleration_m_s2",
        arrays::rows3(
            py,
            samples.iter().map(|s| arrays::xyz(&s.acceleration_m_s2)),
        ),
    )?;
    let gradients: Vec<_> = samples.iter().map(|s| s.gradient_s2).collect();
    dict.set_item("gradient_s2", arrays::matrices3(py, &gradients))?;
    dict.set_item(
        "laplacian_s2",
        arrays::scalars(py, samples.iter().map(|s| s.laplacian_s2).collect()),
    )?;
    dict.set_item(
        "inside",
        arrays::flags(py, samples.iter().map(|s| s.inside).collect()),
    )?;
    Ok(dict)
}
