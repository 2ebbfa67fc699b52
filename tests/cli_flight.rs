//! `spinfall fly`, `map` and `render` end to end on small scenarios.
#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;

use common::{assert_bad_input, ok_stdout, root, spinfall};
use serde_json::Value;

/// The minimal scenario of the format's documentation, on a copy of shapes/box.obj, with the
/// launch state given explicitly in the body frame.
fn write_scenario(dir: &Path, launch_state: &str, extra: &str) -> String {
    std::fs::copy(root().join("shapes/box.obj"), dir.join("rock.obj")).unwrap();
    let text = format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
  "body": {{"shape": "rock.obj", "unit": "km", "density_kg_m3": 2400,
           "spin": {{"period_h": 3.7, "axis": [0,0,1], "phase_deg": 0}}}},
  "launches": [{launch_state}],
  "integrator": {{"rel_tol": 1e-12, "abs_tol_m": 1e-9, "max_time_s": 200000{extra}}},
  "bounce": {{"normal_restitution": 0, "tangential_restitution": 0, "max_bounces": 0}}}}"#
    );
    let path = dir.join("scenario.json");
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_owned()
}

#[test]
fn fly_writes_results_and_both_frames() {
    let dir = tempfile::tempdir().unwrap();
    // The box is 2 x 1.2 x 0.8 km: its top face is at z = 400 m. A particle set down 1 m above
    // it at rest relative to the surface falls back onto it.
    let scenario = write_scenario(
        dir.path(),
        r#"{"id": "drop", "state": {"position_m": [100, 50, 401], "velocity_m_s": [0, 0, 0]}},
           {"id": "away", "state": {"position_m": [0, 0, 401], "velocity_m_s": [0, 0, 30]}}"#,
        "",
    );
    let out_dir = dir.path().join("out");
    let out = spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]);
    ok_stdout(&out);
    let results: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    let launches = results["launches"].as_array().unwrap();
    assert_eq!(launches.len(), 2);
    let drop = &launches[0];
    assert_eq!(drop["id"], "drop");
    assert_eq!(drop["outcome"]["kind"], "landed");
    let landing = drop["landing"]["pos_body_m"].as_array().unwrap();
    // Lands on the top face (z = 400 m), near where it started: the Coriolis drift of a
    // 1 m fall is far below a metre.
    assert!(
        (landing[2].as_f64().unwrap() - 400.0).abs() < 1e-6,
        "{landing:?}"
    );
    assert!(
        (landing[0].as_f64().unwrap() - 100.0).abs() < 0.5,
        "{landing:?}"
    );
    // 30 m/s is far above the escape speed of a 3.8e12 kg box (sqrt(2GM/r) ~ 0.7 m/s).
    assert_eq!(launches[1]["outcome"]["kind"], "escaped");

    let csv = std::fs::read_to_string(out_dir.join("trajectories.csv")).unwrap();
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().unwrap(),
        "launch_id,frame,t_s,x_m,y_m,z_m,vx_m_s,vy_m_s,vz_m_s"
    );
    let frames: std::collections::BTreeSet<&str> =
        lines.map(|l| l.split(',').nth(1).unwrap()).collect();
    assert_eq!(frames.into_iter().collect::<Vec<_>>(), ["body", "inertial"]);
}

#[test]
fn a_run_that_fails_exits_3_and_still_writes_its_results() {
    let dir = tempfile::tempdir().unwrap();
    // Two integration steps cannot reach the ground: the launch fails on the step guard.
    let scenario = write_scenario(
        dir.path(),
        r#"{"id": "short", "state": {"position_m": [0, 0, 600], "velocity_m_s": [0, 0, 0]}}"#,
        r#", "max_steps": 2"#,
    );
    let out_dir = dir.path().join("out");
    let out = spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]);
    assert_eq!(
        out.status.code(),
        Some(3),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let results = std::fs::read_to_string(out_dir.join("results.json")).unwrap();
    assert!(results.contains("failed"), "{results}");
}

