//! Turns a body, its surface map and flight reports into render scenes.
//!
//! What it is: the bridge between Spinfall's physics (`spinfall-dynamics`) and its rasterizer
//! (`spinfall-render`). It builds the body-fixed view (the body at rest, traces as seen on the
//! rotating body), the inertial view at time `t` (the body turned to its spin phase, traces as
//! seen from space), the other-frame overlay (the trace integrated in the other frame,
//! transformed into this one and drawn dashed; the two must coincide) and the side-by-side
//! composite with titles, time stamp, legend and scale bar. The GUI and the `spinfall render`
//! command both use it, so their images match.
//!
//! What it is not: no egui, no file I/O (figures, animations and plots go to values or any
//! `Write`), no physics of its own.
//!
//! Main types: [`BodyView`] (the body with its `f32` mesh and cached per-map face colours),
//! [`ViewOptions`] (also the theme and a user-fixed colour range), [`Palette`] (what each colour
//! means, per theme), [`body_fixed_scene`] / [`inertial_scene`] / [`frame_scene`] (the app's
//! views, overlays drawn over them) and [`figure_scene`] (a view for a figure, sized by the
//! figure), [`add_site_markers`] for planned launch sites, [`default_camera`].
//!
//! Figures: [`build_figure`] lays out one or both views with titles, time stamp, colour bar,
//! legend, triads and scale bars beside the views (never over them), every size from the
//! figure's size ([`FigureOptions`]: pixels or a printed size, theme through the view options,
//! raster or vector output, the app's cameras or a fit to the body); [`composite`] is the
//! side-by-side raster. [`plots`] makes plots against time and the landing map;
//! [`render_frames`] / [`write_animation`] make animations with progress and cancel.
//! [`Guides`] (equilibrium points, zero-velocity curves and the forbidden-region hatch) ride on
//! the [`BodyView`] and are drawn in the body-fixed view and its legend.
//! [`trace`] holds the trajectory helpers (Hermite interpolation at a time, frame changes)
//! shared with the GUI's plots.
//!
//! Spinfall is for research and planning, not flight-certified.
//!
//! ```no_run
//! use std::sync::Arc;
//! use spinfall_scene::{BodyView, CompositeOptions, ViewOptions, composite};
//! # fn demo(body: Arc<spinfall_dynamics::Body>, reports: Vec<spinfall_dynamics::FlightReport>) {
//! let view = BodyView::new(body);
//! let image = composite(&view, &reports, 600.0, &ViewOptions::default(),
//!     &CompositeOptions { width_px: 1280, height_px: 480, ..Default::default() }).unwrap();
//! assert_eq!(image.width, 1280);
//! # }
//! ```
#![warn(missing_docs)]

mod animation;
mod body_view;
mod composite;
mod error;
mod figure;
mod guides;
mod options;
mod palette;
pub mod plots;
mod scenes;
pub mod trace;
mod units;

pub use animation::{AnimationSettings, render_frames, write_animation};
pub use body_view::{BODY_GREY, BodyView, MapColors, value_range};
pub use composite::{
    CompositeOptions, DEFAULT_FOV_Y_DEG, add_title, composite, default_camera, time_stamp,
};
pub use error::{Result, SceneError};
pub use figure::{FigureOptions, Output, Views, build_figure, build_figure_with, figure_metadata};
pub use guides::{EquilibriumMark, Guides, LandingEllipse, ZeroVelocityCurves};
pub use options::{HiddenTraceStyle, ViewOptions};
pub use palette::Palette;
pub use scenes::{
    CONTACT_COLOR, ESCAPE_COLOR, Frame, LAUNCH_COLORS, OVERLAY_COLOR, PLANNED_SITE_COLOR,
    REST_COLOR, SITE_COLOR, SPIN_AXIS_COLOR, SiteMarker, add_site_markers, add_site_markers_styled,
    body_fixed_scene, color_bar_rect, end_time_s, field_label, figure_scene, frame_scene,
    guide_legend_entries, inertial_scene, launch_color, legend_entries, pretty_unit, shown_map,
};
pub use units::{DisplayUnits, LengthDisplay, TimeDisplay};
