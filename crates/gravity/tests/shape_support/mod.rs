//! Helpers shared by the shape, mass, query and OBJ tests (one place touches the API).
#![allow(dead_code)]

use nalgebra::Point3;
use spinfall_gravity::{GravityError, LengthUnit, Mesh, ShapeModel, Warning};

/// Builds a shape model from a mesh the test knows is valid.
pub fn model(mesh: Mesh) -> ShapeModel {
    let (shape, warnings) = ShapeModel::new(mesh).unwrap();
    assert!(warnings.is_empty(), "unexpected warnings: {warnings:?}");
    shape
}

/// Parses OBJ text (in the given unit) into a shape model, with the warnings.
pub fn from_obj(text: &str, unit: LengthUnit) -> Result<(ShapeModel, Vec<Warning>), GravityError> {
    ShapeModel::from_obj(text.as_bytes(), unit)
}

/// Expects `text` to be refused; returns the error message, checking it contains every
/// fragment of `expected`.
pub fn check_refused(text: &str, expected: &[&str]) -> String {
    let err = match from_obj(text, LengthUnit::Metre) {
        Ok(_) => panic!("expected an error for:\n{text}"),
        Err(e) => e.to_string(),
    };
    for fragment in expected {
        assert!(err.contains(fragment), "message {err:?} lacks {fragment:?}");
    }
    err
}

/// Axis-aligned extent (max - min) of the vertices, per axis.
pub fn extent_m(mesh: &Mesh) -> [f64; 3] {
    let mut lo = Point3::from([f64::INFINITY; 3]);
    let mut hi = Point3::from([f64::NEG_INFINITY; 3]);
    for p in &mesh.vertices_m {
        lo = lo.inf(p);
        hi = hi.sup(p);
    }
    [hi.x - lo.x, hi.y - lo.y, hi.z - lo.z]
}

/// A unit cube (0..1)^3 as OBJ text with 6 quads, outward.
pub const CUBE_QUADS: &str = "\
v 0 0 0
v 1 0 0
v 1 1 0
v 0 1 0
v 0 0 1
v 1 0 1
v 1 1 1
v 0 1 1
f 1 4 3 2
f 5 6 7 8
f 1 2 6 5
f 2 3 7 6
f 3 4 8 7
f 4 1 5 8
";
