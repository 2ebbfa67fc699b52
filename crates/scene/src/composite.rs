//! Cameras and the side-by-side composite image.

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::FlightReport;
use spinfall_gravity::ShapeModel;
use spinfall_render::{
    Anchor, Camera, Color, Image, Overlay, RenderOptions, Renderer, compose_side_by_side,
};

use crate::body_view::BodyView;
use crate::error::{Result, SceneError};
use crate::options::ViewOptions;
use crate::scenes::{Frame, SiteMarker, add_site_markers, frame_scene};

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
    /// Width of the whole image, pixels (two halves and the gap).
    pub width_px: u32,
    /// Height, pixels.
    pub height_px: u32,
    /// Supersampling per axis (1 = none).
    pub supersample: u32,
    /// Gap between the halves, pixels.
    pub gap_px: u32,
    /// Camera of the body-fixed half (`None`: [`default_camera`]); its viewport is resized.
    pub body_camera: Option<Camera>,
    /// Camera of the inertial half (`None`: [`default_camera`]).
    pub inertial_camera: Option<Camera>,
    /// Planned launch sites to mark in both halves.
    pub sites: Vec<SiteMarker>,
}

impl Default for CompositeOptions {
    fn default() -> Self {
        Self {
            width_px: 1920,
            height_px: 1080,
            supersample: 2,
            gap_px: 4,
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

/// Renders the two views of one view at time `t_s` side by side: body-fixed on the left,
/// inertial on the right, each with its title and the time stamp.
pub fn composite(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    settings: &CompositeOptions,
) -> Result<Image> {
    let half_w = settings.width_px.saturating_sub(settings.gap_px) / 2;
    let h = settings.height_px;
    if half_w < 16 || h < 16 {
        return Err(SceneError::InvalidSize {
            width_px: settings.width_px,
            height_px: settings.height_px,
        });
    }
    let period_s = view.body().spin.period_s;
    let mut renderer = Renderer::new();
    let render_opts = RenderOptions::new(half_w, h).with_supersample(settings.supersample.max(1));
    let mut halves = Vec::with_capacity(2);
    for (frame, cam) in [
        (Frame::BodyFixed, &settings.body_camera),
        (Frame::Inertial, &settings.inertial_camera),
    ] {
        let mut camera = cam
            .clone()
            .unwrap_or_else(|| default_camera(&view.body().shape, half_w, h));
        camera.set_viewport(half_w, h);
        let mut half_opts = opts.clone();
        // One legend is enough: keep it on the left half.
        half_opts.show_legend = opts.show_legend && frame == Frame::BodyFixed;
        let mut scene = frame_scene(view, reports, t_s, &half_opts, [half_w, h], frame);
        add_site_markers(&mut scene, view, &settings.sites, t_s, frame);
        add_title(&mut scene, frame, t_s, period_s, [half_w, h]);
        halves.push(renderer.render(&scene, &camera, &render_opts).clone());
    }
    let background = spinfall_render::Scene::default().background;
    Ok(compose_side_by_side(
        &halves[0],
        &halves[1],
        settings.gap_px,
        background,
    ))
}
