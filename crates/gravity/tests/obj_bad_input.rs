//! Every bad-input case is refused (or repaired with a warning) with a message naming the
//! problem and one location.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod shape_support;

use shape_support::{CUBE_QUADS, check_refused, from_obj};
use spinfall_gravity::{LengthUnit, Mesh, ShapeModel, Warning, generate};

#[test]
fn empty_text_is_refused() {
    check_refused("", &["0 vertices", "0 faces"]);
    check_refused("# only a comment\nv 0 0 0\n", &["1 vertices", "0 faces"]);
}

#[test]
fn non_finite_coordinate_names_its_line() {
    check_refused(
        "v 0 0 0\nv 1 nan 0\n",
        &["line 2", "vertex 2", "non-finite"],
    );
    check_refused("v 0 0 0\nv 1 0 0\nv 0 inf 0\n", &["line 3", "non-finite"]);
    check_refused("v 0 0 abc\n", &["line 1", "not a number"]);
    check_refused("v 0 0\n", &["line 1", "3 coordinates"]);
}

#[test]
fn out_of_range_index_names_face_vertex_count_and_line() {
    let text = format!("{CUBE_QUADS}f 1 2 9001\n");
    check_refused(
        &text,
        &["line 15", "face 7 references vertex 9001", "has 8 vertices"],
    );
    check_refused("v 0 0 0\nf -2 1 1\n", &["line 2", "relative vertex -2"]);
    check_refused("v 0 0 0\nf 0 1 1\n", &["line 2", "index 0"]);
    check_refused("v 0 0 0\nf 1 2\n", &["line 2", "at least 3"]);
}

#[test]
fn open_mesh_names_the_boundary_edge() {
    // The cube without its top face: 4 boundary edges.
    let text = CUBE_QUADS.replace("f 5 6 7 8\n", "");
    check_refused(&text, &["open mesh", "4 boundary edges", "edge "]);
}

#[test]
fn non_manifold_edge_is_refused() {
    // An extra triangle hanging on cube edge 1-2 (0-based 0-1).
    let text = format!("{CUBE_QUADS}v 0.5 -1 0.5\nf 1 2 9\n");
    check_refused(&text, &["non-manifold", "edge 0-1", "3 faces"]);
}

#[test]
fn inconsistent_faces_are_flipped_to_match_their_neighbours() {
    // Top quad reversed (two triangles): they run their edges the same way as their neighbours.
    let text = CUBE_QUADS.replace("f 5 6 7 8", "f 5 8 7 6");
    let (shape, warnings) = from_obj(&text, LengthUnit::Metre).unwrap();
    assert!(
        matches!(
            warnings.as_slice(),
            [Warning::OrientationRepaired {
                flipped_faces: 2,
                example_face: 2
            }]
        ),
        "{warnings:?}"
    );
    assert!(warnings[0].to_string().contains("flipped 2 faces"));
    // Volume of the unit cube: exact again once every face points outward.
    assert!((shape.mass_properties().volume_m3 - 1.0).abs() < 1e-12);
    // Most faces reversed (all but the first 7 of 320): the walk makes them agree and the
    // volume sign turns the result outward, so exactly the 313 reversed faces are flipped back.
    let mut mesh = generate::icosphere(5.0, 2);
    for f in mesh.faces.iter_mut().skip(7) {
        f.swap(1, 2);
    }
    let (shape, warnings) = ShapeModel::new(mesh).unwrap();
    assert!(
        matches!(
            warnings.as_slice(),
            [Warning::OrientationRepaired {
                flipped_faces: 313,
                example_face: 7
            }]
        ),
        "{warnings:?}"
    );
    let reference = model_volume(generate::icosphere(5.0, 2));
    assert!((shape.mass_properties().volume_m3 - reference).abs() < 1e-12 * reference);
}

fn model_volume(mesh: spinfall_gravity::Mesh) -> f64 {
    shape_support::model(mesh).mass_properties().volume_m3
}

