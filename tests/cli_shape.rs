//! `spinfall info` and `spinfall gravity` on the shipped shapes, against closed forms.
#![allow(clippy::unwrap_used)]

mod common;

use common::{assert_bad_input, ok_stdout, rel, root, spinfall};
use serde_json::Value;

/// G, CODATA 2018 recommended value.
const G: f64 = 6.674_30e-11;

#[test]
fn info_of_the_box_matches_the_rigid_body_closed_form() {
    // shapes/box.obj is a 2 x 1.2 x 0.8 km box (see shapes/README.md).
    let out = spinfall(&["info", "shapes/box.obj", "--density", "2000"]);
    let v: Value = serde_json::from_str(&ok_stdout(&out)).unwrap();
    let (lx, ly, lz) = (2000.0, 1200.0, 800.0);
    let volume = lx * ly * lz;
    assert!(rel(v["volume_m3"].as_f64().unwrap(), volume) < 1e-12);
    assert!(
        rel(
            v["area_m2"].as_f64().unwrap(),
            2.0 * (lx * ly + ly * lz + lx * lz)
        ) < 1e-12
    );
    // Solid box about its centre: I_xx = m (ly^2 + lz^2) / 12 (standard rigid-body table).
    let m = 2000.0 * volume;
    let ixx = v["inertia_kg_m2"][0][0].as_f64().unwrap();
    assert!(rel(ixx, m * (ly * ly + lz * lz) / 12.0) < 1e-10, "{ixx}");
    let moments: Vec<f64> = v["principal_moments_kg_m2"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect();
    assert!(
        rel(moments[2], m * (lx * lx + ly * ly) / 12.0) < 1e-10,
        "{moments:?}"
    );
    // Brillouin radius of a box centred on its centre of mass: half the space diagonal.
    let half_diag = 0.5 * (lx * lx + ly * ly + lz * lz).sqrt();
    assert!(rel(v["brillouin_radius_m"].as_f64().unwrap(), half_diag) < 1e-9);
    let r_eq = (3.0 * volume / (4.0 * std::f64::consts::PI)).cbrt();
    assert!(rel(v["equivalent_radius_m"].as_f64().unwrap(), r_eq) < 1e-12);
}

#[test]
fn info_reads_metres_when_told() {
    let km: Value =
        serde_json::from_str(&ok_stdout(&spinfall(&["info", "shapes/box.obj"]))).unwrap();
    let m: Value = serde_json::from_str(&ok_stdout(&spinfall(&[
        "info",
        "shapes/box.obj",
        "--unit",
        "m",
    ])))
    .unwrap();
    let ratio = km["volume_m3"].as_f64().unwrap() / m["volume_m3"].as_f64().unwrap();
    assert!(rel(ratio, 1e9) < 1e-12, "{ratio}");
}

#[test]
fn gravity_far_away_is_the_point_mass_value() {
    // Far from any body its potential tends to GM/r (Newton); at 200 km from a 2 km box the
    // quadrupole term is below 1e-4 of it.
    let out = spinfall(&[
        "gravity",
        "shapes/box.obj",
        "--density",
        "2000",
        "--at",
        "200000,0,0",
        "--at",
        "0,-150000,0",
    ]);
    let text = ok_stdout(&out);
    let gm = G * 2000.0 * 2000.0 * 1200.0 * 800.0;
    let lines: Vec<Value> = text
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), 2);
    for line in &lines {
        let p: Vec<f64> = line["point_m"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect();
        let r = (p[0] * p[0] + p[1] * p[1] + p[2] * p[2]).sqrt();
        assert!(rel(line["potential_m2_s2"].as_f64().unwrap(), gm / r) < 1e-4);
        let a: Vec<f64> = line["acceleration_m_s2"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect();
        let a_mag = (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt();
        assert!(rel(a_mag, gm / (r * r)) < 1e-4);
        assert!(line["laplacian_s2"].as_f64().unwrap().abs() < 1e-12);
        assert_eq!(line["inside"], Value::Bool(false));
    }
}

#[test]
fn gravity_inside_has_the_poisson_laplacian_and_csv_works() {
    // Poisson's equation: the Laplacian of the potential is -4 pi G rho inside the body.
    let dir = tempfile::tempdir().unwrap();
    let pts = dir.path().join("points.csv");
    std::fs::write(&pts, "x_m,y_m,z_m\n0,0,0\n100,-50,20\n").unwrap();
    let out = spinfall(&[
        "gravity",
        "shapes/box.obj",
        "--mass",
        "3.84e12",
        "--points",
        pts.to_str().unwrap(),
        "--csv",
    ]);
    let text = ok_stdout(&out);
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let lap_col = header.iter().position(|h| *h == "laplacian_s2").unwrap();
    let inside_col = header.iter().position(|h| *h == "inside").unwrap();
    let rho = 3.84e12 / (2000.0 * 1200.0 * 800.0);
    for line in lines {
        let cols: Vec<&str> = line.split(',').collect();
        let lap: f64 = cols[lap_col].parse().unwrap();
        assert!(
            rel(lap, -4.0 * std::f64::consts::PI * G * rho) < 1e-10,
            "{lap}"
        );
        assert_eq!(cols[inside_col], "true");
    }
}

#[test]
fn the_builtin_demo_body_needs_no_file() {
    let v: Value =
        serde_json::from_str(&ok_stdout(&spinfall(&["info", "builtin:quillon"]))).unwrap();
    assert!(v["faces"].as_u64().unwrap() > 1000);
    assert!(v["volume_m3"].as_f64().unwrap() > 1e9);
}

#[test]
fn bad_input_exits_2_and_names_the_problem() {
    let dir = tempfile::tempdir().unwrap();
    let open = dir.path().join("open.obj");
    std::fs::write(
        &open,
        "v 0 0 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\nf 1 3 2\nf 1 2 4\nf 2 3 4\n",
    )
    .unwrap();
    assert_bad_input(&spinfall(&["info", open.to_str().unwrap()]), &["open.obj"]);
    assert_bad_input(
        &spinfall(&["info", "no/such/file.obj"]),
        &["no/such/file.obj"],
    );
    assert_bad_input(
        &spinfall(&[
            "gravity",
            "shapes/box.obj",
            "--density",
            "-5",
            "--at",
            "0,0,0",
        ]),
        &["density"],
    );
    assert_bad_input(
        &spinfall(&[
            "gravity",
            "shapes/box.obj",
            "--density",
            "2000",
            "--at",
            "1,2",
        ]),
        &["X,Y,Z"],
    );
    assert!(root().join("shapes/box.obj").exists());
}

/// `info` reads the box as PLY (ASCII, binary) and STL (ASCII, binary) too: the same volume as
/// the OBJ (identical for PLY; STL stores f32, relative rounding 2^-24 per coordinate, IEEE 754
/// binary32), which is the box's closed form 2 x 1.2 x 0.8 km³.
#[test]
fn info_reads_ply_and_stl_and_refuses_a_bad_stl() {
    let dir = tempfile::tempdir().unwrap();
    let (mesh, _) = spinfall_gravity::ShapeModel::from_obj(
        std::fs::read(root().join("shapes/box.obj"))
            .unwrap()
            .as_slice(),
        spinfall_gravity::LengthUnit::Kilometre,
    )
    .unwrap();
    let km = spinfall_gravity::LengthUnit::Kilometre;
    let m = mesh.mesh();
    let files: Vec<(&str, Vec<u8>)> = vec![
        (
            "a.ply",
            spinfall_gravity::generate::to_ply_ascii(m, km, "box").into_bytes(),
        ),
        (
            "b.ply",
            spinfall_gravity::generate::to_ply_binary(m, km, "box", true),
        ),
        (
            "a.stl",
            spinfall_gravity::generate::to_stl_ascii(m, km, "box").into_bytes(),
        ),
        (
            "b.stl",
            spinfall_gravity::generate::to_stl_binary(m, km, "box"),
        ),
    ];
    let volume = 2000.0 * 1200.0 * 800.0;
    for (name, bytes) in &files {
        let path = dir.path().join(name);
        std::fs::write(&path, bytes).unwrap();
        let out = spinfall(&["info", path.to_str().unwrap(), "--density", "2000"]);
        let v: Value = serde_json::from_str(&ok_stdout(&out)).unwrap();
        let got = v["volume_m3"].as_f64().unwrap();
        let tol = if name.ends_with(".ply") { 1e-12 } else { 1e-6 };
        assert!(rel(got, volume) < tol, "{name}: {got}");
    }
    let mut cut = files[3].1.clone();
    cut.truncate(cut.len() - 1);
    let path = dir.path().join("cut.stl");
    std::fs::write(&path, cut).unwrap();
    let out = spinfall(&["info", path.to_str().unwrap(), "--density", "2000"]);
    assert_bad_input(&out, &["cut.stl", "declares 12 triangles", "684 bytes"]);
}
