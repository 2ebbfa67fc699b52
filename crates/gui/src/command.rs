//! Everything the UI asks for. Widgets push commands; [`crate::SpinfallApp`] handles them in
//! one place at the end of the frame.

use std::path::PathBuf;

use nalgebra::Point3;
use spinfall_gravity::LengthUnit;
use spinfall_render::{FigureSize, ThemeKind};

/// A request from the UI.
#[derive(Debug, Clone, PartialEq)]
pub enum Command {
    /// Show the file dialog to choose a shape model (on a thread, never blocking).
    BrowseShape,
    /// Load the shape model at this path in the background.
    LoadShape(PathBuf, LengthUnit),
    /// Go back to the built-in demo body.
    LoadDemo,
    /// Show the file dialog to choose a scenario file.
    BrowseScenario,
    /// Load a scenario file (and its shape model) in the background.
    LoadScenario(PathBuf),
    /// Show the file dialog to choose where to save the scenario.
    BrowseSaveScenario,
    /// Save the session as a scenario file.
    SaveScenario(PathBuf),
    /// Show the dialog to choose the export folder.
    BrowseExportFolder,
    /// Rebuild the body (mass, spin or gravity method changed).
    RebuildBody,
    /// Compute the surface map for the current body in the background (or read it from the
    /// cache).
    ComputeMap,
    /// Compute the geopotential on the zero-velocity plane and at the surface vertices in the
    /// background.
    ComputeZeroVelocity,
    /// Search the equilibrium points of the current body in the background.
    FindEquilibria,
    /// Add a launch site at a body-fixed surface point (metres) on face `face`.
    AddSiteAtPoint {
        /// Surface point, body frame, metres.
        point_body_m: Point3<f64>,
        /// Face index hit.
        face: usize,
    },
    /// Aim the selected launch at a body-fixed surface point (metres): a targeted hop whose
    /// speed and direction are solved when it is flown.
    SetTarget {
        /// Surface point, body frame, metres.
        point_body_m: Point3<f64>,
    },
    /// Add a launch site at planetocentric latitude/longitude (degrees).
    AddSiteLatLon {
        /// Latitude, degrees.
        lat_deg: f64,
        /// East longitude, degrees.
        lon_deg: f64,
    },
    /// Remove launch `index` (undoable).
    RemoveSite(usize),
    /// Undo the last site or body edit.
    Undo,
    /// Redo the last undone edit.
    Redo,
    /// Fly every launch of every site in the background.
    Run,
    /// Stop the running job(s).
    CancelJobs,
    /// Show the other set of results after a cancel (the previous complete run or the
    /// finished part of the cancelled one).
    SwitchResults,
    /// Select a launch in the table and the views.
    SelectLaunch(Option<usize>),
    /// Play or pause the animation.
    TogglePlay,
    /// Fit both cameras to the body again.
    ResetCameras,
    /// Open the export window.
    ShowExport,
    /// Export files in the background.
    Export(ExportRequest),
    /// Export an animation of the views in the background.
    ExportAnimation(AnimationRequest),
}

/// Still image formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ImageFormat {
    /// PNG (raster, metadata in text chunks).
    #[default]
    Png,
    /// SVG (bodies embedded as rasters, traces, markers and text as vectors).
    Svg,
}

impl ImageFormat {
    /// The file extension.
    pub fn extension(self) -> &'static str {
        match self {
            ImageFormat::Png => "png",
            ImageFormat::Svg => "svg",
        }
    }
}

/// How figures look: theme, size, colour range, framing.
#[derive(Debug, Clone, PartialEq)]
pub struct FigureChoice {
    /// Dark (screen) or light (print).
    pub theme: ThemeKind,
    /// Pixels, or millimetres/inches at a resolution.
    pub size: FigureSize,
    /// Colour range of the surface map `[min, max]` in the field's unit (`None`: the data's).
    pub color_range: Option<[f64; 2]>,
    /// Re-aim the views at the body instead of framing them as on screen.
    pub fit_body: bool,
}

impl Default for FigureChoice {
    fn default() -> Self {
        Self {
            theme: ThemeKind::Dark,
            size: FigureSize::Pixels {
                width_px: 1920,
                height_px: 1080,
            },
            color_range: None,
            fit_body: false,
        }
    }
}

/// What to export, where.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ExportRequest {
    /// Target folder (created if missing).
    pub folder: PathBuf,
    /// File name stem, e.g. `spinfall` gives `spinfall_results.json`.
    pub stem: String,
    /// Figure of both views side by side at the current time.
    pub composite: bool,
    /// Figure of the body-fixed view alone.
    pub body_view: bool,
    /// Figure of the inertial view alone.
    pub inertial_view: bool,
    /// Plots of the selected launch (altitude, speed, Jacobi drift).
    pub plots: bool,
    /// Format of the figures and plots.
    pub format: ImageFormat,
    /// Look and size of the figures and plots.
    pub figure: FigureChoice,
    /// Per-launch results, JSON and CSV.
    pub results: bool,
    /// Trajectory samples, CSV.
    pub trajectories: bool,
    /// Surface map per face, CSV.
    pub surface_map: bool,
    /// The scenario JSON.
    pub scenario: bool,
}

/// Where the frames of an animation go.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AnimationTarget {
    /// One animated GIF.
    #[default]
    Gif,
    /// One animated PNG.
    Apng,
    /// A folder of numbered PNG frames (`frame_0000.png`, ...), for video encoders.
    Frames,
}

/// An animation of the views over time.
#[derive(Debug, Clone, PartialEq)]
pub struct AnimationRequest {
    /// Target folder (created if missing).
    pub folder: PathBuf,
    /// File name stem: `<stem>_animation.gif`, `.png`, or the folder `<stem>_frames`.
    pub stem: String,
    /// Format.
    pub target: AnimationTarget,
    /// Number of frames.
    pub frames: u32,
    /// Frames per second when played.
    pub fps: f64,
    /// Time of the first frame, s.
    pub from_s: f64,
    /// Time of the last frame, s.
    pub to_s: f64,
    /// Look and size of each frame.
    pub figure: FigureChoice,
}
