//! Opening shape models: from a path, from bytes (a dropped file, a test), or the built-in demo
//! body; in their length unit; recentred on the centre of mass or not. OBJ, PLY (ASCII and
//! binary) and STL (ASCII and binary) are read, the format chosen by the file's extension and
//! confirmed by its content (see [`spinfall_gravity::ShapeFormat`]).
//!
//! The one place shape files are read: the command line and the app both open models here, so
//! the same file with the same settings gives the same body in both.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use spinfall_gravity::{LengthUnit, ShapeModel, Warning};

use crate::error::{Result, WorkflowError};

/// The name that selects the built-in demo body instead of a file.
pub const BUILTIN_SHAPE: &str = "builtin:quillon";

/// Where a shape model comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum ShapeSource {
    /// The built-in demo body (always in kilometres).
    Builtin,
    /// A shape-model file: OBJ, PLY or STL, by extension confirmed by content
    /// ([`spinfall_gravity::ShapeFormat::resolve`]).
    File(PathBuf),
    /// A shape model's bytes already in memory, with a name for messages (its extension picks
    /// the format as for a file).
    Bytes {
        /// Shown in messages and used as the body name (its file stem).
        name: String,
        /// The file's bytes.
        bytes: Arc<Vec<u8>>,
    },
}

impl ShapeSource {
    /// A path, or [`BUILTIN_SHAPE`] for the demo body.
    pub fn from_spec(spec: &str) -> ShapeSource {
        if spec == BUILTIN_SHAPE {
            ShapeSource::Builtin
        } else {
            ShapeSource::File(PathBuf::from(spec))
        }
    }

    /// How the source is named in messages.
    pub fn describe(&self) -> String {
        match self {
            ShapeSource::Builtin => BUILTIN_SHAPE.to_string(),
            ShapeSource::File(path) => path.display().to_string(),
            ShapeSource::Bytes { name, .. } => name.clone(),
        }
    }

    /// The body's default name: the demo name or the file stem.
    pub fn body_name(&self) -> String {
        let stem = |p: &Path| {
            p.file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_else(|| "shape".into())
        };
        match self {
            ShapeSource::Builtin => spinfall_gravity::demo::NAME.to_string(),
            ShapeSource::File(path) => stem(path),
            ShapeSource::Bytes { name, .. } => stem(Path::new(name)),
        }
    }
}

/// What to open and how.
#[derive(Debug, Clone, PartialEq)]
pub struct ShapeRequest {
    /// Where from.
    pub source: ShapeSource,
    /// Length unit of the file's coordinates (ignored for the demo body, which is in km).
    pub unit: LengthUnit,
    /// Translate the model so its centre of mass is the origin of the body frame.
    pub recenter: bool,
}

/// An opened shape model.
#[derive(Debug, Clone)]
pub struct OpenedShape {
    /// The request it was opened with.
    pub request: ShapeRequest,
    /// The validated model (recentred if asked).
    pub shape: Arc<ShapeModel>,
    /// What validation repaired.
    pub warnings: Vec<Warning>,
}

impl OpenedShape {
    /// The body's default name.
    pub fn name(&self) -> String {
        self.request.source.body_name()
    }

    /// The unit the coordinates were read in (km for the demo body).
    pub fn unit(&self) -> LengthUnit {
        match self.request.source {
            ShapeSource::Builtin => LengthUnit::Kilometre,
            _ => self.request.unit,
        }
    }
}

/// Reads, validates and (if asked) recentres a shape model.
///
/// # Errors
/// [`WorkflowError::Read`] when the file cannot be read, [`WorkflowError::Shape`] naming the
/// file and the problem (line, face, edge, encoding) when the model is refused.
pub fn open_shape(request: &ShapeRequest) -> Result<OpenedShape> {
    let what = request.source.describe();
    let refused = |error| WorkflowError::Shape {
        what: what.clone(),
        error,
    };
    let (shape, warnings) = match &request.source {
        ShapeSource::Builtin => ShapeModel::from_obj(
            spinfall_gravity::demo::OBJ_KM.as_bytes(),
            LengthUnit::Kilometre,
        )
        .map_err(refused)?,
        ShapeSource::File(path) => {
            let bytes = std::fs::read(path).map_err(|error| WorkflowError::Read {
                path: path.clone(),
                error,
            })?;
            ShapeModel::from_named_bytes(&path.to_string_lossy(), &bytes, request.unit)
                .map_err(refused)?
        }
        ShapeSource::Bytes { name, bytes } => {
            ShapeModel::from_named_bytes(name, bytes, request.unit).map_err(refused)?
        }
    };
    let shape = if request.recenter {
        shape.recentered()
    } else {
        shape
    };
    Ok(OpenedShape {
        request: request.clone(),
        shape: Arc::new(shape),
        warnings,
    })
}
