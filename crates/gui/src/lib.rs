//! The Spinfall desktop app: an eframe/egui window over the CPU renderer.
//!
//! What it is: the interactive front end. It opens a shape model (or starts on the built-in
//! demo body), sets mass and spin, colours the surface by a map, places launch sites by
//! clicking on the body, flies them in the background, animates the body-fixed and inertial
//! views side by side, shows a sortable results table with plots, and exports images, tables
//! and scenario files.
//!
//! What it is not: no physics and no rasterizing of its own. Physics comes from
//! `spinfall-dynamics`, pictures from `spinfall-scene` and `spinfall-render`. Results are for
//! research and planning; Spinfall is not flight-certified.
//!
//! Main types: [`SpinfallApp`] (the app state; [`SpinfallApp::ui`] draws one frame),
//! [`GuiOptions`] and [`run`] (open the window), [`Command`] (everything the UI asks for,
//! handled in one place).
//!
//! ```no_run
//! use spinfall_gui::{run, GuiOptions};
//! use spinfall_gravity::LengthUnit;
//! run(GuiOptions { shape_path: None, unit: LengthUnit::Kilometre }).unwrap();
//! ```
#![warn(missing_docs)]

mod app;
mod atomic;
mod body_panel;
mod command;
mod export;
mod jobs;
mod results;
mod scenario_io;
mod session;
mod sites;
mod state;
mod views;

pub use app::{LoadedShape, Notice, NoticeKind, RunState, SpinfallApp};
pub use atomic::write_atomic;
pub use command::{Command, ExportRequest};
pub use session::{
    AxisChoice, BodyParams, LaunchParams, MassInput, SiteEntry, SiteLocation, Spread,
};
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
}

/// Open the Spinfall window and run until it is closed.
pub fn run(options: GuiOptions) -> anyhow::Result<()> {
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
    .map_err(|e| anyhow::anyhow!("could not open the Spinfall window: {e}"))
}
