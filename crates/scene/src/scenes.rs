//! The two views as render scenes: body-fixed and inertial.

use nalgebra::{Point3, Rotation3};
use spinfall_dynamics::surface_map::SurfaceField;
use spinfall_dynamics::{FlightReport, Outcome};
use spinfall_render::{
    Arrow, Color, Corner, FaceColors, LegendEntry, LineColor, Marker, MarkerShape, Occluded,
    Overlay, Polyline, Rect, Scene, SceneMesh, Shading, Sizing, Swatch, Theme,
};

use crate::body_view::{BodyView, MapColors};
use crate::options::ViewOptions;
use crate::palette::Palette;
use crate::trace::{self, FrameChange};

/// Which frame a view shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Frame {
    /// The frame turning with the body: the body stands still.
    BodyFixed,
    /// The non-rotating frame: the body turns.
    Inertial,
}

impl Frame {
    /// Title shown over the view.
    pub fn title(self) -> &'static str {
        match self {
            Frame::BodyFixed => "Body-fixed frame",
            Frame::Inertial => "Inertial frame",
        }
    }
}

/// Colours of the launches on the dark theme (cycled): the dark theme's series palette.
pub const LAUNCH_COLORS: [Color; 8] = Theme::dark().series;

/// Colour of the overlaid other-frame trace (dark theme).
pub const OVERLAY_COLOR: Color = Palette::dark().overlay_trace;
/// Colour of contact markers (dark theme).
pub const CONTACT_COLOR: Color = Palette::dark().contact;
/// Colour of launch-site markers (dark theme).
pub const SITE_COLOR: Color = Palette::dark().site;
/// Colour of rest-point markers (dark theme).
pub const REST_COLOR: Color = Palette::dark().rest;
/// Colour of escape markers (last computed point, dark theme).
pub const ESCAPE_COLOR: Color = Palette::dark().escape;
/// Colour of the spin axis arrow (dark theme).
pub const SPIN_AXIS_COLOR: Color = Palette::dark().spin_axis;

/// A unit for display: `m^2/s^2` becomes `m²/s²`, the dimensionless `1` becomes empty.
pub fn pretty_unit(unit: &str) -> String {
    if unit == "1" {
        return String::new();
    }
    unit.replace("^2", "²").replace("^3", "³")
}

/// A surface field's name with its unit in brackets (none for dimensionless fields).
pub fn field_label(field: SurfaceField) -> String {
    match pretty_unit(field.unit()).as_str() {
        "" => field.name().to_string(),
        u => format!("{} ({u})", field.name()),
    }
}

/// Colour of launch `index`.
pub fn launch_color(index: usize) -> Color {
    LAUNCH_COLORS[index % LAUNCH_COLORS.len()]
}

/// The body-fixed view at time `t_s` for an image of `size_px` (width, height): the body at
/// rest, traces as seen on the rotating body, markers for launch sites, contacts, rest points
/// and particles, the spin axis and a colour bar when a map is shown.
pub fn body_fixed_scene(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    size_px: [u32; 2],
) -> Scene {
    frame_scene(view, reports, t_s, opts, size_px, Frame::BodyFixed)
}

/// The inertial view at time `t_s` for an image of `size_px`: the body turned to its spin
/// phase at `t_s`, traces as seen from space, particle positions at `t_s`.
pub fn inertial_scene(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    size_px: [u32; 2],
) -> Scene {
    frame_scene(view, reports, t_s, opts, size_px, Frame::Inertial)
}

/// The view of `frame` at time `t_s` at the screen scale, with its 2D overlays (colour bar,
/// triad, scale bar, legend) drawn over the view, as the app shows it.
pub fn frame_scene(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    size_px: [u32; 2],
    frame: Frame,
) -> Scene {
    let mut scene = build(view, reports, t_s, opts, frame, Sizing::screen());
    add_overlays(&mut scene, view, reports, opts, size_px, frame);
    scene
}

/// The view of `frame` at time `t_s` for a figure: lines and markers sized by `sizing`, no 2D
/// overlays (the figure's layout puts colour bar, legend, triad and scale bar beside the view).
pub fn figure_scene(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    frame: Frame,
    sizing: Sizing,
) -> Scene {
    build(view, reports, t_s, opts, frame, sizing)
}

