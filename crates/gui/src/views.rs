//! The two 3D views: CPU-rendered images uploaded as textures, with orbit/pan/zoom, picking
//! and hover read-out, and the time bar that animates them.

use egui::{Color32, ColorImage, PointerButton, Rect, Sense, TextureHandle, TextureOptions, Ui};
use nalgebra::{Point3, Vector3};
use spinfall_render::{Camera, RenderOptions, Renderer};
use spinfall_scene::{
    BodyView, Frame, SiteMarker, ViewOptions, add_site_markers, default_camera, frame_scene,
};

use crate::app::SpinfallApp;
use crate::command::Command;

/// What is under the pointer.
#[derive(Debug, Clone, PartialEq)]
pub struct HoverInfo {
    /// Face index.
    pub face: usize,
    /// Planetocentric latitude, degrees.
    pub lat_deg: f64,
    /// Longitude, degrees east.
    pub lon_deg: f64,
    /// `(field name, value with unit)` of the surface map there.
    pub values: Vec<(String, String)>,
}

/// Everything that changes the picture; a new render happens only when this changes.
#[derive(Debug, Clone, PartialEq)]
struct RenderKey {
    eye: [f64; 3],
    target: [f64; 3],
    up: [f64; 3],
    size_px: [u32; 2],
    t_s: f64,
    data_generation: u64,
    options: ViewOptions,
    sites: Vec<SiteMarker>,
}

/// One view: its camera, renderer buffers and texture.
pub struct ViewPane {
    /// Which frame it shows.
    pub frame: Frame,
    /// Its camera (created when the body arrives).
    pub camera: Option<Camera>,
    /// Fit the camera to the body at the next frame.
    pub reset_camera: bool,
    renderer: Renderer,
    texture: Option<TextureHandle>,
    last_key: Option<RenderKey>,
    /// Screen rectangle of the image in the last frame (points).
    pub rect: Option<Rect>,
    /// Renders done (for tests and the frame counter).
    pub renders: u64,
}

impl ViewPane {
    /// A view of `frame` with no camera yet.
    pub fn new(frame: Frame) -> Self {
        Self {
            frame,
            camera: None,
            reset_camera: true,
            renderer: Renderer::new(),
            texture: None,
            last_key: None,
            rect: None,
            renders: 0,
        }
    }

    /// Re-render into the texture if anything changed.
    #[allow(clippy::too_many_arguments)]
    fn update_texture(
        &mut self,
        ctx: &egui::Context,
        view: &BodyView,
        reports: &[spinfall_dynamics::FlightReport],
        t_s: f64,
        options: &ViewOptions,
        size_px: [u32; 2],
        data_generation: u64,
        sites: &[SiteMarker],
    ) {
        let Some(camera) = &mut self.camera else {
            return;
        };
        if camera.width_px() != size_px[0] || camera.height_px() != size_px[1] {
            camera.set_viewport(size_px[0], size_px[1]);
        }
        let key = RenderKey {
            eye: camera.eye().into(),
            target: camera.target().into(),
            up: camera.up().into(),
            size_px,
            // Without flights the body-fixed view does not change with time.
            t_s: if self.frame == Frame::BodyFixed && reports.is_empty() {
                0.0
            } else {
                t_s
            },
            data_generation,
            options: options.clone(),
            sites: sites.to_vec(),
        };
        if self.last_key.as_ref() == Some(&key) && self.texture.is_some() {
            return;
        }
        let mut scene = frame_scene(view, reports, t_s, options, size_px, self.frame);
        add_site_markers(&mut scene, view, sites, t_s, self.frame);
        let image =
            self.renderer
                .render(&scene, camera, &RenderOptions::new(size_px[0], size_px[1]));
        let color_image = to_color_image(image);
        match &mut self.texture {
            Some(t) => t.set(color_image, TextureOptions::LINEAR),
            None => {
                self.texture = Some(ctx.load_texture(
                    format!("view-{:?}", self.frame),
                    color_image,
                    TextureOptions::LINEAR,
                ))
            }
        }
        self.renders += 1;
        self.last_key = Some(key);
    }
}

/// The rendered image as an egui texture image (opaque pixels: premultiplied = straight).
pub(crate) fn to_color_image(image: &spinfall_render::Image) -> ColorImage {
    let pixels = image
        .pixels
        .iter()
        .map(|p| Color32::from_rgba_unmultiplied(p.r, p.g, p.b, p.a))
        .collect();
    ColorImage::new([image.width as usize, image.height as usize], pixels)
}

