//! Shared by `fly`, `map` and `render`: a scenario file turned into a body and its launches.

use std::fs::File;
use std::io::BufReader;
use std::process::ExitCode;
use std::sync::Arc;
use std::time::{Duration, Instant};

use spinfall_dynamics::launch::LaunchState;
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::scenario::{ShapeSource, builtin_quillon};
use spinfall_dynamics::{Body, FlightReport, Outcome, fly_all};
use spinfall_gravity::ShapeModel;

use crate::exit::{CmdResult, InputContext, RUN_FAILED};
use crate::io::read_scenario_text;

/// A scenario with its body built and its launches expanded.
pub struct Prepared {
    pub scenario: Scenario,
    pub body: Arc<Body>,
    pub launches: Vec<LaunchState>,
}

/// Reads, validates and builds a scenario (`spec` is a path or `builtin:example`).
pub fn prepare(spec: &str) -> CmdResult<Prepared> {
    let (text, dir) = read_scenario_text(spec)?;
    let scenario = Scenario::from_json_str(&text).input_context(format!("scenario {spec}"))?;
    let (shape, warnings) = match scenario.shape_source() {
        ShapeSource::BuiltinQuillon => builtin_quillon().input_context("built-in demo body")?,
        ShapeSource::File { path, unit } => {
            let full = dir.join(&path);
            let file = File::open(&full).input_context(format!(
                "body.shape: cannot open {} (relative to the scenario file)",
                full.display()
            ))?;
            ShapeModel::from_obj(BufReader::new(file), unit)
                .input_context(format!("body.shape {}", full.display()))?
        }
    };
    for w in &warnings {
        eprintln!("warning: shape model: {w}");
    }
    let body = Arc::new(
        scenario
            .build_body(shape)
            .input_context(format!("scenario {spec}"))?,
    );
    let launches = scenario
        .build_launches(&body)
        .input_context(format!("scenario {spec}"))?;
    Ok(Prepared {
        scenario,
        body,
        launches,
    })
}

/// A progress callback printing `"{what}: done/total {unit} (elapsed)"` on stderr, at most one
/// line a second and always the last one.
pub fn progress_printer(what: &'static str, unit: &'static str) -> impl Fn(usize, usize) {
    let start = Instant::now();
    let last = std::sync::Mutex::new(Instant::now());
    move |done: usize, total: usize| {
        if let Ok(mut last) = last.lock()
            && (last.elapsed() >= Duration::from_secs(1) || done == total)
        {
            *last = Instant::now();
            eprintln!(
                "{what}: {done}/{total} {unit} ({:.1} s)",
                start.elapsed().as_secs_f64()
            );
        }
    }
}

/// Flies every launch with progress on stderr (at most one line a second).
pub fn fly_with_progress(prepared: &Prepared) -> Vec<FlightReport> {
    let progress = progress_printer("flying", "launches");
    let cancel = spinfall_dynamics::Cancel::new(false);
    fly_all(
        &prepared.body,
        &prepared.launches,
        &prepared.scenario.flight_settings(),
        &progress,
        &cancel,
    )
}

/// Exit status of a run: success, or [`RUN_FAILED`] after naming each failed launch on stderr.
pub fn run_exit_code(reports: &[FlightReport]) -> ExitCode {
    let mut failed = false;
    for r in reports {
        if let Outcome::Failed { reason } = &r.outcome {
            eprintln!("failed: {}: {reason}", r.id);
            failed = true;
        }
    }
    if failed {
        ExitCode::from(RUN_FAILED)
    } else {
        ExitCode::SUCCESS
    }
}
