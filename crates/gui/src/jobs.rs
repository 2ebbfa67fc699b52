//! Background jobs: a worker thread, a progress counter, a cancel flag and a result channel.
//!
//! The UI polls [`Job::poll`] once per frame; it never waits on a job.
//!
//! Jobs run their parallel work (rayon) in a thread pool of their own, so the global pool stays
//! free for the renderer on the UI thread: a long surface map or run never stalls a frame.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::mpsc::{Receiver, TryRecvError, channel};
use std::sync::{Arc, Mutex, OnceLock};

use crate::error::GuiError;

/// The rayon pool background jobs run in (separate from the global pool the renderer uses).
fn job_pool() -> Option<&'static rayon::ThreadPool> {
    static POOL: OnceLock<Option<rayon::ThreadPool>> = OnceLock::new();
    POOL.get_or_init(|| {
        let threads = std::thread::available_parallelism().map_or(2, |n| n.get());
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .thread_name(|i| format!("spinfall worker {i}"))
            .build()
            .ok()
    })
    .as_ref()
}

/// Progress shared between a worker and the UI.
#[derive(Debug, Default)]
pub struct Progress {
    done: AtomicUsize,
    total: AtomicUsize,
    stage: Mutex<String>,
    notes: Mutex<Vec<String>>,
}

impl Progress {
    /// Record `done` of `total` steps.
    pub fn set(&self, done: usize, total: usize) {
        self.done.store(done, Ordering::Relaxed);
        self.total.store(total, Ordering::Relaxed);
    }

    /// Name the stage the worker is in (shown next to the spinner).
    pub fn set_stage(&self, stage: &str) {
        if let Ok(mut s) = self.stage.lock() {
            stage.clone_into(&mut s);
        }
    }

    /// Fraction done in 0..=1, or `None` while the total is unknown.
    pub fn fraction(&self) -> Option<f32> {
        let total = self.total.load(Ordering::Relaxed);
        (total > 0).then(|| self.done.load(Ordering::Relaxed) as f32 / total as f32)
    }

    /// `(done, total)` steps.
    pub fn counts(&self) -> (usize, usize) {
        (
            self.done.load(Ordering::Relaxed),
            self.total.load(Ordering::Relaxed),
        )
    }

    /// The current stage text.
    pub fn stage(&self) -> String {
        self.stage.lock().map(|s| s.clone()).unwrap_or_default()
    }

    /// A warning for the user that does not stop the job (shown as a notice).
    pub fn push_note(&self, note: String) {
        if let Ok(mut n) = self.notes.lock() {
            n.push(note);
        }
    }

    /// The warnings pushed since the last call.
    pub fn take_notes(&self) -> Vec<String> {
        self.notes
            .lock()
            .map(|mut n| std::mem::take(&mut *n))
            .unwrap_or_default()
    }
}

/// What a worker receives: where to report progress and the flag that asks it to stop.
#[derive(Clone)]
pub struct JobContext {
    /// Progress shared with the UI.
    pub progress: Arc<Progress>,
    /// Set by the UI's Cancel button.
    pub cancel: Arc<AtomicBool>,
    repaint: Arc<dyn Fn() + Send + Sync>,
}

impl JobContext {
    /// Ask the UI to repaint (after progress moved).
    pub fn request_repaint(&self) {
        (self.repaint)();
    }

    /// Whether Cancel was pressed.
    pub fn cancelled(&self) -> bool {
        self.cancel.load(Ordering::Relaxed)
    }

    /// [`spinfall_workflow::WorkflowError::Cancelled`] once Cancel was pressed.
    pub fn check_cancel(&self) -> Result<(), GuiError> {
        if self.cancelled() {
            Err(spinfall_workflow::WorkflowError::Cancelled.into())
        } else {
            Ok(())
        }
    }

    /// A progress callback for the workflow: counts and a repaint.
    pub fn progress_fn(&self) -> impl Fn(usize, usize) + Sync + '_ {
        move |done, total| {
            self.progress.set(done, total);
            self.request_repaint();
        }
    }
}

/// Which background job.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum JobKind {
    /// Opening a shape model or a scenario.
    Load,
    /// Rebuilding the body (mass, spin, gravity method).
    Body,
    /// The surface map.
    Map,
    /// A run.
    Run,
    /// An export of files.
    Export,
    /// An animation.
    Animation,
    /// Saving the scenario.
    Save,
    /// Zero-velocity values or the equilibrium search.
    Environment,
}

/// A running job as the status line and Cancel see it.
pub struct RunningJob<'a> {
    /// Which job.
    pub kind: JobKind,
    /// What it does.
    pub label: &'a str,
    /// Its progress.
    pub progress: &'a Progress,
    /// Its cancel flag.
    pub cancel: &'a AtomicBool,
}

impl<T: Send + 'static> Job<T> {
    /// This job as a [`RunningJob`] of `kind`.
    pub fn running(&self, kind: JobKind) -> RunningJob<'_> {
        RunningJob {
            kind,
            label: &self.label,
            progress: &self.progress,
            cancel: &self.cancel,
        }
    }
}

