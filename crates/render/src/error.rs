//! The crate's error type.

/// Everything that can go wrong in this crate.
#[derive(Debug, thiserror::Error)]
pub enum RenderError {
    /// PNG encoding failed (I/O error of the writer, or an invalid text chunk).
    #[error("PNG encoding failed: {0}")]
    Png(String),
    /// A PNG text chunk keyword is not valid (1-79 Latin-1 characters, no leading/trailing space).
    #[error("PNG text chunk keyword {keyword:?} is invalid: {reason}")]
    ChunkKeyword {
        /// The keyword as given.
        keyword: String,
        /// Why it is rejected.
        reason: &'static str,
    },
    /// An image has a size that does not match its pixel buffer, or is too large.
    #[error("image size {width}x{height} is invalid: {reason}")]
    ImageSize {
        /// Width in pixels.
        width: u32,
        /// Height in pixels.
        height: u32,
        /// Why it is rejected.
        reason: &'static str,
    },
    /// Writing output failed.
    #[error("writing failed: {0}")]
    Write(String),
    /// A figure size is not acceptable.
    #[error("figure size {text:?}: {reason}")]
    FigureSize {
        /// The size as given.
        text: String,
        /// Why it is refused.
        reason: String,
    },
    /// Animation settings or frames are not acceptable.
    #[error("animation: {0}")]
    Animation(String),
}

/// Result alias of this crate.
pub type Result<T> = std::result::Result<T, RenderError>;
