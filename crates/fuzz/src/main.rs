//! `spinfall-fuzz`: fuzz the OBJ reader and the scenario parser for a while.
//!
//! `spinfall-fuzz <obj|ply|stl|scenario|all> [--seconds N] [--seed S] [--corpus DIR]`: runs each target
//! for N seconds (default 60) under supervision; findings are saved into the corpus folder and
//! the program exits 1. One line per target reports executions and outcomes.

use std::path::PathBuf;
use std::process::ExitCode;

use spinfall_fuzz::runner::{supervise, worker};

#[global_allocator]
static ALLOC: spinfall_fuzz::alloc::CappedAlloc = spinfall_fuzz::alloc::CappedAlloc;

fn value<T: std::str::FromStr>(args: &[String], name: &str) -> Option<T> {
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok())
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let corpus: PathBuf = value(&args, "--corpus")
        .unwrap_or_else(|| PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("corpus"));
    let seconds: f64 = value(&args, "--seconds").unwrap_or(60.0);
    let seed: u64 = value(&args, "--seed").unwrap_or(1);
    if let Some(target) = value::<String>(&args, "--worker") {
        let Some(current) = value::<PathBuf>(&args, "--current") else {
            eprintln!("--worker needs --current FILE");
            return ExitCode::from(2);
        };
        let stats = worker(&target, seconds, seed, &corpus, &current);
        println!(
            "executions {} outcomes {}",
            stats.executions, stats.outcomes
        );
        return ExitCode::SUCCESS;
    }
    let targets: Vec<&str> = match args.first().map(String::as_str) {
        Some("all") => spinfall_fuzz::TARGETS.to_vec(),
        Some(t) if spinfall_fuzz::TARGETS.contains(&t) => vec![t],
        _ => {
            eprintln!(
                "usage: spinfall-fuzz <obj|ply|stl|scenario|all> [--seconds N] [--seed S] [--corpus DIR]"
            );
            return ExitCode::from(2);
        }
    };
    let work = std::env::temp_dir().join(format!("spinfall-fuzz-{}", std::process::id()));
    let mut found = false;
    for target in targets {
        match supervise(target, seconds, seed, &corpus, &work) {
            Ok(r) => {
                println!(
                    "{target}: {} executions in {:.0} s ({:.0}/s), {} distinct outcomes, {} findings",
                    r.executions,
                    r.seconds,
                    r.executions as f64 / r.seconds.max(1e-9),
                    r.outcomes,
                    r.findings.len()
                );
                for f in &r.findings {
                    println!("  {}: {}", f.kind, f.path.display());
                }
                found |= !r.findings.is_empty();
            }
            Err(e) => {
                eprintln!("{target}: {e}");
                found = true;
            }
        }
    }
    let _ = std::fs::remove_dir_all(&work);
    if found {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    }
}
