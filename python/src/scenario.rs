//! `spinfall.Scenario`: a scenario document read by the workflow, flown and mapped exactly as
//! `spinfall fly` and `spinfall map` do, off the Python thread.

use std::path::PathBuf;
use std::sync::Arc;

use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyDict, PyString};
use spinfall_dynamics::site::lat_lon_deg;
use spinfall_dynamics::surface_map::{SurfaceField, SurfaceMap};
use spinfall_workflow::gravity_method::GravityOptions;
use spinfall_workflow::limits::Limits;
use spinfall_workflow::prepare::{
    PrepareOptions, PreparedRun, Purpose, prepare_with_hooks, prepare_with_targeting,
};
use spinfall_workflow::scenario_file::{
    BUILTIN_SCENARIO, LoadedScenario, ScenarioSource, read_scenario,
};
use spinfall_workflow::surface::compute_scenario_surface_map;

use crate::arrays;
use crate::background::{Job, run_in_background};
use crate::errors::{IntoPyResult, invalid};
use crate::field::parse_method;
use crate::flights::PyFlightResults;
use crate::shape::PyShape;

/// A scenario: a body (shape model, mass, spin), its launches, and how to fly them, as the
/// versioned JSON document the command line and the desktop app read.
///
/// `Scenario.from_json(text_or_path)` reads JSON text, bytes or a file (relative shape paths
/// are resolved against the file's folder, or `base_dir` for text); `Scenario.builtin()` is
/// `builtin:example`. `fly()` flies every launch as `spinfall fly` does and `surface_map()`
/// computes what `spinfall map` writes, both off the Python thread with the GIL released and
/// cancelled cleanly by Ctrl+C (`KeyboardInterrupt`). The keyword arguments `method`,
/// `max_rel_error`, `max_memory_mb` and `cache_dir` override the scenario's `field` section
/// as the command-line options of the same names do.
///
/// Spinfall is for research and planning, not flight-certified.
#[pyclass(name = "Scenario", module = "spinfall", frozen)]
pub struct PyScenario {
    loaded: LoadedScenario,
}

/// The command-line style overrides of the gravity computation.
fn gravity_options(
    method: Option<&str>,
    max_rel_error: Option<f64>,
    max_memory_mb: Option<u64>,
    cache_dir: Option<PathBuf>,
) -> PyResult<GravityOptions> {
    Ok(GravityOptions {
        method: method.map(parse_method).transpose()?,
        max_rel_error,
        max_memory_mb,
        cache_dir,
    })
}

impl PyScenario {
    /// Raises the scenario's warnings (settings without effect, ...) as `SpinfallWarning`s, as
    /// the command line prints them before a run.
    fn raise_warnings(&self, py: Python<'_>) -> PyResult<()> {
        for w in self.loaded.scenario.warnings() {
            crate::warn(py, &format!("scenario: {w}"))?;
        }
        Ok(())
    }
}

/// The warnings of a prepared run that the command line prints (shape repairs, contact shape).
fn prepared_warnings(job: &Job, prepared: &PreparedRun) {
    for w in &prepared.shape.warnings {
        job.warn(format!("shape model: {w}"));
    }
    for w in prepared.contact.iter().flat_map(|c| &c.warnings) {
        job.warn(format!("contact shape: {w}"));
    }
}

#[pymethods]
impl PyScenario {
    /// Reads a scenario from JSON text (a str starting with "{"), bytes, or a path (str or
    /// os.PathLike; "builtin:example" is the built-in example). Relative shape paths in text
    /// or bytes are resolved against `base_dir` (default: the current folder).
    ///
    /// Raises `SpinfallOSError` when the file cannot be read and `SpinfallError` naming the
    /// field path, line and column when the document is refused.
    #[staticmethod]
    #[pyo3(signature = (source, base_dir = None))]
    fn from_json(
        py: Python<'_>,
        source: &Bound<'_, PyAny>,
        base_dir: Option<PathBuf>,
    ) -> PyResult<PyScenario> {
        let dir = base_dir.unwrap_or_else(|| PathBuf::from("."));
        let source = if let Ok(text) = source.cast::<PyString>() {
            let text = text.to_str()?;
            if text == BUILTIN_SCENARIO {
                ScenarioSource::Builtin
            } else if text.trim_start().starts_with('{') {
                ScenarioSource::Bytes {
                    name: "JSON text".into(),
                    bytes: Arc::new(text.as_bytes().to_vec()),
                    dir,
                }
            } else {
                ScenarioSource::File(PathBuf::from(text))
            }
        } else if let Ok(bytes) = source.cast::<PyBytes>() {
            ScenarioSource::Bytes {
                name: "JSON bytes".into(),
                bytes: Arc::new(bytes.as_bytes().to_vec()),
                dir,
            }
        } else {
            let path: PathBuf = source.extract().map_err(|_| {
                invalid("source must be JSON text, bytes, or a path (str or os.PathLike)")
            })?;
            ScenarioSource::File(path)
        };
        let loaded = py.detach(|| read_scenario(&source)).py()?;
        Ok(PyScenario { loaded })
    }

