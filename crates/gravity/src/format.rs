//! Shape-model file formats: which one a file is in (by its name, confirmed by its content) and
//! the one entry point that reads any of them into a [`Mesh`].
//!
//! | format | extensions | confirmed by |
//! |---|---|---|
//! | Wavefront OBJ | `.obj` | not PLY (`ply` magic) and not STL (see below) |
//! | PLY, ASCII or binary | `.ply` | the first line is `ply` |
//! | STL, ASCII or binary | `.stl` | binary: size `84 + 50 n` for its count `n`; ASCII: begins with `solid` |
//!
//! Extensions are compared without regard to case. A name with another extension (or none) is
//! read as what its content shows: PLY by its magic line, STL by its size or `solid ... facet`,
//! OBJ otherwise. A file whose content contradicts its extension (a `.obj` that is PLY, a `.ply`
//! without the magic line) is refused, naming both.

use std::fmt;

use crate::error::{GravityError, Result};
use crate::mesh::{LengthUnit, Mesh};
use crate::validate::Warning;

/// The format of a shape-model file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ShapeFormat {
    /// Wavefront OBJ text.
    Obj,
    /// PLY, ASCII or binary (either byte order).
    Ply,
    /// STL, ASCII or binary.
    Stl,
}

impl fmt::Display for ShapeFormat {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ShapeFormat::Obj => "OBJ",
            ShapeFormat::Ply => "PLY",
            ShapeFormat::Stl => "STL",
        })
    }
}

impl ShapeFormat {
    /// Every format, in the order front ends list them.
    pub const ALL: [ShapeFormat; 3] = [ShapeFormat::Obj, ShapeFormat::Ply, ShapeFormat::Stl];

    /// File extensions (lower case, without the dot) of every format, for open dialogs.
    pub const EXTENSIONS: [&'static str; 3] = ["obj", "ply", "stl"];

    /// The format a file name's extension names (case-insensitive), if any.
    pub fn from_name(name: &str) -> Option<ShapeFormat> {
        let (_, ext) = name.rsplit_once('.')?;
        if ext.contains(['/', '\\']) {
            return None;
        }
        match ext.to_ascii_lowercase().as_str() {
            "obj" => Some(ShapeFormat::Obj),
            "ply" => Some(ShapeFormat::Ply),
            "stl" => Some(ShapeFormat::Stl),
            _ => None,
        }
    }

    /// The format the content shows: PLY by its magic line, STL by its binary size or
    /// `solid ... facet`, OBJ otherwise.
    pub fn sniff(bytes: &[u8]) -> ShapeFormat {
        if crate::ply::has_magic(bytes) {
            ShapeFormat::Ply
        } else if crate::stl::looks_like_stl(bytes) {
            ShapeFormat::Stl
        } else {
            ShapeFormat::Obj
        }
    }

    /// The format of a file called `name` holding `bytes`: by extension, confirmed by content;
    /// by content alone when the extension names no format.
    ///
    /// # Errors
    /// [`GravityError::FormatMismatch`] when the content is another format than the extension
    /// says (a `.ply` without the `ply` line, a `.obj` or `.stl` that is PLY, a `.obj` that is
    /// STL).
    pub fn resolve(name: &str, bytes: &[u8]) -> Result<ShapeFormat> {
        let sniffed = ShapeFormat::sniff(bytes);
        let Some(named) = ShapeFormat::from_name(name) else {
            return Ok(sniffed);
        };
        let agrees = match named {
            ShapeFormat::Ply => sniffed == ShapeFormat::Ply,
            // An STL that is neither valid binary nor ASCII is left to the STL reader, which
            // says what is wrong with it (e.g. a count that disagrees with the size).
            ShapeFormat::Stl => sniffed != ShapeFormat::Ply,
            ShapeFormat::Obj => sniffed == ShapeFormat::Obj,
        };
        if agrees {
            Ok(named)
        } else {
            Err(GravityError::FormatMismatch {
                named,
                found: sniffed,
            })
        }
    }
}

/// Reads a shape model in `format` whose coordinates are in `unit` into a [`Mesh`] in metres.
///
/// The mesh is not validated (closedness, orientation...): [`crate::ShapeModel::new`] does that.
/// PLY faces with more than 3 corners are fan-triangulated, as OBJ polygons are; STL corners
/// with exactly equal coordinates are welded into one vertex (tolerance zero).
///
/// # Errors
/// [`GravityError::Parse`] (OBJ) or [`GravityError::Malformed`] (PLY, STL) naming the line, or
/// the byte offset and element of binary data; [`GravityError::InvalidMesh`] for a file without
/// vertices or faces.
pub fn parse_shape(
    bytes: &[u8],
    format: ShapeFormat,
    unit: LengthUnit,
) -> Result<(Mesh, Vec<Warning>)> {
    match format {
        ShapeFormat::Obj => crate::obj::parse_obj(bytes, unit),
        ShapeFormat::Ply => Ok((crate::ply::parse_ply(bytes, unit)?, Vec::new())),
        ShapeFormat::Stl => Ok((crate::stl::parse_stl(bytes, unit)?, Vec::new())),
    }
}
