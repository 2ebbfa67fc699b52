//! The shipped shape files equal the generators' output, and the embedded demo body loads.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod shape_support;

use spinfall_gravity::{LengthUnit, ShapeModel, demo, generate, parse_obj};

#[test]
fn shipped_files_match_the_generators() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../shapes");
    for (name, mesh, _) in generate::shipped_shapes() {
        let text = std::fs::read_to_string(dir.join(name)).unwrap_or_else(|e| {
            panic!("shapes/{name}: {e}; rebuild with cargo run -p spinfall-gravity --example make_shapes")
        });
        let (read, _) = parse_obj(text.as_bytes(), LengthUnit::Kilometre).unwrap();
        assert_eq!(
            read.faces, mesh.faces,
            "{name}: faces differ; rebuild the shapes"
        );
        assert_eq!(read.vertices_m.len(), mesh.vertices_m.len());
        // Compared as numbers (1 µm), not text, so last-bit differences in sin/cos between
        // platforms do not fail the check.
        for (a, b) in read.vertices_m.iter().zip(&mesh.vertices_m) {
            assert!(
                (a - b).norm() < 1e-6,
                "{name}: vertex {a} vs {b}; rebuild the shapes"
            );
        }
    }
}

#[test]
fn embedded_demo_body_is_a_valid_shape_model() {
    let (shape, warnings) =
        ShapeModel::from_obj(demo::OBJ_KM.as_bytes(), LengthUnit::Kilometre).unwrap();
    assert!(warnings.is_empty(), "{warnings:?}");
    assert_eq!(shape.face_count(), 5120);
    assert!(demo::OBJ_KM.contains(demo::NAME));
    // Volume between the inscribed and circumscribed spheres' volumes (a geometric bound).
    let mp = shape.mass_properties();
    assert!(mp.volume_m3 > 0.0 && mp.equivalent_radius_m < shape.bounding_radius_m());
}