#[test]
fn one_sided_surface_is_refused() {
    // The 6-vertex, 10-triangle projective plane (a classical minimal triangulation): closed,
    // every edge shared by two faces, but no consistent orientation exists.
    let faces = [
        [1, 2, 3],
        [1, 3, 4],
        [1, 4, 5],
        [1, 5, 6],
        [1, 6, 2],
        [2, 3, 5],
        [3, 4, 6],
        [4, 5, 2],
        [5, 6, 3],
        [6, 2, 4],
    ];
    let mut text = String::from("v 1 0 0\nv 0 1 0\nv 0 0 1\nv 1 1 0.3\nv 0.2 1 1.1\nv 1.3 0.1 1\n");
    for [a, b, c] in faces {
        text.push_str(&format!("f {a} {b} {c}\n"));
    }
    check_refused(
        &text,
        &[
            "inconsistent orientation",
            "cannot be oriented consistently",
        ],
    );
}

#[test]
fn inward_mesh_is_flipped_with_a_warning() {
    let mut mesh = generate::icosphere(10.0, 2);
    for f in &mut mesh.faces {
        f.swap(1, 2);
    }
    let (shape, warnings) = ShapeModel::new(mesh).unwrap();
    assert!(
        matches!(warnings.as_slice(), [Warning::OrientationFlipped { signed_volume_m3 }] if *signed_volume_m3 < 0.0)
    );
    assert!(warnings[0].to_string().contains("inward"));
    assert!(shape.mass_properties().volume_m3 > 0.0);
    // Normals point away from the centre after the flip.
    assert!(shape.face_normal(0).dot(&shape.face_centroid(0).coords) > 0.0);
    // Neighbour slots follow the flip: face across edge k shares that edge's two vertices.
    for f in 0..shape.face_count() {
        let face = shape.mesh().faces[f];
        for (k, &g) in shape.face_neighbours(f).iter().enumerate() {
            let (a, b) = (face[k], face[(k + 1) % 3]);
            let other = shape.mesh().faces[g];
            assert!(other.contains(&a) && other.contains(&b) && g != f);
        }
    }
}

#[test]
fn duplicate_vertices_are_merged_with_a_warning() {
    // Each quad of the cube written with its own copies of the corners: 24 vertices, closed
    // only after merging.
    let mut text = String::new();
    let corners = [
        [0.0, 0.0, 0.0],
        [1.0, 0.0, 0.0],
        [1.0, 1.0, 0.0],
        [0.0, 1.0, 0.0],
        [0.0, 0.0, 1.0],
        [1.0, 0.0, 1.0],
        [1.0, 1.0, 1.0],
        [0.0, 1.0, 1.0],
    ];
    let quads = [
        [1, 4, 3, 2],
        [5, 6, 7, 8],
        [1, 2, 6, 5],
        [2, 3, 7, 6],
        [3, 4, 8, 7],
        [4, 1, 5, 8],
    ];
    for (q, quad) in quads.iter().enumerate() {
        for &c in quad {
            let [x, y, z] = corners[c - 1];
            text.push_str(&format!("v {x} {y} {z}\n"));
        }
        let b = 4 * q + 1;
        text.push_str(&format!("f {} {} {} {}\n", b, b + 1, b + 2, b + 3));
    }
    let (shape, warnings) = from_obj(&text, LengthUnit::Metre).unwrap();
    assert_eq!(shape.vertex_count(), 8);
    assert!(matches!(
        warnings.as_slice(),
        [Warning::DuplicateVerticesMerged { count: 16, .. }]
    ));
    assert!((shape.mass_properties().volume_m3 - 1.0).abs() < 1e-12);
}

#[test]
fn unused_vertices_are_reported() {
    // A stray vertex first, every face index shifted by one: vertex 0 is used by no face.
    let shifted: String = CUBE_QUADS
        .lines()
        .map(|l| {
            if let Some(rest) = l.strip_prefix("f ") {
                let ix: Vec<String> = rest
                    .split(' ')
                    .map(|i| (i.parse::<u32>().unwrap() + 1).to_string())
                    .collect();
                format!("f {}\n", ix.join(" "))
            } else {
                format!("{l}\n")
            }
        })
        .collect();
    let text = format!("v 5 5 5\n{shifted}");
    let (shape, warnings) = from_obj(&text, LengthUnit::Metre).unwrap();
    assert_eq!(shape.vertex_count(), 8);
    assert!(matches!(
        warnings.as_slice(),
        [Warning::UnusedVerticesRemoved {
            count: 1,
            example_vertex: 0
        }]
    ));
    assert!(warnings[0].to_string().contains("vertex 0"));
}