/// Camera moves from one frame's input, applied to one or both panes.
#[derive(Debug, Clone, Copy, Default)]
struct CameraInput {
    orbit: [f64; 2],
    pan: [f64; 2],
    zoom: f64,
}

impl CameraInput {
    fn any(&self) -> bool {
        self.orbit != [0.0; 2] || self.pan != [0.0; 2] || self.zoom != 1.0
    }

    fn apply(&self, camera: &mut Camera) {
        if self.orbit != [0.0; 2] {
            camera.orbit(self.orbit[0], self.orbit[1]);
        }
        if self.pan != [0.0; 2] {
            camera.pan(self.pan[0], self.pan[1]);
        }
        if self.zoom != 1.0 {
            camera.zoom(self.zoom);
        }
    }
}

impl SpinfallApp {
    pub(crate) fn views_ui(&mut self, ui: &mut Ui) {
        self.time_bar_ui(ui);
        ui.horizontal(|ui| {
            ui.checkbox(&mut self.state.link_cameras, "Link cameras")
                .on_hover_text("Orbit, pan and zoom both views together");
            ui.checkbox(
                &mut self.state.view.overlay_other_frame,
                "Overlay the other frame's trace",
            )
            .on_hover_text("The trace integrated in the other frame, turned into this one (dashed); it must lie on this frame's trace");
            ui.checkbox(&mut self.state.view.trail_to_time, "Traces up to t");
            if ui.button("Reset views").clicked() {
                self.commands.push(Command::ResetCameras);
            }
            ui.weak("drag: orbit · right/middle drag: pan · wheel: zoom");
        });
        let Some(view) = self.view.clone() else {
            ui.centered_and_justified(|ui| {
                if self.load_job.is_some() {
                    ui.spinner();
                } else {
                    ui.label("No body loaded. Open a shape model (Ctrl+O) or drop an .obj, .ply or .stl here.");
                }
            });
            return;
        };
        let ppp = ui.ctx().pixels_per_point();
        let avail = ui.available_size();
        let gap = 6.0;
        let title_h = 18.0;
        let pane_w = ((avail.x - gap) / 2.0).max(32.0);
        let pane_h = (avail.y - title_h).max(32.0);
        let size_px = [
            (pane_w * ppp).round().max(16.0) as u32,
            (pane_h * ppp).round().max(16.0) as u32,
        ];
        let site_markers = self.site_markers();
        let mut inputs = [CameraInput::default(), CameraInput::default()];
        let mut hover = None;
        let mut click = None;
        let mut clicked_trace = None;
        ui.horizontal_top(|ui| {
            ui.spacing_mut().item_spacing.x = gap;
            for (k, pane) in self.panes.iter_mut().enumerate() {
                ui.vertical(|ui| {
                    ui.set_width(pane_w);
                    ui.horizontal(|ui| {
                        ui.strong(pane.frame.title());
                        if pane.frame == Frame::Inertial {
                            ui.weak("(the body turns)");
                        } else {
                            ui.weak("(turns with the body)");
                        }
                    });
                    if pane.reset_camera || pane.camera.is_none() {
                        pane.camera =
                            Some(default_camera(&view.body().shape, size_px[0], size_px[1]));
                        pane.reset_camera = false;
                        pane.last_key = None;
                    }
                    let (rect, response) =
                        ui.allocate_exact_size(egui::vec2(pane_w, pane_h), Sense::click_and_drag());
                    pane.rect = Some(rect);
                    // Camera input.
                    let delta = response.drag_delta() * ppp;
                    let (dx, dy) = (delta.x as f64, delta.y as f64);
                    let input = &mut inputs[k];
                    input.zoom = 1.0;
                    if response.dragged_by(PointerButton::Primary) {
                        input.orbit = [dx, dy];
                    } else if response.dragged_by(PointerButton::Secondary)
                        || response.dragged_by(PointerButton::Middle)
                    {
                        input.pan = [dx, dy];
                    }
                    if response.hovered() {
                        let scroll = ui.ctx().input(|i| i.smooth_scroll_delta.y);
                        if scroll != 0.0 {
                            input.zoom = (scroll as f64 * 0.0025).exp();
                        }
                    }
                    // Picking.
                    let to_px = |p: egui::Pos2| {
                        (
                            ((p.x - rect.min.x) * ppp) as f64,
                            ((p.y - rect.min.y) * ppp) as f64,
                        )
                    };
                    if let Some(camera) = &pane.camera {
                        if response.clicked_by(PointerButton::Primary)
                            && let Some(p) = response.interact_pointer_pos()
                        {
                            let (x, y) = to_px(p);
                            let cut = self.state.view.trail_to_time.then_some(self.t_s);
                            let hit_px = 6.0 * ppp as f64;
                            match nearest_trace(&self.reports, camera, pane.frame, cut, x, y) {
                                // A click on a trace selects its launch.
                                Some((i, d)) if d <= hit_px => clicked_trace = Some(i),
                                _ => click = pick(&view, camera, pane.frame, self.t_s, x, y),
                            }
                        }
                        if let Some(p) = response.hover_pos()
                            && !response.dragged()
                        {
                            let (x, y) = to_px(p);
                            hover = pick(&view, camera, pane.frame, self.t_s, x, y)
                                .map(|(p, face)| hover_info(&view, face, &p));
                            if let Some(info) = &hover {
                                response.clone().on_hover_ui_at_pointer(|ui| {
                                    ui.label(format!(
                                        "lat {:.2}°, lon {:.2}°",
                                        info.lat_deg, info.lon_deg
                                    ));
                                    for (name, value) in &info.values {
                                        ui.label(format!("{name}: {value}"));
                                    }
                                });
                            }
                        }
                    }
                    pane.update_texture(
                        ui.ctx(),
                        &view,
                        &self.reports,
                        self.t_s,
                        &self.state.view,
                        size_px,
                        self.data_generation,
                        &site_markers,
                    );
                    if let Some(tex) = &pane.texture {
                        ui.painter().image(
                            tex.id(),
                            rect,
                            Rect::from_min_max(egui::pos2(0.0, 0.0), egui::pos2(1.0, 1.0)),
                            Color32::WHITE,
                        );
                    }
                    if response.hovered() && self.click_to_place {
                        ui.ctx().set_cursor_icon(egui::CursorIcon::Crosshair);
                    }
                });
            }
        });
        // Apply camera moves (to both panes when linked).
        let linked = self.state.link_cameras;
        for (k, input) in inputs.iter().enumerate() {
            if !input.any() {
                continue;
            }
            for (j, pane) in self.panes.iter_mut().enumerate() {
                if (j == k || linked)
                    && let Some(c) = &mut pane.camera
                {
                    input.apply(c);
                }
            }
        }
        if let Some(i) = clicked_trace {
            self.commands.push(Command::SelectLaunch(Some(i)));
        }
        // Shift+click (or a click after "Pick target") aims the selected launch; a plain click
        // places a site.
        let shift = ui.input(|i| i.modifiers.shift);
        if let Some((point_body_m, face)) = click {
            if shift || self.pick_target {
                self.pick_target = false;
                self.commands.push(Command::SetTarget { point_body_m });
            } else if self.click_to_place {
                self.commands
                    .push(Command::AddSiteAtPoint { point_body_m, face });
            }
        }
        self.hover = hover;
    }

