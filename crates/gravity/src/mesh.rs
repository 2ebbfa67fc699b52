//! The triangle mesh of a shape model, in metres.

use nalgebra::{Point3, Vector3};
use serde::{Deserialize, Serialize};

/// Length unit of the coordinates in a shape-model file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum LengthUnit {
    /// Kilometres (the usual unit of published shape models).
    #[default]
    #[serde(rename = "km")]
    Kilometre,
    /// Metres.
    #[serde(rename = "m")]
    Metre,
}

impl LengthUnit {
    /// Metres per file unit.
    pub fn metres_per_unit(self) -> f64 {
        match self {
            LengthUnit::Kilometre => 1000.0,
            LengthUnit::Metre => 1.0,
        }
    }
}

impl std::str::FromStr for LengthUnit {
    type Err = String;
    fn from_str(s: &str) -> std::result::Result<Self, Self::Err> {
        match s {
            "km" => Ok(LengthUnit::Kilometre),
            "m" => Ok(LengthUnit::Metre),
            other => Err(format!(
                "unknown length unit {other:?}: expected \"km\" or \"m\""
            )),
        }
    }
}

impl std::fmt::Display for LengthUnit {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            LengthUnit::Kilometre => "km",
            LengthUnit::Metre => "m",
        })
    }
}

/// A closed, outward-oriented triangle mesh in metres.
///
/// Faces list vertex indices counter-clockwise seen from outside (outward normals).
/// A `Mesh` straight from [`crate::generate`] or [`crate::parse_obj`] satisfies this; a
/// hand-built one is checked by [`crate::ShapeModel::new`].
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Mesh {
    /// Vertex positions, metres.
    pub vertices_m: Vec<Point3<f64>>,
    /// Triangles as indices into `vertices_m`.
    pub faces: Vec<[u32; 3]>,
}

impl Mesh {
    /// The three corners of face `face`.
    pub fn triangle(&self, face: usize) -> [Point3<f64>; 3] {
        let [a, b, c] = self.faces[face];
        [
            self.vertices_m[a as usize],
            self.vertices_m[b as usize],
            self.vertices_m[c as usize],
        ]
    }

    /// Non-normalised normal of face `face` (length = twice the area).
    pub fn face_cross(&self, face: usize) -> Vector3<f64> {
        let [a, b, c] = self.triangle(face);
        (b - a).cross(&(c - a))
    }
}
