//! The README's figures are made by the CLI from the built-in example and must be current: this
//! test runs the documented commands and compares the bytes with the committed files.
//!
//! Regenerate them with:
//!
//! ```sh
//! SPINFALL_UPDATE_README_FIGURES=1 cargo test --test readme_figures
//! ```
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::path::Path;

use common::{ok_stdout, root, spinfall};

/// The commands, as documented in the README (`OUT` is the output path).
const FIGURE: &[&str] = &[
    "render",
    "builtin:example",
    "--theme",
    "light",
    "--map",
    "slope",
    "--size",
    "1280x720",
    "--time",
    "3600",
    "--out",
    "OUT",
];
const ANIMATION: &[&str] = &[
    "animate",
    "builtin:example",
    "--frames",
    "12",
    "--to-s",
    "7200",
    "--size",
    "960x540",
    "--out",
    "OUT",
];

fn with_out<'a>(args: &[&'a str], out: &'a str) -> Vec<&'a str> {
    args.iter()
        .map(|a| if *a == "OUT" { out } else { a })
        .collect()
}

fn check_or_update(made: &Path, committed: &str) {
    let target = root().join(committed);
    let bytes = std::fs::read(made).unwrap();
    if std::env::var_os("SPINFALL_UPDATE_README_FIGURES").is_some() {
        std::fs::write(&target, &bytes).unwrap();
        return;
    }
    let current = std::fs::read(&target).unwrap_or_default();
    assert!(
        current == bytes,
        "{committed} is not what the documented command makes now; regenerate it with \
         SPINFALL_UPDATE_README_FIGURES=1 cargo test --test readme_figures"
    );
}

#[test]
fn readme_figures_are_current() {
    let dir = tempfile::tempdir().unwrap();
    let fig = dir.path().join("figure.png");
    ok_stdout(&spinfall(&with_out(FIGURE, fig.to_str().unwrap())));
    check_or_update(&fig, "assets/readme/figure_light.png");

    let frames = dir.path().join("frames");
    ok_stdout(&spinfall(&with_out(ANIMATION, frames.to_str().unwrap())));
    check_or_update(
        &frames.join("frame_0006.png"),
        "assets/readme/animation_frame.png",
    );
}

#[test]
fn the_readme_shows_the_figures_and_the_commands_that_make_them() {
    let readme = std::fs::read_to_string(root().join("README.md")).unwrap();
    for needle in [
        "assets/readme/figure_light.png",
        "assets/readme/animation_frame.png",
        "spinfall render builtin:example --theme light --map slope --size 1280x720 --time 3600",
        "spinfall animate builtin:example --frames 12 --to-s 7200 --size 960x540",
        "SPINFALL_UPDATE_README_FIGURES=1 cargo test --test readme_figures",
    ] {
        assert!(readme.contains(needle), "README.md lacks {needle:?}");
    }
}
