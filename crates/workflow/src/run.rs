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

/// The end of a run that may be cancelled.
#[derive(Debug, Clone)]
pub enum RunEnd {
    /// Every launch flew.
    Complete(RunReports),
    /// Cancelled: the launches that had ended before the cancel, in launch order.
    Cancelled {
        /// Reports of the launches that ended on their own (landed, escaped, time limit or a
        /// failure of their own); the launches stopped by the cancel are left out.
        finished: Vec<FlightReport>,
        /// Launches the run had.
        launches: usize,
        /// Wall-clock time until the cancel took effect.
        elapsed: Duration,
    },
}

/// Whether `report` is a launch stopped by a cancel (rather than ended on its own): its
/// failure reason is "cancelled", or ends with it when the cancel stopped the inertial frame
/// ("inertial frame stopped at t = … s: cancelled").
pub fn stopped_by_cancel(report: &FlightReport) -> bool {
    matches!(&report.outcome, Outcome::Failed { reason }
        if reason == CANCELLED || reason.ends_with(&format!(": {CANCELLED}")))
}

/// The failure reason of a launch stopped by a cancel.
const CANCELLED: &str = "cancelled";

/// Flies the launches of `run`: every launch but the placeholders of unreachable targets
/// (which end `failed` with the reason), then attaches each targeted entry's solution to its
/// launches' reports.
fn fly_prepared(
    run: &PreparedRun,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Vec<FlightReport> {
    // Targeted entries name launches by their index in the whole run; a shard flies a share.
    let mut skip: Vec<Option<String>> = vec![None; run.launches.len()];
    for t in &run.targeting {
        if let Some(reason) = t.failure_reason() {
            for k in t.launches.clone().filter_map(|k| run.position_of(k)) {
                skip[k] = Some(reason.clone());
            }
        }
    }
    let mut reports = if skip.iter().all(Option::is_none) {
        fly_all(&run.body, &run.launches, &run.settings, progress, cancel)
    } else {
        let flown: Vec<_> = run
            .launches
            .iter()
            .zip(&skip)
            .filter(|(_, s)| s.is_none())
            .map(|(l, _)| l.clone())
            .collect();
        let mut done = fly_all(&run.body, &flown, &run.settings, progress, cancel).into_iter();
        run.launches
            .iter()
            .zip(&skip)
            .map(|(l, s)| match s {
                Some(reason) => Some(FlightReport::not_flown(l, reason.clone())),
                None => done.next(),
            })
            .map(|r| r.unwrap_or_else(|| FlightReport::not_flown(&run.launches[0], "not flown")))
            .collect()
    };
    for t in &run.targeting {
        for k in t.launches.clone().filter_map(|k| run.position_of(k)) {
            if let Some(r) = reports.get_mut(k) {
                r.targeting = Some(Box::new(t.report.clone()));
            }
        }
    }
    reports
}

/// As [`run`], but a cancelled run keeps the launches that had ended before the cancel.
pub fn run_keeping_finished(
    run: &PreparedRun,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> RunEnd {
    let start = Instant::now();
    let reports = fly_prepared(run, progress, cancel);
    let elapsed = start.elapsed();
    if cancel.load(std::sync::atomic::Ordering::Relaxed) {
        let launches = reports.len();
        RunEnd::Cancelled {
            finished: reports
                .into_iter()
                .filter(|r| !stopped_by_cancel(r))
                .collect(),
            launches,
            elapsed,
        }
    } else {
        RunEnd::Complete(RunReports { reports, elapsed })
    }
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
    let reports = fly_prepared(run, progress, cancel);
    if cancel.load(std::sync::atomic::Ordering::Relaxed) {
        return Err(WorkflowError::Cancelled);
    }
    Ok(RunReports {
        reports,
        elapsed: start.elapsed(),
    })
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use std::sync::atomic::{AtomicBool, Ordering};

    use super::*;
    use crate::prepare::{PrepareOptions, Purpose, prepare};
    use crate::scenario_file::{ScenarioSource, read_scenario};

    #[test]
    fn a_cancelled_run_keeps_only_the_launches_that_ended_on_their_own() {
        let loaded = read_scenario(&ScenarioSource::from_spec("builtin:example")).unwrap();
        let prepared = prepare(loaded, &PrepareOptions::new(Purpose::Fly)).unwrap();
        let total = prepared.launches.len();
        assert!(total > 2, "the example has {total} launches");
        // Cancel as soon as the first launch has ended.
        let cancel = AtomicBool::new(false);
        let progress = |done: usize, _total: usize| {
            if done >= 1 {
                cancel.store(true, Ordering::Relaxed);
            }
        };
        match run_keeping_finished(&prepared, &progress, &cancel) {
            RunEnd::Cancelled {
                finished, launches, ..
            } => {
                assert_eq!(launches, total);
                assert!(!finished.is_empty() && finished.len() < total);
                // Every way a cancel ends a launch is told apart from a failure of its own.
                let mut r = finished[0].clone();
                for (reason, cancelled) in [
                    ("cancelled", true),
                    ("inertial frame stopped at t = 12.5 s: cancelled", true),
                    (
                        "step limit; the inertial frame then stopped at t = 3 s: cancelled",
                        true,
                    ),
                    ("wall-clock limit of 60 s reached", false),
                ] {
                    r.outcome = Outcome::Failed {
                        reason: reason.into(),
                    };
                    assert_eq!(stopped_by_cancel(&r), cancelled, "{reason}");
                }
                for r in &finished {
                    assert!(
                        !matches!(&r.outcome, Outcome::Failed { reason } if reason.contains("cancelled")),
                        "{:?}",
                        r.outcome
                    );
                }
            }
            RunEnd::Complete(_) => panic!("the run was not cancelled"),
        }
        let never = AtomicBool::new(false);
        match run_keeping_finished(&prepared, &|_, _| {}, &never) {
            RunEnd::Complete(done) => assert_eq!(done.reports.len(), total),
            RunEnd::Cancelled { .. } => panic!("cancelled without a cancel"),
        }
    }
}
