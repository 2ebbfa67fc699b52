//! results.json as a self-describing file: the scenario it ran is embedded
//! ([`EmbeddedScenario`]), and [`read_results`] reads the file back (launch reports without
//! trajectories) so that statistics can be recomputed from it alone ([`open_results_body`]).
//!
//! **Where the shape model is looked for.** `builtin:quillon` needs no file. An absolute path is
//! used as written. A relative path is resolved against the folder of the scenario file the run
//! read (`scenario_dir`, recorded as an absolute path), then against the results file's folder.
//! If the file is in neither place (it moved), the error says where it looked and asks for the
//! new place (`--shape` on the command line). Whatever file is opened must be the one the run
//! flew: its face count and volume are compared with `shape_check` in the results file, and a
//! different model is refused.
//!
//! Files written before the scenario was embedded still read: they have no scenario, and the
//! statistics then say that the run must be flown again.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::{BUILTIN_QUILLON, FieldMethodSpec, Scenario};
use spinfall_gravity::text::excerpt;

use crate::error::{Result, WorkflowError};
use crate::gravity_method::{FieldUsed, GravityOptions};
use crate::prepare::{PrepareOptions, PreparedRun, Purpose, prepare};
use crate::scenario_file::LoadedScenario;

/// What the results file says about the shape model, to recognise it when it is reopened.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ShapeCheck {
    /// Faces of the model.
    pub faces: usize,
    /// Its volume, m³ (in the scenario's unit, after recentring).
    pub volume_m3: f64,
}

/// The scenario a run flew, as embedded in its results.json.
#[derive(Debug, Clone, PartialEq)]
pub struct EmbeddedScenario {
    /// The scenario, as read (its shape path as written).
    pub scenario: Scenario,
    /// Absolute folder its relative shape path was resolved against (`None`: unknown, or the
    /// scenario names no file).
    pub scenario_dir: Option<PathBuf>,
    /// The shape model's face count and volume.
    pub shape_check: Option<ShapeCheck>,
}

impl EmbeddedScenario {
    /// The embedded scenario of a prepared run: the scenario, its folder made absolute, and the
    /// shape check.
    pub fn of_run(run: &PreparedRun) -> EmbeddedScenario {
        let dir = &run.loaded.dir;
        // A scenario that names no file (the built-in body, no contact shape) needs no folder:
        // recording one (the working folder of the process) would make results depend on
        // where they were flown.
        let body = &run.scenario().body;
        let names_files = body.shape != BUILTIN_QUILLON || body.contact_shape.is_some();
        let scenario_dir = names_files
            .then(|| {
                std::fs::canonicalize(dir)
                    .ok()
                    .or_else(|| std::path::absolute(dir).ok())
            })
            .flatten();
        EmbeddedScenario {
            scenario: run.scenario().clone(),
            scenario_dir,
            shape_check: Some(ShapeCheck {
                faces: run.shape.shape.face_count(),
                volume_m3: run.shape.shape.mass_properties().volume_m3,
            }),
        }
    }
}

/// A results file read back.
#[derive(Debug, Clone)]
pub struct StoredResults {
    /// The file, for messages.
    pub name: String,
    /// Its folder.
    pub dir: PathBuf,
    /// The scenario it ran (`None` in files written before it was embedded).
    pub embedded: Option<EmbeddedScenario>,
    /// How its gravity was computed (`None` in files without the record); the store outcome
    /// and the build time are not in the file.
    pub field: Option<FieldUsed>,
    /// One report per launch, without trajectories.
    pub reports: Vec<FlightReport>,
}

/// The top level of results.json as read back.
#[derive(Deserialize)]
struct ResultsDoc {
    format: String,
    version: u32,
    #[serde(default)]
    field: Option<FieldUsed>,
    #[serde(default)]
    scenario: Option<serde_json::Value>,
    #[serde(default)]
    scenario_dir: Option<PathBuf>,
    #[serde(default)]
    shape_check: Option<ShapeCheck>,
    launches: Vec<FlightReport>,
}

/// Reads a results.json written by `spinfall fly` (or an export). The file is parsed as it is
/// read: the launches are held once, as reports, not also as text.
///
/// # Errors
/// [`WorkflowError::Read`] when it cannot be read; [`WorkflowError::Invalid`] naming the file
/// and what is wrong (with the path of the offending value, such as `launches[3].outcome`) when
/// it is not a Spinfall results file.
pub fn read_results(path: &Path) -> Result<StoredResults> {
    let file = std::fs::File::open(path).map_err(|error| WorkflowError::Read {
        path: path.to_path_buf(),
        error,
    })?;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    parse_results_from(
        std::io::BufReader::with_capacity(1 << 16, file),
        &path.display().to_string(),
        dir,
    )
}

/// Parses results.json bytes (`name` for messages, `dir` its folder).
///
/// # Errors
/// As [`read_results`].
pub fn parse_results(bytes: &[u8], name: &str, dir: PathBuf) -> Result<StoredResults> {
    let bad = |what: String| WorkflowError::Invalid(format!("results file {name}: {what}"));
    let text =
        spinfall_gravity::text::decode_utf8(bytes, spinfall_gravity::text::InvalidBytes::Refuse)
            .map_err(|e| bad(e.to_string()))?;
    parse_results_from(text.as_bytes(), name, dir)
}

