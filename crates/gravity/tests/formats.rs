//! PLY and STL reading: one shape written as OBJ, PLY (ASCII, binary little- and big-endian) and
//! STL (ASCII, binary) gives the same mass properties — identical for OBJ and PLY, within
//! single-precision rounding for STL — and bad files are refused naming the line, byte or
//! element.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

use nalgebra::Vector3;
use spinfall_gravity::{
    GravityError, LengthUnit, MassProperties, Mesh, ShapeFormat, ShapeModel, generate,
};

fn read(name: &str, bytes: &[u8], unit: LengthUnit) -> Result<ShapeModel, GravityError> {
    ShapeModel::from_named_bytes(name, bytes, unit).map(|(s, _)| s)
}

fn refused(name: &str, bytes: &[u8], expected: &[&str]) -> String {
    let message = match read(name, bytes, LengthUnit::Metre) {
        Ok(_) => panic!("expected {name} to be refused"),
        Err(e) => e.to_string(),
    };
    for fragment in expected {
        assert!(
            message.contains(fragment),
            "message {message:?} lacks {fragment:?}"
        );
    }
    message
}

/// The same mesh in all five encodings, named by their extension.
fn all_encodings(mesh: &Mesh, unit: LengthUnit) -> Vec<(&'static str, Vec<u8>)> {
    vec![
        ("a.obj", generate::to_obj(mesh, unit, "test").into_bytes()),
        (
            "a.ply",
            generate::to_ply_ascii(mesh, unit, "test").into_bytes(),
        ),
        ("le.ply", generate::to_ply_binary(mesh, unit, "test", false)),
        ("be.ply", generate::to_ply_binary(mesh, unit, "test", true)),
        (
            "a.stl",
            generate::to_stl_ascii(mesh, unit, "test").into_bytes(),
        ),
        ("b.stl", generate::to_stl_binary(mesh, unit, "test")),
    ]
}

fn max_abs(m: &nalgebra::Matrix3<f64>) -> f64 {
    m.iter().fold(0.0f64, |a, x| a.max(x.abs()))
}

/// Mass properties of the box against the closed forms of a homogeneous cuboid: volume
/// a·b·c, centre at the box centre, and inertia per unit density about the centre of mass
/// V(b²+c²)/12 etc. (standard rigid-body result, e.g. Goldstein, Poole & Safko 2002,
/// *Classical Mechanics*, 3rd ed., ch. 5).
#[test]
fn box_in_every_format_matches_the_cuboid_closed_form() {
    let (a, b, c) = (2000.0, 3000.0, 4000.0);
    let offset = Vector3::new(500.0, -250.0, 1000.0);
    let mut mesh = generate::box_mesh_subdivided(a, b, c, 3);
    for p in &mut mesh.vertices_m {
        *p += offset;
    }
    let v = a * b * c;
    for (name, bytes) in all_encodings(&mesh, LengthUnit::Kilometre) {
        let shape = read(name, &bytes, LengthUnit::Kilometre).unwrap();
        let mp = shape.mass_properties();
        assert_eq!(
            shape.vertex_count(),
            8 + 12 * 2 + 6 * 4,
            "{name}: welded vertex count"
        );
        assert!(
            (mp.volume_m3 - v).abs() <= 1e-9 * v,
            "{name}: volume {}",
            mp.volume_m3
        );
        assert!(
            (mp.center_of_mass_m.coords - offset).norm() <= 1e-9 * a,
            "{name}: centre {:?}",
            mp.center_of_mass_m
        );
        // Inertia about the centre of mass per unit density, as the gravity core reports it.
        let expected = [
            v * (b * b + c * c) / 12.0,
            v * (a * a + c * c) / 12.0,
            v * (a * a + b * b) / 12.0,
        ];
        let mut got: Vec<f64> = mp
            .principal_moments_per_density_m5
            .iter()
            .copied()
            .collect();
        got.sort_by(f64::total_cmp);
        let mut want = expected.to_vec();
        want.sort_by(f64::total_cmp);
        for (g, w) in got.iter().zip(&want) {
            assert!((g - w).abs() <= 1e-9 * w, "{name}: moment {g} vs {w}");
        }
    }
}

