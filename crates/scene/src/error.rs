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
}
