//! Shape files in every format and `body.contact_shape` through the workflow, as the front ends
//! open them: a PLY gravity shape with a finer STL contact model, the mismatch warning, a
//! terrain patch, and bad contact files.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

use std::path::PathBuf;

use nalgebra::Point3;
use spinfall_gravity::{LengthUnit, Mesh, generate};
use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};

/// A fresh folder under the system's temporary folder.
fn folder(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("spinfall-contact-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn scenario(contact: &str) -> String {
    format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
 "body": {{"shape": "gravity.ply", "unit": "m", "density_kg_m3": 2000,
          {contact}
          "spin": {{"period_h": 6, "axis": "+z"}}}},
 "launches": [{{"id": "a", "site": {{"lat_deg": 90, "lon_deg": 0}}, "speed_m_s": 0.1,
                "azimuth_deg": 0, "elevation_deg": 60}}],
 "integrator": {{"rel_tol": 1e-10, "abs_tol_m": 1e-6, "max_time_s": 100000}},
 "bounce": {{"normal_restitution": 0, "tangential_restitution": 0, "max_bounces": 0}}}}"#
    )
}

/// Writes the gravity shape (a 1 km sphere offset from the origin, so recentring matters) and
/// `files`, then prepares the scenario.
fn run(
    name: &str,
    contact: &str,
    files: &[(&str, Vec<u8>)],
) -> spinfall_workflow::Result<spinfall_workflow::prepare::PreparedRun> {
    let dir = folder(name);
    let gravity = offset(generate::icosphere(1000.0, 3));
    std::fs::write(
        dir.join("gravity.ply"),
        generate::to_ply_binary(&gravity, LengthUnit::Metre, "gravity", false),
    )
    .unwrap();
    for (file, bytes) in files {
        std::fs::write(dir.join(file), bytes).unwrap();
    }
    let path = dir.join("s.json");
    std::fs::write(&path, scenario(contact)).unwrap();
    let loaded = read_scenario(&ScenarioSource::File(path))?;
    prepare(loaded, &PrepareOptions::new(Purpose::Fly))
}

fn offset(mut mesh: Mesh) -> Mesh {
    for p in &mut mesh.vertices_m {
        *p += nalgebra::Vector3::new(300.0, -200.0, 100.0);
    }
    mesh
}

#[test]
fn finer_stl_contact_model_replaces_the_geometry_and_keeps_the_gravity_frame() {
    let fine = offset(generate::icosphere(1000.0, 4));
    let run = run(
        "fine",
        r#""contact_shape": {"path": "fine.stl"},"#,
        &[(
            "fine.stl",
            generate::to_stl_binary(&fine, LengthUnit::Metre, "fine"),
        )],
    )
    .unwrap();
    let contact = run.contact.as_ref().unwrap();
    assert!(contact.warnings.is_empty(), "{:?}", contact.warnings);
    // The geometry is the fine model (20 * 4^4 faces), placed with the gravity shape's offset:
    // both spheres share a centre, so the fine one is centred on the origin too (to f32
    // rounding of the STL corners, about 1e-4 m at 1 km).
    assert_eq!(run.body.shape.face_count(), 20 * 4usize.pow(4));
    let com = run.body.shape.mass_properties().center_of_mass_m;
    assert!(com.coords.norm() < 1e-3, "{com:?}");
    // The site at the pole lies on the fine sphere's vertex there (an icosphere has none at the
    // pole in general: check the point is on the fine surface instead).
    let site = run.launches[0].site.as_ref().unwrap();
    let on_fine = run.body.shape.nearest_surface_point(&site.point_body_m).t;
    assert!(on_fine < 1e-6, "{on_fine}");
    let gravity_mp = run.shape.shape.mass_properties();
    assert!(gravity_mp.center_of_mass_m.coords.norm() < 1e-9);
}

#[test]
fn a_contact_model_of_another_size_gives_the_warning() {
    let mut big = offset(generate::icosphere(1000.0, 3));
    for p in &mut big.vertices_m {
        // Scaled by 1.1 about the sphere's centre: volume +33.1 % (1.1³ − 1, similar solids).
        let c = nalgebra::Vector3::new(300.0, -200.0, 100.0);
        *p = Point3::from((p.coords - c) * 1.1 + c);
    }
    let run = run(
        "big",
        r#""contact_shape": {"path": "big.obj", "unit": "m"},"#,
        &[(
            "big.obj",
            generate::to_obj(&big, LengthUnit::Metre, "big").into_bytes(),
        )],
    )
    .unwrap();
    let w = &run.contact.as_ref().unwrap().warnings;
    assert!(
        w.iter()
            .any(|w| w.contains("+33.10 %") && w.contains("same body")),
        "{w:?}"
    );
}

