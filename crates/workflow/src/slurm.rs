//! The driver script of a sharded run on a Slurm cluster (`spinfall slurm`): one bash script
//! that, run on a login node, submits the whole run.
//!
//! What the script does when run:
//! 1. With the interpolated field only: submits a **field job** that builds the field once and
//!    stores it in the cache folder (`spinfall map`, which also writes the surface map to
//!    `WORK/surface-map.csv`). The cache folder is `--cache-dir`, else `WORK/field-cache`: on
//!    the shared file system the work folder must be on anyway, so every node reads the one
//!    stored field. The array starts after this job succeeded (`afterok`).
//! 2. Submits a **job array** `--array=0-(N-1)`; task `K` runs
//!    `spinfall fly SCENARIO --shard K/N --out WORK/shard-K --skip-complete`, so a task
//!    re-submitted after a failure skips a shard that is already complete.
//! 3. Submits a **merge job** that depends on every task (`afterok`, and is cancelled rather
//!    than left pending if one fails): `spinfall merge WORK/shard-0 ... --out WORK/merged`.
//!
//! It prints one line per job for scripts to wait on: `field-job ID`, `array-job ID`,
//! `merge-job ID` (IDs as `sbatch --parsable` gives them, without a cluster name). Slurm logs
//! go to `WORK/logs`, job scripts to `WORK/jobs`. Running it again re-submits everything; only
//! the shards that are not complete fly again.
//!
//! Every path in the script is absolute and single-quoted for bash; paths with line breaks or
//! other control characters are refused. The exit status 3 of `fly` and `merge` (written, but
//! some launch failed) counts as success for Slurm, so that the merge still runs: the failed
//! launches are in the results.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use spinfall_dynamics::scenario::FieldMethodSpec;

use crate::error::{Result, WorkflowError};
use crate::gravity_method::GravityOptions;

/// The most shards the driver script submits. Slurm clusters cap job arrays (`MaxArraySize`,
/// 1001 by default: `scontrol show config | grep MaxArraySize`); beyond 10,000 tasks, give
/// each task more launches instead.
pub const MAX_SLURM_SHARDS: u32 = 10_000;

/// What the driver script runs.
#[derive(Debug, Clone, PartialEq)]
pub struct SlurmRequest {
    /// The spinfall binary the tasks run (absolute path).
    pub program: PathBuf,
    /// The scenario: an absolute path, or `builtin:example`.
    pub scenario: String,
    /// Launches of the run (for the script's comments).
    pub launches: u64,
    /// Number of shards `N` (tasks of the array).
    pub shards: u32,
    /// `--partition` of every job.
    pub partition: Option<String>,
    /// `--time` of every job (`HH:MM:SS` or `D-HH:MM:SS`).
    pub time: Option<String>,
    /// `--cpus-per-task` of every job.
    pub cpus_per_task: Option<u32>,
    /// The work folder (absolute): shards, merged results, logs, job scripts.
    pub work_dir: PathBuf,
    /// The gravity options given (passed to every task), with the method in force.
    pub gravity: GravityOptions,
    /// Whether the run uses the interpolated field (the field job is submitted first).
    pub method: FieldMethodSpec,
    /// `--max-launches` given (passed to the tasks).
    pub max_launches: Option<u64>,
}

/// Name of the merged results folder in the work folder.
pub const MERGED_DIR: &str = "merged";
/// Prefix of the shard folders in the work folder (`shard-K`).
pub const SHARD_DIR_PREFIX: &str = "shard-";

/// Checks `--time`: `HH:MM:SS` or `D-HH:MM:SS`, minutes and seconds below 60.
///
/// # Errors
/// Any other form, naming it.
pub fn check_time(time: &str) -> Result<()> {
    let bad = || {
        WorkflowError::Invalid(format!(
            "--time {}: expected HH:MM:SS or D-HH:MM:SS (minutes and seconds below 60), such as \
             02:00:00",
            spinfall_gravity::text::excerpt(time)
        ))
    };
    let (days, clock) = match time.split_once('-') {
        Some((d, c)) => (Some(d), c),
        None => (None, time),
    };
    let digits = |s: &str, max_len: usize| {
        !s.is_empty() && s.len() <= max_len && s.bytes().all(|b| b.is_ascii_digit())
    };
    if let Some(d) = days
        && !digits(d, 3)
    {
        return Err(bad());
    }
    let parts: Vec<&str> = clock.split(':').collect();
    let [h, m, s] = parts.as_slice() else {
        return Err(bad());
    };
    if !digits(h, 4) || !digits(m, 2) || !digits(s, 2) || m.len() != 2 || s.len() != 2 {
        return Err(bad());
    }
    let below_60 = |v: &str| v.parse::<u32>().is_ok_and(|v| v < 60);
    if !below_60(m) || !below_60(s) {
        return Err(bad());
    }
    if h.parse::<u32>().unwrap_or(0) == 0 && m == &"00" && s == &"00" && days.is_none() {
        return Err(WorkflowError::Invalid(
            "--time 00:00:00: a job needs some time".into(),
        ));
    }
    Ok(())
}