#[test]
fn bad_scenarios_exit_2_and_name_the_field() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(
        dir.path(),
        r#"{"id": "a", "state": {"position_m": [0, 0, 600], "velocity_m_s": [0, 0, "fast"]}}"#,
        "",
    );
    let out_dir = dir.path().join("out");
    assert_bad_input(
        &spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]),
        &["launches[0]", "velocity_m_s"],
    );
    assert!(!out_dir.join("results.json").exists());
    std::fs::write(dir.path().join("scenario.json"), "{ not json").unwrap();
    assert_bad_input(
        &spinfall(&[
            "map",
            &scenario,
            "--out",
            dir.path().join("m.csv").to_str().unwrap(),
        ]),
        &["line 1"],
    );
    std::fs::remove_file(dir.path().join("rock.obj")).unwrap();
    let scenario = write_scenario(
        dir.path(),
        r#"{"id": "a", "state": {"position_m": [0, 0, 600], "velocity_m_s": [0, 0, 0]}}"#,
        "",
    );
    std::fs::write(dir.path().join("rock.obj"), "v 0 0 0\nf 1 1 1\n").unwrap();
    assert_bad_input(
        &spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]),
        &["rock.obj"],
    );
}

#[test]
fn map_writes_one_row_per_face() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("map.csv");
    ok_stdout(&spinfall(&[
        "map",
        "builtin:example",
        "--out",
        out.to_str().unwrap(),
    ]));
    let info: Value =
        serde_json::from_str(&ok_stdout(&spinfall(&["info", "builtin:quillon"]))).unwrap();
    let csv = std::fs::read_to_string(&out).unwrap();
    let header = csv.lines().next().unwrap();
    for column in [
        "slope_deg",
        "geopotential_m2_s2",
        "escape_speed_normal_m_s",
        "lat_deg",
    ] {
        assert!(header.contains(column), "{header}");
    }
    assert_eq!(
        csv.lines().count() - 1,
        info["faces"].as_u64().unwrap() as usize
    );
}

/// Width, height and tEXt keywords of a PNG file (PNG specification, ISO/IEC 15948: IHDR
/// comes first; chunks are length, type, data, CRC).
fn png_summary(bytes: &[u8]) -> (u32, u32, Vec<String>) {
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    let be = |i: usize| u32::from_be_bytes(bytes[i..i + 4].try_into().unwrap());
    let (w, h) = (be(16), be(20));
    let mut keys = Vec::new();
    let mut i = 8;
    while i + 8 <= bytes.len() {
        let len = be(i) as usize;
        let kind = &bytes[i + 4..i + 8];
        if kind == b"tEXt" || kind == b"iTXt" {
            let data = &bytes[i + 8..i + 8 + len];
            let end = data.iter().position(|&b| b == 0).unwrap();
            keys.push(String::from_utf8_lossy(&data[..end]).into_owned());
        }
        i += 12 + len;
    }
    (w, h, keys)
}

#[test]
fn render_writes_a_png_with_the_scenario_summary() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("views.png");
    ok_stdout(&spinfall(&[
        "render",
        "builtin:example",
        "--out",
        out.to_str().unwrap(),
        "--size",
        "640x320",
        "--time",
        "1200",
        "--map",
        "slope",
    ]));
    let (w, h, keys) = png_summary(&std::fs::read(&out).unwrap());
    assert_eq!((w, h), (640, 320));
    for k in ["Body", "Spin", "Launches"] {
        assert!(keys.iter().any(|x| x == k), "{keys:?}");
    }
    // A write that cannot happen leaves nothing behind and says so.
    let bad = dir.path().join("missing-folder").join("x.png");
    let out = spinfall(&[
        "render",
        "builtin:example",
        "--out",
        bad.to_str().unwrap(),
        "--size",
        "320x200",
        "--view",
        "body",
    ]);
    assert_eq!(out.status.code(), Some(4));
    assert!(!bad.parent().unwrap().exists());
}
