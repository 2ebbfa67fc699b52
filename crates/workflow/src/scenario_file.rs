//! Scenario files: reading one (from a path, bytes, or the built-in example), finding its shape
//! model relative to it, and writing one to another folder with its shape path still right.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use spinfall_dynamics::scenario::{BUILTIN_QUILLON, Scenario};

use crate::error::{Result, WorkflowError};
use crate::shape::{ShapeRequest, ShapeSource};

/// The name that selects the built-in example scenario instead of a file.
pub const BUILTIN_SCENARIO: &str = "builtin:example";

/// Where a scenario comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum ScenarioSource {
    /// The built-in example on the demo body.
    Builtin,
    /// A JSON file; relative shape paths are resolved against its folder.
    File(PathBuf),
    /// JSON bytes already in memory; relative shape paths are resolved against `dir`.
    Bytes {
        /// Shown in messages.
        name: String,
        /// The document.
        bytes: Arc<Vec<u8>>,
        /// Folder for relative shape paths.
        dir: PathBuf,
    },
}

impl ScenarioSource {
    /// A path, or [`BUILTIN_SCENARIO`] for the example.
    pub fn from_spec(spec: &str) -> ScenarioSource {
        if spec == BUILTIN_SCENARIO {
            ScenarioSource::Builtin
        } else {
            ScenarioSource::File(PathBuf::from(spec))
        }
    }

    /// How the source is named in messages.
    pub fn describe(&self) -> String {
        match self {
            ScenarioSource::Builtin => BUILTIN_SCENARIO.into(),
            ScenarioSource::File(p) => p.display().to_string(),
            ScenarioSource::Bytes { name, .. } => name.clone(),
        }
    }
}

/// A parsed and checked scenario with the folder its relative paths mean.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadedScenario {
    /// The document.
    pub scenario: Scenario,
    /// How it is named in messages (its file, or what made it).
    pub name: String,
    /// Folder that relative shape paths are resolved against (`.` for the built-in one).
    pub dir: PathBuf,
}

impl LoadedScenario {
    /// A scenario made in memory (the app's session, named `name` in messages), with the
    /// folder its relative shape path is resolved against.
    pub fn in_memory(scenario: Scenario, name: impl Into<String>, dir: PathBuf) -> LoadedScenario {
        LoadedScenario {
            scenario,
            name: name.into(),
            dir,
        }
    }

    /// How to open the scenario's shape model: its path resolved against [`Self::dir`], its
    /// unit, and its `recenter` flag.
    pub fn shape_request(&self) -> ShapeRequest {
        let body = &self.scenario.body;
        let source = if body.shape == BUILTIN_QUILLON {
            ShapeSource::Builtin
        } else {
            ShapeSource::File(resolve(&self.dir, &body.shape))
        };
        ShapeRequest {
            source,
            unit: body.unit,
            recenter: body.recenter,
        }
    }

    /// What to open for the scenario's `body.contact_shape`, and how to use it; `None`
    /// without one. The unit defaults to `body.unit`; the path resolves as `body.shape`'s.
    pub fn contact_request(
        &self,
    ) -> Option<(ShapeRequest, spinfall_dynamics::scenario::ContactKind)> {
        let body = &self.scenario.body;
        let c = body.contact_shape.as_ref()?;
        let source = if c.path == BUILTIN_QUILLON {
            ShapeSource::Builtin
        } else {
            ShapeSource::File(resolve(&self.dir, &c.path))
        };
        Some((
            ShapeRequest {
                source,
                unit: c.unit.unwrap_or(body.unit),
                recenter: body.recenter,
            },
            c.kind,
        ))
    }

    /// A name for messages.
    pub fn describe(&self) -> String {
        self.name.clone()
    }
}

/// `path` as written in a scenario stored in `dir`.
fn resolve(dir: &Path, path: &str) -> PathBuf {
    let p = Path::new(path);
    if p.is_absolute() {
        p.to_path_buf()
    } else {
        dir.join(p)
    }
}

/// Reads and checks a scenario.
///
/// # Errors
/// [`WorkflowError::Read`] when the file cannot be read; [`WorkflowError::Scenario`] naming the
/// file, the field path, line and column when it is malformed or inconsistent.
pub fn read_scenario(source: &ScenarioSource) -> Result<LoadedScenario> {
    let what = source.describe();
    let refused = |error| WorkflowError::Scenario {
        what: what.clone(),
        error,
    };
    let (scenario, dir) = match source {
        ScenarioSource::Builtin => (Scenario::builtin_example(), PathBuf::from(".")),
        ScenarioSource::File(path) => {
            let bytes = std::fs::read(path).map_err(|error| WorkflowError::Read {
                path: path.clone(),
                error,
            })?;
            let dir = match path.parent() {
                Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
                _ => PathBuf::from("."),
            };
            (Scenario::from_json_bytes(&bytes).map_err(refused)?, dir)
        }
        ScenarioSource::Bytes { bytes, dir, .. } => (
            Scenario::from_json_bytes(bytes).map_err(refused)?,
            dir.clone(),
        ),
    };
    Ok(LoadedScenario {
        scenario,
        name: what,
        dir,
    })
}