/// Checks the request's values (see the module docs).
///
/// # Errors
/// A value out of range or unsafe to put in the script, naming it.
pub fn check_request(r: &SlurmRequest) -> Result<()> {
    check_options(r)?;
    if u64::from(r.shards) > r.launches {
        return Err(WorkflowError::Invalid(format!(
            "--shards {}: the scenario has only {} launches; give at most {} shards",
            r.shards, r.launches, r.launches
        )));
    }
    Ok(())
}

/// Checks the request's values but the launch count (which needs the scenario): before the
/// scenario is read.
///
/// # Errors
/// As [`check_request`].
pub fn check_options(r: &SlurmRequest) -> Result<()> {
    if r.shards == 0 || r.shards > MAX_SLURM_SHARDS {
        return Err(WorkflowError::Invalid(format!(
            "--shards {}: give 1 to {MAX_SLURM_SHARDS} shards (Slurm caps job arrays; see \
             MaxArraySize in `scontrol show config`)",
            r.shards
        )));
    }
    if let Some(t) = &r.time {
        check_time(t)?;
    }
    if let Some(p) = &r.partition
        && (p.is_empty()
            || !p
                .bytes()
                .all(|b| b.is_ascii_alphanumeric() || b"_-.,".contains(&b)))
    {
        return Err(WorkflowError::Invalid(format!(
            "--partition {}: a partition name has letters, digits, '_', '-' and '.' (several \
             separated by commas)",
            spinfall_gravity::text::excerpt(p)
        )));
    }
    if let Some(c) = r.cpus_per_task
        && !(1..=4096).contains(&c)
    {
        return Err(WorkflowError::Invalid(format!(
            "--cpus-per-task {c}: give 1 to 4096"
        )));
    }
    let paths = [
        ("the spinfall binary", Some(r.program.as_path())),
        ("--work-dir", Some(r.work_dir.as_path())),
        ("--cache-dir", r.gravity.cache_dir.as_deref()),
        ("the scenario", Some(Path::new(&r.scenario))),
    ];
    for (what, path) in paths {
        let Some(path) = path else { continue };
        let Some(text) = path.to_str() else {
            return Err(WorkflowError::Invalid(format!(
                "{what} {}: the path is not valid UTF-8, which the script cannot carry",
                path.display()
            )));
        };
        if text.chars().any(char::is_control) {
            return Err(WorkflowError::Invalid(format!(
                "{what} {}: the path holds a line break or another control character, which \
                 the script cannot carry safely; rename it",
                spinfall_gravity::text::excerpt(&text.escape_debug().to_string())
            )));
        }
        if what == "--work-dir" && text.contains('%') {
            return Err(WorkflowError::Invalid(format!(
                "--work-dir {}: Slurm reads '%' in log file names as a pattern; choose a folder \
                 without '%'",
                spinfall_gravity::text::excerpt(text)
            )));
        }
        if what != "the scenario" && !path.is_absolute() {
            return Err(WorkflowError::Invalid(format!(
                "{what} {}: must be an absolute path in the script",
                path.display()
            )));
        }
    }
    Ok(())
}

/// A word quoted for bash: single quotes, each `'` written as `'\''`.
pub fn sh_quote(word: &str) -> String {
    format!("'{}'", word.replace('\'', r"'\''"))
}

/// The cache folder of the interpolated field in the tasks: `--cache-dir`, else
/// `WORK/field-cache`.
pub fn cache_dir_of(r: &SlurmRequest) -> PathBuf {
    r.gravity
        .cache_dir
        .clone()
        .unwrap_or_else(|| r.work_dir.join("field-cache"))
}

