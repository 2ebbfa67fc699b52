//! `spinfall fly` with targeted launches: the solution under `targeting` in results.json, an
//! unreachable target failing its launch (exit 3), and bad targets (exit 2).
#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;

use common::{assert_bad_input, root, spinfall};
use serde_json::Value;

/// A scenario on a copy of shapes/box.obj (2 x 1.2 x 0.8 km, top face at z = 400 m).
fn write_scenario(dir: &Path, launches: &str) -> String {
    std::fs::copy(root().join("shapes/box.obj"), dir.join("rock.obj")).unwrap();
    let text = format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
  "body": {{"shape": "rock.obj", "unit": "km", "density_kg_m3": 2400,
           "spin": {{"period_h": 3.7, "axis": [0,0,1], "phase_deg": 0}}}},
  "launches": [{launches}],
  "integrator": {{"rel_tol": 1e-11, "max_time_s": 200000}},
  "bounce": {{"normal_restitution": 0.5, "tangential_restitution": 0.8, "max_bounces": 3}}}}"#
    );
    let path = dir.join("scenario.json");
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_owned()
}

const HOP: &str = r#"{"id": "hop", "site": {"point_m": [-300, 0, 400]},
    "target": {"point_m": [300, 100, 450]}, "mode": "min_speed", "miss_tolerance_m": 0.2}"#;

#[test]
fn fly_writes_the_solution_under_targeting_and_the_launch_lands_on_the_target() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), HOP);
    let out_dir = dir.path().join("out");
    let out = spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stderr}");
    assert!(stderr.contains("targeting hop: speed"), "{stderr}");
    assert!(stderr.contains("snapped 50.000 m"), "{stderr}");
    let json: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    let rec = &json["launches"][0];
    let t = &rec["targeting"];
    assert_eq!(t["status"], "solved");
    assert_eq!(t["mode"], "min_speed");
    // The point was snapped onto the top face (z = 400 m) and says so.
    assert!((t["target"]["point_body_m"][2].as_f64().unwrap() - 400.0).abs() < 1e-6);
    assert!((t["target"]["snap_distance_m"].as_f64().unwrap() - 50.0).abs() < 1e-6);
    for key in ["m_per_cm_s", "m_per_deg_azimuth", "m_per_deg_elevation"] {
        assert!(t["sensitivity"][key].as_f64().unwrap() > 0.0, "{key}");
    }
    // The launch flown is the solution, and its first contact is within the tolerance of the
    // target (the run flies it with the full contact model, bounces included).
    let v = &t["launch"]["body_m_s"];
    for k in 0..3 {
        let (a, b) = (
            rec["launch_vel_body_m_s"][k].as_f64().unwrap(),
            v[k].as_f64().unwrap(),
        );
        assert!(
            (a - b).abs() <= 1e-12 * t["launch"]["speed_m_s"].as_f64().unwrap(),
            "{a} {b}"
        );
    }
    let c = &rec["contacts"][0]["pos_body_m"];
    let miss = (0..3)
        .map(|k| {
            (c[k].as_f64().unwrap() - t["target"]["point_body_m"][k].as_f64().unwrap()).powi(2)
        })
        .sum::<f64>()
        .sqrt();
    assert!(miss <= 0.2, "miss {miss}");
    assert!(
        (rec["first_contact_time_s"].as_f64().unwrap() - t["flight_time_s"].as_f64().unwrap())
            .abs()
            < 1e-6
    );
    // results.csv carries the solution in its targeting columns, as results.json has it.
    let csv = std::fs::read_to_string(out_dir.join("results.csv")).unwrap();
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let row: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert_eq!(header.len(), row.len());
    let col = |name: &str| row[header.iter().position(|h| *h == name).unwrap()];
    assert_eq!(col("target_status"), "solved");
    for (column, key) in [
        ("target_speed_m_s", "speed_m_s"),
        ("target_azimuth_deg", "azimuth_deg"),
        ("target_elevation_deg", "elevation_deg"),
    ] {
        let v: f64 = col(column).parse().unwrap();
        assert_eq!(v, t["launch"][key].as_f64().unwrap(), "{column}");
    }
    let miss_csv: f64 = col("target_miss_m").parse().unwrap();
    assert_eq!(miss_csv, t["miss_m"].as_f64().unwrap());
}

#[test]
fn an_unreachable_target_fails_its_launch_with_the_reason_and_exit_3() {
    let dir = tempfile::tempdir().unwrap();
    // 1 mm/s cannot carry a grain 600 m on this body (its escape speed is about 1 m/s).
    let launches = format!(
        r#"{HOP}, {{"id": "slow", "site": {{"point_m": [-300, 0, 400]}},
        "target": {{"face": 0}}, "mode": {{"fixed_speed_m_s": 0.001, "arc": "low"}}}}"#
    );
    let launches = launches.replace("[300, 100, 450]", "[-250, 0, 400]");
    let scenario = write_scenario(dir.path(), &launches);
    let out_dir = dir.path().join("out");
    let out = spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(3), "{stderr}");
    assert!(stderr.contains("targeting slow: unreachable"), "{stderr}");
    let json: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    let slow = &json["launches"][1];
    assert_eq!(slow["targeting"]["status"], "unreachable");
    assert_eq!(slow["outcome"]["kind"], "failed");
    let reason = slow["outcome"]["reason"].as_str().unwrap();
    assert!(reason.starts_with("target unreachable: "), "{reason}");
    assert_eq!(json["launches"][0]["targeting"]["status"], "solved");
}

#[test]
fn bad_targets_are_bad_input_naming_the_key() {
    let dir = tempfile::tempdir().unwrap();
    for (launch, needles) in [
        (
            r#"{"id": "a", "site": {"face": 1}, "target": {"face": 3}, "speed_m_s": 0.3}"#,
            vec!["launches[0].speed_m_s", "targeted launch"],
        ),
        (
            r#"{"id": "a", "site": {"face": 1}, "target": {"face": 3}, "azimuth_deg": 10}"#,
            vec!["launches[0].azimuth_deg"],
        ),
        (
            r#"{"id": "a", "site": {"face": 1}, "target": {"face": 99}}"#,
            vec!["launches[0].target", "face 99 does not exist"],
        ),
        (
            r#"{"id": "a", "site": {"face": 1}, "target": {"lat_deg": 95, "lon_deg": 0}}"#,
            vec!["launches[0].target.lat_deg"],
        ),
        (
            r#"{"id": "a", "site": {"face": 1}, "target": {"face": 3}, "mode": {"fixed_elevation_deg": 95}}"#,
            vec!["launches[0].mode.fixed_elevation_deg"],
        ),
        (
            r#"{"id": "a", "site": {"face": 1}, "target": {"face": 3}, "mode": "fastest"}"#,
            vec!["launches[0].mode", "min_speed"],
        ),
        (
            r#"{"id": "a", "site": {"face": 1}, "speed_m_s": 0.2, "miss_tolerance_m": 1}"#,
            vec![
                "launches[0].miss_tolerance_m",
                "only applies to a targeted launch",
            ],
        ),
    ] {
        let scenario = write_scenario(dir.path(), launch);
        let out_dir = dir.path().join("bad");
        let out = spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]);
        assert_bad_input(&out, &needles);
    }
}
