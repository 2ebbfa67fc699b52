//! Issue 9: the faults found by a demanding user, each reproduced against the real binary.
//! Each test failed on the code before the workflow layer and passes after (fault 6, the
//! report of a launch stopped by a guard, is fixed and tested with the flight code).
#![allow(clippy::unwrap_used)]

mod common;

use std::path::Path;
use std::process::{Command, Stdio};

use common::{assert_bad_input, ok_stdout, root, spinfall};

/// The exit code and stderr of a run.
fn code_and_stderr(out: &std::process::Output) -> (Option<i32>, String) {
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// A scenario on a copy of shapes/box.obj with the given launches, written into `dir`.
fn scenario(dir: &Path, launches: &str) -> String {
    std::fs::copy(root().join("shapes/box.obj"), dir.join("rock.obj")).unwrap();
    let text = format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
  "body": {{"shape": "rock.obj", "unit": "km", "density_kg_m3": 2400,
           "spin": {{"period_h": 3.7, "axis": [0,0,1]}}}},
  "launches": [{launches}],
  "integrator": {{"max_time_s": 3000}}}}"#
    );
    let path = dir.join("scenario.json");
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_owned()
}

const DROP: &str =
    r#"{"id": "drop", "state": {"position_m": [100, 50, 401], "velocity_m_s": [0, 0, 0]}}"#;

/// Fault 1: `info > /dev/full` panicked ("failed printing to stdout", exit 101).
#[test]
fn fault_01_a_full_stdout_is_exit_4_not_a_panic() {
    let full = std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .unwrap();
    let out = Command::new(common::bin())
        .args(["info", "builtin:quillon"])
        .stdout(Stdio::from(full))
        .output()
        .unwrap();
    let (code, stderr) = code_and_stderr(&out);
    assert_eq!(code, Some(4), "{stderr}");
    assert!(
        stderr.contains("standard output") && !stderr.contains("panicked"),
        "{stderr}"
    );
}

/// Fault 1, the other way: a reader that went away (closed pipe) is exit 4 too.
#[test]
fn fault_01_a_closed_pipe_is_exit_4_not_a_panic() {
    let mut child = Command::new(common::bin())
        .args(["map", "builtin:example", "--out", "-"])
        .current_dir(root())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // Close the reading end before the map (tens of kB of CSV) is written.
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    let (code, stderr) = code_and_stderr(&out);
    assert_eq!(code, Some(4), "{stderr}");
    assert!(!stderr.contains("panicked"), "{stderr}");
}

/// Fault 2: `--out` naming a symlink, a device or a FIFO replaced it by a plain file, and an
/// existing file lost its permissions.
#[cfg(unix)]
#[test]
fn fault_02_symlinks_devices_and_permissions_are_respected() {
    use std::os::unix::fs::{FileTypeExt, PermissionsExt};
    let dir = tempfile::tempdir().unwrap();
    let real = dir.path().join("real.csv");
    std::fs::write(&real, "old").unwrap();
    std::fs::set_permissions(&real, std::fs::Permissions::from_mode(0o640)).unwrap();
    let link = dir.path().join("link.csv");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    ok_stdout(&spinfall(&[
        "map",
        "builtin:example",
        "--out",
        link.to_str().unwrap(),
    ]));
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert!(std::fs::read_to_string(&real).unwrap().starts_with("face,"));
    let mode = std::fs::metadata(&real).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o640);
    ok_stdout(&spinfall(&["map", "builtin:example", "--out", "/dev/null"]));
    assert!(
        std::fs::metadata("/dev/null")
            .unwrap()
            .file_type()
            .is_char_device()
    );
}

/// Fault 3: fly wrote results.json and trajectories.csv one after the other without a
/// manifest; a killed run's hidden temporary file stayed forever. Now the set has a manifest
/// that verifies, fly writes results.csv too, and stale temporary files are removed.
#[test]
fn fault_03_a_run_folder_is_one_set_with_a_manifest() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path(), DROP);
    let out_dir = dir.path().join("deep").join("out");
    std::fs::create_dir_all(&out_dir).unwrap();
    let stale = out_dir.join(".spinfall-tmp-killed.part");
    std::fs::write(&stale, vec![0u8; 100_000]).unwrap();
    ok_stdout(&spinfall(&[
        "fly",
        &scenario,
        "--out",
        out_dir.to_str().unwrap(),
    ]));
    assert!(!stale.exists(), "the stale temporary file is still there");
    let set = spinfall_workflow::output::read_verified(&out_dir, "spinfall-manifest.json").unwrap();
    let names: Vec<&str> = set.manifest.files.iter().map(|f| f.name.as_str()).collect();
    assert_eq!(names, ["results.json", "results.csv", "trajectories.csv"]);
    assert!(set.manifest.scenario_sha256.is_some());
    assert!(set.manifest.kernel.contains("polyhedron"));
    let table = std::fs::read_to_string(out_dir.join("results.csv")).unwrap();
    assert!(table.starts_with("id,outcome,"), "{table}");
    assert!(table.contains("drop,landed,"), "{table}");
}