    /// The built-in example (`builtin:example`): hops from the demo body.
    #[staticmethod]
    fn builtin() -> PyResult<PyScenario> {
        let loaded = read_scenario(&ScenarioSource::Builtin).py()?;
        Ok(PyScenario { loaded })
    }

    /// The document as pretty JSON (defaults written out).
    fn to_json(&self) -> PyResult<String> {
        self.loaded
            .scenario
            .to_json_string_pretty()
            .map_err(|e| invalid(format!("scenario {}: {e}", self.loaded.describe())))
    }

    /// The scenario's name, if it has one.
    #[getter]
    fn name(&self) -> Option<String> {
        self.loaded.scenario.name.clone()
    }

    /// The body's name: the scenario's `body.name`, else the shape file's stem.
    #[getter]
    fn body_name(&self) -> String {
        self.loaded.scenario.body_name()
    }

    /// Where the scenario came from (its path, "JSON text", or "builtin:example").
    #[getter]
    fn source(&self) -> String {
        self.loaded.describe()
    }

    /// The folder its relative shape paths are resolved against.
    #[getter]
    fn base_dir(&self) -> PathBuf {
        self.loaded.dir.clone()
    }

    /// Number of launches once fans and dispersion sets are expanded.
    #[getter]
    fn launch_count(&self) -> u64 {
        self.loaded.scenario.launch_count()
    }

    /// Settings that have no effect (the command line prints them as warnings).
    #[getter]
    fn warnings(&self) -> Vec<String> {
        self.loaded.scenario.warnings()
    }

    /// The scenario's shape model, opened with its unit and recentring.
    fn shape(&self, py: Python<'_>) -> PyResult<PyShape> {
        PyShape::open(py, self.loaded.shape_request())
    }

    /// Flies every launch, as `spinfall fly` does, and returns a `FlightResults`.
    ///
    /// The flights run on worker threads with the GIL released. `progress(stage, done,
    /// total)`, if given, is called on this thread when the figures change: stage "field"
    /// while an interpolated field is built, "targeting" while targeted launches are solved,
    /// "flights" with launches done of total. Ctrl+C (or an exception raised by `progress`)
    /// cancels the run, waits for the workers to stop, and is raised; no partial results are
    /// kept. `max_launches` overrides the scenario's launch limit (`--max-launches`).
    #[pyo3(signature = (
        progress = None,
        *,
        method = None,
        max_rel_error = None,
        max_memory_mb = None,
        cache_dir = None,
        max_launches = None,
    ))]
    #[allow(clippy::too_many_arguments, reason = "Python keyword arguments")]
    fn fly(
        &self,
        py: Python<'_>,
        progress: Option<Bound<'_, PyAny>>,
        method: Option<&str>,
        max_rel_error: Option<f64>,
        max_memory_mb: Option<u64>,
        cache_dir: Option<PathBuf>,
        max_launches: Option<u64>,
    ) -> PyResult<PyFlightResults> {
        let options = PrepareOptions {
            limits: Limits {
                max_launches,
                memory_bytes: None,
            },
            gravity: gravity_options(method, max_rel_error, max_memory_mb, cache_dir)?,
            ..PrepareOptions::new(Purpose::Fly)
        };
        self.raise_warnings(py)?;
        let loaded = self.loaded.clone();
        let (done, field) = run_in_background(py, progress.as_ref(), move |job| {
            let targeting = |_: &str, flights: usize, max: usize| {
                job.report("targeting", flights, max);
            };
            let prepared =
                prepare_with_targeting(loaded, &options, &job.build_hooks(), &targeting)?;
            prepared_warnings(job, &prepared);
            let progress = |done: usize, total: usize| job.report("flights", done, total);
            let done = spinfall_workflow::run::run(&prepared, &progress, job.cancel())?;
            Ok((done, prepared.field))
        })?;
        Ok(PyFlightResults::new(done, field))
    }

    /// The per-face surface map of the scenario's body, as `spinfall map` computes it, as a
    /// dict of new arrays (one row per face): `face` (int64), `centroid_m` (n, 3), `lat_deg`,
    /// `lon_deg`, `eff_acc_m_s2` (n, 3), then one array per map column named as in the CSV
    /// (`slope_deg`, `geopotential_m2_s2`, `effective_gravity_m_s2`,
    /// `escape_speed_normal_m_s`, `escape_speed_min_m_s`, `radial_sign`) and, for a scenario
    /// with a Sun, the sunlight columns (`sunlit`, `radiation_pressure_to_gravity`,
    /// `radiation_pressure_tangential_m_s2`; NaN where the CSV cell is empty).
    ///
    /// Runs off the Python thread like `fly()`; `progress(stage, done, total)` gets stage
    /// "field" during an interpolated build and "map" with faces done of total.
    #[pyo3(signature = (
        progress = None,
        *,
        method = None,
        max_rel_error = None,
        max_memory_mb = None,
        cache_dir = None,
    ))]
    fn surface_map<'py>(
        &self,
        py: Python<'py>,
        progress: Option<Bound<'py, PyAny>>,
        method: Option<&str>,
        max_rel_error: Option<f64>,
        max_memory_mb: Option<u64>,
        cache_dir: Option<PathBuf>,
    ) -> PyResult<Bound<'py, PyDict>> {
        let options = PrepareOptions {
            gravity: gravity_options(method, max_rel_error, max_memory_mb, cache_dir)?,
            ..PrepareOptions::new(Purpose::BodyOnly)
        };
        self.raise_warnings(py)?;
        let loaded = self.loaded.clone();
        let faces = run_in_background(py, progress.as_ref(), move |job| {
            let prepared = prepare_with_hooks(loaded, &options, &job.build_hooks())?;
            prepared_warnings(job, &prepared);
            let progress = |done: usize, total: usize| job.report("map", done, total);
            let map = compute_scenario_surface_map(
                &prepared.body,
                prepared.scenario(),
                &progress,
                job.cancel(),
            )?;
            Ok(MapFaces::of(&prepared, map))
        })?;
        faces.into_dict(py)
    }

    fn __repr__(&self) -> String {
        format!(
            "Scenario({:?}, body={:?}, launches={})",
            self.loaded.describe(),
            self.body_name(),
            self.launch_count()
        )
    }
}

