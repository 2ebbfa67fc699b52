//! Replays every input of the fuzz corpus (seeds and findings) through both targets: none may
//! panic, run over the hang limit, or allocate above 1 GiB.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use std::path::PathBuf;
use std::time::{Duration, Instant};

use spinfall_fuzz::runner::{HANG_LIMIT, corpus_files};

#[global_allocator]
static ALLOC: spinfall_fuzz::alloc::CappedAlloc = spinfall_fuzz::alloc::CappedAlloc;

fn corpus() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("corpus")
}

#[test]
fn every_corpus_input_is_handled() {
    let mut total = 0;
    for target in spinfall_fuzz::TARGETS {
        let files = corpus_files(&corpus(), target);
        assert!(!files.is_empty(), "no corpus for {target}");
        for file in files {
            let bytes = std::fs::read(&file).unwrap();
            let start = Instant::now();
            let outcome = std::panic::catch_unwind(|| spinfall_fuzz::run_target(target, &bytes));
            assert!(outcome.is_ok(), "{target} panicked on {}", file.display());
            // Debug builds are slower than the fuzzer's; allow some room.
            assert!(
                start.elapsed() < HANG_LIMIT + Duration::from_secs(20),
                "{target} took {:?} on {}",
                start.elapsed(),
                file.display()
            );
            total += 1;
        }
    }
    assert!(
        spinfall_fuzz::alloc::largest_request_bytes() <= spinfall_fuzz::alloc::MAX_ALLOCATION_BYTES
    );
    assert!(total >= 10, "{total} corpus files");
}