fn build(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    frame: Frame,
    sizing: Sizing,
) -> Scene {
    let body = view.body();
    let pal = Palette::of(opts.theme);
    let px = |reference_px: f32| sizing.scale_px(reference_px);
    let t_s = if t_s.is_finite() { t_s } else { 0.0 };
    // World-from-body rotation of this view at t.
    let world_from_body: Rotation3<f64> = match frame {
        Frame::BodyFixed => Rotation3::identity(),
        Frame::Inertial => body.inertial_from_body(t_s),
    };
    let mut scene = Scene {
        background: pal.theme.background,
        ..Scene::default()
    };

    // The body.
    let mut mesh = SceneMesh::new(view.positions().clone(), view.triangles().clone(), pal.body);
    mesh.model = world_from_body.to_homogeneous();
    mesh.shading = if opts.smooth_shading {
        Shading::Smooth
    } else {
        Shading::Flat
    };
    mesh.wireframe = opts.show_wireframe.then_some(pal.wireframe);
    let map_colors = opts
        .map
        .and_then(|field| view.map_colors_in(field, opts.colormap, opts.color_range));
    if let Some(mc) = &map_colors {
        mesh.colors = FaceColors::PerFace(mc.colors.clone());
    }
    scene.meshes.push(mesh);
    // A terrain patch used for contacts, in its own shade (the map colours the body shape).
    if let Some((positions, triangles)) = view.patch() {
        let mut patch = SceneMesh::new(positions.clone(), triangles.clone(), pal.patch);
        patch.model = world_from_body.to_homogeneous();
        patch.wireframe = opts.show_wireframe.then_some(pal.wireframe);
        patch.cull_back_faces = false;
        scene.meshes.push(patch);
    }

    let radius_m = view.brillouin_radius_m();
    if opts.show_spin_axis {
        let axis = world_from_body * body.spin.axis_body.into_inner();
        scene.arrows.push(Arrow {
            from: (-axis * radius_m * 1.25).into(),
            to: (axis * radius_m * 1.6).into(),
            color: pal.spin_axis,
            width_px: px(2.5),
        });
    }

    let occluded = opts.hidden_trace_style.occluded();
    let cut = opts.trail_to_time.then_some(t_s);
    for (i, report) in reports.iter().enumerate() {
        let selected = opts.selected_launch == Some(i);
        let dim = opts.selected_launch.is_some() && !selected;
        let base = pal.launch(i);
        let color = if dim { base.with_alpha(110) } else { base };
        let width_px = px(if selected { 3.0 } else { 1.8 });
        let (own, other) = match frame {
            Frame::BodyFixed => (&report.trajectory_body, &report.trajectory_inertial),
            Frame::Inertial => (&report.trajectory_inertial, &report.trajectory_body),
        };
        scene.polylines.push(Polyline {
            points: trace::points_until(own, cut),
            color: LineColor::Uniform(color),
            width_px,
            dash: None,
            occluded,
        });
        if opts.overlay_other_frame && (!dim || reports.len() <= 8) {
            let change = match frame {
                Frame::BodyFixed => FrameChange::InertialToBody,
                Frame::Inertial => FrameChange::BodyToInertial,
            };
            let moved = trace::change_frame(body, other, change);
            scene.polylines.push(Polyline {
                points: trace::points_until(&moved, cut),
                color: LineColor::Uniform(pal.overlay_trace.with_alpha(if dim {
                    90
                } else {
                    pal.overlay_trace.a
                })),
                width_px: (width_px * 0.6).max(1.0),
                dash: Some((px(6.0), px(5.0))),
                occluded,
            });
        }
        let look = MarkerLook {
            pal: &pal,
            color,
            scale: px(if selected { 1.3 } else { 1.0 }),
        };
        add_markers(&mut scene, view, report, t_s, frame, &look);
    }
    if frame == Frame::BodyFixed {
        crate::guides::add_guides(&mut scene, view.guides(), &pal, sizing);
    }
    scene
}

/// The legend entries of a view with flights: traces, the other frame's trace, contact, rest and
/// escape markers (by shape).
pub fn legend_entries(opts: &ViewOptions) -> Vec<LegendEntry> {
    let pal = Palette::of(opts.theme);
    let mut entries = vec![LegendEntry::new(pal.launch(0), "trace", Swatch::Line)];
    if opts.overlay_other_frame {
        entries.push(LegendEntry::new(
            pal.overlay_trace,
            "other frame's trace",
            Swatch::Dashed,
        ));
    }
    entries.extend(
        [
            (pal.site, "launch site", MarkerShape::Ring),
            (pal.contact, "contact", MarkerShape::Cross),
            (pal.rest, "at rest", MarkerShape::Square),
            (pal.escape, "escaped", MarkerShape::Diamond),
        ]
        .map(|(c, text, shape)| LegendEntry::new(c, text, Swatch::Marker(shape))),
    );
    entries
}