/// The gravity options as `fly`/`map` arguments.
fn field_args(r: &SlurmRequest) -> Vec<String> {
    let g = &r.gravity;
    let mut a = Vec::new();
    if let Some(m) = g.method {
        a.push("--field".to_string());
        a.push(
            match m {
                FieldMethodSpec::Direct => "direct",
                FieldMethodSpec::Interpolated => "interpolated",
            }
            .into(),
        );
    }
    if let Some(e) = g.max_rel_error {
        a.push("--max-rel-error".into());
        a.push(format!("{e:e}"));
    }
    if let Some(mb) = g.max_memory_mb {
        a.push("--field-memory-mb".into());
        a.push(mb.to_string());
    }
    if r.method == FieldMethodSpec::Interpolated || g.cache_dir.is_some() {
        a.push("--cache-dir".into());
        a.push(cache_dir_of(r).to_string_lossy().into_owned());
    }
    a
}

/// The quoted words, space-separated.
fn words(args: &[String]) -> String {
    args.iter()
        .map(|a| sh_quote(a))
        .collect::<Vec<_>>()
        .join(" ")
}

/// The heredoc delimiter of the job scripts (no generated line equals it: paths carry no line
/// breaks).
const END: &str = "SPINFALL_END_OF_JOB_SCRIPT";