/// OBJ and every PLY encoding carry f64 coordinates exactly, so the mass properties are
/// bit-identical. STL stores f32: each coordinate moves by at most half an f32 ulp (relative
/// 2^-24 ≈ 6e-8, IEEE 754 binary32), so the volume (a sum of products of three coordinates)
/// moves by at most a few times that, relative; 1e-6 leaves room.
#[test]
fn irregular_body_obj_ply_identical_stl_within_single_precision() {
    let mesh = generate::demo_body(3);
    let encodings = all_encodings(&mesh, LengthUnit::Kilometre);
    let reference = read("a.obj", &encodings[0].1, LengthUnit::Kilometre).unwrap();
    let r = reference.mass_properties();
    let compare = |name: &str, mp: &MassProperties, tol: f64| {
        let scale = r.equivalent_radius_m;
        assert!(
            (mp.volume_m3 - r.volume_m3).abs() <= tol * r.volume_m3,
            "{name}: volume {} vs {}",
            mp.volume_m3,
            r.volume_m3
        );
        assert!(
            (mp.center_of_mass_m - r.center_of_mass_m).norm() <= tol * scale,
            "{name}: centre of mass"
        );
        assert!(
            max_abs(&(mp.inertia_per_density_m5 - r.inertia_per_density_m5))
                <= tol * max_abs(&r.inertia_per_density_m5),
            "{name}: inertia"
        );
    };
    for (name, bytes) in &encodings[1..] {
        let shape = read(name, bytes, LengthUnit::Kilometre).unwrap();
        assert_eq!(shape.face_count(), reference.face_count(), "{name}");
        assert_eq!(shape.vertex_count(), reference.vertex_count(), "{name}");
        let mp = shape.mass_properties();
        if name.ends_with(".ply") {
            assert_eq!(mp.volume_m3, r.volume_m3, "{name}");
            assert_eq!(mp.center_of_mass_m, r.center_of_mass_m, "{name}");
            assert_eq!(
                mp.inertia_per_density_m5, r.inertia_per_density_m5,
                "{name}"
            );
        } else {
            compare(name, mp, 1e-6);
        }
    }
}

#[test]
fn unit_choice_applies_to_every_format() {
    let mesh = generate::box_mesh(2.0, 2.0, 2.0);
    for (name, bytes) in all_encodings(&mesh, LengthUnit::Metre) {
        let in_km = read(name, &bytes, LengthUnit::Kilometre).unwrap();
        // 2 m read as 2 km: the volume grows by 1000^3.
        assert!(
            (in_km.mass_properties().volume_m3 - 8e9).abs() < 1e-3,
            "{name}: {}",
            in_km.mass_properties().volume_m3
        );
    }
}

#[test]
fn format_comes_from_the_extension_and_is_confirmed_by_content() {
    let mesh = generate::box_mesh(2.0, 2.0, 2.0);
    let ply = generate::to_ply_ascii(&mesh, LengthUnit::Metre, "x").into_bytes();
    let obj = generate::to_obj(&mesh, LengthUnit::Metre, "x").into_bytes();
    let stl = generate::to_stl_binary(&mesh, LengthUnit::Metre, "solid looking header");
    assert_eq!(
        ShapeFormat::resolve("X.PLY", &ply).unwrap(),
        ShapeFormat::Ply
    );
    // A binary STL whose header starts with "solid" is still binary (its size decides).
    assert!(read("b.stl", &stl, LengthUnit::Metre).is_ok());
    // Unknown extensions: the content decides.
    assert_eq!(
        ShapeFormat::resolve("shape.dat", &ply).unwrap(),
        ShapeFormat::Ply
    );
    assert_eq!(
        ShapeFormat::resolve("shape", &stl).unwrap(),
        ShapeFormat::Stl
    );
    assert_eq!(
        ShapeFormat::resolve("shape.txt", &obj).unwrap(),
        ShapeFormat::Obj
    );
    refused("rock.obj", &ply, &["named as OBJ", "content is PLY"]);
    refused("rock.ply", &obj, &["named as PLY", "not PLY or STL"]);
    refused("rock.stl", &ply, &["named as STL", "content is PLY"]);
    refused("rock.obj", &stl, &["named as OBJ", "content is STL"]);
}

const PLY_HEAD: &str = "ply\nformat ascii 1.0\nelement vertex 4\nproperty float x\n\
                        property float y\nproperty float z\nelement face 4\n\
                        property list uchar int vertex_indices\nend_header\n";
