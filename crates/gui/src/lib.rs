//! The Spinfall desktop app: an eframe/egui window over the CPU renderer.
//!
//! What it is: the interactive front end. It opens a shape model (or starts on the built-in
//! demo body), sets mass, spin and the gravity method (direct sums, or an interpolated field
//! built with progress and cancel), colours the surface by a map (kept in the cache folder
//! beside the interpolated fields), places launch sites by clicking on the body and edits them
//! (latitude/longitude, start height, local vertical) with undo and redo, flies them in the
//! background, animates the body-fixed and inertial views side by side, shows a sortable
//! results table with plots (marked when out of date, kept when a run is cancelled), and
//! exports figures (PNG or SVG, themes, sizes in pixels or millimetres/inches), plots, data,
//! scenario files and animations. Lengths and times are shown in the display units chosen in
//! the View menu; data files stay SI.
//!
//! What it is not: no physics, no file reading or writing, and no rasterizing of its own. Shape
//! models and scenarios are opened, runs prepared and flown, and every file written by
//! `spinfall-workflow` (the same layer the command line uses, so both give the same numbers);
//! pictures come from `spinfall-scene` and `spinfall-render`. Errors are typed ([`GuiError`]).
//! Results are for research and planning; Spinfall is not flight-certified.
//!
//! Main types: [`SpinfallApp`] (the app state; [`SpinfallApp::ui`] draws one frame),
//! [`GuiOptions`] and [`run`] (open the window), [`Command`] (everything the UI asks for,
//! handled in one place).
//!
//! ```no_run
//! use spinfall_gui::{run, GuiOptions};
//! use spinfall_gravity::LengthUnit;
//! run(GuiOptions { shape_path: None, unit: LengthUnit::Kilometre, cache_dir: None })
//!     .expect("a display");
//! ```
#![warn(missing_docs)]

mod app;
mod body_panel;
mod command;
mod environment;
mod error;
mod export;
mod export_job;
mod handlers;
mod history;
mod jobs;
mod landings;
mod menu;
mod notify;
mod number_field;
mod plot_panel;
mod results;
mod session;
mod sites;
mod state;
mod targeting_panel;
mod units;
mod views;
mod work;

pub use app::{RunState, SpinfallApp};
pub use command::{
    AnimationRequest, AnimationTarget, Command, ExportRequest, FigureChoice, ImageFormat,
};
pub use error::GuiError;
pub use notify::{Notice, NoticeAction, NoticeKind};
pub use number_field::fmt_editable;
pub use session::{AxisChoice, BodyParams, MassInput};
pub use state::PersistedState;

use std::path::PathBuf;

use spinfall_gravity::LengthUnit;

/// What the binary passes when it opens the window.
#[derive(Debug, Clone, Default)]
pub struct GuiOptions {
    /// Shape model to open at start; `None` starts on the built-in demo body.
    pub shape_path: Option<PathBuf>,
    /// Length unit of the coordinates in `shape_path`.
    pub unit: LengthUnit,
    /// Folder of stored interpolated gravity fields and surface maps (`None`: the per-user
    /// cache folder, see `spinfall_workflow::field_cache::default_cache_dir`).
    pub cache_dir: Option<PathBuf>,
}

/// Open the Spinfall window and run until it is closed.
///
/// # Errors
/// [`GuiError::Window`] when the window cannot be opened (no display, no OpenGL).
pub fn run(options: GuiOptions) -> Result<(), GuiError> {
    let native_options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_title("Spinfall")
            .with_app_id("spinfall")
            .with_inner_size([1500.0, 920.0])
            .with_min_inner_size([900.0, 600.0])
            .with_drag_and_drop(true),
        persist_window: true,
        ..Default::default()
    };
    eframe::run_native(
        "spinfall",
        native_options,
        Box::new(move |cc| Ok(Box::new(SpinfallApp::new(cc, options)))),
    )
    .map_err(|e| GuiError::Window(e.to_string()))
}
