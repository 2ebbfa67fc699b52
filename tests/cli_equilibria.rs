//! `spinfall equilibria` end to end: the JSON document, standard output, an empty result and
//! bad input.
#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;

use common::{assert_bad_input, ok_stdout, root, spinfall};
use serde_json::Value;

/// A scenario on a copy of shapes/box.obj (2 x 1.2 x 0.8 km) spinning about +z.
fn write_scenario(dir: &Path, period_h: f64) -> String {
    std::fs::copy(root().join("shapes/box.obj"), dir.join("rock.obj")).unwrap();
    let text = format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
  "body": {{"shape": "rock.obj", "unit": "km", "density_kg_m3": 2400,
           "spin": {{"period_h": {period_h}, "axis": [0,0,1], "phase_deg": 0}}}}}}"#
    );
    let path = dir.join("scenario.json");
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_owned()
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn equilibria_of_a_box_are_written_with_their_documented_fields() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), 3.7);
    let out_path = dir.path().join("eq.json");
    let out = spinfall(&["equilibria", &scenario, "--out", out_path.to_str().unwrap()]);
    ok_stdout(&out);
    let doc: Value = serde_json::from_str(&std::fs::read_to_string(&out_path).unwrap()).unwrap();
    assert_eq!(doc["format"], "spinfall-equilibria");
    assert!(
        doc["note"]
            .as_str()
            .unwrap()
            .contains("not flight-certified")
    );
    assert_eq!(doc["field"]["method"], "direct");
    for key in ["search", "region", "counts", "notes", "body"] {
        assert!(!doc[key].is_null(), "{key}");
    }
    let w = f(&doc["body"]["spin_rate_rad_s"]);
    // Kepler's third law for the synchronous radius, from the document's own GM and spin.
    let gm = f(&doc["body"]["gm_m3_s2"]);
    let rs = f(&doc["body"]["synchronous_radius_m"]);
    assert!(((gm / (w * w)).cbrt() - rs).abs() < 1e-9 * rs);
    let list = doc["equilibria"].as_array().unwrap();
    assert!(!list.is_empty());
    for e in list {
        let p: Vec<f64> = e["position_m"].as_array().unwrap().iter().map(f).collect();
        assert_eq!(p.len(), 3);
        let ev = e["eigenvalues"].as_array().unwrap();
        assert_eq!(ev.len(), 6);
        assert!(ev.iter().all(|z| z.as_array().unwrap().len() == 2));
        let stable = e["linearly_stable"].as_bool().unwrap();
        // Linearly stable exactly when every eigenvalue's real part is within the documented
        // tolerance, 1e-6 of max(w, max |lambda|).
        let max_re = ev.iter().map(|z| f(&z[0]).abs()).fold(0.0, f64::max);
        let max_abs = ev
            .iter()
            .map(|z| f(&z[0]).hypot(f(&z[1])))
            .fold(w, f64::max);
        assert_eq!(stable, max_re <= 1e-6 * max_abs, "{e}");
        assert!(e["stability"]["summary"].is_string());
        // Outside the box: beyond its half-extents somewhere.
        assert!(
            p[0].abs() > 1000.0 || p[1].abs() > 600.0 || p[2].abs() > 400.0,
            "{p:?}"
        );
        // The Jacobi constant of a particle at rest is the geopotential; both are negative.
        assert_eq!(e["jacobi_m2_s2"], e["geopotential_m2_s2"]);
        assert!(f(&e["jacobi_m2_s2"]) < 0.0);
        // The box is symmetric under x -> -x and y -> -y (both mirror planes contain the
        // spin axis), so each point's mirror images are in the list too.
        for (sx, sy) in [(-1.0, 1.0), (1.0, -1.0)] {
            assert!(
                list.iter().any(|q| {
                    let q: Vec<f64> = q["position_m"].as_array().unwrap().iter().map(f).collect();
                    (q[0] - sx * p[0]).abs() < 1e-3 && (q[1] - sy * p[1]).abs() < 1e-3
                }),
                "mirror of {p:?} missing"
            );
        }
    }

    // The same to standard output.
    let out = spinfall(&["equilibria", &scenario, "--out", "-"]);
    let doc2: Value = serde_json::from_str(&ok_stdout(&out)).unwrap();
    assert_eq!(doc2["equilibria"], doc["equilibria"]);
}

#[test]
fn a_body_spinning_past_its_synchronous_radius_gives_an_empty_list_and_exit_0() {
    // At a 0.5 h period the synchronous radius (~290 m) lies inside the box: every Newton
    // path ends inside the body.
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), 0.5);
    let out_path = dir.path().join("eq.json");
    let out = spinfall(&["equilibria", &scenario, "--out", out_path.to_str().unwrap()]);
    ok_stdout(&out);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("no equilibrium"), "{stderr}");
    let doc: Value = serde_json::from_str(&std::fs::read_to_string(&out_path).unwrap()).unwrap();
    assert_eq!(doc["equilibria"].as_array().unwrap().len(), 0);
}

#[test]
fn bad_input_is_exit_2_and_an_unwritable_output_exit_4() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("nope.json");
    let out = spinfall(&[
        "equilibria",
        missing.to_str().unwrap(),
        "--out",
        dir.path().join("a.json").to_str().unwrap(),
    ]);
    assert_bad_input(&out, &["cannot read", "nope.json"]);

    let broken = dir.path().join("broken.json");
    std::fs::write(&broken, "{\"format\": \"spinfall-scenario\", ").unwrap();
    let out = spinfall(&[
        "equilibria",
        broken.to_str().unwrap(),
        "--out",
        dir.path().join("b.json").to_str().unwrap(),
    ]);
    assert_bad_input(&out, &["broken.json"]);

    let scenario = write_scenario(dir.path(), 3.7);
    let out = spinfall(&[
        "equilibria",
        &scenario,
        "--out",
        dir.path().join("c.json").to_str().unwrap(),
        "--max-points",
        "0",
    ]);
    assert_bad_input(&out, &["--max-points", "between 1 and"]);

    // The output scheme of every command: a write that cannot happen is exit 4 (output), not
    // 2, and is refused before the work.
    let bad = dir.path().join("missing-folder").join("x.json");
    let out = spinfall(&["equilibria", &scenario, "--out", bad.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(4));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("does not exist"), "{stderr}");
    assert!(!bad.parent().unwrap().exists());
}
