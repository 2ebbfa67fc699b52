//! Background jobs: a worker thread, a progress counter, a cancel flag and a result channel.
//!
//! The UI polls [`Job::poll`] once per frame; it never waits on a job.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::mpsc::{Receiver, TryRecvError, channel};
use std::sync::{Arc, Mutex};

/// Progress shared between a worker and the UI.
#[derive(Debug, Default)]
pub struct Progress {
    done: AtomicUsize,
    total: AtomicUsize,
    stage: Mutex<String>,
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
}

/// One running background job producing `T`.
pub struct Job<T> {
    /// What the job does, for the status line ("Flying 12 launches").
    pub label: String,
    /// Progress shared with the worker.
    pub progress: Arc<Progress>,
    cancel: Arc<AtomicBool>,
    rx: Receiver<Result<T, String>>,
}

/// Outcome of polling a job.
pub enum Poll<T> {
    /// Still running.
    Running,
    /// Finished (with the worker's result).
    Done(Result<T, String>),
}

impl<T: Send + 'static> Job<T> {
    /// Start `work` on a new thread. `repaint` is called when the job ends or reports.
    pub fn spawn(
        label: impl Into<String>,
        repaint: Arc<dyn Fn() + Send + Sync>,
        work: impl FnOnce(&JobContext) -> Result<T, String> + Send + 'static,
    ) -> Self {
        let progress = Arc::new(Progress::default());
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
                let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| work(&ctx)))
                    .unwrap_or_else(|_| Err("the background job failed unexpectedly".into()));
                // The receiver may be gone when the app closed; nothing to do then.
                let _ = tx.send(result);
                ctx.request_repaint();
            });
        let (tx_err, rx_err) = channel();
        let rx = match spawned {
            Ok(_) => rx,
            Err(e) => {
                let _ = tx_err.send(Err(format!("could not start a worker thread: {e}")));
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
            Err(TryRecvError::Disconnected) => {
                Poll::Done(Err("the background job ended without a result".into()))
            }
        }
    }
}