#[test]
fn an_ascii_ply_patch_is_placed_and_a_closed_file_as_patch_is_refused() {
    // A 400 m square patch 100 m above the sphere's north pole, in the file's frame (the sphere
    // is centred at (300, -200, 100)).
    let n = 4u32;
    let mut vertices_m = Vec::new();
    for j in 0..=n {
        for i in 0..=n {
            let x = -200.0 + 400.0 * f64::from(i) / f64::from(n);
            let y = -200.0 + 400.0 * f64::from(j) / f64::from(n);
            vertices_m.push(Point3::new(300.0 + x, -200.0 + y, 100.0 + 1100.0));
        }
    }
    let at = |i: u32, j: u32| j * (n + 1) + i;
    let mut faces = Vec::new();
    for j in 0..n {
        for i in 0..n {
            faces.push([at(i, j), at(i + 1, j), at(i + 1, j + 1)]);
            faces.push([at(i, j), at(i + 1, j + 1), at(i, j + 1)]);
        }
    }
    let patch = Mesh { vertices_m, faces };
    let run = run(
        "patch",
        r#""contact_shape": {"path": "patch.ply", "unit": "m", "kind": "patch"},"#,
        &[(
            "patch.ply",
            generate::to_ply_ascii(&patch, LengthUnit::Metre, "patch").into_bytes(),
        )],
    )
    .unwrap();
    assert!(run.body.patch.is_some());
    // The polar site stands on the patch, 1100 m above the centre of mass.
    let site = run.launches[0].site.as_ref().unwrap();
    assert!(
        (site.point_body_m.z - 1100.0).abs() < 1e-6,
        "{:?}",
        site.point_body_m
    );
    assert!(site.face >= run.body.shape.face_count());

    let closed = generate::icosphere(500.0, 1);
    let err = run_err(
        "closedpatch",
        r#""contact_shape": {"path": "closed.stl", "unit": "m", "kind": "patch"},"#,
        &[(
            "closed.stl",
            generate::to_stl_ascii(&closed, LengthUnit::Metre, "c").into_bytes(),
        )],
    );
    assert!(
        err.contains("contact shape")
            && err.contains("closed.stl")
            && err.contains("no boundary edge"),
        "{err}"
    );
}

fn run_err(name: &str, contact: &str, files: &[(&str, Vec<u8>)]) -> String {
    match run(name, contact, files) {
        Ok(_) => panic!("expected {name} to be refused"),
        Err(e) => {
            let mut text = e.to_string();
            let mut source = std::error::Error::source(&e);
            while let Some(s) = source {
                text.push_str(&format!(": {s}"));
                source = s.source();
            }
            text
        }
    }
}

#[test]
fn bad_contact_files_are_refused_with_their_name_and_place() {
    let err = run_err(
        "missing",
        r#""contact_shape": {"path": "nowhere.ply"},"#,
        &[],
    );
    assert!(err.contains("nowhere.ply"), "{err}");
    let mut stl = generate::to_stl_binary(&generate::icosphere(500.0, 1), LengthUnit::Metre, "x");
    stl.truncate(stl.len() - 3);
    let err = run_err(
        "cut",
        r#""contact_shape": {"path": "cut.stl"},"#,
        &[("cut.stl", stl)],
    );
    assert!(err.contains("declares 80 triangles"), "{err}");
    let err = run_err(
        "mismatch",
        r#""contact_shape": {"path": "really-obj.ply"},"#,
        &[("really-obj.ply", b"v 0 0 0\n".to_vec())],
    );
    assert!(err.contains("named as PLY"), "{err}");
    let err = run_err("empty", r#""contact_shape": {"path": " "},"#, &[]);
    assert!(err.contains("body.contact_shape.path"), "{err}");
    let err = run_err(
        "key",
        r#""contact_shape": {"path": "a.ply", "knd": "patch"},"#,
        &[],
    );
    assert!(err.contains("knd"), "{err}");
}
