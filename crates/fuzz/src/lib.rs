//! Fuzzing of Spinfall's readers of user files, the OBJ, PLY and STL shape-model readers and
//! the scenario parser, on the stable toolchain.
//!
//! What it is: the fuzz targets ([`targets::obj`], [`targets::ply`], [`targets::stl`],
//! [`targets::scenario`], each the real path
//! a front end takes: `spinfall_workflow::shape::open_shape` and
//! `spinfall_workflow::scenario_file::read_scenario`, plus checks of what they return),
//! structure-aware input generators built on `arbitrary` ([`generate`]), byte mutations
//! ([`mutate`]), an allocator that refuses any single allocation above 1 GiB ([`alloc`]), and a
//! time-boxed runner ([`runner`]) that supervises a worker process so a crash, a hang (over 10 s
//! for one input) or an oversized allocation is caught and its input saved into the corpus. The
//! corpus (`crates/fuzz/corpus/<target>/`) is replayed by `cargo test` (`tests/corpus.rs`).
//!
//! What it is not: a coverage-guided fuzzer (those need a nightly toolchain or external
//! engines); it finds its way by grammar-aware generation, mutation of the corpus, and keeping
//! inputs that give an outcome not seen before. Run it with
//! `cargo run -p spinfall-fuzz -- all --seconds 60`.
#![warn(missing_docs)]

pub mod alloc;
pub mod generate;
pub mod mutate;
pub mod runner;
pub mod targets;

/// The fuzz targets by name.
pub const TARGETS: [&str; 4] = ["obj", "ply", "stl", "scenario"];

/// Runs target `name` on `bytes` (panics are findings).
pub fn run_target(name: &str, bytes: &[u8]) -> targets::Outcome {
    match name {
        "obj" => targets::obj(bytes),
        "ply" => targets::ply(bytes),
        "stl" => targets::stl(bytes),
        _ => targets::scenario(bytes),
    }
}
