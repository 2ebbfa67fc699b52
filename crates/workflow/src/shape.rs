//! Opening shape models: from a path, from bytes (a dropped file, a test), or the built-in demo
//! body; in their length unit; recentred on the centre of mass or not. OBJ, PLY (ASCII and
//! binary) and STL (ASCII and binary) are read, the format chosen by the file's extension and
//! confirmed by its content (see [`spinfall_gravity::ShapeFormat`]).
//!
//! The one place shape files are read: the command line and the app both open models here, so
//! the same file with the same settings gives the same body in both.

use std::borrow::Cow;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use spinfall_dynamics::contact::{ContactShape, check_same_body};
use spinfall_dynamics::scenario::ContactKind;
use spinfall_gravity::{LengthUnit, ShapeFormat, ShapeModel, Warning, parse_shape};

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
    /// How far the model was moved to put its centre of mass at the origin, m (zero when not
    /// recentred); a contact shape is moved by the same offset.
    pub recentred_by_m: [f64; 3],
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
    let (name, bytes) = read_bytes(&request.source)?;
    let (shape, warnings) =
        ShapeModel::from_named_bytes(&name, &bytes, request_unit(request)).map_err(refused)?;
    let (shape, recentred_by_m) = if request.recenter {
        let com = shape.mass_properties().center_of_mass_m;
        (shape.recentered(), [-com.x, -com.y, -com.z])
    } else {
        (shape, [0.0; 3])
    };
    Ok(OpenedShape {
        request: request.clone(),
        shape: Arc::new(shape),
        warnings,
        recentred_by_m,
    })
}

/// The unit the file is read in: km for the demo body, else the request's.
fn request_unit(request: &ShapeRequest) -> LengthUnit {
    match request.source {
        ShapeSource::Builtin => LengthUnit::Kilometre,
        _ => request.unit,
    }
}

/// Reads the source's bytes, or the error of reading them.
fn read_bytes(source: &ShapeSource) -> Result<(String, Cow<'_, [u8]>)> {
    Ok(match source {
        ShapeSource::Builtin => (
            "builtin.obj".into(),
            Cow::Borrowed(spinfall_gravity::demo::OBJ_KM.as_bytes()),
        ),
        ShapeSource::File(path) => {
            let bytes = std::fs::read(path).map_err(|error| WorkflowError::Read {
                path: path.clone(),
                error,
            })?;
            (path.to_string_lossy().into_owned(), Cow::Owned(bytes))
        }
        ShapeSource::Bytes { name, bytes } => (name.clone(), Cow::Borrowed(bytes.as_slice())),
    })
}

/// A contact shape opened and placed in the gravity shape's body frame.
#[derive(Debug, Clone)]
pub struct OpenedContact {
    /// Where it came from and its unit (`recenter` is not used: the gravity shape's offset
    /// applies).
    pub request: ShapeRequest,
    /// The contact shape, placed.
    pub contact: ContactShape,
    /// What validation repaired, and a global model that does not match the gravity shape
    /// ([`spinfall_dynamics::contact::check_same_body`]).
    pub warnings: Vec<String>,
}

/// Opens the contact shape of `request` as `kind` and places it with `gravity`'s recentring
/// offset, so both files share one body frame.
///
/// # Errors
/// [`WorkflowError::Read`] when the file cannot be read, [`WorkflowError::Shape`] naming the
/// contact file and the problem (a closed model that is not closed, a patch without boundary,
/// ...).
pub fn open_contact_shape(
    request: &ShapeRequest,
    kind: ContactKind,
    gravity: &OpenedShape,
) -> Result<OpenedContact> {
    let what = format!("contact shape {}", request.source.describe());
    let refused = |error| WorkflowError::Shape {
        what: what.clone(),
        error,
    };
    let (name, bytes) = read_bytes(&request.source)?;
    let unit = request_unit(request);
    let format = ShapeFormat::resolve(&name, &bytes).map_err(refused)?;
    let (mesh, parse_warnings) = parse_shape(&bytes, format, unit).map_err(refused)?;
    let offset = nalgebra::Vector3::from(gravity.recentred_by_m);
    let gravity_mp = gravity.shape.mass_properties();
    let mut warnings: Vec<String> = parse_warnings.iter().map(ToString::to_string).collect();
    let contact = match kind {
        ContactKind::Global => {
            let (model, more) = ShapeModel::new(mesh).map_err(refused)?;
            warnings.extend(more.iter().map(ToString::to_string));
            let placed = model.translated(&offset);
            if let Some(w) = check_same_body(gravity_mp, placed.mass_properties()) {
                warnings.push(w);
            }
            ContactShape::Global(Arc::new(placed))
        }
        ContactKind::Patch => {
            let centre_in_file = gravity_mp.center_of_mass_m - offset;
            let (model, more) = ShapeModel::new_patch(mesh, centre_in_file).map_err(refused)?;
            warnings.extend(more.iter().map(ToString::to_string));
            ContactShape::Patch(Arc::new(model.translated(&offset)))
        }
    };
    Ok(OpenedContact {
        request: request.clone(),
        contact,
        warnings,
    })
}
