//! Shared helpers for the binary's integration tests.
#![allow(dead_code, clippy::unwrap_used)]

use std::path::PathBuf;
use std::process::{Command, Output};

/// The binary under test: this build's, or the one `SPINFALL_TEST_BIN` names (to check that a
/// regression test fails on an older build).
pub fn bin() -> PathBuf {
    std::env::var_os("SPINFALL_TEST_BIN")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from(env!("CARGO_BIN_EXE_spinfall")))
}

/// Runs the real `spinfall` binary with `args` in the workspace root.
pub fn spinfall(args: &[&str]) -> Output {
    Command::new(bin())
        .args(args)
        .current_dir(root())
        .output()
        .expect("the spinfall binary runs")
}

/// The workspace root.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Stdout as text; panics with stderr when the command failed.
pub fn ok_stdout(out: &Output) -> String {
    assert!(
        out.status.success(),
        "command failed with {:?}: {}",
        out.status.code(),
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout.clone()).unwrap()
}

/// Asserts a bad-input failure (exit code 2) whose message contains every one of `needles`.
pub fn assert_bad_input(out: &Output, needles: &[&str]) {
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(
        out.status.code(),
        Some(2),
        "expected exit code 2 (bad input), stderr: {stderr}"
    );
    for n in needles {
        assert!(stderr.contains(n), "stderr should mention {n:?}: {stderr}");
    }
}

/// Relative difference.
pub fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(f64::MIN_POSITIVE)
}