/// Parses results.json from `source` as it is read.
fn parse_results_from(
    source: impl std::io::Read,
    name: &str,
    dir: PathBuf,
) -> Result<StoredResults> {
    let bad = |what: String| WorkflowError::Invalid(format!("results file {name}: {what}"));
    let mut de = serde_json::Deserializer::from_reader(source);
    let doc: ResultsDoc = serde_path_to_error::deserialize(&mut de).map_err(|e| {
        let path = e.path().to_string();
        let inner = e.into_inner();
        if let Some(kind) = inner.io_error_kind() {
            return WorkflowError::Read {
                path: PathBuf::from(name),
                error: std::io::Error::new(kind, inner.to_string()),
            };
        }
        let what = excerpt(&inner.to_string());
        // "." is the document itself; "?" is where the text ended before the value did.
        bad(if path == "." || path == "?" {
            what
        } else {
            format!("{path}: {what}")
        })
    })?;
    de.end().map_err(|e| bad(excerpt(&e.to_string())))?;
    if doc.format != "spinfall-results" {
        return Err(bad(format!(
            "format is {} where \"spinfall-results\" is expected",
            excerpt(&doc.format)
        )));
    }
    if doc.version != 1 {
        return Err(bad(format!(
            "version {} is not read by this build (it reads 1)",
            doc.version
        )));
    }
    let embedded = match doc.scenario {
        None => None,
        Some(value) => {
            let scenario = Scenario::from_json_str(&value.to_string())
                .map_err(|e| bad(format!("scenario.{e}")))?;
            Some(EmbeddedScenario {
                scenario,
                scenario_dir: doc.scenario_dir,
                shape_check: doc.shape_check,
            })
        }
    };
    Ok(StoredResults {
        name: name.into(),
        dir,
        embedded,
        field: doc.field,
        reports: doc.launches,
    })
}

/// The body of a results file's embedded scenario, reopened (shape, spin; gravity by the
/// direct method, which statistics do not use). `shape` replaces the scenario's shape path
/// (a model that moved); see the module docs for where the file is looked for.
///
/// # Errors
/// No embedded scenario; the shape file not found or not the one the run flew; the scenario's
/// body refused.
pub fn open_results_body(stored: &StoredResults, shape: Option<&Path>) -> Result<PreparedRun> {
    let Some(embedded) = &stored.embedded else {
        return Err(WorkflowError::Invalid(format!(
            "results file {} has no embedded scenario (it was written before results.json \
             carried one); fly the scenario again to get a self-describing results file",
            stored.name
        )));
    };
    let mut scenario = embedded.scenario.clone();
    let written = scenario.body.shape.clone();
    if let Some(path) = shape {
        scenario.body.shape = path.to_string_lossy().into_owned();
    } else if written != BUILTIN_QUILLON && !Path::new(&written).is_absolute() {
        let mut looked = Vec::new();
        if let Some(d) = &embedded.scenario_dir {
            looked.push(d.join(&written));
        }
        looked.push(stored.dir.join(&written));
        match looked.iter().find(|p| p.is_file()) {
            Some(found) => scenario.body.shape = found.to_string_lossy().into_owned(),
            None => {
                let places: Vec<String> = looked.iter().map(|p| p.display().to_string()).collect();
                return Err(WorkflowError::Invalid(format!(
                    "results file {}: the shape model {} of its scenario is not found (looked \
                     for {}); if it moved, give its new place (--shape PATH)",
                    stored.name,
                    excerpt(&written),
                    places.join(" and ")
                )));
            }
        }
    } else if written != BUILTIN_QUILLON && !Path::new(&written).is_file() {
        return Err(WorkflowError::Invalid(format!(
            "results file {}: the shape model {} of its scenario is not found; if it moved, \
             give its new place (--shape PATH)",
            stored.name,
            excerpt(&written)
        )));
    }
    let loaded = LoadedScenario::in_memory(scenario, stored.name.clone(), stored.dir.clone());
    let options = PrepareOptions {
        gravity: GravityOptions {
            method: Some(FieldMethodSpec::Direct),
            ..GravityOptions::default()
        },
        ..PrepareOptions::new(Purpose::BodyOnly)
    };
    let run = prepare(loaded, &options)?;
    if let Some(check) = &embedded.shape_check {
        let faces = run.shape.shape.face_count();
        let volume = run.shape.shape.mass_properties().volume_m3;
        let same_volume = (volume - check.volume_m3).abs() <= 1e-9 * check.volume_m3.abs();
        if faces != check.faces || !same_volume {
            return Err(WorkflowError::Invalid(format!(
                "results file {}: the shape model {} is not the one the run flew ({faces} faces \
                 and {volume} m³ against {} faces and {} m³)",
                stored.name,
                excerpt(&run.scenario().body.shape),
                check.faces,
                check.volume_m3
            )));
        }
    }
    Ok(run)
}
