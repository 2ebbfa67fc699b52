//! Long work (flights, surface maps, interpolated-field builds) off the Python thread.
//!
//! The work runs on a worker thread (which uses rayon's pool as the command line does) while the
//! calling Python thread waits with the GIL released. Every [`POLL`] it takes the GIL back to
//! run pending signal handlers (`Ctrl+C`) and to call the progress callback with the latest
//! figures, so callbacks always run on the Python thread that called. A `KeyboardInterrupt` (or
//! any exception raised by the callback) sets the workflow's cancel flag, waits until the
//! workers have stopped, and is then raised: nothing keeps running behind the caller's back.

use std::panic::AssertUnwindSafe;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Condvar, Mutex};
use std::time::Duration;

use pyo3::prelude::*;
use spinfall_workflow::WorkflowError;
use spinfall_workflow::field_cache::BuildHooks;

use crate::errors::{invalid, to_py};

/// How often the waiting Python thread checks for signals and progress.
pub const POLL: Duration = Duration::from_millis(25);

/// What a job reports: its stage, and how far it is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Progress {
    stage: &'static str,
    done: usize,
    total: usize,
}

/// The shared state of one background job: its cancel flag, latest progress, warnings and
/// whether it has ended.
#[derive(Default)]
pub struct Job {
    cancel: AtomicBool,
    progress: Mutex<Option<Progress>>,
    warnings: Mutex<Vec<String>>,
    ended: Mutex<bool>,
    ended_signal: Condvar,
}

impl Job {
    /// The cancel flag the workflow polls.
    pub fn cancel(&self) -> &AtomicBool {
        &self.cancel
    }

    /// Records progress: `done` of `total` in `stage` (shown to the callback at the next poll).
    pub fn report(&self, stage: &'static str, done: usize, total: usize) {
        if let Ok(mut p) = self.progress.lock() {
            *p = Some(Progress { stage, done, total });
        }
    }

    /// Records a warning that does not stop the work (raised as a Python warning afterwards).
    pub fn warn(&self, warning: String) {
        if let Ok(mut w) = self.warnings.lock() {
            w.push(warning);
        }
    }

    /// Hooks of an interpolated field's build: progress as stage `"field"` (cells done of the
    /// current octree level), this job's cancel flag, warnings kept.
    pub fn build_hooks(&self) -> BuildHooks<'_> {
        BuildHooks {
            progress: Box::new(|p| self.report("field", p.cells_done, p.cells_in_level)),
            cancel: &self.cancel,
            warn: Box::new(|w| self.warn(w)),
        }
    }

    fn latest(&self) -> Option<Progress> {
        self.progress.lock().ok().and_then(|p| *p)
    }

    fn take_warnings(&self) -> Vec<String> {
        self.warnings
            .lock()
            .map(|mut w| std::mem::take(&mut *w))
            .unwrap_or_default()
    }

    fn mark_ended(&self) {
        if let Ok(mut ended) = self.ended.lock() {
            *ended = true;
        }
        self.ended_signal.notify_all();
    }

    /// Waits up to `timeout` for the end; whether the job has ended.
    fn wait_end(&self, timeout: Duration) -> bool {
        let Ok(ended) = self.ended.lock() else {
            return true;
        };
        match self
            .ended_signal
            .wait_timeout_while(ended, timeout, |ended| !*ended)
        {
            Ok((ended, _)) => *ended,
            Err(_) => true,
        }
    }
}

/// Runs `work` on a worker thread while this Python thread waits with the GIL released,
/// calling `progress(stage, done, total)` from this thread when the figures change and
/// honouring `Ctrl+C` (see the module docs). Warnings the work recorded are raised as
/// `spinfall.SpinfallWarning`s at the end.
///
/// # Errors
/// The work's error (mapped by [`to_py`]), `KeyboardInterrupt` after a `Ctrl+C`, whatever the
/// callback raised, or `SpinfallError` if the worker panicked (a defect; the message says so).
pub fn run_in_background<T, W>(
    py: Python<'_>,
    progress: Option<&Bound<'_, PyAny>>,
    work: W,
) -> PyResult<T>
where
    T: Send + 'static,
    W: FnOnce(&Job) -> Result<T, WorkflowError> + Send + 'static,
{
    let job = Arc::new(Job::default());
    let worker_job = Arc::clone(&job);
    let handle = std::thread::Builder::new()
        .name("spinfall-worker".into())
        .spawn(move || {
            let out = std::panic::catch_unwind(AssertUnwindSafe(|| work(&worker_job)));
            worker_job.mark_ended();
            out
        })
        .map_err(|e| invalid(format!("cannot start a worker thread: {e}")))?;
    let mut shown: Option<Progress> = None;
    loop {
        let ended = py.detach(|| job.wait_end(POLL));
        let stop = match py.check_signals() {
            Err(e) => Some(e),
            Ok(()) => show_progress(progress, &job, &mut shown).err(),
        };
        if let Some(err) = stop {
            job.cancel.store(true, Ordering::Relaxed);
            // Wait for the workers: the cancel flag stops them within a step or a cell.
            let _ = py.detach(|| handle.join());
            return Err(err);
        }
        if ended {
            break;
        }
    }
    let out = py.detach(|| handle.join());
    for w in job.take_warnings() {
        crate::warn(py, &w)?;
    }
    match out {
        Ok(Ok(result)) => result.map_err(to_py),
        Ok(Err(panic)) | Err(panic) => Err(invalid(format!(
            "internal error (please report it): the worker stopped with a panic: {}",
            panic_text(&*panic)
        ))),
    }
}

/// Calls the progress callback when the figures changed since the last call.
fn show_progress(
    callback: Option<&Bound<'_, PyAny>>,
    job: &Job,
    shown: &mut Option<Progress>,
) -> PyResult<()> {
    let (Some(callback), Some(latest)) = (callback, job.latest()) else {
        return Ok(());
    };
    if *shown != Some(latest) {
        *shown = Some(latest);
        callback.call1((latest.stage, latest.done, latest.total))?;
    }
    Ok(())
}

/// The text of a panic's payload.
fn panic_text(payload: &(dyn std::any::Any + Send)) -> String {
    if let Some(s) = payload.downcast_ref::<&str>() {
        (*s).to_string()
    } else if let Some(s) = payload.downcast_ref::<String>() {
        s.clone()
    } else {
        "(no message)".into()
    }
}
