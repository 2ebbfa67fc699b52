//! Sharded runs end to end: `fly --shard K/N`, `merge` and the `slurm` driver script.
//!
//! The reference is a single `spinfall fly` of the same scenario: a merge of its shards must
//! give the same files byte for byte (only the manifests' run ids, times and provenance
//! differ). Bad shard sets must be refused with exit 2, naming the folder, and leave the output
//! folder untouched. The driver script is checked by bash itself (`bash -n`) and run with a
//! fake `sbatch` that runs the jobs at once, in order, as Slurm would (array tasks with
//! `SLURM_ARRAY_TASK_ID`, the merge after them).
#![allow(clippy::unwrap_used)]

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::OnceLock;

use common::{assert_bad_input, bin, root};
use serde_json::Value;

/// The files a single `fly` of the example writes besides the manifest.
const RUN_FILES: [&str; 5] = [
    "results.json",
    "results.csv",
    "trajectories.csv",
    "statistics.json",
    "landing_density.csv",
];
const MANIFEST: &str = "spinfall-manifest.json";

/// Runs spinfall with `args`, in `dir`.
fn run_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(bin())
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap()
}

fn ok(out: &Output) -> String {
    assert!(
        matches!(out.status.code(), Some(0) | Some(3)),
        "exit {:?}: {}",
        out.status.code(),
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

fn json(path: &Path) -> Value {
    serde_json::from_slice(&std::fs::read(path).unwrap()).unwrap()
}

/// A folder of its own under Cargo's temporary folder for this test binary, emptied first (so
/// each run replaces the last one's files instead of piling them up).
fn scratch(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("cli_shards")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// The example flown once in one process and in shards of 1, 3 and 4, shared by the tests.
struct Fixture {
    dir: PathBuf,
}

impl Fixture {
    fn single(&self) -> PathBuf {
        self.dir.join("single")
    }
    fn shard(&self, k: u32, n: u32) -> PathBuf {
        self.dir.join(format!("n{n}")).join(format!("shard-{k}"))
    }
    fn shards(&self, n: u32) -> Vec<PathBuf> {
        (0..n).map(|k| self.shard(k, n)).collect()
    }
}

fn fixture() -> &'static Fixture {
    static F: OnceLock<Fixture> = OnceLock::new();
    F.get_or_init(|| {
        let dir = scratch("fixture");
        ok(&run_in(
            &dir,
            &["fly", "builtin:example", "--out", "single"],
        ));
        let f = Fixture { dir };
        for n in [1u32, 3, 4] {
            for k in 0..n {
                let out = f.shard(k, n);
                let shard = format!("{k}/{n}");
                ok(&run_in(
                    &f.dir,
                    &[
                        "fly",
                        "builtin:example",
                        "--shard",
                        &shard,
                        "--out",
                        s(&out),
                    ],
                ));
            }
        }
        f
    })
}

/// Merges `shards` into `out`.
fn merge(dir: &Path, shards: &[PathBuf], out: &Path) -> Output {
    let mut args = vec!["merge".to_string()];
    args.extend(shards.iter().map(|p| s(p).to_string()));
    args.extend(["--out".into(), s(out).into()]);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    run_in(dir, &args)
}

/// The files of two run folders are equal byte for byte, and their manifests list the same
/// files with the same sizes and SHA-256; apart from the run id, the time and the merge's
/// provenance, the manifests are equal too.
fn assert_same_run(single: &Path, merged: &Path) {
    for name in RUN_FILES {
        let (a, b) = (
            std::fs::read(single.join(name)).unwrap(),
            std::fs::read(merged.join(name)).unwrap(),
        );
        assert!(a == b, "{name} differs between {single:?} and {merged:?}");
    }
    let strip = |mut m: Value| {
        let o = m.as_object_mut().unwrap();
        for key in [
            "run_id",
            "written_unix_s",
            "merged_from",
            "field_store",
            "field_build_s",
        ] {
            o.remove(key);
        }
        m
    };
    let (a, b) = (json(&single.join(MANIFEST)), json(&merged.join(MANIFEST)));
    assert!(b["merged_from"].is_array(), "{b}");
    assert_eq!(strip(a), strip(b));
}

#[test]
fn shards_merged_equal_the_single_run_byte_for_byte() {
    let f = fixture();
    let single_ids: Vec<String> = json(&f.single().join("results.json"))["launches"]
        .as_array()
        .unwrap()
        .iter()
        .map(|l| l["id"].as_str().unwrap().to_string())
        .collect();
    assert_eq!(single_ids.len(), 16);
    for n in [1u32, 3, 4] {
        // Each shard's manifest: the shard, the run's launch count and its launches, launch
        // i in shard i mod N; no statistics files in a shard.
        for k in 0..n {
            let dir = f.shard(k, n);
            let m = json(&dir.join(MANIFEST));
            assert_eq!(m["shard"], serde_json::json!([k, n]));
            assert_eq!(m["launch_count"], 16);
            let ids: Vec<&str> = m["launch_ids"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_str().unwrap())
                .collect();
            let expected: Vec<&str> = single_ids
                .iter()
                .enumerate()
                .filter(|(i, _)| i % n as usize == k as usize)
                .map(|(_, id)| id.as_str())
                .collect();
            assert_eq!(ids, expected, "shard {k}/{n}");
            assert!(!dir.join("statistics.json").exists());
            let names: Vec<&str> = m["files"]
                .as_array()
                .unwrap()
                .iter()
                .map(|f| f["name"].as_str().unwrap())
                .collect();
            assert_eq!(names, ["results.json", "results.csv", "trajectories.csv"]);
        }
        // Merged in any order of the folders.
        let mut shards = f.shards(n);
        shards.reverse();
        let out = scratch(&format!("merged-{n}"));
        let merged = out.join("merged");
        let stderr = ok(&merge(&out, &shards, &merged));
        assert!(stderr.contains("merged"), "{stderr}");
        assert_same_run(&f.single(), &merged);
        // The merged results read back like a single run's: `stats` recomputes the same file.
        let stats_out = out.join("stats");
        ok(&run_in(
            &out,
            &[
                "stats",
                s(&merged.join("results.json")),
                "--out",
                s(&stats_out),
            ],
        ));
        assert!(
            std::fs::read(stats_out.join("statistics.json")).unwrap()
                == std::fs::read(f.single().join("statistics.json")).unwrap(),
            "stats on the merged results differ from fly's statistics"
        );
    }
}

/// Targeted entries in shards: each shard solves only the entries it flies (the others are
/// not even solved), and the merge still equals one run, the solutions, the dispersion set
/// around one and the placeholders of an unreachable target included.
#[test]
fn targeted_launches_in_shards_merge_to_the_single_run() {
    let dir = scratch("targeted");
    std::fs::copy(root().join("shapes/box.obj"), dir.join("rock.obj")).unwrap();
    // shapes/box.obj: 2 x 1.2 x 0.8 km, top face at z = 400 m. Launch order: hop#0..hop#3
    // (0-3), plain (4), slow (5, unreachable: 1 mm/s cannot carry a grain that far).
    std::fs::write(
        dir.join("hops.json"),
        r#"{"format": "spinfall-scenario", "version": 1, "seed": 3,
  "body": {"shape": "rock.obj", "unit": "km", "density_kg_m3": 2400,
           "spin": {"period_h": 3.7, "axis": [0,0,1], "phase_deg": 0}},
  "launches": [
    {"id": "hop", "site": {"point_m": [-300, 0, 400]}, "target": {"point_m": [300, 100, 450]},
     "mode": "min_speed", "miss_tolerance_m": 0.2,
     "dispersion": {"count": 4, "speed_sigma_percent": 2, "direction_sigma_deg": 1}},
    {"id": "plain", "site": {"point_m": [0, 0, 400]}, "speed_m_s": 0.1, "elevation_deg": 60},
    {"id": "slow", "site": {"point_m": [-300, 0, 400]}, "target": {"face": 0},
     "mode": {"fixed_speed_m_s": 0.001, "arc": "low"}}],
  "integrator": {"rel_tol": 1e-11, "max_time_s": 200000},
  "bounce": {"normal_restitution": 0.5, "tangential_restitution": 0.8, "max_bounces": 3}}"#,
    )
    .unwrap();
    let single = dir.join("single");
    ok(&run_in(&dir, &["fly", "hops.json", "--out", s(&single)]));
    let n = 5;
    let mut shards = Vec::new();
    for k in 0..n {
        let out = dir.join(format!("shard-{k}"));
        let shard = format!("{k}/{n}");
        let e = ok(&run_in(
            &dir,
            &["fly", "hops.json", "--shard", &shard, "--out", s(&out)],
        ));
        // Shard 4 flies only `plain` (launch 4): it solves no target.
        assert_eq!(k == 4, !e.contains("targeting"), "shard {k}: {e}");
        shards.push(out);
    }
    ok(&merge(&dir, &shards, &dir.join("merged")));
    assert_same_run_files(
        &single,
        &dir.join("merged"),
        &["results.json", "results.csv", "trajectories.csv"],
    );
    let results = json(&single.join("results.json"));
    assert_eq!(results["launches"][1]["targeting"]["status"], "solved");
    assert_eq!(results["launches"][5]["targeting"]["status"], "unreachable");
}

/// The files `names` of two run folders are equal byte for byte.
fn assert_same_run_files(a: &Path, b: &Path, names: &[&str]) {
    for name in names {
        assert!(
            std::fs::read(a.join(name)).unwrap() == std::fs::read(b.join(name)).unwrap(),
            "{name} differs between {a:?} and {b:?}"
        );
    }
}

/// A copy of `src` (a shard folder) at `dst`.
fn copy_dir(src: &Path, dst: &Path) {
    std::fs::create_dir_all(dst).unwrap();
    for e in std::fs::read_dir(src).unwrap() {
        let e = e.unwrap();
        if e.file_type().unwrap().is_file() {
            std::fs::copy(e.path(), dst.join(e.file_name())).unwrap();
        }
    }
}

/// Edits the manifest of `dir` with `edit`.
fn edit_manifest(dir: &Path, edit: impl FnOnce(&mut Value)) {
    let mut m = json(&dir.join(MANIFEST));
    edit(&mut m);
    std::fs::write(
        dir.join(MANIFEST),
        serde_json::to_string_pretty(&m).unwrap(),
    )
    .unwrap();
}

/// Every listing and byte under `dir`, to show it untouched.
fn snapshot(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut out = Vec::new();
    if let Ok(entries) = std::fs::read_dir(dir) {
        for e in entries {
            let p = e.unwrap().path();
            out.push((p.clone(), std::fs::read(&p).unwrap_or_default()));
        }
    }
    out.sort();
    out
}

#[test]
fn merge_refuses_bad_shard_sets_by_name_and_writes_nothing() {
    let f = fixture();
    let dir = scratch("bad-merges");
    let [s0, s1, s2] = [0, 1, 2].map(|k| f.shard(k, 3));
    let variant = |name: &str, from: &Path| {
        let d = dir.join(name);
        copy_dir(from, &d);
        d
    };
    // Shard 2/3 of another scenario: the example with another seed.
    let mut other = json(&f.single().join("results.json"))["scenario"].clone();
    other["seed"] = 8.into();
    let other_path = dir.join("other.json");
    std::fs::write(&other_path, other.to_string()).unwrap();
    let other_shard = dir.join("other-2");
    ok(&run_in(
        &dir,
        &[
            "fly",
            s(&other_path),
            "--shard",
            "2/3",
            "--out",
            s(&other_shard),
        ],
    ));
    let impossible = variant("impossible", &s2);
    edit_manifest(&impossible, |m| m["shard"] = serde_json::json!([5, 3]));
    let old_version = variant("old-version", &s2);
    edit_manifest(&old_version, |m| m["software"] = "spinfall 0.0.1".into());
    let corrupt = variant("corrupt", &s2);
    std::fs::write(corrupt.join(MANIFEST), "{\"format\": \"spinf").unwrap();
    let killed = variant("killed", &s2);
    edit_manifest(&killed, |m| m["state"] = "incomplete".into());
    let truncated = variant("truncated", &s2);
    let traj = std::fs::read(truncated.join("trajectories.csv")).unwrap();
    std::fs::write(truncated.join("trajectories.csv"), &traj[..traj.len() / 2]).unwrap();
    let no_manifest = variant("no-manifest", &s2);
    std::fs::remove_file(no_manifest.join(MANIFEST)).unwrap();
    let swapped = variant("swapped", &s2);
    edit_manifest(&swapped, |m| {
        m["launch_ids"].as_array_mut().unwrap().swap(0, 1);
    });
    let twin = variant("twin-of-1", &s1);
    let cases: Vec<(&str, Vec<PathBuf>, Vec<String>)> = vec![
        (
            "a shard K >= N",
            vec![s0.clone(), s1.clone(), impossible.clone()],
            vec![
                s(&impossible).into(),
                "impossible shard".into(),
                "5/3".into(),
            ],
        ),
        (
            "another scenario",
            vec![s0.clone(), s1.clone(), other_shard.clone()],
            vec![s(&other_shard).into(), "another scenario".into()],
        ),
        (
            "another version",
            vec![s0.clone(), s1.clone(), old_version.clone()],
            vec![s(&old_version).into(), "spinfall 0.0.1".into()],
        ),
        (
            "another N",
            vec![s0.clone(), s1.clone(), f.shard(2, 4)],
            vec![s(&f.shard(2, 4)).into(), "one split".into()],
        ),
        (
            "a missing shard",
            vec![s0.clone(), s1.clone()],
            vec!["missing: 2/3".into()],
        ),
        (
            "a shard given twice",
            vec![s0.clone(), s1.clone(), twin.clone(), s2.clone()],
            vec![s(&twin).into(), "given twice".into()],
        ),
        (
            "a corrupt manifest",
            vec![s0.clone(), s1.clone(), corrupt.clone()],
            vec![s(&corrupt).into(), "not a Spinfall manifest".into()],
        ),
        (
            "a job killed while renaming",
            vec![s0.clone(), s1.clone(), killed.clone()],
            vec![s(&killed).into(), "stopped while putting its files".into()],
        ),
        (
            "a file not matching its hash",
            vec![s0.clone(), s1.clone(), truncated.clone()],
            vec![
                s(&truncated).into(),
                "trajectories.csv does not match".into(),
            ],
        ),
        (
            "a job killed before its manifest",
            vec![s0.clone(), s1.clone(), no_manifest.clone()],
            vec![s(&no_manifest).into(), "is missing".into()],
        ),
        (
            "launches not the shard's",
            vec![s0.clone(), s1.clone(), swapped.clone()],
            vec![s(&swapped).into(), "its manifest lists".into()],
        ),
        (
            "a run that is not a shard",
            vec![s0.clone(), s1.clone(), f.single()],
            vec![s(&f.single()).into(), "not a shard".into()],
        ),
    ];
    // Into a folder that does not exist (it must not be created) and into one with a file of
    // its own (it must stay as it was).
    let existing = dir.join("existing-out");
    std::fs::create_dir_all(&existing).unwrap();
    std::fs::write(existing.join("keep.txt"), "mine").unwrap();
    let before = snapshot(&existing);
    for (what, shards, words) in cases {
        let fresh = dir.join("fresh-out");
        for out in [&fresh, &existing] {
            let o = merge(&dir, &shards, out);
            let words: Vec<&str> = words.iter().map(String::as_str).collect();
            assert_bad_input(&o, &words);
            assert!(!fresh.exists(), "{what}: the output folder was created");
            assert_eq!(
                snapshot(&existing),
                before,
                "{what}: the output folder changed"
            );
        }
    }
    // The good set still merges (the checks did not touch the shards).
    ok(&merge(&dir, &[s2, s0, s1], &dir.join("good")));
    assert_same_run(&f.single(), &dir.join("good"));
}

/// Shards from machines with other vector units are merged, with a warning and every kernel
/// named. (This machine has one kernel: the other shard's record is edited, and its manifest's
/// hash brought up to date, as another machine would have written it.)
#[test]
fn shards_of_different_kernels_merge_with_a_warning() {
    let f = fixture();
    let dir = scratch("kernels");
    let shards: Vec<PathBuf> = (0..3)
        .map(|k| {
            let d = dir.join(format!("shard-{k}"));
            copy_dir(&f.shard(k, 3), &d);
            d
        })
        .collect();
    let results = shards[2].join("results.json");
    let mut doc = json(&results);
    let ours = doc["field"]["kernel"].as_str().unwrap().to_string();
    let other = if ours == "portable SIMD kernel" {
        "AVX2+FMA kernel"
    } else {
        "portable SIMD kernel"
    };
    doc["field"]["kernel"] = other.into();
    let text = serde_json::to_string_pretty(&doc).unwrap() + "\n";
    std::fs::write(&results, text).unwrap();
    let (bytes, sha) = spinfall_workflow::output::file_digest(&results).unwrap();
    edit_manifest(&shards[2], |m| {
        let kernel = m["kernel"].as_str().unwrap().replace(&ours, other);
        m["kernel"] = kernel.into();
        let file = &mut m["files"][0];
        assert_eq!(file["name"], "results.json");
        file["bytes"] = bytes.into();
        file["sha256"] = sha.into();
    });
    let merged = dir.join("merged");
    let e = ok(&merge(&dir, &shards, &merged));
    assert!(e.contains("different vector kernels"), "{e}");
    assert!(e.contains(&format!("2/3: {other}")), "{e}");
    let kernel = json(&merged.join("results.json"))["field"]["kernel"].clone();
    assert_eq!(kernel, format!("mixed: {ours} + {other}").as_str());
    let m = json(&merged.join(MANIFEST));
    assert!(m["kernel"].as_str().unwrap().contains("mixed"), "{m}");
    assert!(
        m["merged_from"][2]["kernel"]
            .as_str()
            .unwrap()
            .contains(other)
    );
    // The flights themselves are this machine's: the tables and trajectories are unchanged.
    for name in ["results.csv", "trajectories.csv", "statistics.json"] {
        assert!(
            std::fs::read(merged.join(name)).unwrap()
                == std::fs::read(f.single().join(name)).unwrap(),
            "{name}"
        );
    }
}

#[test]
fn fly_refuses_malformed_shards_before_any_work() {
    let dir = scratch("bad-shards");
    for bad in [
        "4/4", "7/3", "0/0", "x", "1/", "/3", "1/2/3", "1.0/2", "-1/3",
    ] {
        let out = dir.join("never");
        let o = run_in(
            &dir,
            &["fly", "builtin:example", "--shard", bad, "--out", s(&out)],
        );
        assert_eq!(o.status.code(), Some(2), "{bad}");
        let e = String::from_utf8_lossy(&o.stderr);
        assert!(e.contains("--shard") || e.contains("shard"), "{bad}: {e}");
        assert!(!out.exists(), "{bad}: the output folder was created");
    }
    let o = run_in(
        &dir,
        &["fly", "builtin:example", "--skip-complete", "--out", "x"],
    );
    assert_bad_input(&o, &["--shard"]);
}

#[test]
fn a_complete_shard_is_skipped_and_anything_else_is_flown_again() {
    let f = fixture();
    let dir = scratch("skip");
    let shard = dir.join("shard-1");
    copy_dir(&f.shard(1, 3), &shard);
    let fly = |args: &[&str]| {
        let mut all = vec![
            "fly",
            "builtin:example",
            "--out",
            s(&shard),
            "--skip-complete",
        ];
        all.extend_from_slice(args);
        run_in(&dir, &all)
    };
    let manifest = std::fs::read(shard.join(MANIFEST)).unwrap();
    let e = ok(&fly(&["--shard", "1/3"]));
    assert!(e.contains("skipped") && e.contains("complete"), "{e}");
    assert!(!e.contains("flying:"), "a skipped shard flew: {e}");
    assert!(std::fs::read(shard.join(MANIFEST)).unwrap() == manifest);
    // A changed file: flown again, and the new files are the same results.
    let csv = shard.join("results.csv");
    std::fs::write(&csv, "tampered").unwrap();
    let e = ok(&fly(&["--shard", "1/3"]));
    assert!(
        e.contains("flying shard 1/3") && e.contains("results.csv"),
        "{e}"
    );
    for name in ["results.json", "results.csv", "trajectories.csv"] {
        assert!(
            std::fs::read(shard.join(name)).unwrap()
                == std::fs::read(f.shard(1, 3).join(name)).unwrap(),
            "{name} differs from the first flight of the shard"
        );
    }
    // Another split of the run: flown again.
    let e = ok(&fly(&["--shard", "1/4"]));
    assert!(e.contains("holds shard 1/3, not 1/4"), "{e}");
    assert_eq!(
        json(&shard.join(MANIFEST))["shard"],
        serde_json::json!([1, 4])
    );
    // A full run's folder is no shard.
    let full = dir.join("full");
    copy_dir(&f.single(), &full);
    let o = run_in(
        &dir,
        &[
            "fly",
            "builtin:example",
            "--shard",
            "0/4",
            "--out",
            s(&full),
            "--skip-complete",
        ],
    );
    let e = ok(&o);
    assert!(e.contains("not a shard"), "{e}");
}

/// A fake `sbatch` for the driver script: records its arguments, then runs the job at once
/// (array tasks in order with `SLURM_ARRAY_TASK_ID`), writing the log where `--output` says
/// (`%A`, `%a`, `%j` replaced); a job whose dependency failed does not run. Prints `ID;CLUSTER`
/// as `sbatch --parsable` does on a federated cluster.
const FAKE_SBATCH: &str = r#"#!/usr/bin/env bash
set -u
state="${FAKE_SBATCH_DIR:?}"
printf '%s\n' "$*" >> "$state/calls.log"
array="" output="" dep="" script="" parsable=0
for a in "$@"; do
  case "$a" in
    --array=*) array="${a#--array=}" ;;
    --output=*) output="${a#--output=}" ;;
    --dependency=*) dep="${a#--dependency=}" ;;
    --parsable) parsable=1 ;;
    --*) ;;
    *) script="$a" ;;
  esac
