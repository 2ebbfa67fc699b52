//! `spinfall fly` and `map` with the scenario's `environment.sun`: what the files say about the
//! Sun's forces, the map's sunlight columns, warnings on stderr and bad values.
#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;

use common::{assert_bad_input, ok_stdout, root, spinfall};
use serde_json::Value;

/// A scenario on a copy of shapes/box.obj (2 x 1.2 x 0.8 km, top face at z = 400 m) with
/// `environment` and the launches given.
fn write_scenario(dir: &Path, environment: &str, launches: &str) -> String {
    std::fs::copy(root().join("shapes/box.obj"), dir.join("rock.obj")).unwrap();
    let text = format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
  "body": {{"shape": "rock.obj", "unit": "km", "density_kg_m3": 2400,
           "spin": {{"period_h": 3.7, "axis": [0,0,1], "phase_deg": 0}}}},
  "launches": [{launches}],
  "integrator": {{"rel_tol": 1e-12, "abs_tol_m": 1e-9, "max_time_s": 200000}},
  "bounce": {{"normal_restitution": 0, "tangential_restitution": 0, "max_bounces": 0}}{environment}}}"#
    );
    let path = dir.join("scenario.json");
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_owned()
}

const SUN_ABOVE: &str = r#", "environment": {
    "sun": {"direction_inertial": [0, 0, 1], "distance_au": 1.0},
    "particle": {"radius_m": 1e-4, "density_kg_m3": 2000}}"#;

const DROPS: &str = r#"{"id": "top", "state": {"position_m": [100, 50, 401], "velocity_m_s": [0, 0, 0]}},
    {"id": "under", "state": {"position_m": [100, 50, -401], "velocity_m_s": [0, 0, 0]}}"#;

fn header_and_rows(csv: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let mut lines = csv.lines();
    let header = lines.next().unwrap().split(',').map(String::from).collect();
    let rows = lines
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    (header, rows)
}

#[test]
fn fly_with_the_sun_says_the_drift_is_not_applicable_and_reports_the_energy_added() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), SUN_ABOVE, DROPS);
    let out_dir = dir.path().join("out");
    let out = spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]);
    ok_stdout(&out);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("warning: scenario"), "{stderr}");
    let results: Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    for l in results["launches"].as_array().unwrap() {
        assert_eq!(l["outcome"]["kind"], "landed", "{l}");
        assert!(l["jacobi_rel_drift"].is_null(), "{l}");
        assert!(
            l["jacobi_rel_drift_note"]
                .as_str()
                .unwrap()
                .starts_with("not applicable"),
            "{l}"
        );
        assert!(l["energy_added_m2_s2"].is_f64(), "{l}");
    }
    let csv = std::fs::read_to_string(out_dir.join("results.csv")).unwrap();
    let (header, rows) = header_and_rows(&csv);
    let drift = header.iter().position(|c| c == "jacobi_rel_drift").unwrap();
    assert!(
        header.iter().any(|c| c == "energy_added_m2_s2"),
        "{header:?}"
    );
    assert!(rows.iter().all(|r| r[drift] == "n/a"), "{csv}");
}

#[test]
fn map_with_the_sun_adds_the_sunlight_columns() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), SUN_ABOVE, DROPS);
    let out = dir.path().join("map.csv");
    ok_stdout(&spinfall(&[
        "map",
        &scenario,
        "--out",
        out.to_str().unwrap(),
    ]));
    let (header, rows) = header_and_rows(&std::fs::read_to_string(&out).unwrap());
    let col = |name: &str| header.iter().position(|c| c == name).unwrap();
    let (z, lit, ratio, along) = (
        col("centroid_z_m"),
        col("sunlit"),
        col("radiation_pressure_to_gravity"),
        col("radiation_pressure_tangential_m_s2"),
    );
    assert_eq!(rows.len(), 12);
    for r in &rows {
        let cz: f64 = r[z].parse().unwrap();
        let value = |k: usize| r[k].parse::<f64>().unwrap();
        if cz > 399.0 {
            // The top face looks straight at the Sun: lit, pushed straight down (nothing along
            // the face).
            assert_eq!(value(lit), 1.0, "{r:?}");
            assert!(value(ratio) > 0.0);
            assert!(value(along).abs() < 1e-18, "{r:?}");
        } else {
            // Every other face is parallel to the sunlight or faces away.
            assert_eq!(value(lit), 0.0, "{r:?}");
        }
    }
    // Without a Sun the columns are not there.
    let plain = write_scenario(dir.path(), "", DROPS);
    let out2 = dir.path().join("map2.csv");
    ok_stdout(&spinfall(&["map", &plain, "--out", out2.to_str().unwrap()]));
    let text = std::fs::read_to_string(&out2).unwrap();
    assert!(!text.lines().next().unwrap().contains("sunlit"));
}

#[test]
fn settings_without_effect_are_warned_about_on_stderr() {
    let dir = tempfile::tempdir().unwrap();
    let launch = r#"{"id": "grain", "particle": {"radius_m": 1e-4, "density_kg_m3": 2000},
        "state": {"position_m": [100, 50, 401], "velocity_m_s": [0, 0, 0]}}"#;
    let scenario = write_scenario(dir.path(), "", launch);
    let out_dir = dir.path().join("out");
    let out = spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]);
    ok_stdout(&out);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("warning: scenario: launches[0].particle: there is no environment.sun"),
        "{stderr}"
    );
    // Without the Sun the results are as before: a drift number, no energy column.
    let csv = std::fs::read_to_string(out_dir.join("results.csv")).unwrap();
    assert!(
        !csv.contains("energy_added_m2_s2") && !csv.contains("n/a"),
        "{csv}"
    );

    let off = r#", "environment": {"sun": {"direction_inertial": [1, 0, 0], "distance_au": 1,
        "radiation_pressure": false, "shadow": false, "tide": false}}"#;
    let scenario = write_scenario(dir.path(), off, DROPS);
    let out = spinfall(&[
        "map",
        &scenario,
        "--out",
        dir.path().join("m.csv").to_str().unwrap(),
    ]);
    ok_stdout(&out);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains(
            "warning: scenario: environment.sun: radiation_pressure and tide are both off"
        ),
        "{stderr}"
    );
}

#[test]
fn bad_sun_values_are_bad_input_naming_the_key() {
    let dir = tempfile::tempdir().unwrap();
    let out_dir = dir.path().join("out");
    for (env, key) in [
        (
            r#", "environment": {"sun": {"direction_inertial": [0, 0, 0], "distance_au": 1}}"#,
            "environment.sun.direction_inertial",
        ),
        (
            r#", "environment": {"sun": {"direction_inertial": [0, 0, 1], "distance_au": -3}}"#,
            "environment.sun.distance_au",
        ),
        (
            r#", "environment": {"particle": {"radius_m": -1, "density_kg_m3": 2000}}"#,
            "environment.particle.radius_m",
        ),
    ] {
        let scenario = write_scenario(dir.path(), env, DROPS);
        assert_bad_input(
            &spinfall(&["fly", &scenario, "--out", out_dir.to_str().unwrap()]),
            &[key],
        );
    }
}
