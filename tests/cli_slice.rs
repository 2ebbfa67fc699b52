//! `spinfall slice`: the geopotential on a plane grid, checked against the potential that
//! `spinfall gravity` reports at the same points plus the centrifugal term written out here
//! (`Phi = -(U + w^2 rho^2 / 2)`, rho the distance from the spin axis, the surface map's
//! convention), and its bad input.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::f64::consts::PI;

use common::{assert_bad_input, ok_stdout, rel, spinfall};
use serde_json::Value;

const PERIOD_H: f64 = 3.0;

/// A scenario of the demo body spinning about +z, not recentred (so slice points are in the
/// shape's own frame, the frame `gravity --at` takes), with one launch.
fn scenario(dir: &std::path::Path) -> std::path::PathBuf {
    let path = dir.join("scenario.json");
    let text = format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
            "body": {{"shape": "builtin:quillon", "density_kg_m3": 1900.0, "recenter": false,
                      "spin": {{"period_h": {PERIOD_H}, "axis": "+z"}}}},
            "launches": [{{"id": "hop", "site": {{"lat_deg": 5.0, "lon_deg": 30.0}},
                           "speed_m_s": 0.6, "azimuth_deg": 90.0, "elevation_deg": 40.0}}]}}"#
    );
    std::fs::write(&path, text).unwrap();
    path
}

fn rows(csv: &str) -> (Vec<String>, Vec<Vec<f64>>) {
    let mut lines = csv.lines();
    let header = lines.next().unwrap().split(',').map(String::from).collect();
    let rows = lines
        .map(|l| l.split(',').map(|x| x.parse::<f64>().unwrap()).collect())
        .collect();
    (header, rows)
}

#[test]
fn slice_values_are_the_geopotential_of_the_gravity_command() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path());
    let out = dir.path().join("slice.csv");
    ok_stdout(&spinfall(&[
        "slice",
        scenario.to_str().unwrap(),
        "--plane",
        "y=250",
        "--extent-m",
        "16000",
        "--cells",
        "12",
        "--out",
        out.to_str().unwrap(),
    ]));
    let (header, rows) = rows(&std::fs::read_to_string(&out).unwrap());
    assert_eq!(
        header[..5],
        ["x_m", "y_m", "z_m", "geopotential_m2_s2", "inside"]
    );
    assert_eq!(rows.len(), 144);
    let w = 2.0 * PI / (PERIOD_H * 3600.0);
    let mut inside = 0;
    for row in rows.iter().step_by(7) {
        let (x, y, z, phi) = (row[0], row[1], row[2], row[3]);
        assert_eq!(y, 250.0);
        assert!(x.abs() < 8000.0 && z.abs() < 8000.0);
        let at = format!("{x},{y},{z}");
        let line = ok_stdout(&spinfall(&[
            "gravity",
            "builtin:quillon",
            "--density",
            "1900",
            "--at",
            &at,
        ]));
        let sample: Value = serde_json::from_str(line.trim()).unwrap();
        let u = sample["potential_m2_s2"].as_f64().unwrap();
        let expected = -(u + 0.5 * w * w * (x * x + y * y));
        assert!(rel(phi, expected) < 1e-12, "{phi} vs {expected} at {at}");
        let flag = sample["inside"].as_bool().unwrap();
        assert_eq!(row[4] == 1.0, flag, "inside flag at {at}");
        inside += usize::from(flag);
    }
    assert!(inside > 0, "the grid should cut the body");
}

#[test]
fn a_launch_adds_its_forbidden_region() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path());
    let out = dir.path().join("slice.csv");
    let run = spinfall(&[
        "slice",
        scenario.to_str().unwrap(),
        "--launch",
        "hop",
        "--cells",
        "40",
        "--out",
        out.to_str().unwrap(),
    ]);
    ok_stdout(&run);
    let stderr = String::from_utf8_lossy(&run.stderr);
    let c: f64 = stderr
        .split("Jacobi constant ")
        .nth(1)
        .and_then(|s| s.split_whitespace().next())
        .and_then(|s| s.parse().ok())
        .unwrap_or_else(|| panic!("no Jacobi constant in {stderr}"));
    let (header, rows) = rows(&std::fs::read_to_string(&out).unwrap());
    assert_eq!(header.last().map(String::as_str), Some("forbidden"));
    let mut counts = [0, 0];
    for row in &rows {
        let forbidden = row[row.len() - 1] == 1.0;
        // Forbidden exactly where Phi > C (C printed to 10 significant digits).
        if (row[3] - c).abs() > 1e-9 * c.abs() {
            assert_eq!(forbidden, row[3] > c, "{row:?}");
        }
        counts[usize::from(forbidden)] += 1;
    }
    // A slow hop: the particle is bound, so part of the plane is closed to it, part open.
    assert!(counts[0] > 0 && counts[1] > 0, "{counts:?}");
}

#[test]
fn bad_slices_are_refused_by_name() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path());
    let s = scenario.to_str().unwrap();
    let out = dir.path().join("slice.csv");
    let o = out.to_str().unwrap();
    assert_bad_input(
        &spinfall(&["slice", s, "--plane", "w=3", "--out", o]),
        &["--plane", "x, y or z"],
    );
    assert_bad_input(
        &spinfall(&["slice", s, "--extent-m", "0", "--out", o]),
        &["extent_m"],
    );
    assert_bad_input(
        &spinfall(&["slice", s, "--cells", "1", "--out", o]),
        &["cells"],
    );
    assert_bad_input(
        &spinfall(&["slice", s, "--launch", "nope", "--out", o]),
        &["no launch \"nope\"", "hop"],
    );
    assert!(!out.exists(), "nothing is written on bad input");
}

/// `render` draws the equilibria and a launch's zero-velocity curves in the body-fixed view:
/// the figure changes, and an unknown launch is bad input naming it.
#[test]
fn render_draws_equilibria_and_zero_velocity_curves() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path());
    let s = scenario.to_str().unwrap();
    let plain = dir.path().join("plain.png");
    let guided = dir.path().join("guided.png");
    let common = ["--view", "body", "--size", "640x360", "--time", "600"];
    let run = |out: &std::path::Path, extra: &[&str]| {
        let mut args = vec!["render", s, "--out", out.to_str().unwrap()];
        args.extend(common);
        args.extend(extra);
        spinfall(&args)
    };
    ok_stdout(&run(&plain, &[]));
    let out = run(&guided, &["--equilibria", "--zero-velocity", "hop"]);
    ok_stdout(&out);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("launch \"hop\": Jacobi constant"),
        "{stderr}"
    );
    assert_ne!(
        std::fs::read(&plain).unwrap(),
        std::fs::read(&guided).unwrap(),
        "the guides change the figure"
    );
    let o = dir.path().join("bad.png");
    assert_bad_input(
        &run(&o, &["--zero-velocity", "nope"]),
        &["no launch \"nope\""],
    );
    assert_bad_input(
        &run(
            &o,
            &["--zero-velocity", "hop", "--zero-velocity-plane", "q=2"],
        ),
        &["--zero-velocity-plane"],
    );
}