/// The legend entries of the guides `view` carries (equilibria, zero-velocity curves), drawn
/// in the body-fixed view.
pub fn guide_legend_entries(view: &BodyView, opts: &ViewOptions) -> Vec<LegendEntry> {
    crate::guides::guide_legend_entries(view.guides(), &Palette::of(opts.theme))
}

/// The legend of views of `frames`: the flights' entries when there are flights, then the
/// guides' when the body-fixed view is among them.
pub(crate) fn legend_for(
    view: &BodyView,
    reports: &[FlightReport],
    opts: &ViewOptions,
    frames: &[Frame],
) -> Vec<LegendEntry> {
    let mut entries = if reports.is_empty() {
        Vec::new()
    } else {
        legend_entries(opts)
    };
    if frames.contains(&Frame::BodyFixed) {
        entries.extend(guide_legend_entries(view, opts));
    }
    entries
}

/// The colour map, range and label of the map shown with `opts`, if any.
pub fn shown_map(view: &BodyView, opts: &ViewOptions) -> Option<MapColors> {
    opts.map
        .and_then(|field| view.map_colors_in(field, opts.colormap, opts.color_range))
}

fn add_overlays(
    scene: &mut Scene,
    view: &BodyView,
    reports: &[FlightReport],
    opts: &ViewOptions,
    size_px: [u32; 2],
    frame: Frame,
) {
    if let Some(mc) = &shown_map(view, opts) {
        let field = mc.field;
        scene.overlays.push(Overlay::ColorBar {
            colormap: mc.colormap,
            min: mc.min,
            max: mc.max,
            label: field_label(field),
            rect: color_bar_rect(size_px),
        });
    }
    if opts.show_triad {
        scene.overlays.push(Overlay::AxisTriad {
            corner: Corner::BottomLeft,
            size_px: 28.0,
        });
    }
    if opts.show_scale_bar {
        scene.overlays.push(Overlay::ScaleBar {
            unit_label: opts.units.scale_bar_unit().to_string(),
            corner: Corner::BottomRight,
        });
    }
    let entries = legend_for(view, reports, opts, &[frame]);
    if opts.show_legend && !entries.is_empty() {
        scene.overlays.push(Overlay::Legend {
            entries,
            corner: Corner::TopLeft,
        });
    }
}

/// Colours and size of one launch's markers.
struct MarkerLook<'a> {
    pal: &'a Palette,
    color: Color,
    /// Size factor (figure scale times the selection highlight).
    scale: f32,
}

fn add_markers(
    scene: &mut Scene,
    view: &BodyView,
    report: &FlightReport,
    t_s: f64,
    frame: Frame,
    look: &MarkerLook,
) {
    let (pal, color, scale) = (look.pal, look.color, look.scale);
    let body = view.body();
    let Some(first) = report.trajectory_body.first() else {
        return;
    };
    let site_body = trace::pos(first);
    // A point fixed on the body, where it is at time `at_s` in this view.
    let on_body = |p: &Point3<f64>, at_s: f64| -> [f64; 3] {
        match frame {
            Frame::BodyFixed => (*p).into(),
            Frame::Inertial => body.pos_inertial_from_body(at_s, p).into(),
        }
    };
    scene.markers.push(Marker {
        position: on_body(&site_body, t_s),
        shape: MarkerShape::Ring,
        size_px: 11.0 * scale,
        color: pal.site,
        occluded: Occluded::Faint(0.35),
    });
    // Contacts happen at a body point at a time; once passed they stay with the body.
    for c in &report.contacts {
        if c.t_s > t_s {
            continue;
        }
        let p = Point3::from(c.pos_body_m);
        scene.markers.push(Marker {
            position: on_body(&p, t_s),
            shape: MarkerShape::Cross,
            size_px: 9.0 * scale,
            color: pal.contact,
            occluded: Occluded::Faint(0.35),
        });
    }
    let own = match frame {
        Frame::BodyFixed => &report.trajectory_body,
        Frame::Inertial => &report.trajectory_inertial,
    };
    let Some(last) = own.last() else {
        return;
    };
    let end_t = last.t_s;
    if t_s >= end_t {
        let (shape, marker_color) = match &report.outcome {
            Outcome::Escaped => (MarkerShape::Diamond, pal.escape),
            Outcome::Landed => (MarkerShape::Square, pal.rest),
            _ => (MarkerShape::Square, pal.other_outcome),
        };
        let position = match (frame, report.trajectory_body.last()) {
            // A particle at rest rides on the body.
            (Frame::Inertial, Some(b)) if report.landed() => on_body(&trace::pos(b), t_s),
            _ => trace::pos(last).into(),
        };
        scene.markers.push(Marker {
            position,
            shape,
            size_px: 10.0 * scale,
            color: marker_color,
            occluded: Occluded::Faint(0.35),
        });
    } else if let Some(p) = trace::position_at(own, t_s) {
        scene.markers.push(Marker {
            position: p.into(),
            shape: MarkerShape::Dot,
            size_px: 8.0 * scale,
            color: color.with_alpha(255),
            occluded: Occluded::Faint(0.5),
        });
    }
}

