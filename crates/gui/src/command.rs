//! Everything the UI asks for. Widgets push commands; [`crate::SpinfallApp`] handles them in
//! one place at the end of the frame.

use std::path::PathBuf;

use nalgebra::Point3;
use spinfall_gravity::LengthUnit;

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
    /// Rebuild the body (mass or spin changed).
    RebuildBody,
    /// Compute the surface map for the current body in the background.
    ComputeMap,
    /// Add a launch site at a body-fixed surface point (metres) on face `face`.
    AddSiteAtPoint {
        /// Surface point, body frame, metres.
        point_body_m: Point3<f64>,
        /// Face index hit.
        face: usize,
    },
    /// Add a launch site at planetocentric latitude/longitude (degrees).
    AddSiteLatLon {
        /// Latitude, degrees.
        lat_deg: f64,
        /// East longitude, degrees.
        lon_deg: f64,
    },
    /// Remove launch site `index`.
    RemoveSite(usize),
    /// Fly every launch of every site in the background.
    Run,
    /// Stop the running job(s).
    CancelJobs,
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
}

/// What to export, where.
#[derive(Debug, Clone, PartialEq)]
pub struct ExportRequest {
    /// Target folder (must exist).
    pub folder: PathBuf,
    /// File name stem, e.g. `spinfall` gives `spinfall_results.json`.
    pub stem: String,
    /// Side-by-side PNG of both views at the current time.
    pub composite_png: bool,
    /// PNG of the body-fixed view alone.
    pub body_png: bool,
    /// PNG of the inertial view alone.
    pub inertial_png: bool,
    /// Image size in pixels (the composite; single views use it too).
    pub size_px: [u32; 2],
    /// Per-launch results, JSON and CSV.
    pub results: bool,
    /// Trajectory samples, CSV.
    pub trajectories: bool,
    /// Surface map per face, CSV (when a map was computed).
    pub surface_map: bool,
    /// The scenario JSON.
    pub scenario: bool,
}
