//! Errors of the app: the workflow's, and the few of its own (a worker that could not start or
//! failed, a window that could not open, a request refused in the current state).

use spinfall_workflow::WorkflowError;

/// Everything that can go wrong in the app.
#[derive(Debug, thiserror::Error)]
pub enum GuiError {
    /// Reading, preparing, running or writing failed (cancellation included, see
    /// [`GuiError::is_cancelled`]).
    #[error(transparent)]
    Workflow(#[from] WorkflowError),
    /// A worker thread could not be started.
    #[error("could not start a worker thread: {0}")]
    NoWorker(String),
    /// A worker panicked (a bug); the app carries on.
    #[error("the background job failed unexpectedly ({0})")]
    WorkerFailed(String),
    /// A worker ended without sending a result.
    #[error("the background job ended without a result")]
    WorkerLost,
    /// The request does not fit the current state (no body yet, nothing selected, ...).
    #[error("{0}")]
    Refused(String),
    /// The window could not be opened (no display, no OpenGL).
    #[error("could not open the Spinfall window: {0}")]
    Window(String),
    /// A figure, plot or animation could not be made (settings, size, encoding).
    #[error("{0}")]
    Picture(String),
}

impl From<spinfall_scene::SceneError> for GuiError {
    fn from(e: spinfall_scene::SceneError) -> Self {
        match e {
            spinfall_scene::SceneError::Cancelled => GuiError::Workflow(WorkflowError::Cancelled),
            other => GuiError::Picture(other.to_string()),
        }
    }
}

impl GuiError {
    /// Whether the user cancelled.
    pub fn is_cancelled(&self) -> bool {
        matches!(self, GuiError::Workflow(e) if e.is_cancelled())
    }
}