/// The driver script (see the module docs).
///
/// # Errors
/// [`check_request`].
pub fn driver_script(r: &SlurmRequest) -> Result<String> {
    check_request(r)?;
    let n = r.shards;
    let work = r.work_dir.to_string_lossy().into_owned();
    let field = words(&field_args(r));
    let field = if field.is_empty() {
        String::new()
    } else {
        format!(" {field}")
    };
    let mut fly_extra = field.clone();
    if let Some(m) = r.max_launches {
        fly_extra.push_str(&format!(" --max-launches {m}"));
    }
    let interpolated = r.method == FieldMethodSpec::Interpolated;
    let mut s = String::new();
    // Infallible: writing to a String.
    let mut line = |text: &str| {
        s.push_str(text);
        s.push('\n');
    };
    line("#!/usr/bin/env bash");
    line(&format!(
        "# Driver of a sharded Spinfall run on Slurm, written by `spinfall slurm` (spinfall {}).",
        env!("CARGO_PKG_VERSION")
    ));
    line(&format!(
        "# Scenario: {} ({} launches in {n} shards; launch i is flown by shard i mod {n}).",
        r.scenario, r.launches
    ));
    line("# Run it on a login node: bash THIS_SCRIPT. It submits");
    if interpolated {
        line(&format!(
            "#   - a field job: builds the interpolated field once into {}",
            cache_dir_of(r).display()
        ));
        line("#     (and writes the surface map to WORK/surface-map.csv);");
    }
    line(&format!(
        "#   - a job array 0-{}: task K flies shard K/{n} into WORK/shard-K (skipped when complete);",
        n - 1
    ));
    line("#   - a merge job after every task succeeded: WORK/merged, as one run would write it.");
    if interpolated {
        line(
            "# It prints \"field-job ID\", \"array-job ID\" and \"merge-job ID\" on standard output.",
        );
    } else {
        line("# It prints \"array-job ID\" and \"merge-job ID\" on standard output.");
    }
    line("# Run it again after a failure: everything is submitted again, complete shards skip.");
    line(&format!("# WORK is {work}; Slurm logs in WORK/logs."));
    line("# Spinfall is for research and planning, not flight-certified.");
    line("set -euo pipefail");
    line("");
    line(&format!(
        "spinfall={}",
        sh_quote(&r.program.to_string_lossy())
    ));
    line(&format!("scenario={}", sh_quote(&r.scenario)));
    line(&format!("work={}", sh_quote(&work)));
    line("");
    line("if ! command -v sbatch >/dev/null 2>&1; then");
    line("  echo \"error: sbatch is not on PATH: run this script on a Slurm login node\" >&2");
    line("  exit 2");
    line("fi");
    line("if [ ! -x \"$spinfall\" ]; then");
    line(
        "  echo \"error: $spinfall is not an executable file here; write the script with the spinfall binary the cluster's nodes run\" >&2",
    );
    line("  exit 2");
    line("fi");
    line("mkdir -p \"$work/logs\" \"$work/jobs\"");
    line("");
    // The job scripts: written by the driver, values fixed now.
    let header = |line: &mut dyn FnMut(&str), what: &str| {
        line("#!/usr/bin/env bash");
        line(&format!(
            "# {what} (written by the Spinfall driver script)."
        ));
        line("set -euo pipefail");
        line(&format!(
            "spinfall={}",
            sh_quote(&r.program.to_string_lossy())
        ));
        line(&format!("scenario={}", sh_quote(&r.scenario)));
        line(&format!("work={}", sh_quote(&work)));
        line(
            "if [ -n \"${SLURM_CPUS_PER_TASK:-}\" ]; then export RAYON_NUM_THREADS=\"$SLURM_CPUS_PER_TASK\"; fi",
        );
    };
    // Exit 3 (written, some launch failed) is success for Slurm: the merge must still run.
    let run_tolerating_3 = |line: &mut dyn FnMut(&str), command: &str, what: &str| {
        line("status=0");
        line(&format!("{command} || status=$?"));
        line("if [ \"$status\" -eq 3 ]; then");
        line(&format!(
            "  echo \"{what}: written; some launches failed (see results.csv)\" >&2"
        ));
        line("  exit 0");
        line("fi");
        line("exit \"$status\"");
    };
    if interpolated {
        line(&format!("cat > \"$work/jobs/field.sbatch\" <<'{END}'"));
        header(&mut line, "Builds and stores the interpolated field once");
        line(&format!(
            "\"$spinfall\" map \"$scenario\" --out \"$work/surface-map.csv\"{field}"
        ));
        line(END);
        line("");
    }
    line(&format!("cat > \"$work/jobs/shard.sbatch\" <<'{END}'"));
    header(
        &mut line,
        &format!("A task of the job array: flies shard $SLURM_ARRAY_TASK_ID of {n}"),
    );
    line("k=\"${SLURM_ARRAY_TASK_ID:?this script runs as a task of a Slurm job array}\"");
    run_tolerating_3(
        &mut line,
        &format!(
            "\"$spinfall\" fly \"$scenario\" --shard \"$k/{n}\" --out \"$work/{SHARD_DIR_PREFIX}$k\" --skip-complete{fly_extra}"
        ),
        &format!("shard $k/{n}"),
    );
    line(END);
    line("");
    line(&format!("cat > \"$work/jobs/merge.sbatch\" <<'{END}'"));
    header(&mut line, &format!("Merges the {n} shards"));
    line("shards=()");
    line(&format!(
        "for ((k = 0; k < {n}; k++)); do shards+=(\"$work/{SHARD_DIR_PREFIX}$k\"); done"
    ));
    run_tolerating_3(
        &mut line,
        &format!("\"$spinfall\" merge \"${{shards[@]}}\" --out \"$work/{MERGED_DIR}\""),
        "merged run",
    );
    line(END);
    line("");
    line("# sbatch --parsable prints ID or ID;CLUSTER.");
    line("submit() {");
    line("  local out");
    line("  if ! out=$(sbatch --parsable \"$@\"); then");
    line("    echo \"error: sbatch $* failed\" >&2");
    line("    return 1");
    line("  fi");
    line("  printf '%s\\n' \"${out%%;*}\"");
    line("}");
    let mut common = String::new();
    if let Some(p) = &r.partition {
        let _ = write!(common, " --partition={}", sh_quote(p));
    }
    if let Some(t) = &r.time {
        let _ = write!(common, " --time={}", sh_quote(t));
    }
    if let Some(c) = r.cpus_per_task {
        let _ = write!(common, " --cpus-per-task={c}");
    }
    let mut after = String::new();
    if interpolated {
        line(&format!(
            "field_job=$(submit{common} --job-name=spinfall-field --output=\"$work/logs/field-%j.out\" \"$work/jobs/field.sbatch\")"
        ));
        line("echo \"field-job $field_job\"");
        after = " --dependency=\"afterok:$field_job\" --kill-on-invalid-dep=yes".into();
    }
    line(&format!(
        "array_job=$(submit{common}{after} --job-name=spinfall-shards --array=0-{} --output=\"$work/logs/shard-%a.%A.out\" \"$work/jobs/shard.sbatch\")",
        n - 1
    ));
    line("echo \"array-job $array_job\"");
    line(&format!(
        "merge_job=$(submit{common} --dependency=\"afterok:$array_job\" --kill-on-invalid-dep=yes --job-name=spinfall-merge --output=\"$work/logs/merge-%j.out\" \"$work/jobs/merge.sbatch\")"
    ));
    line("echo \"merge-job $merge_job\"");
    line(&format!(
        "echo \"submitted; the merged run will be in $work/{MERGED_DIR} (squeue -j $array_job,$merge_job)\" >&2"
    ));
    Ok(s)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    fn request() -> SlurmRequest {
        SlurmRequest {
            program: "/opt/spin fall/bin/spinfall".into(),
            scenario: "/data/it's here/scenario.json".into(),
            launches: 16,
            shards: 4,
            partition: Some("short".into()),
            time: Some("01:30:00".into()),
            cpus_per_task: Some(8),
            work_dir: "/scratch/$HOME/`run`".into(),
            gravity: GravityOptions::default(),
            method: FieldMethodSpec::Direct,
            max_launches: Some(200_000),
        }
    }

    #[test]
    fn times_are_hh_mm_ss() {
        for ok in [
            "00:01:00",
            "1:00:00",
            "48:00:00",
            "2-00:00:00",
            "0-12:30:59",
        ] {
            check_time(ok).unwrap();
        }
        for bad in [
            "",
            "1:2",
            "01:60:00",
            "01:00:60",
            "1h",
            "01:00",
            "x-01:00:00",
            "01:00:00:00",
            "-01:00:00",
            "00:00:00",
            " 01:00:00",
            "01:0:00",
        ] {
            assert!(check_time(bad).is_err(), "{bad:?}");
        }
    }

    #[test]
    fn requests_out_of_range_are_refused_by_name() {
        let check = |r: SlurmRequest, words: &str| {
            let e = driver_script(&r).unwrap_err().to_string();
            assert!(e.contains(words), "{e}");
        };
        check(
            SlurmRequest {
                shards: 0,
                ..request()
            },
            "--shards 0",
        );
        check(
            SlurmRequest {
                shards: MAX_SLURM_SHARDS + 1,
                launches: 1_000_000,
                ..request()
            },
            "--shards 10001",
        );
        check(
            SlurmRequest {
                shards: 17,
                ..request()
            },
            "only 16 launches",
        );
        check(
            SlurmRequest {
                partition: Some("a b".into()),
                ..request()
            },
            "--partition",
        );
        check(
            SlurmRequest {
                cpus_per_task: Some(0),
                ..request()
            },
            "--cpus-per-task 0",
        );
        check(
            SlurmRequest {
                work_dir: "/tmp/a\nb".into(),
                ..request()
            },
            "line break",
        );
        check(
            SlurmRequest {
                work_dir: "relative".into(),
                ..request()
            },
            "absolute",
        );
        check(
            SlurmRequest {
                work_dir: "/scratch/100%".into(),
                ..request()
            },
            "'%'",
        );
        check(
            SlurmRequest {
                time: Some("90".into()),
                ..request()
            },
            "--time \"90\"",
        );
    }

    #[test]
    fn the_script_submits_an_array_and_a_dependent_merge() {
        let s = driver_script(&request()).unwrap();
        assert!(s.contains("--array=0-3"), "{s}");
        assert!(s.contains("--dependency=\"afterok:$array_job\""), "{s}");
        assert!(
            s.contains("--partition='short' --time='01:30:00' --cpus-per-task=8"),
            "{s}"
        );
        assert!(s.contains("--shard \"$k/4\""), "{s}");
        assert!(s.contains("--skip-complete --max-launches 200000"), "{s}");
        assert!(!s.contains("field-job"), "direct field: no field job\n{s}");
        assert!(
            !s.contains("field.sbatch"),
            "direct field: no field job\n{s}"
        );
        let interp = driver_script(&SlurmRequest {
            method: FieldMethodSpec::Interpolated,
            gravity: GravityOptions {
                method: Some(FieldMethodSpec::Interpolated),
                max_rel_error: Some(1e-8),
                ..GravityOptions::default()
            },
            ..request()
        })
        .unwrap();
        assert!(interp.contains("echo \"field-job $field_job\""), "{interp}");
        assert!(
            interp.contains("--dependency=\"afterok:$field_job\""),
            "{interp}"
        );
        assert!(
            interp.contains("'--cache-dir' '/scratch/$HOME/`run`/field-cache'"),
            "{interp}"
        );
        assert!(interp.contains("'--max-rel-error' '1e-8'"), "{interp}");
    }

    /// Quoted words come back from bash unchanged, whatever they hold (bash is the outside
    /// reference here).
    #[test]
    fn quoted_words_survive_bash() {
        let words = [
            "plain",
            "it's",
            "two words",
            "$HOME `id` $(id) \\ \" ' ''",
            "*?[a]{b,c}~!#;&|<>",
            "",
        ];
        let script: String = words
            .iter()
            .map(|w| format!("printf '%s\\0' {}\n", sh_quote(w)))
            .collect();
        let out = std::process::Command::new("bash")
            .arg("-c")
            .arg(&script)
            .output()
            .unwrap();
        assert!(out.status.success());
        let back: Vec<&[u8]> = out.stdout.split(|&b| b == 0).collect();
        for (w, b) in words.iter().zip(back) {
            assert_eq!(w.as_bytes(), b);
        }
    }
}
