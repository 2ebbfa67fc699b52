//! Animations of the views over time: frames rendered one after the other through the figure
//! layout, handed to a sink (numbered PNG files, say) or streamed into an animated GIF/APNG.
//! Long work with progress and cancel, so the app can run it on a worker.

use std::io::Write;
use std::sync::atomic::{AtomicBool, Ordering};

use spinfall_dynamics::FlightReport;
use spinfall_render::{AnimationEncoder, AnimationFormat, Image, Renderer, check_animation};

use crate::body_view::BodyView;
use crate::error::{Result, SceneError};
use crate::figure::{FigureOptions, Output, build_figure_with};
use crate::options::ViewOptions;

/// Frames, frame rate and time span of an animation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnimationSettings {
    /// Number of frames (1 to [`spinfall_render::MAX_ANIMATION_FRAMES`]).
    pub frames: u32,
    /// Frames per second when played.
    pub fps: f64,
    /// Time of the first frame after launch, s.
    pub from_s: f64,
    /// Time of the last frame, s (at least `from_s`).
    pub to_s: f64,
}

impl AnimationSettings {
    /// Checks the settings for a figure of `width_px x height_px`.
    pub fn check(&self, width_px: u32, height_px: u32) -> Result<()> {
        check_animation(width_px, height_px, self.frames, self.fps)?;
        if !(self.from_s.is_finite() && self.to_s.is_finite()) {
            return Err(SceneError::Settings(format!(
                "the time span {} s to {} s is not finite",
                self.from_s, self.to_s
            )));
        }
        if self.from_s < 0.0 || self.to_s < self.from_s {
            return Err(SceneError::Settings(format!(
                "the time span must satisfy 0 <= from ({} s) <= to ({} s)",
                self.from_s, self.to_s
            )));
        }
        Ok(())
    }

    /// Time of frame `index`, s: evenly spaced from `from_s` to `to_s` inclusive.
    pub fn frame_time_s(&self, index: u32) -> f64 {
        if self.frames <= 1 {
            return self.from_s;
        }
        let f = index.min(self.frames - 1) as f64 / (self.frames - 1) as f64;
        self.from_s + (self.to_s - self.from_s) * f
    }
}

/// Renders every frame (raster figures of `fig`'s size) and hands it to `sink` with its index.
/// `progress(done, total)` is called after each frame; setting `cancel` stops before the next
/// frame with [`SceneError::Cancelled`].
#[allow(
    clippy::too_many_arguments,
    reason = "the data, the look, the timing, the sink and the job controls"
)]
pub fn render_frames(
    view: &BodyView,
    reports: &[FlightReport],
    opts: &ViewOptions,
    fig: &FigureOptions,
    settings: &AnimationSettings,
    sink: &mut dyn FnMut(u32, &Image) -> std::result::Result<(), String>,
    progress: &dyn Fn(usize, usize),
    cancel: &AtomicBool,
) -> Result<()> {
    let (w, h, _) = fig.size.resolve()?;
    settings.check(w, h)?;
    let fig = FigureOptions {
        output: Output::Raster,
        ..fig.clone()
    };
    let mut renderer = Renderer::new();
    let total = settings.frames as usize;
    for i in 0..settings.frames {
        if cancel.load(Ordering::Relaxed) {
            return Err(SceneError::Cancelled);
        }
        let t_s = settings.frame_time_s(i);
        let image = build_figure_with(&mut renderer, view, reports, t_s, opts, &fig)?.to_image();
        sink(i, &image).map_err(|message| SceneError::Sink { frame: i, message })?;
        progress(i as usize + 1, total);
    }
    Ok(())
}

/// Renders the animation and streams it into `out` as an animated GIF or APNG (looping).
/// Frames are encoded as they are made; memory use is a few frames whatever the length.
#[allow(
    clippy::too_many_arguments,
    reason = "the data, the look, the timing, the format and the job controls"
)]
pub fn write_animation(
    view: &BodyView,
    reports: &[FlightReport],
    opts: &ViewOptions,
    fig: &FigureOptions,
    settings: &AnimationSettings,
    format: AnimationFormat,
    out: impl Write,
    progress: &dyn Fn(usize, usize),
    cancel: &AtomicBool,
) -> Result<()> {
    let (w, h, _) = fig.size.resolve()?;
    settings.check(w, h)?;
    let mut encoder = AnimationEncoder::new(format, w, h, settings.frames, settings.fps, out)?;
    render_frames(
        view,
        reports,
        opts,
        fig,
        settings,
        &mut |_, image| encoder.add_frame(image).map_err(|e| e.to_string()),
        progress,
        cancel,
    )?;
    encoder.finish()?;
    Ok(())
}