#[test]
fn degenerate_face_is_dropped_when_the_rest_stays_closed() {
    // A face with a repeated vertex adds edges a-a and a-b, b-a that cancel: dropping it leaves
    // the cube closed.
    let text = format!("{CUBE_QUADS}f 1 1 2\n");
    let (shape, warnings) = from_obj(&text, LengthUnit::Metre).unwrap();
    assert_eq!(shape.face_count(), 12);
    assert!(matches!(
        warnings.as_slice(),
        [Warning::DegenerateFacesDropped {
            count: 1,
            example_face: 12
        }]
    ));
    assert!(warnings[0].to_string().contains("face 12"));
}

#[test]
fn degenerate_face_that_opens_the_mesh_is_an_error() {
    // Split cube edge 1-2 with a midpoint vertex used by a zero-area sliver: dropping it opens the mesh.
    let mut mesh = generate::box_mesh(1.0, 1.0, 1.0);
    let f = mesh.faces[0];
    let (a, b) = (f[0] as usize, f[1] as usize);
    let mid = nalgebra::center(&mesh.vertices_m[a], &mesh.vertices_m[b]);
    mesh.vertices_m.push(mid);
    let m = (mesh.vertices_m.len() - 1) as u32;
    let c = f[2];
    mesh.faces[0] = [f[0], m, c];
    mesh.faces.push([m, f[1], c]);
    // The sliver on the other side of edge a-b: (b, m, a) is zero-area.
    mesh.faces.push([f[1], m, f[0]]);
    let err = ShapeModel::new(mesh).unwrap_err().to_string();
    assert!(
        err.contains("open mesh") && err.contains("zero-area"),
        "{err}"
    );
}

#[test]
fn hand_built_mesh_errors_name_the_vertex_or_face() {
    let mut mesh = generate::box_mesh(1.0, 1.0, 1.0);
    mesh.vertices_m[3].y = f64::NAN;
    let err = ShapeModel::new(mesh).unwrap_err().to_string();
    assert!(
        err.contains("vertex 3") && err.contains("non-finite"),
        "{err}"
    );
    let mut mesh = generate::box_mesh(1.0, 1.0, 1.0);
    mesh.faces[5][1] = 77;
    let err = ShapeModel::new(mesh).unwrap_err().to_string();
    assert!(
        err.contains("face 5") && err.contains("vertex 77") && err.contains("8 vertices"),
        "{err}"
    );
    let err = ShapeModel::new(Mesh::default()).unwrap_err().to_string();
    assert!(err.contains("empty"), "{err}");
}

#[test]
fn warnings_serialise_for_the_command_line() {
    let w = Warning::OrientationFlipped {
        signed_volume_m3: -3.0,
    };
    let json = serde_json::to_string(&w).unwrap();
    assert!(json.contains("\"kind\":\"orientation_flipped\""), "{json}");
}

/// Two boxes as one mesh: `second` shifted by `offset_m` (0-based indices continue).
fn two_boxes(offset_m: [f64; 3]) -> Mesh {
    let mut mesh = generate::box_mesh(2.0, 2.0, 2.0);
    let other = generate::box_mesh(2.0, 2.0, 2.0);
    let base = mesh.vertices_m.len() as u32;
    mesh.vertices_m.extend(
        other
            .vertices_m
            .iter()
            .map(|p| p + nalgebra::Vector3::from(offset_m)),
    );
    mesh.faces
        .extend(other.faces.iter().map(|f| f.map(|v| v + base)));
    mesh
}

/// Issue 9, fault 7: two overlapping boxes double-count the overlap; the mesh is refused with
/// the first crossing pair of faces named.
#[test]
fn overlapping_boxes_are_refused_naming_two_crossing_faces() {
    let e = ShapeModel::new(two_boxes([0.7, 0.4, 0.3]))
        .unwrap_err()
        .to_string();
    assert!(e.contains("self-intersecting"), "{e}");
    assert!(e.contains("face ") && e.contains("cross each other"), "{e}");
}

