//! Errors of the scene crate.

/// Result with [`SceneError`].
pub type Result<T> = std::result::Result<T, SceneError>;

/// What can go wrong building images.
#[derive(Debug, thiserror::Error, Clone, PartialEq, Eq)]
pub enum SceneError {
    /// The requested image is too small to hold two views.
    #[error(
        "image size {width_px} x {height_px} px is too small for two views side by side (need at least 36 x 16 px)"
    )]
    InvalidSize {
        /// Requested width, pixels.
        width_px: u32,
        /// Requested height, pixels.
        height_px: u32,
    },
    /// The figure is too small for its views after titles, colour bar and legend.
    #[error("a {width_px} x {height_px} px figure is too small: {reason}")]
    LayoutDoesNotFit {
        /// Figure width, pixels.
        width_px: u32,
        /// Figure height, pixels.
        height_px: u32,
        /// What did not fit.
        reason: String,
    },
    /// The renderer refused something (size, encoding).
    #[error("{0}")]
    Render(String),
    /// Animation or plot settings are not acceptable.
    #[error("{0}")]
    Settings(String),
    /// The work was cancelled.
    #[error("cancelled")]
    Cancelled,
    /// A frame could not be handed on (the caller's sink failed).
    #[error("frame {frame}: {message}")]
    Sink {
        /// Index of the frame.
        frame: u32,
        /// The sink's message.
        message: String,
    },
}

impl From<spinfall_render::RenderError> for SceneError {
    fn from(e: spinfall_render::RenderError) -> Self {
        SceneError::Render(e.to_string())
    }
}