/// One running background job producing `T`.
pub struct Job<T> {
    /// What the job does, for the status line ("Flying 12 launches").
    pub label: String,
    /// Progress shared with the worker.
    pub progress: Arc<Progress>,
    cancel: Arc<AtomicBool>,
    rx: Receiver<Result<T, GuiError>>,
}

/// Outcome of polling a job.
pub enum Poll<T> {
    /// Still running.
    Running,
    /// Finished (with the worker's result).
    Done(Result<T, GuiError>),
}

impl<T: Send + 'static> Job<T> {
    /// Start `work` on a new thread. `repaint` is called when the job ends or reports.
    pub fn spawn(
        label: impl Into<String>,
        repaint: Arc<dyn Fn() + Send + Sync>,
        work: impl FnOnce(&JobContext) -> Result<T, GuiError> + Send + 'static,
    ) -> Self {
        Self::spawn_at_stage(label, "", repaint, work)
    }

    /// [`Job::spawn`] with the stage shown from the first frame, before the worker reports.
    pub fn spawn_at_stage(
        label: impl Into<String>,
        stage: &str,
        repaint: Arc<dyn Fn() + Send + Sync>,
        work: impl FnOnce(&JobContext) -> Result<T, GuiError> + Send + 'static,
    ) -> Self {
        let progress = Arc::new(Progress::default());
        progress.set_stage(stage);
        let cancel = Arc::new(AtomicBool::new(false));
        let (tx, rx) = channel();
        let ctx = JobContext {
            progress: progress.clone(),
            cancel: cancel.clone(),
            repaint,
        };
        let label = label.into();
        let spawned = std::thread::Builder::new()
            .name(format!("spinfall job: {label}"))
            .spawn(move || {
                let run = || work(&ctx);
                let result =
                    std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| match job_pool() {
                        Some(pool) => pool.install(run),
                        None => run(),
                    }))
                    .unwrap_or_else(|panic| {
                        let what = panic
                            .downcast_ref::<&str>()
                            .map(|s| s.to_string())
                            .or_else(|| panic.downcast_ref::<String>().cloned())
                            .unwrap_or_else(|| "no message".into());
                        Err(GuiError::WorkerFailed(what))
                    });
                // The receiver may be gone when the app closed; nothing to do then.
                let _ = tx.send(result);
                ctx.request_repaint();
            });
        let (tx_err, rx_err) = channel();
        let rx = match spawned {
            Ok(_) => rx,
            Err(e) => {
                let _ = tx_err.send(Err(GuiError::NoWorker(e.to_string())));
                rx_err
            }
        };
        Self {
            label,
            progress,
            cancel,
            rx,
        }
    }

    /// Ask the worker to stop; it finishes with whatever it has.
    pub fn cancel(&self) {
        self.cancel.store(true, Ordering::Relaxed);
    }

    /// Whether Cancel was pressed.
    pub fn is_cancelled(&self) -> bool {
        self.cancel.load(Ordering::Relaxed)
    }

    /// Check without waiting.
    pub fn poll(&self) -> Poll<T> {
        match self.rx.try_recv() {
            Ok(r) => Poll::Done(r),
            Err(TryRecvError::Empty) => Poll::Running,
            Err(TryRecvError::Disconnected) => Poll::Done(Err(GuiError::WorkerLost)),
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    /// Regression: a surface map of a large model once filled the global rayon pool and the
    /// renderer on the UI thread waited behind it. Jobs must run in their own pool.
    #[test]
    fn jobs_run_in_their_own_rayon_pool_and_report_results() {
        let job = Job::spawn("probe", Arc::new(|| {}), |ctx| {
            ctx.progress.set(3, 4);
            let name = std::thread::current().name().map(str::to_string);
            Ok((rayon::current_thread_index(), name))
        });
        let result = loop {
            if let Poll::Done(r) = job.poll() {
                break r.unwrap();
            }
            std::thread::sleep(std::time::Duration::from_millis(2));
        };
        assert!(
            result.0.is_some(),
            "the job did not run inside a rayon pool"
        );
        let name = result.1.unwrap_or_default();
        assert!(name.starts_with("spinfall worker"), "ran on {name}");
        // The global pool is a different one: this thread is not in any pool.
        assert!(rayon::current_thread_index().is_none());
        assert_eq!(job.progress.counts(), (3, 4));
        assert_eq!(job.progress.fraction(), Some(0.75));
    }

    #[test]
    fn a_panicking_job_becomes_an_error() {
        let job: Job<()> = Job::spawn("boom", Arc::new(|| {}), |_| panic!("worker panic"));
        let result = loop {
            if let Poll::Done(r) = job.poll() {
                break r;
            }
            std::thread::sleep(std::time::Duration::from_millis(2));
        };
        let e = result.unwrap_err();
        assert!(
            matches!(e, GuiError::WorkerFailed(ref m) if m == "worker panic"),
            "{e}"
        );
    }
}
