//! The time-boxed runner: a supervisor process starts a worker process (this same program) that
//! generates and runs inputs until time is up. Before each input the worker writes it to a file;
//! when the worker dies (a panic, an abort after a refused allocation above 1 GiB) or stops
//! itself on a hang (one input running over [`HANG_LIMIT`]), the supervisor copies that file into
//! the corpus as a finding and starts a new worker for the time left.

use std::collections::HashSet;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, Ordering};
use std::time::{Duration, Instant};

use arbitrary::Unstructured;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sha2::{Digest, Sha256};

/// Longest time one input may run before it counts as a hang.
pub const HANG_LIMIT: Duration = Duration::from_secs(10);
/// Exit code of a worker that stopped on a hang.
pub const HANG_EXIT: i32 = 77;
/// Longest generated input, bytes.
pub const MAX_INPUT_BYTES: usize = 1 << 20;

/// The corpus files of `target` (sorted by name).
pub fn corpus_files(corpus: &Path, target: &str) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(corpus.join(target))
        .map(|d| {
            d.flatten()
                .map(|e| e.path())
                .filter(|p| p.is_file())
                .collect()
        })
        .unwrap_or_default();
    files.sort();
    files
}

/// A new input: generated from the grammar, a mutation of one seen before, or both.
fn next_input(rng: &mut ChaCha8Rng, target: &str, pool: &[Vec<u8>]) -> Vec<u8> {
    let strategy = rng.random_range(0..10);
    if strategy < 4 && !pool.is_empty() {
        let a = &pool[rng.random_range(0..pool.len())];
        let b = &pool[rng.random_range(0..pool.len())];
        return crate::mutate::mutate(rng, a, b, MAX_INPUT_BYTES);
    }
    let mut raw = vec![0u8; rng.random_range(16..4096)];
    rng.fill(raw.as_mut_slice());
    let mut u = Unstructured::new(&raw);
    let generated = match target {
        "obj" => crate::generate::obj_text(&mut u),
        "ply" => crate::generate::ply_bytes(&mut u),
        "stl" => crate::generate::stl_bytes(&mut u),
        _ => crate::generate::scenario_text(&mut u),
    }
    .unwrap_or_default();
    if strategy >= 8 && !pool.is_empty() {
        let other = &pool[rng.random_range(0..pool.len())];
        crate::mutate::mutate(rng, &generated, other, MAX_INPUT_BYTES)
    } else {
        generated.into_iter().take(MAX_INPUT_BYTES).collect()
    }
}

/// What a worker did.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct WorkerStats {
    /// Inputs run.
    pub executions: u64,
    /// Distinct outcomes seen.
    pub outcomes: u64,
}

/// The worker loop: runs inputs of `target` for `seconds`, writing each to `current` first.
pub fn worker(target: &str, seconds: f64, seed: u64, corpus: &Path, current: &Path) -> WorkerStats {
    let mut pool: Vec<Vec<u8>> = corpus_files(corpus, target)
        .iter()
        .filter_map(|p| std::fs::read(p).ok())
        .collect();
    let mut seen: HashSet<String> = HashSet::new();
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let start = Instant::now();
    // Milliseconds since `start` when the current input began, 0 when idle.
    let busy_since = Arc::new(AtomicU64::new(0));
    {
        let busy_since = busy_since.clone();
        std::thread::spawn(move || {
            loop {
                std::thread::sleep(Duration::from_millis(200));
                let began = busy_since.load(Ordering::Relaxed);
                let now = start.elapsed().as_millis() as u64;
                if began > 0 && now.saturating_sub(began) > HANG_LIMIT.as_millis() as u64 {
                    eprintln!("spinfall-fuzz: an input ran for over {HANG_LIMIT:?}");
                    std::process::exit(HANG_EXIT);
                }
            }
        });
    }
    let mut stats = WorkerStats::default();
    let deadline = Duration::from_secs_f64(seconds.max(0.0));
    while start.elapsed() < deadline {
        let input = next_input(&mut rng, target, &pool);
        if std::fs::write(current, &input).is_err() {
            eprintln!("spinfall-fuzz: cannot write {}", current.display());
            std::process::exit(2);
        }
        busy_since.store(start.elapsed().as_millis() as u64 + 1, Ordering::Relaxed);
        let outcome = crate::run_target(target, &input);
        busy_since.store(0, Ordering::Relaxed);
        stats.executions += 1;
        if seen.insert(outcome.signature()) {
            stats.outcomes += 1;
            if pool.len() < 20_000 {
                pool.push(input);
            }
        }
    }
    stats
}

/// A saved finding.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Finding {
    /// `crash`, `hang` or `alloc` (an allocation above 1 GiB).
    pub kind: String,
    /// Where the input was saved.
    pub path: PathBuf,
}

/// What a supervised run of one target did.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Report {
    /// Inputs run.
    pub executions: u64,
    /// Distinct outcomes seen (summed over workers).
    pub outcomes: u64,
    /// Wall-clock time, s.
    pub seconds: f64,
    /// Inputs that crashed, hung or allocated too much.
    pub findings: Vec<Finding>,
}

/// Runs `target` for `seconds` under supervision (see the module documentation).
pub fn supervise(
    target: &str,
    seconds: f64,
    seed: u64,
    corpus: &Path,
    work: &Path,
) -> Result<Report, String> {
    let exe = std::env::current_exe().map_err(|e| format!("cannot find this program: {e}"))?;
    std::fs::create_dir_all(work).map_err(|e| format!("{}: {e}", work.display()))?;
    let current = work.join(format!("current-{target}"));
    let start = Instant::now();
    let mut report = Report::default();
    let mut restart = 0u64;
    loop {
        let left = seconds - start.elapsed().as_secs_f64();
        if left < 0.5 {
            break;
        }
        let out = Command::new(&exe)
            .args(["--worker", target, "--seconds", &format!("{left:.3}")])
            .args(["--seed", &(seed + restart).to_string()])
            .arg("--corpus")
            .arg(corpus)
            .arg("--current")
            .arg(&current)
            .output()
            .map_err(|e| format!("cannot start a worker: {e}"))?;
        let stdout = String::from_utf8_lossy(&out.stdout);
        if let Some(line) = stdout.lines().find(|l| l.starts_with("executions ")) {
            let mut it = line
                .split_whitespace()
                .filter_map(|w| w.parse::<u64>().ok());
            report.executions += it.next().unwrap_or(0);
            report.outcomes += it.next().unwrap_or(0);
        }
        if out.status.success() {
            break;
        }
        let stderr = String::from_utf8_lossy(&out.stderr);
        let kind = if out.status.code() == Some(HANG_EXIT) {
            "hang"
        } else if stderr.contains("above 1 GiB") {
            "alloc"
        } else {
            "crash"
        };
        let bytes = std::fs::read(&current).unwrap_or_default();
        let hash: String = Sha256::digest(&bytes)[..6]
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect();
        let dir = corpus.join(target);
        std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
        let path = dir.join(format!("{kind}-{hash}"));
        std::fs::write(&path, &bytes).map_err(|e| format!("{}: {e}", path.display()))?;
        eprintln!(
            "spinfall-fuzz: {target}: {kind}, input saved to {}\n{}",
            path.display(),
            stderr
                .lines()
                .rev()
                .take(12)
                .collect::<Vec<_>>()
                .into_iter()
                .rev()
                .collect::<Vec<_>>()
                .join("\n")
        );
        report.findings.push(Finding {
            kind: kind.into(),
            path,
        });
        restart += 1;
    }
    report.seconds = start.elapsed().as_secs_f64();
    Ok(report)
}