done
[ "$parsable" = 1 ] || { echo "fake sbatch: --parsable expected" >&2; exit 1; }
[ -f "$script" ] || { echo "fake sbatch: no script $script" >&2; exit 1; }
id=$(( $(cat "$state/next-id" 2>/dev/null || echo 100) + 1 ))
echo "$id" > "$state/next-id"
if [ -n "$dep" ] && [ -e "$state/failed-${dep#afterok:}" ]; then
  echo "$id;fake"; exit 0
fi
pA='%A'; pa='%a'; pj='%j'
if [ -n "$array" ]; then
  for ((k = ${array%-*}; k <= ${array#*-}; k++)); do
    log="${output//"$pA"/$id}"; log="${log//"$pa"/$k}"
    SLURM_ARRAY_JOB_ID=$id SLURM_ARRAY_TASK_ID=$k SLURM_CPUS_PER_TASK=1 \
      bash "$script" > "$log" 2>&1 || touch "$state/failed-$id"
  done
else
  log="${output//"$pj"/$id}"
  SLURM_JOB_ID=$id bash "$script" > "$log" 2>&1 || touch "$state/failed-$id"
fi
echo "$id;fake"
"#;

/// A folder holding the fake `sbatch`, and its state folder.
fn fake_slurm(dir: &Path) -> (PathBuf, PathBuf) {
    let bin_dir = dir.join("fake-bin");
    let state = dir.join("fake-state");
    std::fs::create_dir_all(&bin_dir).unwrap();
    std::fs::create_dir_all(&state).unwrap();
    let sbatch = bin_dir.join("sbatch");
    std::fs::write(&sbatch, FAKE_SBATCH).unwrap();
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&sbatch, std::fs::Permissions::from_mode(0o755)).unwrap();
    }
    (bin_dir, state)
}

/// Runs the driver script with the fake `sbatch` first on PATH; returns (job name, id) lines.
fn run_driver(script: &Path, bin_dir: &Path, state: &Path) -> Vec<(String, String)> {
    let path = format!(
        "{}:{}",
        s(bin_dir),
        std::env::var("PATH").unwrap_or_default()
    );
    let o = Command::new("bash")
        .arg(script)
        .env("PATH", path)
        .env("FAKE_SBATCH_DIR", state)
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "driver failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8(o.stdout)
        .unwrap()
        .lines()
        .map(|l| {
            let (name, id) = l.split_once(' ').unwrap();
            assert!(id.bytes().all(|b| b.is_ascii_digit()), "{l}");
            (name.to_string(), id.to_string())
        })
        .collect()
}

fn bash_syntax_ok(script: &Path) {
    let o = Command::new("bash").arg("-n").arg(script).output().unwrap();
    assert!(
        o.status.success(),
        "bash -n: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

#[test]
fn the_driver_script_submits_the_array_and_the_merge_and_skips_complete_shards() {
    let f = fixture();
    // A work folder whose name needs quoting.
    let dir = scratch("driver");
    let work = dir.join("work it's $HOME");
    let script = dir.join("run.sh");
    let e = ok(&run_in(
        &dir,
        &[
            "slurm",
            "builtin:example",
            "--shards",
            "4",
            "--partition",
            "debug",
            "--time",
            "00:10:00",
            "--cpus-per-task",
            "1",
            "--work-dir",
            s(&work),
            "--out",
            s(&script),
        ],
    ));
    assert!(e.contains("bash"), "{e}");
    bash_syntax_ok(&script);
    let (bin_dir, state) = fake_slurm(&dir);
    let jobs = run_driver(&script, &bin_dir, &state);
    let names: Vec<&str> = jobs.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names, ["array-job", "merge-job"]);
    let calls = std::fs::read_to_string(state.join("calls.log")).unwrap();
    assert!(calls.contains("--array=0-3"), "{calls}");
    assert!(
        calls.contains(&format!("--dependency=afterok:{}", jobs[0].1)),
        "{calls}"
    );
    assert!(
        calls.contains("--partition=debug --time=00:10:00"),
        "{calls}"
    );
    assert_same_run(&f.single(), &work.join("merged"));
    let logs: Vec<String> = std::fs::read_dir(work.join("logs"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(logs.len(), 5, "{logs:?}");
    // Each task flew its shard (the same files as the fixture's shards).
    for k in 0..4 {
        assert!(
            std::fs::read(work.join(format!("shard-{k}/results.json"))).unwrap()
                == std::fs::read(f.shard(k, 4).join("results.json")).unwrap(),
            "shard {k}/4 differs"
        );
    }
    // Run again (as after a failed node): the complete shards skip, the merge runs again.
    let manifests: Vec<Vec<u8>> = (0..4)
        .map(|k| std::fs::read(work.join(format!("shard-{k}")).join(MANIFEST)).unwrap())
        .collect();
    let again = run_driver(&script, &bin_dir, &state);
    assert_ne!(again[0].1, jobs[0].1);
    for k in 0..4 {
        let log = std::fs::read_to_string(
            work.join("logs")
                .join(format!("shard-{k}.{}.out", again[0].1)),
        )
        .unwrap();
        assert!(log.contains("skipped"), "shard {k}: {log}");
        assert!(
            std::fs::read(work.join(format!("shard-{k}")).join(MANIFEST)).unwrap()
                == manifests[k as usize],
            "shard {k}/4 was written again"
        );
    }
    assert_same_run(&f.single(), &work.join("merged"));
}

/// The documented recipe for the interpolated field: a first job builds it into the work
/// folder's cache, every task then reads it.
#[test]
fn the_driver_builds_the_interpolated_field_once_before_the_array() {
    let dir = scratch("driver-field");
    std::fs::copy(root().join("shapes/ellipsoid.obj"), dir.join("egg.obj")).unwrap();
    std::fs::write(
        dir.join("egg.json"),
        r#"{"format": "spinfall-scenario", "version": 1, "seed": 5,
  "body": {"shape": "egg.obj", "unit": "km", "density_kg_m3": 2000, "recenter": true,
           "spin": {"period_h": 9, "axis": [0,0,1], "phase_deg": 0}},
  "field": {"method": "interpolated", "max_rel_error": 1e-3},
  "bounce": {"max_bounces": 2},
  "launches": [{"id": "spray", "site": {"lat_deg": 20, "lon_deg": 30}, "speed_m_s": 0.5,
      "azimuth_deg": 60, "elevation_deg": 45,
      "dispersion": {"count": 5, "speed_sigma_percent": 5, "direction_sigma_deg": 3}}]}"#,
    )
    .unwrap();
    let work = dir.join("work");
    let script = dir.join("run.sh");
    ok(&run_in(
        &dir,
        &[
            "slurm",
            "egg.json",
            "--shards",
            "2",
            "--work-dir",
            "work",
            "--out",
            "run.sh",
        ],
    ));
    bash_syntax_ok(&script);
    let (bin_dir, state) = fake_slurm(&dir);
    let jobs = run_driver(&script, &bin_dir, &state);
    let names: Vec<&str> = jobs.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names, ["field-job", "array-job", "merge-job"]);
    let calls = std::fs::read_to_string(state.join("calls.log")).unwrap();
    assert!(
        calls.contains(&format!("--dependency=afterok:{}", jobs[0].1)),
        "the array waits for the field job: {calls}"
    );
    for k in 0..2 {
        let m = json(&work.join(format!("shard-{k}")).join(MANIFEST));
        let store = m["field_store"].as_str().unwrap();
        assert!(store.starts_with("read from"), "{store}");
        assert!(store.contains("field-cache"), "{store}");
        assert!(m.get("field_build_s").is_none(), "{m}");
    }
    assert!(work.join("surface-map.csv").is_file());
    // The merged run equals one process's run of the scenario (reading the same field).
    let single = dir.join("single");
    ok(&run_in(
        &dir,
        &[
            "fly",
            "egg.json",
            "--cache-dir",
            s(&work.join("field-cache")),
            "--out",
            s(&single),
        ],
    ));
    assert_same_run(&single, &work.join("merged"));
}

#[test]
fn slurm_refuses_bad_options_and_scenarios_without_writing_a_script() {
    let dir = scratch("slurm-bad");
    std::fs::write(dir.join("broken.json"), "{\"format\": ").unwrap();
    // A scenario that parses but cannot be prepared: a site's face is beyond the model.
    let mut example = json(&fixture().single().join("results.json"))["scenario"].clone();
    example["launches"][3]["site"]["face"] = 10_000_000.into();
    std::fs::write(dir.join("far.json"), example.to_string()).unwrap();
    let script = dir.join("run.sh");
    for (args, words) in [
        (vec!["builtin:example", "--shards", "0"], vec!["--shards 0"]),
        (
            vec!["builtin:example", "--shards", "10001"],
            vec!["--shards 10001"],
        ),
        (
            vec!["builtin:example", "--shards", "17"],
            vec!["only 16 launches"],
        ),
        (
            vec!["builtin:example", "--shards", "4", "--time", "1:2"],
            vec!["--time", "1:2", "HH:MM:SS"],
        ),
        (
            vec!["builtin:example", "--shards", "4", "--partition", "a b"],
            vec!["--partition"],
        ),
        (
            vec!["builtin:example", "--shards", "4", "--cpus-per-task", "0"],
            vec!["--cpus-per-task 0"],
        ),
        (
            vec!["builtin:example", "--shards", "4", "--max-rel-error", "1"],
            vec!["max_rel_error"],
        ),
        (vec!["missing.json", "--shards", "4"], vec!["missing.json"]),
        (vec!["broken.json", "--shards", "4"], vec!["broken.json"]),
        (vec!["far.json", "--shards", "4"], vec!["launches[3]"]),
    ] {
        let mut all = vec!["slurm"];
        all.extend(args);
        all.extend(["--out", "run.sh"]);
        let o = run_in(&dir, &all);
        assert_bad_input(&o, &words);
        assert!(!script.exists(), "a script was written for {all:?}");
    }
}