const TETRA_VERTICES: &str = "0 0 0\n1 0 0\n0 1 0\n0 0 1\n";
const TETRA_FACES: &str = "3 0 2 1\n3 0 1 3\n3 0 3 2\n3 1 2 3\n";

#[test]
fn ascii_ply_tetrahedron_reads_and_has_volume_one_sixth() {
    // Volume of the unit right tetrahedron: 1/6 (elementary geometry).
    let text = format!("{PLY_HEAD}{TETRA_VERTICES}{TETRA_FACES}");
    let shape = read("t.ply", text.as_bytes(), LengthUnit::Metre).unwrap();
    assert!((shape.mass_properties().volume_m3 - 1.0 / 6.0).abs() < 1e-15);
}

#[test]
fn ply_errors_name_line_element_and_problem() {
    let tetra = |vertices: &str, faces: &str| format!("{PLY_HEAD}{vertices}{faces}");
    // Header line 10 is the first vertex, so the third vertex is line 12.
    refused(
        "t.ply",
        tetra("0 0 0\n1 0 0\n0 x 0\n0 0 1\n", TETRA_FACES).as_bytes(),
        &["line 12", "vertex 2", "not a number"],
    );
    refused(
        "t.ply",
        tetra(TETRA_VERTICES, "3 0 2 1\n3 0 1 3\n3 0 3 9\n3 1 2 3\n").as_bytes(),
        &["line 16", "face 2", "vertex 9", "4 vertices"],
    );
    refused(
        "t.ply",
        tetra(TETRA_VERTICES, "3 0 2 1\n3 0 1 3\n").as_bytes(),
        &["ends after 2 of the 4", "face"],
    );
    refused(
        "t.ply",
        tetra(TETRA_VERTICES, "3 0 2 1\n3 0 1 3\n2 0 3\n3 1 2 3\n").as_bytes(),
        &["line 16", "face 2 has 2 corners"],
    );
    refused(
        "t.ply",
        tetra(TETRA_VERTICES, &format!("{TETRA_FACES}7 7 7\n")).as_bytes(),
        &["line 18", "after the last declared element"],
    );
    refused(
        "t.ply",
        tetra("0 0 0\n1 0 0\n0 nan 0\n0 0 1\n", TETRA_FACES).as_bytes(),
        &["line 12", "non-finite"],
    );
    // Unsupported properties: a list of non-integer indices, a scalar face property.
    let float_list = PLY_HEAD.replace("list uchar int", "list uchar float");
    refused(
        "t.ply",
        format!("{float_list}{TETRA_VERTICES}{TETRA_FACES}").as_bytes(),
        &["line 8", "unsupported property", "non-integer"],
    );
    let float_count = PLY_HEAD.replace("list uchar int", "list float int");
    refused(
        "t.ply",
        format!("{float_count}{TETRA_VERTICES}{TETRA_FACES}").as_bytes(),
        &["line 8", "count must be an integer"],
    );
    refused(
        "t.ply",
        PLY_HEAD.replace("property float z\n", "").as_bytes(),
        &["line 3", "no z property"],
    );
    refused(
        "t.ply",
        PLY_HEAD.replace("float y", "quad y").as_bytes(),
        &["line 5", "unknown property type"],
    );
    refused(
        "t.ply",
        PLY_HEAD.replace("ascii", "binary_middle_endian").as_bytes(),
        &["line 2", "unknown format"],
    );
    refused("t.ply", b"ply\nformat ascii 1.0\n", &["end_header"]);
}

#[test]
fn ply_quads_are_fan_triangulated_and_other_elements_skipped() {
    // A unit cube as 6 quads with an extra vertex property and an extra element: volume 1.
    let text = "ply\nformat ascii 1.0\ncomment cube\nelement vertex 8\nproperty double x\n\
                property double y\nproperty double z\nproperty uchar red\nelement face 6\n\
                property list uchar uint vertex_indices\nproperty int flags\nelement edge 1\n\
                property int vertex1\nproperty int vertex2\nend_header\n\
                0 0 0 9\n1 0 0 9\n1 1 0 9\n0 1 0 9\n0 0 1 9\n1 0 1 9\n1 1 1 9\n0 1 1 9\n\
                4 0 3 2 1 0\n4 4 5 6 7 0\n4 0 1 5 4 0\n4 1 2 6 5 0\n4 2 3 7 6 0\n4 3 0 4 7 0\n\
                0 1\n";
    let shape = read("cube.ply", text.as_bytes(), LengthUnit::Metre).unwrap();
    assert_eq!(shape.face_count(), 12);
    assert!((shape.mass_properties().volume_m3 - 1.0).abs() < 1e-14);
}