/// The scenario as it must be written in folder `to_dir` so that its shape path still names
/// the same file: unchanged when written to the folder it was read from (or when absolute or
/// built in), otherwise relative to `to_dir` when the file is inside it, else absolute.
pub fn relocated(loaded: &LoadedScenario, to_dir: &Path) -> Scenario {
    let mut scenario = loaded.scenario.clone();
    if same_dir(&loaded.dir, to_dir) {
        return scenario;
    }
    scenario.body.shape = relocated_path(&loaded.dir, &scenario.body.shape, to_dir);
    if let Some(contact) = &mut scenario.body.contact_shape {
        contact.path = relocated_path(&loaded.dir, &contact.path, to_dir);
    }
    scenario
}

/// A shape path written in a scenario of folder `from_dir`, rewritten for a scenario in
/// `to_dir`: relative to it when the file lies below it, else absolute; `builtin:` names and
/// absolute paths unchanged.
fn relocated_path(from_dir: &Path, shape: &str, to_dir: &Path) -> String {
    if shape == BUILTIN_QUILLON || Path::new(shape).is_absolute() {
        return shape.to_string();
    }
    let full = resolve(from_dir, shape);
    let full = std::fs::canonicalize(&full).unwrap_or(full);
    let written = match std::fs::canonicalize(to_dir) {
        Ok(to) => match full.strip_prefix(&to) {
            Ok(rel) => rel.to_path_buf(),
            Err(_) => full,
        },
        Err(_) => full,
    };
    written.to_string_lossy().into_owned()
}

/// Whether two folder paths name the same folder.
fn same_dir(a: &Path, b: &Path) -> bool {
    let norm = |p: &Path| {
        let p = if p.as_os_str().is_empty() {
            Path::new(".")
        } else {
            p
        };
        std::fs::canonicalize(p).unwrap_or_else(|_| p.to_path_buf())
    };
    norm(a) == norm(b)
}

/// The scenario as the pretty JSON that [`read_scenario`] reads back to an equal scenario.
///
/// # Errors
/// [`WorkflowError::Scenario`] if it does not pass validation (it would not read back).
pub fn scenario_json(scenario: &Scenario) -> Result<String> {
    let refused = |error| WorkflowError::Scenario {
        what: "to be written".into(),
        error,
    };
    scenario.validate().map_err(refused)?;
    let mut text = scenario.to_json_string_pretty().map_err(refused)?;
    text.push('\n');
    Ok(text)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;
    use spinfall_dynamics::scenario::{ContactKind, ContactShapeSpec};

    /// A scenario written elsewhere keeps pointing at the same gravity and contact files.
    #[test]
    fn relocating_rewrites_the_gravity_and_the_contact_paths() {
        let root = tempfile::tempdir().unwrap();
        let models = root.path().join("models");
        let out = root.path().join("out");
        std::fs::create_dir_all(&models).unwrap();
        std::fs::create_dir_all(&out).unwrap();
        std::fs::write(models.join("rock.obj"), "").unwrap();
        std::fs::write(models.join("terrain.ply"), "").unwrap();
        let mut scenario = Scenario::builtin_example();
        scenario.body.shape = "rock.obj".into();
        scenario.body.contact_shape = Some(ContactShapeSpec {
            path: "terrain.ply".into(),
            unit: None,
            kind: ContactKind::Patch,
        });
        let loaded = LoadedScenario::in_memory(scenario, "test", models.clone());
        let moved = relocated(&loaded, &out);
        let canon = |p: PathBuf| std::fs::canonicalize(p).unwrap();
        assert_eq!(
            canon(resolve(&out, &moved.body.shape)),
            canon(models.join("rock.obj"))
        );
        let contact = moved.body.contact_shape.unwrap();
        assert_eq!(
            canon(resolve(&out, &contact.path)),
            canon(models.join("terrain.ply"))
        );
        assert_eq!(contact.kind, ContactKind::Patch);
        // Below the new folder: written relative to it.
        let inside = relocated(&loaded, root.path());
        assert_eq!(inside.body.shape, "models/rock.obj");
    }
}
