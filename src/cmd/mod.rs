//! One module per subcommand: each turns its arguments into the workflow's options, calls it,
//! and chooses the exit code. `run` dispatches.

mod animate;
mod app;
mod equilibria;
mod fly;
mod gravity;
mod info;
mod map;
mod merge;
mod plot;
mod render;
mod slice;
mod slurm;
mod stats;

use std::process::ExitCode;
use std::sync::Mutex;
use std::time::{Duration, Instant};

use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::FieldMethodSpec;
use spinfall_workflow::field_cache::BuildHooks;
use spinfall_workflow::gravity_method::{FieldUsed, GravityOptions};
use spinfall_workflow::limits::{Estimate, Limits};
use spinfall_workflow::run::RunReports;
use spinfall_workflow::shape::{ShapeRequest, ShapeSource};

use crate::cli::{Cli, Command, FieldArg, FieldArgs, LimitArgs, ShapeArgs};
use crate::exit::{CmdResult, RUN_FAILED, note};

/// Runs the command line; no subcommand opens the desktop app.
pub fn run(cli: Cli) -> CmdResult<ExitCode> {
    match cli.command {
        Some(Command::Info(args)) => info::run(&args),
        Some(Command::Gravity(args)) => gravity::run(&args),
        Some(Command::Fly(args)) => fly::run(&args),
        Some(Command::Map(args)) => map::run(&args),
        Some(Command::Equilibria(args)) => equilibria::run(&args),
        Some(Command::Render(args)) => render::run(&args),
        Some(Command::Animate(args)) => animate::run(&args),
        Some(Command::Plot(args)) => plot::run(&args),
        Some(Command::Slice(args)) => slice::run(&args),
        Some(Command::Stats(args)) => stats::run(&args),
        Some(Command::Merge(args)) => merge::run(&args),
        Some(Command::Slurm(args)) => slurm::run(&args),
        None => app::run(cli.shape, cli.unit.into()),
    }
}

/// The shape request of the shape arguments.
fn shape_request(args: &ShapeArgs) -> ShapeRequest {
    ShapeRequest {
        source: ShapeSource::from_spec(&args.shape),
        unit: args.unit.into(),
        recenter: args.recenter,
    }
}

/// The limits of the limit arguments.
fn limits(args: &LimitArgs) -> Limits {
    Limits {
        max_launches: args.max_launches,
        memory_bytes: None,
    }
}

/// The gravity options of the field arguments.
fn gravity_options(args: &FieldArgs) -> GravityOptions {
    GravityOptions {
        method: args.field.map(|f| match f {
            FieldArg::Direct => FieldMethodSpec::Direct,
            FieldArg::Interpolated => FieldMethodSpec::Interpolated,
        }),
        max_rel_error: args.max_rel_error,
        max_memory_mb: args.field_memory_mb,
        cache_dir: args.cache_dir.clone(),
    }
}

/// The command line has no Cancel button (Ctrl-C ends the process).
static NEVER_CANCELLED: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Progress of an interpolated field's build on stderr (at most one line every 2 s), and its
/// warnings.
fn field_hooks() -> BuildHooks<'static> {
    let last = Mutex::new(Instant::now());
    BuildHooks {
        progress: Box::new(move |p| {
            let Ok(mut last) = last.lock() else { return };
            if last.elapsed() >= Duration::from_secs(2) {
                *last = Instant::now();
                note(&format!(
                    "building the interpolated gravity field: level {}, {}/{} cells, {} leaves, {:.0} s",
                    p.level, p.cells_done, p.cells_in_level, p.leaves, p.elapsed_s
                ));
            }
        }),
        cancel: &NEVER_CANCELLED,
        warn: Box::new(|w| note(&format!("warning: {w}"))),
    }
}

/// The scenario's warnings (settings without effect, grains without a Sun, ...) on stderr.
fn scenario_warnings(scenario: &spinfall_dynamics::scenario::Scenario) {
    for w in scenario.warnings() {
        note(&format!("warning: scenario: {w}"));
    }
}

/// Says how the gravity was computed, when it was interpolated.
fn announce_field(field: &FieldUsed) {
    if let (Some(stats), Some(store)) = (&field.build, &field.store) {
        let built = match field.build_s {
            Some(s) => format!(", built in {s:.1} s"),
            None => String::new(),
        };
        note(&format!(
            "gravity: interpolated field (relative error bound {:e}) {store}; {} cells, {:.0} MB{built}",
            field.max_rel_error.unwrap_or(0.0),
            stats.cells,
            stats.memory_bytes as f64 / 1e6,
        ));
    }
}

/// Says what a run will need before it starts.
fn announce(estimate: &Estimate) {
    note(&format!("run: {estimate}"));
}

/// A progress callback printing `what: done/total unit (t s)` on stderr, at most once a second
/// and at the end.
fn progress_printer(what: &'static str, unit: &'static str) -> impl Fn(usize, usize) + Sync {
    let start = Instant::now();
    let last = Mutex::new(Instant::now());
    move |done: usize, total: usize| {
        if let Ok(mut last) = last.lock()
            && (last.elapsed() >= Duration::from_secs(1) || done == total)
        {
            *last = Instant::now();
            note(&format!(
                "{what}: {done}/{total} {unit} ({:.1} s)",
                start.elapsed().as_secs_f64()
            ));
        }
    }
}

/// Flies a prepared run with progress on stderr (at most one line a second).
fn fly_with_progress(prepared: &spinfall_workflow::prepare::PreparedRun) -> CmdResult<RunReports> {
    let progress = progress_printer("flying", "launches");
    let cancel = spinfall_dynamics::Cancel::new(false);
    Ok(spinfall_workflow::run::run(prepared, &progress, &cancel)?)
}

/// Exit status of a run: success, or [`RUN_FAILED`] after naming each failed launch on stderr.
fn run_exit_code(reports: &[FlightReport]) -> ExitCode {
    failures_exit_code(spinfall_workflow::run::failures(reports))
}

/// Exit status of failed launches `(id, reason)`: success when there are none, else
/// [`RUN_FAILED`] after naming each on stderr.
fn failures_exit_code<'a>(failures: impl Iterator<Item = (&'a str, &'a str)>) -> ExitCode {
    let mut failed = false;
    for (id, reason) in failures {
        note(&format!("failed: {id}: {reason}"));
        failed = true;
    }
    if failed {
        ExitCode::from(RUN_FAILED)
    } else {
        ExitCode::SUCCESS
    }
}