#[test]
fn binary_ply_errors_name_byte_and_element() {
    let mesh = generate::box_mesh(2.0, 2.0, 2.0);
    let good = generate::to_ply_binary(&mesh, LengthUnit::Metre, "", false);
    let cut = &good[..good.len() - 5];
    refused("b.ply", cut, &["byte", "face"]);
    let mut extra = good.clone();
    extra.extend_from_slice(&[1, 2, 3]);
    refused("b.ply", &extra, &["after the last declared element"]);
    // An out-of-range index in face 0: its first index sits just after the count byte.
    let header_end = good.windows(11).position(|w| w == b"end_header\n").unwrap() + 11;
    let face0 = header_end + 8 * 3 * 8;
    let mut bad = good.clone();
    bad[face0 + 1..face0 + 5].copy_from_slice(&100i32.to_le_bytes());
    refused(
        "b.ply",
        &bad,
        &[
            &format!("byte {face0} (face 0)"),
            "vertex 100",
            "8 vertices",
        ],
    );
    // A header that claims far more vertices than the file can hold.
    let huge =
        String::from_utf8_lossy(&good).replace("element vertex 8", "element vertex 99999999999");
    refused("b.ply", huge.as_bytes(), &["99999999999", "bytes follow"]);
}

#[test]
fn stl_errors_name_line_triangle_and_sizes() {
    let mesh = generate::box_mesh(2.0, 2.0, 2.0);
    let good = generate::to_stl_binary(&mesh, LengthUnit::Metre, "box");
    // Count disagrees with size: 12 triangles need 84 + 600 = 684 bytes.
    let cut = &good[..good.len() - 10];
    refused(
        "b.stl",
        cut,
        &["declares 12 triangles", "need 684 bytes", "has 674 bytes"],
    );
    let mut nan = good.clone();
    nan[84 + 12..84 + 16].copy_from_slice(&f32::NAN.to_le_bytes());
    refused("b.stl", &nan, &["byte 84 (triangle 0)", "non-finite"]);
    refused("b.stl", b"tiny", &["too short"]);

    let ascii = generate::to_stl_ascii(&mesh, LengthUnit::Metre, "box");
    let four = ascii.replacen("    endloop", "      vertex 0 0 0\n    endloop", 1);
    refused(
        "a.stl",
        four.as_bytes(),
        &["line 7", "facet 0", "more than 3"],
    );
    let bad_number = ascii.replacen("vertex -1", "vertex -1x", 1);
    refused("a.stl", bad_number.as_bytes(), &["line 4", "not a number"]);
    let unterminated = ascii.replace("endsolid box\n", "");
    refused(
        "a.stl",
        unterminated.as_bytes(),
        &["without \"endsolid\"", "12 facets"],
    );
    let misordered = ascii.replacen("outer loop", "loop outer", 1);
    refused(
        "a.stl",
        misordered.as_bytes(),
        &["line 3", "\"outer loop\""],
    );
}

/// Welding is exact: corners one f32 step apart are distinct vertices, so the box is open and
/// validation names the open edge.
#[test]
fn stl_welds_only_exactly_equal_corners() {
    let mesh = generate::box_mesh(2.0, 2.0, 2.0);
    let good = generate::to_stl_binary(&mesh, LengthUnit::Metre, "box");
    let mut nudged = good.clone();
    let x0 = 84 + 12;
    let x = f32::from_le_bytes([nudged[x0], nudged[x0 + 1], nudged[x0 + 2], nudged[x0 + 3]]);
    nudged[x0..x0 + 4].copy_from_slice(&f32::from_bits(x.to_bits() + 1).to_le_bytes());
    refused("b.stl", &nudged, &["open mesh", "boundary edges"]);
    let welded = read("b.stl", &good, LengthUnit::Metre).unwrap();
    assert_eq!(welded.vertex_count(), 8);
}
