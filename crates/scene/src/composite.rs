//! Cameras and the side-by-side composite image.

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::FlightReport;
use spinfall_gravity::ShapeModel;
use spinfall_render::{Anchor, Camera, Color, FigureSize, Image, Overlay};

use crate::body_view::BodyView;
use crate::error::Result;
use crate::figure::{FigureOptions, Output, Views, build_figure};
use crate::options::ViewOptions;
use crate::scenes::{Frame, SiteMarker};

/// Vertical field of view of the default camera, degrees.
pub const DEFAULT_FOV_Y_DEG: f64 = 30.0;

/// Direction from the body to the default eye: above the equator, looking down a little.
fn default_eye_dir() -> Vector3<f64> {
    Vector3::new(1.0, -1.4, 0.75).normalize()
}

/// A perspective camera looking at the body-frame origin, +z up, fitted so the sphere of the
/// Brillouin radius (smallest origin-centred sphere enclosing the shape) fills the view.
pub fn default_camera(shape: &ShapeModel, width_px: u32, height_px: u32) -> Camera {
    let radius_m = shape
        .mesh()
        .vertices_m
        .iter()
        .map(|v| v.coords.norm())
        .fold(0.0, f64::max)
        .max(1e-3);
    let target = Point3::origin();
    let mut camera = Camera::perspective(
        width_px.max(1),
        height_px.max(1),
        target + default_eye_dir() * radius_m * 4.0,
        target,
        Vector3::z(),
        DEFAULT_FOV_Y_DEG,
    );
    camera.fit_to_bounds(target, radius_m);
    camera
}

/// Settings of [`composite`].
#[derive(Debug, Clone)]
pub struct CompositeOptions {
    /// Width of the whole image, pixels.
    pub width_px: u32,
    /// Height, pixels.
    pub height_px: u32,
    /// Supersampling per axis (1 = none).
    pub supersample: u32,
    /// Camera of the body-fixed view (`None`: [`default_camera`]); the image shows at least
    /// what it shows.
    pub body_camera: Option<Camera>,
    /// Camera of the inertial view (`None`: [`default_camera`]).
    pub inertial_camera: Option<Camera>,
    /// Planned launch sites to mark in both views.
    pub sites: Vec<SiteMarker>,
}

impl Default for CompositeOptions {
    fn default() -> Self {
        Self {
            width_px: 1920,
            height_px: 1080,
            supersample: 2,
            body_camera: None,
            inertial_camera: None,
            sites: Vec::new(),
        }
    }
}

/// Human-readable time stamp: seconds, hours and spin turns.
pub fn time_stamp(t_s: f64, period_s: f64) -> String {
    let turns = if period_s > 0.0 { t_s / period_s } else { 0.0 };
    format!(
        "t = {:.1} s  ({:.3} h, {:.3} turns)",
        t_s,
        t_s / 3600.0,
        turns
    )
}

/// Title, time stamp (and the research caution) drawn over one view.
pub fn add_title(
    scene: &mut spinfall_render::Scene,
    frame: Frame,
    t_s: f64,
    period_s: f64,
    size_px: [u32; 2],
) {
    let w = size_px[0] as f32;
    scene.overlays.push(Overlay::Text {
        text: frame.title().to_string(),
        x_px: w * 0.5,
        y_px: 8.0,
        size_px: 20.0,
        color: Color::WHITE,
        anchor: Anchor::TopCenter,
    });
    scene.overlays.push(Overlay::Text {
        text: time_stamp(t_s, period_s),
        x_px: w * 0.5,
        y_px: 34.0,
        size_px: 14.0,
        color: Color::LIGHT_GREY,
        anchor: Anchor::TopCenter,
    });
}

/// Renders both views at time `t_s` side by side (body-fixed on the left, inertial on the
/// right) as a raster figure laid out by [`build_figure`]: titles, time stamp, colour bar,
/// legend, triads and scale bars around the views, sized from the image size.
pub fn composite(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    settings: &CompositeOptions,
) -> Result<Image> {
    let fig = FigureOptions {
        size: FigureSize::Pixels {
            width_px: settings.width_px,
            height_px: settings.height_px,
        },
        views: Views::Both,
        cameras: [
            settings.body_camera.clone(),
            settings.inertial_camera.clone(),
        ],
        fit_body: false,
        sites: settings.sites.clone(),
        supersample: settings.supersample,
        output: Output::Raster,
    };
    Ok(build_figure(view, reports, t_s, opts, &fig)?.to_image())
}