    fn time_bar_ui(&mut self, ui: &mut Ui) {
        let end = self.end_time_s();
        ui.horizontal(|ui| {
            let label = if self.playing { "Pause" } else { "Play" };
            if ui.button(label).on_hover_text("Space").clicked() {
                self.commands.push(Command::TogglePlay);
            }
            if ui.button("|<").on_hover_text("Back to t = 0").clicked() {
                self.t_s = 0.0;
            }
            let t_label = ui.label("time");
            let w = (ui.available_width() - 470.0).max(80.0);
            ui.spacing_mut().slider_width = w;
            ui.add(
                egui::Slider::new(&mut self.t_s, 0.0..=end)
                    .show_value(false)
                    .clamping(egui::SliderClamping::Always),
            )
            .labelled_by(t_label.id);
            let period = self
                .view
                .as_ref()
                .map(|v| v.body().spin.period_s)
                .unwrap_or(0.0);
            ui.label(self.state.view.units.time_stamp(self.t_s, period));
            let l = ui.label("speed");
            ui.add(
                egui::DragValue::new(&mut self.state.playback_speed)
                    .range(1.0..=1e6)
                    .speed(10.0)
                    .suffix(" s/s"),
            )
            .labelled_by(l.id)
            .on_hover_text("Simulated seconds per second of animation");
            ui.weak(format!("/ {}", self.state.view.units.fmt_time(end)));
        });
    }
}

/// The picking ray of pixel `(x_px, y_px)` in the body frame.
fn body_ray(
    view: &BodyView,
    camera: &Camera,
    frame: Frame,
    t_s: f64,
    x_px: f64,
    y_px: f64,
) -> (Point3<f64>, Vector3<f64>) {
    let (origin, dir) = camera.ray_at_pixel(x_px, y_px);
    match frame {
        Frame::BodyFixed => (origin, dir),
        // The inertial view shows the body turned by inertial_from_body(t): undo it.
        Frame::Inertial => {
            let r = view.body().body_from_inertial(t_s);
            (r * origin, r * dir)
        }
    }
}

