//! What sharding costs and how it scales: one `spinfall fly` process against the same run split
//! into N shards (flown one after another on this machine, then merged), and, where Slurm is
//! installed and this is root, the driver script of `spinfall slurm` with 4 shards on a
//! one-node cluster started for the purpose (the same harness as `tests/slurm_cluster.rs`).
//!
//! `cargo bench --bench shard_scaling` (add `-- --launches 512` for a bigger run). Prints a
//! table; the README's "Scale out" figures come from it.
#![allow(clippy::unwrap_used, missing_docs)]

#[path = "../tests/slurm_cluster/cluster.rs"]
#[allow(dead_code)]
mod cluster;

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

fn bin() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_spinfall"))
}

/// A scenario of `launches` launches on the demo body: one dispersion set from a mid-latitude
/// site (speeds near the local escape speed spread the flight times, as in a real study).
fn scenario(dir: &Path, launches: usize) -> PathBuf {
    let text = serde_json::json!({
        "format": "spinfall-scenario",
        "version": 1,
        "name": "Shard scaling on the demo body",
        "notes": "Benchmark scenario; for research and planning, not flight-certified.",
        "seed": 11,
        "body": {
            "shape": "builtin:quillon", "unit": "km", "density_kg_m3": 2100.0,
            "recenter": true, "spin": {"period_h": 5.0, "axis": "max-moment"}
        },
        "launches": [{
            "id": "spread",
            "site": {"lat_deg": 15.0, "lon_deg": 120.0},
            "speed_m_s": 0.9, "azimuth_deg": 30.0, "elevation_deg": 50.0,
            "dispersion": {"count": launches, "speed_sigma_percent": 10.0, "direction_sigma_deg": 10.0}
        }],
        "integrator": {"rel_tol": 1e-10, "abs_tol_m": 1e-6, "max_time_s": 100000.0},
        "bounce": {"normal_restitution": 0.5, "tangential_restitution": 0.8, "max_bounces": 5}
    });
    let path = dir.join("scaling.json");
    std::fs::write(&path, serde_json::to_string_pretty(&text).unwrap()).unwrap();
    path
}

/// Runs `spinfall args...`; returns wall time and CPU time (user + system of the child).
fn timed(args: &[&str]) -> (Duration, Duration) {
    let start = Instant::now();
    let out = Command::new("/usr/bin/time")
        .args(["-f", "%U %S"])
        .arg(bin())
        .args(args)
        .output()
        .unwrap();
    let wall = start.elapsed();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        matches!(out.status.code(), Some(0) | Some(3)),
        "spinfall {args:?} failed: {stderr}"
    );
    let cpu: f64 = stderr
        .lines()
        .last()
        .unwrap_or("")
        .split_whitespace()
        .filter_map(|v| v.parse::<f64>().ok())
        .sum();
    (wall, Duration::from_secs_f64(cpu))
}

fn main() {
    let launches: usize = std::env::args()
        .skip_while(|a| a != "--launches")
        .nth(1)
        .and_then(|n| n.parse().ok())
        .unwrap_or(256);
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario(dir.path(), launches);
    let s = scenario.to_str().unwrap();
    let out = |name: &str| dir.path().join(name).to_string_lossy().into_owned();

    println!("shard scaling: {launches} launches on the demo body (5,120 faces), release build");
    println!("| run | wall | CPU | wall per launch |");
    println!("|---|---:|---:|---:|");
    let (wall, cpu) = timed(&["fly", s, "--out", &out("single")]);
    let per = |d: Duration| d.as_secs_f64() * 1e3 / launches as f64;
    println!(
        "| one process | {:.2} s | {:.2} s | {:.1} ms |",
        wall.as_secs_f64(),
        cpu.as_secs_f64(),
        per(wall)
    );
    for n in [1usize, 2, 4, 8] {
        let mut wall_sum = Duration::ZERO;
        let mut cpu_sum = Duration::ZERO;
        let mut slowest = Duration::ZERO;
        let mut folders = Vec::new();
        for k in 0..n {
            let folder = out(&format!("n{n}-shard-{k}"));
            let (w, c) = timed(&["fly", s, "--shard", &format!("{k}/{n}"), "--out", &folder]);
            wall_sum += w;
            cpu_sum += c;
            slowest = slowest.max(w);
            folders.push(folder);
        }
        let mut args: Vec<&str> = vec!["merge"];
        args.extend(folders.iter().map(String::as_str));
        let merged = out(&format!("n{n}-merged"));
        args.extend(["--out", &merged]);
        let (mw, mc) = timed(&args);
        println!(
            "| {n} shards one after another + merge | {:.2} s (slowest shard {:.2} s, merge {:.2} s) | {:.2} s | {:.1} ms |",
            (wall_sum + mw).as_secs_f64(),
            slowest.as_secs_f64(),
            mw.as_secs_f64(),
            (cpu_sum + mc).as_secs_f64(),
            per(wall_sum + mw)
        );
    }

    if let Some(why) = cluster::unavailable() {
        println!("(one-node Slurm cluster not measured: {why})");
        return;
    }
    let cluster = cluster::Cluster::start();
    let work = cluster.dir().join("work");
    let driver = cluster.dir().join("submit.sh");
    let status = Command::new(bin())
        .args(["slurm", s, "--shards", "4", "--work-dir"])
        .arg(&work)
        .arg("--out")
        .arg(&driver)
        .status()
        .unwrap();
    assert!(status.success());
    let start = Instant::now();
    let submitted = cluster.command("bash").arg(&driver).output().unwrap();
    let stdout = String::from_utf8_lossy(&submitted.stdout).to_string();
    let ids: Vec<String> = stdout
        .lines()
        .filter_map(|l| {
            l.strip_prefix("array-job ")
                .or(l.strip_prefix("merge-job "))
                .map(|s| s.trim().to_string())
        })
        .collect();
    assert_eq!(ids.len(), 2, "driver output: {stdout}");
    let states = cluster.wait_for(&[&ids[0], &ids[1]], Duration::from_secs(3600));
    let wall = start.elapsed();
    println!(
        "| one-node Slurm cluster, 4-task array + merge job (submission to merged run) | {:.2} s | - | {:.1} ms |",
        wall.as_secs_f64(),
        per(wall)
    );
    println!("(job states: {states:?})");
}
