//! `fly`'s statistics files and `spinfall stats` end to end: the files and their manifest,
//! the embedded scenario, statistics recomputed from results.json equal to those fly wrote, a
//! target and radius recounted by hand, a moved shape model, and bad input.
#![allow(clippy::unwrap_used)]

mod common;

use std::path::{Path, PathBuf};

use common::{assert_bad_input, ok_stdout, root, spinfall};
use serde_json::Value;

/// A scenario on a copy of shapes/ellipsoid.obj (3 x 2 x 1.5 km, invented) in `dir`: a
/// dispersion set of 12 and a fan of 3, plus a single launch that forms no group.
fn write_scenario(dir: &Path, with_groups: bool) -> PathBuf {
    std::fs::copy(root().join("shapes/ellipsoid.obj"), dir.join("egg.obj")).unwrap();
    let groups = if with_groups {
        r#"{"id": "spray", "site": {"lat_deg": 20, "lon_deg": 30}, "speed_m_s": 0.5,
            "azimuth_deg": 60, "elevation_deg": 45,
            "dispersion": {"count": 12, "speed_sigma_percent": 5, "direction_sigma_deg": 3}},
           {"id": "sweep", "site": {"lat_deg": -10, "lon_deg": 100}, "speed_m_s": 0.4,
            "elevation_deg": 45, "fan": {"vary": "azimuth_deg", "to": 90, "count": 3}},"#
    } else {
        ""
    };
    let text = format!(
        r#"{{"format": "spinfall-scenario", "version": 1, "seed": 5,
  "body": {{"shape": "egg.obj", "unit": "km", "density_kg_m3": 2000, "recenter": true,
           "spin": {{"period_h": 9, "axis": [0,0,1], "phase_deg": 0}}}},
  "bounce": {{"max_bounces": 2}},
  "launches": [{groups}
    {{"id": "single", "site": {{"face": 4}}, "speed_m_s": 0.3, "elevation_deg": 60}}]}}"#
    );
    let path = dir.join("scenario.json");
    std::fs::write(&path, text).unwrap();
    path
}

fn fly(scenario: &Path, out: &Path) {
    let o = spinfall(&[
        "fly",
        scenario.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(
        matches!(o.status.code(), Some(0) | Some(3)),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
}

fn json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn v3(v: &Value) -> [f64; 3] {
    [0, 1, 2].map(|i| v[i].as_f64().unwrap())
}

#[test]
fn fly_writes_statistics_beside_its_results_and_stats_recomputes_them_exactly() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), true);
    let run = dir.path().join("run");
    fly(&scenario, &run);
    // The manifest lists the statistics files.
    let manifest = json(&run.join("spinfall-manifest.json"));
    let names: Vec<&str> = manifest["files"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["name"].as_str().unwrap())
        .collect();
    for n in ["results.json", "statistics.json", "landing_density.csv"] {
        assert!(names.contains(&n), "{names:?}");
    }
    // results.json embeds the scenario it ran.
    let results = json(&run.join("results.json"));
    assert_eq!(results["scenario"]["body"]["shape"], "egg.obj");
    assert_eq!(results["shape_check"]["faces"], 5120);
    let stats = json(&run.join("statistics.json"));
    assert_eq!(stats["format"], "spinfall-statistics");
    let groups: Vec<&str> = stats["groups"]
        .as_array()
        .unwrap()
        .iter()
        .map(|g| g["id"].as_str().unwrap())
        .collect();
    assert_eq!(groups, ["spray", "sweep"]);
    // Counts agree with results.json.
    let launches = results["launches"].as_array().unwrap();
    let landed = |prefix: &str| {
        launches
            .iter()
            .filter(|l| l["id"].as_str().unwrap().starts_with(prefix))
            .filter(|l| l["outcome"]["kind"] == "landed")
            .count()
    };
    let spray = &stats["groups"][0];
    assert_eq!(spray["counts"]["members"], 12);
    assert_eq!(
        spray["counts"]["landed"].as_u64().unwrap() as usize,
        landed("spray#")
    );
    // The density columns sum to the landed members of each group.
    // (No field holds a comma or a quote: plain splitting reads it.)
    let text = std::fs::read_to_string(run.join("landing_density.csv")).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let col = |name: &str| header.iter().position(|h| *h == name).unwrap();
    let (all, c_spray, c_sweep) = (
        col("landed_all"),
        col("landed[spray]"),
        col("landed[sweep]"),
    );
    let mut sums = [0u64; 3];
    let mut rows = 0;
    for line in lines {
        let rec: Vec<&str> = line.split(',').collect();
        rows += 1;
        for (s, c) in sums.iter_mut().zip([all, c_spray, c_sweep]) {
            *s += rec[c].parse::<u64>().unwrap();
        }
    }
    assert_eq!(rows, 5120, "one row per face");
    assert_eq!(
        sums,
        [
            (landed("spray#") + landed("sweep/")) as u64,
            landed("spray#") as u64,
            landed("sweep/") as u64
        ]
    );
    // Recomputed from results.json alone: the same bytes.
    let again = dir.path().join("again");
    ok_stdout(&spinfall(&[
        "stats",
        run.join("results.json").to_str().unwrap(),
        "--out",
        again.to_str().unwrap(),
    ]));
    for f in ["statistics.json", "landing_density.csv"] {
        let same = std::fs::read(run.join(f)).unwrap() == std::fs::read(again.join(f)).unwrap();
        assert!(same, "{f} recomputed differs from the one fly wrote");
    }
    assert!(again.join("spinfall-statistics-manifest.json").is_file());

    // One group, a target and a radius: the fraction recounted by hand from results.json.
    let one = dir.path().join("one");
    ok_stdout(&spinfall(&[
        "stats",
        run.join("results.json").to_str().unwrap(),
        "--group",
        "spray",
        "--target-lat-deg",
        "20",
        "--target-lon-deg",
        "31",
        "--radius-m",
        "150",
        "--out",
        one.to_str().unwrap(),
    ]));
    let s1 = json(&one.join("statistics.json"));
    assert_eq!(s1["groups"].as_array().unwrap().len(), 1);
    let w = &s1["groups"][0]["within_radius"];
    let t = v3(&w["target"]["pos_body_m"]);
    let inside = launches
        .iter()
        .filter(|l| l["id"].as_str().unwrap().starts_with("spray#"))
        .filter_map(|l| {
            l["landing"]["pos_body_m"]
                .as_array()
                .map(|_| v3(&l["landing"]["pos_body_m"]))
        })
        .filter(|p| {
            ((p[0] - t[0]).powi(2) + (p[1] - t[1]).powi(2) + (p[2] - t[2]).powi(2)).sqrt() <= 150.0
        })
        .count();
    assert_eq!(w["inside"].as_u64().unwrap() as usize, inside);
    assert_eq!(w["target_from"], "lat_lon");
    assert!((w["target"]["lat_deg"].as_f64().unwrap() - 20.0).abs() < 1e-9);

    // The shape model moved: a clear error, then --shape finds it.
    std::fs::rename(dir.path().join("egg.obj"), dir.path().join("moved.obj")).unwrap();
    let o = spinfall(&[
        "stats",
        run.join("results.json").to_str().unwrap(),
        "--out",
        dir.path().join("x").to_str().unwrap(),
    ]);
    assert_bad_input(&o, &["egg.obj", "not found", "--shape"]);
    let moved = dir.path().join("m");
    ok_stdout(&spinfall(&[
        "stats",
        run.join("results.json").to_str().unwrap(),
        "--shape",
        dir.path().join("moved.obj").to_str().unwrap(),
        "--out",
        moved.to_str().unwrap(),
    ]));
    // The same statistics (the body's name follows the file's stem, so only it differs).
    assert_eq!(
        json(&run.join("statistics.json"))["groups"],
        json(&moved.join("statistics.json"))["groups"]
    );
    assert_eq!(json(&moved.join("statistics.json"))["body"], "moved");
    // Another model in its place is refused.
    let o = spinfall(&[
        "stats",
        run.join("results.json").to_str().unwrap(),
        "--shape",
        root().join("shapes/box.obj").to_str().unwrap(),
        "--out",
        dir.path().join("y").to_str().unwrap(),
    ]);
    assert_bad_input(&o, &["not the one the run flew"]);
}

