//! OBJ reading: polygons, negative indices, comments, ignored attributes, units; cross-checked
//! against the general-purpose `obj-rs` parser.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod shape_support;

use shape_support::{CUBE_QUADS, from_obj};
use spinfall_gravity::{LengthUnit, generate, parse_obj};

#[test]
fn quads_are_fan_triangulated_into_a_closed_cube() {
    let (mesh, warnings) = parse_obj(CUBE_QUADS.as_bytes(), LengthUnit::Metre).unwrap();
    assert!(warnings.is_empty());
    assert_eq!(mesh.vertices_m.len(), 8);
    assert_eq!(mesh.faces.len(), 12);
    // Fan from the first corner: f 1 4 3 2 -> (1 4 3), (1 3 2), 0-based.
    assert_eq!(mesh.faces[0], [0, 3, 2]);
    assert_eq!(mesh.faces[1], [0, 2, 1]);
    let (shape, warnings) = from_obj(CUBE_QUADS, LengthUnit::Metre).unwrap();
    assert!(warnings.is_empty());
    assert!((shape.mass_properties().volume_m3 - 1.0).abs() < 1e-12);
}

#[test]
fn pentagon_gives_three_triangles() {
    let text = "v 0 0 0\nv 1 0 0\nv 1 1 0\nv 0.5 1.5 0\nv 0 1 0\nf 1 2 3 4 5\n";
    let (mesh, _) = parse_obj(text.as_bytes(), LengthUnit::Metre).unwrap();
    assert_eq!(mesh.faces, vec![[0, 1, 2], [0, 2, 3], [0, 3, 4]]);
}

#[test]
fn negative_indices_comments_normals_and_texcoords() {
    let text = "# a tetrahedron\n\
                o tetra\n\
                v 0 0 0  # origin\n\
                v 1 0 0\n\
                vt 0.5 0.5\n\
                vn 0 0 1\n\
                v 0 1 0\n\
                v 0 0 1 1.0\n\
                g side\n\
                s off\n\
                f -4/1/1 -2/1/1 -3/1/1\n\
                f 1//1 2//1 4//1\n\
                f 1/1 4/1 3/1\n\
                f 2 3 4\n";
    let (mesh, _) = parse_obj(text.as_bytes(), LengthUnit::Metre).unwrap();
    assert_eq!(mesh.vertices_m.len(), 4);
    assert_eq!(mesh.faces[0], [0, 2, 1]);
    let (shape, warnings) = from_obj(text, LengthUnit::Metre).unwrap();
    assert!(warnings.is_empty(), "{warnings:?}");
    // Volume of the corner tetrahedron: 1/6.
    assert!((shape.mass_properties().volume_m3 - 1.0 / 6.0).abs() < 1e-15);
}

#[test]
fn kilometres_are_scaled_to_metres() {
    let (km, _) = parse_obj(CUBE_QUADS.as_bytes(), LengthUnit::Kilometre).unwrap();
    let (m, _) = parse_obj(CUBE_QUADS.as_bytes(), LengthUnit::Metre).unwrap();
    for (a, b) in km.vertices_m.iter().zip(&m.vertices_m) {
        assert_eq!(*a, b * 1000.0);
    }
}

#[test]
fn written_obj_reads_back_exactly_in_metres() {
    let mesh = generate::demo_body(2);
    let text = generate::to_obj(&mesh, LengthUnit::Metre, "round trip");
    let (back, _) = parse_obj(text.as_bytes(), LengthUnit::Metre).unwrap();
    assert_eq!(back, mesh);
    let text_km = generate::to_obj(&mesh, LengthUnit::Kilometre, "round trip");
    let (back_km, _) = parse_obj(text_km.as_bytes(), LengthUnit::Kilometre).unwrap();
    for (a, b) in back_km.vertices_m.iter().zip(&mesh.vertices_m) {
        assert!((a - b).norm() < 1e-9);
    }
}

#[test]
fn agrees_with_the_obj_rs_reference_parser() {
    // obj-rs (a general-purpose OBJ library) read in f32: same polygons, coordinates to f32.
    let text = generate::to_obj(
        &generate::ellipsoid(3.0, 2.0, 1.5, 2),
        LengthUnit::Metre,
        "x",
    );
    let (mesh, _) = parse_obj(text.as_bytes(), LengthUnit::Metre).unwrap();
    let raw = obj::raw::parse_obj(text.as_bytes()).unwrap();
    assert_eq!(raw.positions.len(), mesh.vertices_m.len());
    for (r, p) in raw.positions.iter().zip(&mesh.vertices_m) {
        assert!((f64::from(r.0) - p.x).abs() < 1e-6 && (f64::from(r.2) - p.z).abs() < 1e-6);
    }
    assert_eq!(raw.polygons.len(), mesh.faces.len());
    for (poly, face) in raw.polygons.iter().zip(&mesh.faces) {
        let obj::raw::object::Polygon::P(ix) = poly else {
            panic!("expected position-only polygons")
        };
        let ix: Vec<u32> = ix.iter().map(|&i| i as u32).collect();
        assert_eq!(ix, face.to_vec());
    }
}

#[test]
fn windows_line_endings_and_tabs_are_accepted() {
    let text = CUBE_QUADS.replace('\n', "\r\n").replace(' ', "\t");
    let (mesh, _) = parse_obj(text.as_bytes(), LengthUnit::Metre).unwrap();
    let (reference, _) = parse_obj(CUBE_QUADS.as_bytes(), LengthUnit::Metre).unwrap();
    assert_eq!(mesh, reference);
}

#[test]
fn latin1_comments_are_tolerated_but_bad_bytes_in_numbers_are_not() {
    let mut bytes = CUBE_QUADS.as_bytes().to_vec();
    bytes.extend_from_slice(b"# caf\xe9\n");
    let (mesh, _) = parse_obj(bytes.as_slice(), LengthUnit::Metre).unwrap();
    assert_eq!(mesh.faces.len(), 12);
    bytes.extend_from_slice(b"v 1 2\xe9 3\n");
    let err = parse_obj(bytes.as_slice(), LengthUnit::Metre)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("line 16") && err.contains("not a number"),
        "{err}"
    );
}

#[test]
fn other_statements_are_ignored_and_continuations_joined() {
    // Free-form statements (`curv`, `lod`), a group with two names and an unknown statement: all
    // ignored (obj-rs alone would refuse or not implement them). A backslash at the end of a line
    // continues the statement on the next one (Wavefront OBJ specification, "Object files").
    let text = "v 0 0 \\\n 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\n\
                curv 0 1 1 2\nlod 3\ng a b\nvc 1 0 0\n\
                f 1 3 2\nf 1 2 \\\n 4\nf 1 4 3\nf 2 3 4\n";
    let (mesh, _) = parse_obj(text.as_bytes(), LengthUnit::Metre).unwrap();
    assert_eq!(mesh.vertices_m.len(), 4);
    assert_eq!(mesh.faces, vec![[0, 2, 1], [0, 1, 3], [0, 3, 2], [1, 2, 3]]);
    // An error only the obj-rs reader detects (texture index beyond the 1 `vt`) still names its
    // line.
    let bad = "v 0 0 0\nv 1 0 0\nv 0 1 0\nvt 0 0\n\nf 1/1 2/1 3/2\n";
    let err = parse_obj(bad.as_bytes(), LengthUnit::Metre)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("line 6") && err.contains("f 1/1 2/1 3/2"),
        "{err}"
    );
}