/// The body-frame surface point and face under pixel `(x_px, y_px)`, if the body is there.
pub(crate) fn pick(
    view: &BodyView,
    camera: &Camera,
    frame: Frame,
    t_s: f64,
    x_px: f64,
    y_px: f64,
) -> Option<(Point3<f64>, usize)> {
    let (origin, dir) = body_ray(view, camera, frame, t_s, x_px, y_px);
    let max_t = (origin.coords.norm() + view.brillouin_radius_m()) * 2.0 + 1.0;
    view.body()
        .shape
        .ray_first_hit(&origin, &dir, max_t)
        .map(|hit| (hit.point_m, hit.face))
}

/// The launch whose trace (in this view's frame, up to `cut_s`) passes closest to pixel
/// `(x_px, y_px)`, with that distance in pixels.
fn nearest_trace(
    reports: &[spinfall_dynamics::FlightReport],
    camera: &Camera,
    frame: Frame,
    cut_s: Option<f64>,
    x_px: f64,
    y_px: f64,
) -> Option<(usize, f64)> {
    let mut best: Option<(usize, f64)> = None;
    for (i, r) in reports.iter().enumerate() {
        let samples = match frame {
            Frame::BodyFixed => &r.trajectory_body,
            Frame::Inertial => &r.trajectory_inertial,
        };
        let points = spinfall_scene::trace::points_until(samples, cut_s);
        let projected: Vec<(f64, f64)> = points
            .iter()
            .filter_map(|p| camera.project(&Point3::from(*p)).map(|(x, y, _)| (x, y)))
            .collect();
        for w in projected.windows(2) {
            let d = segment_distance((x_px, y_px), w[0], w[1]);
            if best.is_none_or(|(_, b)| d < b) {
                best = Some((i, d));
            }
        }
    }
    best
}

/// Distance from point `p` to the segment `a`-`b` (pixels).
fn segment_distance(p: (f64, f64), a: (f64, f64), b: (f64, f64)) -> f64 {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        (((p.0 - a.0) * dx + (p.1 - a.1) * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    let (qx, qy) = (a.0 + t * dx - p.0, a.1 + t * dy - p.1);
    (qx * qx + qy * qy).sqrt()
}

fn hover_info(view: &BodyView, face: usize, p: &Point3<f64>) -> HoverInfo {
    let (lat_deg, lon_deg) = spinfall_dynamics::site::lat_lon_deg(view.body(), p);
    let mut values = Vec::new();
    if let Some(map) = view.map() {
        for field in spinfall_dynamics::surface_map::SurfaceField::ALL {
            if let Some(v) = map.values(field).get(face) {
                values.push((
                    field.name().to_string(),
                    format!(
                        "{} {}",
                        spinfall_render::format_value(*v),
                        crate::units::pretty_unit(field.unit())
                    ),
                ));
            }
        }
    }
    HoverInfo {
        face,
        lat_deg,
        lon_deg,
        values,
    }
}

/// Test hook: the number of renders each pane has done.
impl SpinfallApp {
    /// Renders done by the body-fixed and inertial panes (each render happens only when
    /// something changed).
    pub fn render_counts(&self) -> [u64; 2] {
        [self.panes[0].renders, self.panes[1].renders]
    }

    /// Screen rectangle (points) of the body-fixed (0) or inertial (1) view in the last frame.
    pub fn view_rect(&self, pane: usize) -> Option<Rect> {
        self.panes.get(pane).and_then(|p| p.rect)
    }

    /// Camera of a pane (0 body-fixed, 1 inertial).
    pub fn camera(&self, pane: usize) -> Option<&Camera> {
        self.panes.get(pane).and_then(|p| p.camera.as_ref())
    }
}

#[cfg(test)]
mod tests {
    use super::segment_distance;

    #[test]
    fn distance_to_a_segment_uses_the_nearest_point() {
        // Perpendicular foot inside the segment, then beyond each end (Euclidean geometry).
        assert!((segment_distance((1.0, 2.0), (0.0, 0.0), (4.0, 0.0)) - 2.0).abs() < 1e-12);
        assert!((segment_distance((7.0, 4.0), (0.0, 0.0), (4.0, 0.0)) - 5.0).abs() < 1e-12);
        assert!((segment_distance((-3.0, -4.0), (0.0, 0.0), (4.0, 0.0)) - 5.0).abs() < 1e-12);
        assert!((segment_distance((3.0, 4.0), (0.0, 0.0), (0.0, 0.0)) - 5.0).abs() < 1e-12);
    }
}