#[test]
fn a_run_without_groups_writes_no_statistics_files() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), false);
    let run = dir.path().join("run");
    fly(&scenario, &run);
    assert!(run.join("results.json").is_file());
    assert!(!run.join("statistics.json").exists());
    assert!(!run.join("landing_density.csv").exists());
    let o = spinfall(&[
        "stats",
        run.join("results.json").to_str().unwrap(),
        "--out",
        dir.path().join("s").to_str().unwrap(),
    ]);
    assert_bad_input(&o, &["no fan or dispersion group"]);
}

#[test]
fn stats_refuses_bad_input_with_exit_code_2() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), true);
    let run = dir.path().join("run");
    fly(&scenario, &run);
    let results = run.join("results.json");
    let r = results.to_str().unwrap();
    let out = dir.path().join("o");
    let o = out.to_str().unwrap();
    assert_bad_input(
        &spinfall(&["stats", r, "--group", "nope", "--out", o]),
        &["--group", "nope", "spray", "sweep"],
    );
    assert_bad_input(
        &spinfall(&["stats", r, "--radius-m", "-5", "--out", o]),
        &["radius_m"],
    );
    assert_bad_input(
        &spinfall(&[
            "stats",
            r,
            "--target-point-m",
            "1,2",
            "--radius-m",
            "5",
            "--out",
            o,
        ]),
        &["--target-point-m"],
    );
    assert_bad_input(
        &spinfall(&[
            "stats",
            r,
            "--target-lat-deg",
            "95",
            "--target-lon-deg",
            "0",
            "--radius-m",
            "5",
            "--out",
            o,
        ]),
        &["lat_deg"],
    );
    let missing = dir.path().join("missing.json");
    assert_bad_input(
        &spinfall(&["stats", missing.to_str().unwrap(), "--out", o]),
        &["missing.json"],
    );
    let garbage = dir.path().join("garbage.json");
    std::fs::write(&garbage, "{ not json").unwrap();
    assert_bad_input(
        &spinfall(&["stats", garbage.to_str().unwrap(), "--out", o]),
        &["garbage.json"],
    );
    // A results file written before the scenario was embedded still reads, and says why it
    // cannot give statistics.
    let mut old = json(&results);
    let obj = old.as_object_mut().unwrap();
    for k in ["scenario", "scenario_dir", "shape_check"] {
        obj.remove(k);
    }
    let old_path = dir.path().join("old.json");
    std::fs::write(&old_path, serde_json::to_string(&old).unwrap()).unwrap();
    assert_bad_input(
        &spinfall(&["stats", old_path.to_str().unwrap(), "--out", o]),
        &["no embedded scenario"],
    );
    assert!(!out.join("statistics.json").exists());
}
