//! Flying a prepared run with progress and cancel.

use std::time::{Duration, Instant};

use spinfall_dynamics::{Cancel, FlightReport, Outcome, fly_all};

use crate::error::{Result, WorkflowError};
use crate::prepare::PreparedRun;

/// The reports of a finished run.
#[derive(Debug, Clone)]
pub struct RunReports {
    /// One report per launch, in launch order.
    pub reports: Vec<FlightReport>,
    /// Wall-clock time of the flights.
    pub elapsed: Duration,
}

/// The launches that failed, with their reasons.
pub fn failures(reports: &[FlightReport]) -> impl Iterator<Item = (&str, &str)> {
    reports.iter().filter_map(|r| match &r.outcome {
        Outcome::Failed { reason } => Some((r.id.as_str(), reason.as_str())),
        _ => None,
    })
}

/// Flies every launch of `run` (in parallel). `progress(done, total)` is called from worker
/// threads after each launch.
///
/// # Errors
/// [`WorkflowError::Cancelled`] when `cancel` was set (the partial reports are dropped).
pub fn run(
    run: &PreparedRun,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Result<RunReports> {
    let start = Instant::now();
    let reports = fly_all(&run.body, &run.launches, &run.settings, progress, cancel);
    if cancel.load(std::sync::atomic::Ordering::Relaxed) {
        return Err(WorkflowError::Cancelled);
    }
    Ok(RunReports {
        reports,
        elapsed: start.elapsed(),
    })
}