/// Fault 3: two runs into the same folder mixed their files (3 of 10 trials). Now their writes
/// are serialised and the folder always holds one run's complete set.
#[test]
fn fault_03_concurrent_runs_into_one_folder_never_mix() {
    let dir = tempfile::tempdir().unwrap();
    let out_dir = dir.path().join("out");
    let mut children = Vec::new();
    for k in 0..4 {
        let sub = dir.path().join(format!("s{k}"));
        std::fs::create_dir(&sub).unwrap();
        // Each run drops its particle from a different height: different results.
        let launch = DROP.replace("401", &format!("{}", 402 + k));
        let scenario = scenario(&sub, &launch);
        children.push(
            Command::new(common::bin())
                .args(["fly", &scenario, "--out", out_dir.to_str().unwrap()])
                .stdout(Stdio::null())
                .stderr(Stdio::piped())
                .spawn()
                .unwrap(),
        );
    }
    for c in children {
        let out = c.wait_with_output().unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    spinfall_workflow::output::read_verified(&out_dir, "spinfall-manifest.json").unwrap();
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("results.json")).unwrap())
            .unwrap();
    let z = json["launches"][0]["launch_pos_body_m"][2]
        .as_f64()
        .unwrap();
    let csv = std::fs::read_to_string(out_dir.join("trajectories.csv")).unwrap();
    let first_row = csv.lines().nth(1).unwrap();
    let z_csv: f64 = first_row.split(',').nth(5).unwrap().parse().unwrap();
    assert_eq!(
        z, z_csv,
        "results of one run beside trajectories of another"
    );
}

/// Fault 4: temporary names were predictable (`.NAME.PID.tmp`) and opened without O_EXCL, so a
/// symlink planted in a shared output folder made a run overwrite another file. The links are
/// planted for the next few thousand process ids (ids are handed out in order).
#[cfg(unix)]
#[test]
fn fault_04_planted_symlinks_at_temporary_names_are_not_followed() {
    let dir = tempfile::tempdir().unwrap();
    let victim = dir.path().join("victim.txt");
    std::fs::write(&victim, "precious").unwrap();
    let shared = dir.path().join("shared");
    std::fs::create_dir(&shared).unwrap();
    let next_pid = Command::new("true").spawn().unwrap().id();
    for pid in next_pid..next_pid + 3000 {
        std::os::unix::fs::symlink(&victim, shared.join(format!(".map.csv.{pid}.tmp"))).unwrap();
    }
    let out = shared.join("map.csv");
    ok_stdout(&spinfall(&[
        "map",
        "builtin:example",
        "--out",
        out.to_str().unwrap(),
    ]));
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");
    assert!(std::fs::read_to_string(&out).unwrap().starts_with("face,"));
}

/// Fault 5: a 300-byte scenario (a fan of 100,000 with a dispersion of 100,000 per member)
/// ran the machine out of memory. Now it is refused at once with the estimate.
#[test]
fn fault_05_a_run_beyond_the_launch_limit_is_refused_with_its_estimate() {
    let dir = tempfile::tempdir().unwrap();
    let launches = r#"{"id": "bomb", "site": {"face": 1}, "speed_m_s": 0.1,
        "fan": {"vary": "azimuth_deg", "to": 360, "count": 100000},
        "dispersion": {"count": 100000, "speed_sigma_m_s": 0.01}}"#;
    let scenario = scenario(dir.path(), launches);
    let start = std::time::Instant::now();
    let out = spinfall(&[
        "fly",
        &scenario,
        "--out",
        dir.path().join("o").to_str().unwrap(),
    ]);
    assert_bad_input(
        &out,
        &["10000000000 launches", "limit of 100000", "of memory"],
    );
    assert!(start.elapsed().as_secs() < 20);
    // The limit can be set by the scenario or the command line; the memory estimate is
    // checked too.
    let small = scenario_with_limit(dir.path(), 2);
    let out = spinfall(&[
        "fly",
        &small,
        "--out",
        dir.path().join("o").to_str().unwrap(),
    ]);
    assert_bad_input(&out, &["3 launches", "limit of 2"]);
    ok_stdout(&spinfall(&[
        "fly",
        &small,
        "--out",
        dir.path().join("o").to_str().unwrap(),
        "--max-launches",
        "3",
    ]));
}