/// A surface map with the per-face geometry its CSV adds (centroids, latitude and longitude
/// about the spin axis).
struct MapFaces {
    centroids_m: Vec<[f64; 3]>,
    lat_lon_deg: Vec<(f64, f64)>,
    map: SurfaceMap,
}

impl MapFaces {
    fn of(prepared: &PreparedRun, map: SurfaceMap) -> MapFaces {
        let body = prepared.body.as_ref();
        let shape = body.shape.as_ref();
        let centroids: Vec<_> = (0..shape.face_count())
            .map(|f| shape.face_centroid(f))
            .collect();
        MapFaces {
            lat_lon_deg: centroids.iter().map(|c| lat_lon_deg(body, c)).collect(),
            centroids_m: centroids.iter().map(|c| [c.x, c.y, c.z]).collect(),
            map,
        }
    }

    fn into_dict(self, py: Python<'_>) -> PyResult<Bound<'_, PyDict>> {
        let n = self.centroids_m.len();
        if self.map.len() != n {
            return Err(invalid(format!(
                "the surface map has {} faces but the shape has {n}",
                self.map.len()
            )));
        }
        let dict = PyDict::new(py);
        let faces: Vec<i64> = (0..n as i64).collect();
        dict.set_item("face", arrays::integers(py, faces))?;
        dict.set_item(
            "centroid_m",
            arrays::rows3(py, self.centroids_m.iter().copied()),
        )?;
        dict.set_item(
            "lat_deg",
            arrays::scalars(py, self.lat_lon_deg.iter().map(|l| l.0).collect()),
        )?;
        dict.set_item(
            "lon_deg",
            arrays::scalars(py, self.lat_lon_deg.iter().map(|l| l.1).collect()),
        )?;
        dict.set_item(
            "eff_acc_m_s2",
            arrays::rows3(py, self.map.effective_acceleration_m_s2.iter().copied()),
        )?;
        let sun: &[SurfaceField] = if self.map.sunlight.is_some() {
            &SurfaceField::SUNLIGHT
        } else {
            &[]
        };
        for field in SurfaceField::ALL.iter().chain(sun) {
            let values = self.map.values(*field);
            if values.len() != n {
                return Err(invalid(format!(
                    "the surface map's {} has {} values but the shape has {n} faces",
                    field.column(),
                    values.len()
                )));
            }
            dict.set_item(field.column(), arrays::scalars(py, values.to_vec()))?;
        }
        Ok(dict)
    }
}