/// Issue 9, fault 7: two disjoint shells are two bodies, not one.
#[test]
fn two_disjoint_shells_are_refused() {
    let e = ShapeModel::new(two_boxes([5.0, 0.0, 0.0]))
        .unwrap_err()
        .to_string();
    assert!(e.contains("2 separate closed surfaces"), "{e}");
    assert!(e.contains("face 0 and face 12"), "{e}");
}

/// Issue 9, fault 7: a single closed surface that passes through itself (one vertex of an
/// icosphere pushed through to the far side) is refused too.
#[test]
fn a_surface_passing_through_itself_is_refused() {
    let mut mesh = generate::icosphere(10.0, 2);
    let v = mesh.vertices_m[0];
    mesh.vertices_m[0] = nalgebra::Point3::from(-v.coords * 1.5);
    let e = ShapeModel::new(mesh).unwrap_err().to_string();
    assert!(e.contains("self-intersecting"), "{e}");
    // Closed bodies from the generators pass, whatever their size.
    for mesh in [
        generate::icosphere(1000.0, 3),
        generate::ellipsoid(3000.0, 2000.0, 1000.0, 3),
        generate::box_mesh(2.0, 1.2, 0.8),
    ] {
        ShapeModel::new(mesh).unwrap();
    }
}

/// Issue 9, fault 13: a UTF-16 file is named as such (it used to be "0 vertices and 0 faces").
#[test]
fn utf16_files_are_named_as_such() {
    let text = "v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n";
    for bom in [&[0xFF_u8, 0xFE][..], &[]] {
        let mut bytes = bom.to_vec();
        bytes.extend(text.encode_utf16().flat_map(|u| u.to_le_bytes()));
        let e = ShapeModel::from_obj(bytes.as_slice(), LengthUnit::Metre)
            .unwrap_err()
            .to_string();
        assert!(e.contains("UTF-16") && e.contains("UTF-8"), "{e}");
    }
    // A UTF-8 byte-order mark is dropped, not read as part of the first keyword.
    let with_bom = format!("\u{FEFF}{CUBE_QUADS}");
    let (shape, _) = from_obj(&with_bom, LengthUnit::Metre).unwrap();
    assert_eq!(shape.vertex_count(), 8);
}

/// Issue 9, fault 13: vertex colours (`v x y z r g b`, a common extension) are read and ignored.
#[test]
fn vertex_colours_are_accepted_and_ignored() {
    let coloured = CUBE_QUADS
        .lines()
        .map(|l| {
            if l.starts_with("v ") {
                format!("{l} 0.5 0.25 1.0\n")
            } else {
                format!("{l}\n")
            }
        })
        .collect::<String>();
    let (shape, warnings) = from_obj(&coloured, LengthUnit::Metre).unwrap();
    assert!(warnings.is_empty(), "{warnings:?}");
    // The unit cube: the colours did not leak into the coordinates.
    assert!((shape.mass_properties().volume_m3 - 1.0).abs() < 1e-12);
    // With w too (7 values), and relative indices still resolve.
    let text = "v 0 0 0 1 0.1 0.2 0.3\nv 1 0 0 1 0.1 0.2 0.3\nv 0 1 0\nv 0 0 1\n\
                f -4 -2 -3\nf -4 -3 -1\nf -4 -1 -2\nf -3 -2 -1\n";
    let (shape, _) = from_obj(text, LengthUnit::Metre).unwrap();
    assert!((shape.mass_properties().volume_m3 - 1.0 / 6.0).abs() < 1e-12);
    check_refused("v 0 0 0 1 1\n", &["line 1", "found 5 values"]);
}

/// Issue 9, fault 9: a 10 MB token is quoted in at most about 80 characters.
#[test]
fn a_huge_token_is_not_echoed_whole() {
    let token = "9".repeat(10_000_000) + "x";
    let e = check_refused(&format!("v 0 0 {token}\n"), &["line 1", "not a number"]);
    assert!(e.len() < 300, "{} bytes of message", e.len());
    let e = check_refused(&format!("v 0 0 0\nf 1 1 {token}\n"), &["line 2"]);
    assert!(e.len() < 300, "{} bytes of message", e.len());
}