fn scenario_with_limit(dir: &Path, limit: u64) -> String {
    let path = scenario(
        dir,
        &[DROP, DROP, DROP]
            .join(",")
            .replacen("drop", "a", 1)
            .replacen("drop", "b", 1),
    );
    let text = std::fs::read_to_string(&path).unwrap().replacen(
        "\"version\": 1,",
        &format!("\"version\": 1, \"limits\": {{\"max_launches\": {limit}}},"),
        1,
    );
    std::fs::write(&path, text).unwrap();
    path
}

/// Fault 7: a self-intersecting mesh (two overlapping boxes) or two disjoint shells was
/// accepted silently, double-counting mass.
#[test]
fn fault_07_overlapping_and_separate_shells_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let boxes = |dx: f64, dy: f64, dz: f64| {
        let mut text = String::new();
        for (ox, oy, oz) in [(0.0, 0.0, 0.0), (dx, dy, dz)] {
            for v in [
                [0, 0, 0],
                [1, 0, 0],
                [1, 1, 0],
                [0, 1, 0],
                [0, 0, 1],
                [1, 0, 1],
                [1, 1, 1],
                [0, 1, 1],
            ] {
                text += &format!(
                    "v {} {} {}\n",
                    v[0] as f64 + ox,
                    v[1] as f64 + oy,
                    v[2] as f64 + oz
                );
            }
        }
        for base in [0, 8] {
            for f in [
                [1, 4, 3, 2],
                [5, 6, 7, 8],
                [1, 2, 6, 5],
                [2, 3, 7, 6],
                [3, 4, 8, 7],
                [4, 1, 5, 8],
            ] {
                text += &format!(
                    "f {} {} {} {}\n",
                    f[0] + base,
                    f[1] + base,
                    f[2] + base,
                    f[3] + base
                );
            }
        }
        text
    };
    let overlapping = dir.path().join("overlap.obj");
    std::fs::write(&overlapping, boxes(0.4, 0.3, 0.2)).unwrap();
    assert_bad_input(
        &spinfall(&["info", overlapping.to_str().unwrap(), "--unit", "m"]),
        &["overlap.obj", "self-intersecting", "cross each other"],
    );
    let apart = dir.path().join("apart.obj");
    std::fs::write(&apart, boxes(5.0, 0.0, 0.0)).unwrap();
    assert_bad_input(
        &spinfall(&["info", apart.to_str().unwrap(), "--unit", "m"]),
        &["2 separate closed surfaces"],
    );
}

/// Fault 8: non-finite results were printed with exit 0.
#[test]
fn fault_08_non_finite_results_are_errors_naming_the_input() {
    assert_bad_input(
        &spinfall(&[
            "gravity",
            "shapes/box.obj",
            "--density",
            "2000",
            "--at",
            "1e155,0,0",
        ]),
        &["--at #1", "not a finite number"],
    );
    assert_bad_input(
        &spinfall(&["info", "builtin:quillon", "--density", "1e308"]),
        &["--density", "not a finite number"],
    );
}

/// Fault 9: a one-line 10 MB token was echoed whole into the error.
#[test]
fn fault_09_a_huge_token_is_quoted_in_about_80_characters() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("long.obj");
    std::fs::write(&path, format!("v 0 0 {}x\n", "7".repeat(10_000_000))).unwrap();
    let out = spinfall(&["info", path.to_str().unwrap()]);
    assert_bad_input(&out, &["line 1", "more characters"]);
    assert!(
        out.stderr.len() < 1000,
        "{} bytes on stderr",
        out.stderr.len()
    );
}

/// Fault 10: a mistyped subcommand was taken as a shape path and tried to open the window.
#[test]
fn fault_10_an_unknown_command_is_named_with_the_list() {
    let out = Command::new(common::bin())
        .arg("frobnicate")
        .env("DISPLAY", ":99999")
        .output()
        .unwrap();
    assert_bad_input(
        &out,
        &[
            "unknown command \"frobnicate\"",
            "info, gravity, fly, map, render",
        ],
    );
    // Without a display the app says so with its own exit code (5), before trying.
    let out = Command::new(common::bin())
        .current_dir(root())
        .arg("shapes/box.obj")
        .env_remove("DISPLAY")
        .env_remove("WAYLAND_DISPLAY")
        .output()
        .unwrap();
    let (code, stderr) = code_and_stderr(&out);
    assert_eq!(code, Some(5), "{stderr}");
    assert!(stderr.contains("no display"), "{stderr}");
}

