//! `spinfall slurm`'s driver script on a real one-node Slurm cluster (Debian's slurm-wlm and
//! munge, started by the test on localhost, see `slurm_cluster/cluster.rs`): the job array of 4
//! shards and the merge job that depends on it give the same files, byte for byte, as one
//! `spinfall fly` process; after a shard is damaged (a killed node), running the driver again
//! flies that shard alone and the merged run is again the same.
//!
//! Without Slurm (or not as root) the test is skipped with a message on stderr; `.ci/run` sets
//! `SPINFALL_REQUIRE_SLURM=1`, under which a skip is a failure.
#![allow(clippy::unwrap_used)]

#[path = "slurm_cluster/cluster.rs"]
mod cluster;
mod common;

use std::path::Path;
use std::time::Duration;

use cluster::{Cluster, run_ok};
use common::{ok_stdout, root, spinfall};
use serde_json::Value;

/// Most time the jobs of one submission may take.
const JOB_LIMIT: Duration = Duration::from_secs(600);

fn cluster_or_skip() -> Option<Cluster> {
    if let Some(why) = cluster::unavailable() {
        assert!(
            std::env::var("SPINFALL_REQUIRE_SLURM").as_deref() != Ok("1"),
            "SPINFALL_REQUIRE_SLURM=1, but the Slurm test cannot run: {why}"
        );
        eprintln!("skipped: {why}");
        return None;
    }
    Some(Cluster::start())
}

/// Runs the driver script; returns the ids of the array job and the merge job it printed.
fn submit(cluster: &Cluster, driver: &Path) -> (String, String) {
    let out = run_ok(cluster.command("bash").arg(driver).current_dir(root()));
    let stdout = String::from_utf8_lossy(&out.stdout).to_string();
    let id = |key: &str| {
        stdout
            .lines()
            .find_map(|l| l.strip_prefix(key))
            .map(|s| s.trim().to_string())
            .unwrap_or_else(|| panic!("the driver printed no {key:?} line:\n{stdout}"))
    };
    (id("array-job "), id("merge-job "))
}

/// Waits for both jobs and checks that every task of them completed.
fn wait_completed(cluster: &Cluster, jobs: &(String, String), work: &Path) {
    let states = cluster.wait_for(&[&jobs.0, &jobs.1], JOB_LIMIT);
    let logs = || {
        std::fs::read_dir(work.join("logs"))
            .into_iter()
            .flatten()
            .flatten()
            .map(|e| {
                let text = std::fs::read_to_string(e.path()).unwrap_or_default();
                format!("--- {}\n{text}", e.file_name().to_string_lossy())
            })
            .collect::<Vec<_>>()
            .join("\n")
    };
    for s in &states {
        assert!(
            !s.is_empty() && s.split(' ').all(|t| t == "COMPLETED"),
            "job states {states:?}\n{}\n{}",
            logs(),
            cluster.logs()
        );
    }
}

fn manifest(folder: &Path) -> Value {
    let text = std::fs::read_to_string(folder.join("spinfall-manifest.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// The merged folder holds exactly the files of the single run, with the same bytes (their
/// SHA-256, checked against the files themselves), and the same scenario and kernel.
fn assert_same_run(merged: &Path, single: &Path) {
    let (m, s) = (manifest(merged), manifest(single));
    assert_eq!(m["files"], s["files"], "the merged run's files differ");
    assert_eq!(m["scenario_sha256"], s["scenario_sha256"]);
    assert_eq!(m["kernel"], s["kernel"]);
    for f in s["files"].as_array().unwrap() {
        let name = f["name"].as_str().unwrap();
        let (a, b) = (
            std::fs::read(merged.join(name)).unwrap(),
            std::fs::read(single.join(name)).unwrap(),
        );
        assert!(
            a == b,
            "{name} differs between the merged and the single run"
        );
    }
    // Sanity: the comparison covers the launches and the statistics.
    let names: Vec<&str> = s["files"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["name"].as_str().unwrap())
        .collect();
    for expected in [
        "results.json",
        "results.csv",
        "trajectories.csv",
        "statistics.json",
    ] {
        assert!(names.contains(&expected), "{expected} missing: {names:?}");
    }
}

fn run_id(folder: &Path) -> String {
    manifest(folder)["run_id"].as_str().unwrap().to_string()
}

#[test]
fn the_job_array_and_its_merge_on_a_real_cluster_equal_one_process() {
    let Some(cluster) = cluster_or_skip() else {
        return;
    };
    let work = cluster.dir().join("work");
    let driver = cluster.dir().join("submit.sh");
    ok_stdout(&spinfall(&[
        "slurm",
        "builtin:example",
        "--shards",
        "4",
        "--partition",
        "main",
        "--time",
        "00:20:00",
        "--work-dir",
        work.to_str().unwrap(),
        "--out",
        driver.to_str().unwrap(),
    ]));

    let jobs = submit(&cluster, &driver);
    wait_completed(&cluster, &jobs, &work);
    let single = cluster.dir().join("single");
    ok_stdout(&spinfall(&[
        "fly",
        "builtin:example",
        "--out",
        single.to_str().unwrap(),
    ]));
    let merged = work.join("merged");
    assert_same_run(&merged, &single);
    // Every shard holds a quarter of the 16 launches, launch i in shard i mod 4.
    for k in 0..4 {
        let m = manifest(&work.join(format!("shard-{k}")));
        assert_eq!(m["shard"], serde_json::json!([k, 4]), "shard-{k}");
        let ids = m["launch_ids"].as_array().unwrap();
        assert_eq!(ids.len(), 4, "shard-{k} launches: {ids:?}");
    }

    // A node dies while shard 2 writes its trajectories: the file is cut short. Running the
    // driver again flies shard 2 alone; the other shards are skipped, the merge is redone.
    let before: Vec<String> = (0..4)
        .map(|k| run_id(&work.join(format!("shard-{k}"))))
        .collect();
    let cut = work.join("shard-2").join("trajectories.csv");
    let bytes = std::fs::read(&cut).unwrap();
    std::fs::write(&cut, &bytes[..bytes.len() / 2]).unwrap();
    std::fs::remove_dir_all(&merged).unwrap();
    let jobs = submit(&cluster, &driver);
    wait_completed(&cluster, &jobs, &work);
    let after: Vec<String> = (0..4)
        .map(|k| run_id(&work.join(format!("shard-{k}"))))
        .collect();
    for k in 0..4 {
        if k == 2 {
            assert_ne!(before[k], after[k], "shard 2 was not flown again");
        } else {
            assert_eq!(before[k], after[k], "shard {k} was flown again");
        }
    }
    assert_same_run(&merged, &single);
}