/// Where the colour bar goes in an image of `size_px`: right edge, middle height (labels are
/// drawn to its right, the title above).
pub fn color_bar_rect(size_px: [u32; 2]) -> Rect {
    let (w, h) = (size_px[0] as f32, size_px[1] as f32);
    let bar_h = (h * 0.45).clamp(40.0, 600.0);
    Rect::new(w - 120.0, (h - bar_h) * 0.5, 16.0, bar_h)
}

/// A launch site to mark (before or without a run).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SiteMarker {
    /// Surface point, body frame, m.
    pub pos_body_m: [f64; 3],
    /// Launch direction (unit, body frame) to draw as an arrow, if any.
    pub launch_dir_body: Option<[f64; 3]>,
    /// Highlighted (the selected site).
    pub selected: bool,
    /// The surface point this launch is aimed at (a targeted hop), body frame, m.
    pub target_body_m: Option<[f64; 3]>,
}

/// Colour of planned-site markers and launch arrows (dark theme).
pub const PLANNED_SITE_COLOR: Color = Palette::dark().planned_site;

/// Marks planned launch sites (and the launch direction of those that have one) in a view of
/// `frame` at `t_s`, at the screen scale in the dark theme's colours. The arrow is a tenth of
/// the Brillouin radius long.
pub fn add_site_markers(
    scene: &mut Scene,
    view: &BodyView,
    sites: &[SiteMarker],
    t_s: f64,
    frame: Frame,
) {
    add_site_markers_styled(
        scene,
        view,
        sites,
        t_s,
        frame,
        Sizing::screen(),
        &Palette::dark(),
    );
}

/// [`add_site_markers`] with a figure's sizing and palette.
pub fn add_site_markers_styled(
    scene: &mut Scene,
    view: &BodyView,
    sites: &[SiteMarker],
    t_s: f64,
    frame: Frame,
    sizing: Sizing,
    pal: &Palette,
) {
    let px = |reference_px: f32| sizing.scale_px(reference_px);
    let body = view.body();
    let world_from_body: Rotation3<f64> = match frame {
        Frame::BodyFixed => Rotation3::identity(),
        Frame::Inertial => body.inertial_from_body(t_s),
    };
    let arrow_len_m = view.brillouin_radius_m() * 0.12;
    for site in sites {
        let p = world_from_body * Point3::from(site.pos_body_m);
        scene.markers.push(Marker {
            position: [p.x, p.y, p.z],
            shape: MarkerShape::Diamond,
            size_px: px(if site.selected { 13.0 } else { 9.0 }),
            color: pal.planned_site,
            occluded: Occluded::Faint(0.4),
        });
        if let Some(t) = site.target_body_m {
            let q = world_from_body * Point3::from(t);
            scene.markers.push(Marker {
                position: [q.x, q.y, q.z],
                shape: MarkerShape::Cross,
                size_px: px(if site.selected { 15.0 } else { 11.0 }),
                color: pal.planned_site,
                occluded: Occluded::Faint(0.4),
            });
        }
        if let Some(d) = site.launch_dir_body {
            let d = world_from_body * nalgebra::Vector3::from(d);
            let q = p + d * arrow_len_m;
            scene.arrows.push(Arrow {
                from: [p.x, p.y, p.z],
                to: [q.x, q.y, q.z],
                color: pal.planned_site,
                width_px: px(if site.selected { 3.0 } else { 2.0 }),
            });
        }
    }
}

/// Latest time in any report, s (0 without reports).
pub fn end_time_s(reports: &[FlightReport]) -> f64 {
    reports
        .iter()
        .flat_map(|r| {
            [
                r.trajectory_body.last().map(|s| s.t_s),
                r.trajectory_inertial.last().map(|s| s.t_s),
            ]
        })
        .flatten()
        .filter(|t| t.is_finite())
        .fold(0.0, f64::max)
}