/// Fault 11: an unwritable --out or an invalid --size was refused only after every flight.
#[test]
fn fault_11_outputs_are_checked_before_any_flight() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path(), DROP);
    let out = spinfall(&[
        "render",
        &scenario,
        "--out",
        dir.path().join("x.png").to_str().unwrap(),
        "--size",
        "32x32",
    ]);
    assert_bad_input(&out, &["--size", "32x32"]);
    assert!(!String::from_utf8_lossy(&out.stderr).contains("flying"));
    // A file where the folder should be: refused before flying (exit 4).
    let blocker = dir.path().join("blocker");
    std::fs::write(&blocker, "").unwrap();
    let out = spinfall(&[
        "fly",
        &scenario,
        "--out",
        blocker.join("out").to_str().unwrap(),
    ]);
    let (code, stderr) = code_and_stderr(&out);
    assert_eq!(code, Some(4), "{stderr}");
    assert!(!stderr.contains("flying"), "{stderr}");
}

/// Fault 12: a fan `a` next to an explicit launch `a/1` gave two launches with one id.
#[test]
fn fault_12_id_collisions_are_input_errors() {
    let dir = tempfile::tempdir().unwrap();
    let launches = r#"{"id": "a", "site": {"face": 1}, "speed_m_s": 0.1,
        "fan": {"vary": "azimuth_deg", "to": 90, "count": 3}},
        {"id": "a/1", "state": {"position_m": [100, 50, 401], "velocity_m_s": [0, 0, 0]}}"#;
    let scenario = scenario(dir.path(), launches);
    assert_bad_input(
        &spinfall(&[
            "fly",
            &scenario,
            "--out",
            dir.path().join("o").to_str().unwrap(),
        ]),
        &["\"a/1\"", "launches[0]", "launches[1]"],
    );
}

/// Fault 13: a UTF-16 OBJ was "0 vertices and 0 faces"; a UTF-8 BOM in a scenario was
/// "expected value at line 1 column 1"; vertex colours were refused; OS errors were printed
/// twice.
#[test]
fn fault_13_encodings_colours_and_os_errors_are_clear() {
    let dir = tempfile::tempdir().unwrap();
    let box_text = std::fs::read_to_string(root().join("shapes/box.obj")).unwrap();
    let utf16 = dir.path().join("wide.obj");
    let mut bytes = vec![0xFF, 0xFE];
    bytes.extend(box_text.encode_utf16().flat_map(|u| u.to_le_bytes()));
    std::fs::write(&utf16, bytes).unwrap();
    assert_bad_input(&spinfall(&["info", utf16.to_str().unwrap()]), &["UTF-16"]);

    let scenario_path = scenario(dir.path(), DROP);
    let text = std::fs::read_to_string(&scenario_path).unwrap();
    std::fs::write(&scenario_path, format!("\u{FEFF}{text}")).unwrap();
    ok_stdout(&spinfall(&[
        "map",
        &scenario_path,
        "--out",
        dir.path().join("m.csv").to_str().unwrap(),
    ]));

    let coloured: String = box_text
        .lines()
        .map(|l| {
            if l.starts_with("v ") {
                format!("{l} 0.8 0.7 0.6\n")
            } else {
                format!("{l}\n")
            }
        })
        .collect();
    let path = dir.path().join("coloured.obj");
    std::fs::write(&path, coloured).unwrap();
    let plain: serde_json::Value =
        serde_json::from_str(&ok_stdout(&spinfall(&["info", "shapes/box.obj"]))).unwrap();
    let info: serde_json::Value =
        serde_json::from_str(&ok_stdout(&spinfall(&["info", path.to_str().unwrap()]))).unwrap();
    assert_eq!(info["volume_m3"], plain["volume_m3"]);

    let out = spinfall(&["info", "no/such/file.obj"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(
        stderr.matches("No such file or directory").count(),
        1,
        "{stderr}"
    );
}

/// Fault 14: `map` refused a scenario without launches ("needs at least one launch").
#[test]
fn fault_14_commands_that_do_not_fly_accept_a_scenario_without_launches() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path(), "");
    let map = dir.path().join("map.csv");
    ok_stdout(&spinfall(&[
        "map",
        &scenario,
        "--out",
        map.to_str().unwrap(),
    ]));
    assert_eq!(
        std::fs::read_to_string(&map).unwrap().lines().count(),
        12 + 1
    );
    let png = dir.path().join("body.png");
    ok_stdout(&spinfall(&[
        "render",
        &scenario,
        "--out",
        png.to_str().unwrap(),
        "--size",
        "200x100",
    ]));
    // Flying one is a clear input error.
    assert_bad_input(
        &spinfall(&[
            "fly",
            &scenario,
            "--out",
            dir.path().join("o").to_str().unwrap(),
        ]),
        &["no launches"],
    );
}
