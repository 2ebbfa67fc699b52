//! Figures of the views for papers and talks: [`build_figure`] lays out one or both views with
//! their titles, time stamp, colour bar, legend, axis triads and scale bars so that nothing
//! overlaps and nothing is clipped, with every size following from the figure's size.
//!
//! Layout, from the top: panel titles; the time stamp; the views side by side; under each view
//! its axis triad (left) and scale bar (right). The colour bar and the legend share a panel on
//! the right. Decorations never sit over the views.

use spinfall_dynamics::FlightReport;
use spinfall_render::{
    Anchor, Camera, Figure, FigureSize, Item, Rect, Region, RenderOptions, Renderer, Sizing, Style,
    color_bar_block, legend_block, legend_block_in_columns, measure_text, pt, scale_bar_block,
    triad_block,
};

use crate::body_view::BodyView;
use crate::composite::default_camera;
use crate::error::{Result, SceneError};
use crate::options::ViewOptions;
use crate::palette::Palette;
use crate::scenes::{
    Frame, SiteMarker, add_site_markers_styled, field_label, figure_scene, legend_for, shown_map,
};

/// Which views a figure shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Views {
    /// Body-fixed on the left, inertial on the right.
    #[default]
    Both,
    /// The body-fixed view alone.
    BodyFixed,
    /// The inertial view alone.
    Inertial,
}

impl Views {
    fn frames(self) -> &'static [Frame] {
        match self {
            Views::Both => &[Frame::BodyFixed, Frame::Inertial],
            Views::BodyFixed => &[Frame::BodyFixed],
            Views::Inertial => &[Frame::Inertial],
        }
    }
}

/// How the views' 3D content is stored.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Output {
    /// Everything rasterized (PNG, animation frames).
    #[default]
    Raster,
    /// The bodies rasterized, traces, markers and text as vectors (SVG).
    Vector,
}

/// Settings of a figure.
#[derive(Debug, Clone)]
pub struct FigureOptions {
    /// Size: pixels, or millimetres/inches at a resolution.
    pub size: FigureSize,
    /// Which views.
    pub views: Views,
    /// Cameras of the body-fixed and inertial views as the app shows them (`None`: the default
    /// camera fitted to the body). The figure shows at least what they show.
    pub cameras: [Option<Camera>; 2],
    /// Re-aim each camera at the body and fit its bounding sphere to the view (keeping the
    /// viewing direction).
    pub fit_body: bool,
    /// Planned launch sites to mark.
    pub sites: Vec<SiteMarker>,
    /// Supersampling per axis of the 3D views (1 = none; 2 is the export default).
    pub supersample: u32,
    /// Bodies and lines raster, or lines as vectors.
    pub output: Output,
}

impl Default for FigureOptions {
    fn default() -> Self {
        Self {
            size: FigureSize::Pixels {
                width_px: 1920,
                height_px: 1080,
            },
            views: Views::Both,
            cameras: [None, None],
            fit_body: false,
            sites: Vec::new(),
            supersample: 2,
            output: Output::Raster,
        }
    }
}

/// Where the colour bar and the legend go.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Arrangement {
    /// Both in a panel right of the views, the bar above the legend.
    Stacked,
    /// Both in a panel right of the views, side by side.
    SideBySide,
    /// The bar right of the views, the legend in rows under them.
    LegendBelow,
}

/// The arrangement that fits and the sizes it gives.
struct Plan {
    arrangement: Arrangement,
    /// The legend block when it goes under the views.
    legend_below: Option<spinfall_render::Block>,
    views_x1: f32,
    views_y1: f32,
    view_w: f32,
    view_h: f32,
    /// Shortest colour bar worth drawing, pixels.
    min_bar: f32,
    /// Colour bar block width and height without the bar.
    bar: Option<(f32, f32)>,
    panel_w: f32,
}

/// Where everything of a figure goes, computed before anything is drawn.
struct Layout {
    views: Vec<Rect>,
    titles_y_px: f32,
    stamp_y_px: f32,
    bottom_y_px: f32,
    panel: Option<Rect>,
}

fn snap(r: Rect) -> Rect {
    let (x, y) = (r.x_px.round(), r.y_px.round());
    Rect::new(
        x,
        y,
        (r.x_px + r.width_px).round() - x,
        (r.y_px + r.height_px).round() - y,
    )
}

/// The camera of view `index` for a viewport of `w x h` pixels.
fn view_camera(view: &BodyView, fig: &FigureOptions, index: usize, w: u32, h: u32) -> Camera {
    let shape = &view.body().shape;
    let mut camera = match fig.cameras.get(index).cloned().flatten() {
        Some(mut c) => {
            c.set_viewport_containing(w, h);
            c
        }
        None => default_camera(shape, w, h),
    };
    if fig.fit_body {
        camera.set_viewport(w, h);
        camera.fit_to_bounds(nalgebra::Point3::origin(), view.brillouin_radius_m());
    }
    camera
}

/// Lays out and draws a figure of the views at time `t_s`.
pub fn build_figure(
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    fig: &FigureOptions,
) -> Result<Figure> {
    build_figure_with(&mut Renderer::new(), view, reports, t_s, opts, fig)
}

/// [`build_figure`] with a renderer kept between calls (animation frames reuse its buffers).
pub fn build_figure_with(
    renderer: &mut Renderer,
    view: &BodyView,
    reports: &[FlightReport],
    t_s: f64,
    opts: &ViewOptions,
    fig: &FigureOptions,
) -> Result<Figure> {
    let (width_px, height_px, sizing) = fig.size.resolve()?;
    let pal = Palette::of(opts.theme);
    let style = Style::new(sizing, pal.theme);
    let th = &style.theme;
    let (w, h) = (width_px as f32, height_px as f32);
    let margin = style.px(pt::MARGIN);
    let gap = style.px(pt::GAP);
    let title_px = style.px(pt::TITLE);
    let text_px = style.px(pt::TEXT);
    let frames = fig.views.frames();
    let stamp = opts.units.time_stamp(t_s, view.body().spin.period_s);

    // Blocks whose sizes the layout needs.
    let (_, title_h) = measure_text("Body-fixed frame", title_px);
    let (_, stamp_h) = measure_text(&stamp, text_px);
    let map = shown_map(view, opts);
    let entries = legend_for(view, reports, opts, frames);
    let with_legend = opts.show_legend && !entries.is_empty();
    let arm_px = style.px(9.0);
    // The triad's box depends on the camera; reserve most of its largest size.
    let triad_size = 2.0 * (arm_px + measure_text("x", text_px).1);
    let (_, scale_h) = measure_text("1 km", text_px);
    let bottom_h = (0.75 * triad_size).max(scale_h + style.px(6.0));
    let top = margin + title_h + 0.4 * gap + stamp_h + gap;
    let n = frames.len() as f32;
    let widest_title = frames
        .iter()
        .map(|f| measure_text(f.title(), title_px).0)
        .fold(0.0f32, f32::max);
    let stamp_w = measure_text(&stamp, text_px).0;
    // Views narrower than this look cramped: try the next arrangement.
    let min_view_w = widest_title.max(48.0).max(0.18 * w);
    let too_small = |reason: String| SceneError::LayoutDoesNotFit {
        width_px,
        height_px,
        reason,
    };

    // Arrangements of the colour bar and legend, tried in order: both in a panel on the
    // right (bar above legend, then side by side), then the bar on the right and the legend in
    // rows under the views.
    let mut plan = None;
    for arrangement in [
        Arrangement::Stacked,
        Arrangement::SideBySide,
        Arrangement::LegendBelow,
    ] {
        let legend_below = arrangement == Arrangement::LegendBelow && with_legend;
        // Legend under the views: as many columns as fit in the width left of the bar.
        let below = legend_below.then(|| {
            let one = legend_block(&entries, &style, false);
            let avail = w - 2.0 * margin;
            let cols = ((avail / one.width_px.max(1.0)).floor() as usize).clamp(1, entries.len());
            legend_block_in_columns(&entries, &style, false, cols)
        });
        let below_h = below.as_ref().map_or(0.0, |b| b.height_px + gap);
        let views_y1 = h - margin - bottom_h - gap - below_h;
        let view_h = views_y1 - top;
        let min_bar = (2.0 * measure_text("0", text_px).1).max(0.25 * view_h);
        let bar = map.as_ref().map(|mc| {
            let label = field_label(mc.field);
            let (b, _) = color_bar_block(mc.colormap, mc.min, mc.max, &label, min_bar, &style);
            (b.width_px, b.height_px - min_bar)
        });
        let side_legend = (with_legend && !legend_below)
            .then(|| legend_block(&entries, &style, false))
            .map(|b| (b.width_px, b.height_px));
        let fits_stacked = match (bar, side_legend) {
            (Some((_, extra)), Some((_, lh))) => extra + min_bar + 2.0 * gap + lh <= view_h,
            _ => true,
        };
        if arrangement == Arrangement::Stacked && !fits_stacked {
            continue;
        }
        let panel_w = match (bar, side_legend) {
            (Some((bw, _)), Some((lw, _))) if arrangement == Arrangement::SideBySide => {
                bw + 2.0 * gap + lw
            }
            (Some((bw, _)), Some((lw, _))) => bw.max(lw),
            (Some((bw, _)), None) => bw,
            (None, Some((lw, _))) => lw,
            (None, None) => 0.0,
        };
        let right = if panel_w > 0.0 {
            panel_w + 2.0 * gap
        } else {
            0.0
        };
        let views_x1 = w - margin - right;
        let view_w = (views_x1 - margin - gap * (n - 1.0)) / n;
        let fits = view_w >= min_view_w
            && view_h >= 48.0
            && bar.is_none_or(|(_, extra)| extra + min_bar <= view_h)
            && side_legend.is_none_or(|(_, lh)| lh <= view_h)
            && below
                .as_ref()
                .is_none_or(|b| b.width_px <= w - 2.0 * margin)
            && stamp_w <= w - 2.0 * margin;
        if fits {
            plan = Some(Plan {
                arrangement,
                legend_below: below,
                views_x1,
                views_y1,
                view_w,
                view_h,
                min_bar,
                bar,
                panel_w,
            });
            break;
        }
    }
    let Some(Plan {
        arrangement,
        legend_below,
        views_x1,
        views_y1,
        view_w,
        view_h,
        min_bar,
        bar: bar_probe,
        panel_w,
    }) = plan
    else {
        return Err(too_small(format!(
            "after titles ({widest_title:.0} px wide), time stamp, colour bar and legend, no \
             arrangement leaves views at least {min_view_w:.0} px wide and 48 px tall"
        )));
    };
    let views_x0 = margin;
    let legend = (with_legend && arrangement != Arrangement::LegendBelow)
        .then(|| legend_block(&entries, &style, false));
    let stacked = arrangement == Arrangement::Stacked;
    let layout = Layout {
        views: (0..frames.len())
            .map(|i| {
                snap(Rect::new(
                    views_x0 + i as f32 * (view_w + gap),
                    top,
                    view_w,
                    view_h,
                ))
            })
            .collect(),
        titles_y_px: margin,
        stamp_y_px: margin + title_h + 0.4 * gap,
        bottom_y_px: views_y1 + gap,
        panel: (panel_w > 0.0).then(|| Rect::new(views_x1 + 2.0 * gap, top, panel_w, view_h)),
    };

    let mut figure = Figure::new(width_px, height_px, th.background);
    figure.dpi = fig.size.dpi();
    figure.size_mm = fig.size.size_mm().map(|(w, h)| [w, h]);
    // Time stamp, centred over the views (its row is free across the whole width).
    let stamp_x = (views_x0 + 0.5 * (views_x1 - views_x0 - stamp_w))
        .min(w - margin - stamp_w)
        .max(margin);
    figure.items.push(Item::Text {
        text: stamp.clone(),
        x_px: stamp_x,
        y_px: layout.stamp_y_px,
        size_px: text_px,
        color: th.text_muted,
        anchor: Anchor::TopLeft,
        vertical: false,
    });
    figure.regions.push(Region {
        name: "time stamp".into(),
        rect: Rect::new(stamp_x, layout.stamp_y_px, stamp_w, stamp_h),
        content: false,
    });

    let supersample = fig.supersample.clamp(1, 4);
    for (i, (&frame, rect)) in frames.iter().zip(&layout.views).enumerate() {
        let (vw, vh) = (rect.width_px as u32, rect.height_px as u32);
        let camera_index = match frame {
            Frame::BodyFixed => 0,
            Frame::Inertial => 1,
        };
        let camera = view_camera(view, fig, camera_index, vw, vh);
        let mut scene = figure_scene(view, reports, t_s, opts, frame, sizing);
        add_site_markers_styled(&mut scene, view, &fig.sites, t_s, frame, sizing, &pal);
        let render_opts = RenderOptions::new(vw, vh).with_supersample(supersample);
        match fig.output {
            Output::Raster => {
                let image = renderer.render(&scene, &camera, &render_opts).clone();
                figure.items.push(Item::Raster {
                    x_px: rect.x_px,
                    y_px: rect.y_px,
                    image: std::sync::Arc::new(image),
                });
            }
            Output::Vector => {
                let v = renderer.render_vector(&scene, &camera, &render_opts);
                figure.items.push(Item::Raster {
                    x_px: rect.x_px,
                    y_px: rect.y_px,
                    image: std::sync::Arc::new(v.raster),
                });
                // Cut to the view, as the raster is.
                figure.items.extend(
                    v.items
                        .into_iter()
                        .flat_map(|it| it.translated(rect.x_px, rect.y_px).clipped(*rect)),
                );
            }
        }
        figure.regions.push(Region {
            name: format!("view {}", i + 1),
            rect: *rect,
            content: true,
        });
        // Title over the view.
        let title = frame.title();
        let (tw, _) = measure_text(title, title_px);
        let cx = rect.x_px + 0.5 * rect.width_px;
        figure.items.push(Item::Text {
            text: title.to_string(),
            x_px: cx,
            y_px: layout.titles_y_px,
            size_px: title_px,
            color: th.text,
            anchor: Anchor::TopCenter,
            vertical: false,
        });
        figure.regions.push(Region {
            name: format!("title {}", i + 1),
            rect: Rect::new(cx - 0.5 * tw, layout.titles_y_px, tw, title_h),
            content: false,
        });
        // Under the view: triad on the left, scale bar on the right.
        let y = layout.bottom_y_px;
        let mut used_left = rect.x_px;
        if opts.show_triad {
            let mut block = triad_block(&camera, arm_px, &style);
            if block.height_px > bottom_h {
                // Seen from an odd angle the axes stretch vertically: shorten them.
                let text_h = measure_text("x", text_px).1;
                let arm = (arm_px - (block.height_px - bottom_h)).max(text_h);
                block = triad_block(&camera, arm, &style);
            }
            if block.width_px < 0.45 * rect.width_px && block.height_px <= bottom_h + 0.5 {
                figure.regions.push(Region {
                    name: format!("triad {}", i + 1),
                    rect: Rect::new(rect.x_px, y, block.width_px, block.height_px),
                    content: false,
                });
                used_left += block.width_px + gap;
                figure.items.extend(block.place(rect.x_px, y));
            }
        }
        if opts.show_scale_bar {
            let mpp = camera.metres_per_pixel_at_target();
            if let Some(block) = scale_bar_block(mpp, opts.units.scale_bar_unit(), &style) {
                let x = rect.x_px + rect.width_px - block.width_px;
                if x >= used_left {
                    figure.regions.push(Region {
                        name: format!("scale bar {}", i + 1),
                        rect: Rect::new(x, y, block.width_px, block.height_px),
                        content: false,
                    });
                    figure.items.extend(block.place(x, y));
                }
            }
        }
    }

    // The side panel: colour bar on top and legend under it, or side by side.
    if let Some(panel) = layout.panel {
        let mut legend_at = (panel.x_px, panel.y_px);
        if let (Some(mc), Some((bar_w, bextra))) = (&map, bar_probe) {
            let label = field_label(mc.field);
            let legend_h = match (&legend, stacked) {
                (Some(b), true) => b.height_px + 2.0 * gap,
                _ => 0.0,
            };
            // The bar takes what the legend leaves, at most 60% of the view height.
            let bar_h = (panel.height_px - legend_h - bextra)
                .min(0.6 * panel.height_px)
                .max(min_bar);
            let (block, _) = color_bar_block(mc.colormap, mc.min, mc.max, &label, bar_h, &style);
            figure.regions.push(Region {
                name: "colour bar".into(),
                rect: Rect::new(panel.x_px, panel.y_px, block.width_px, block.height_px),
                content: false,
            });
            legend_at = if stacked {
                (panel.x_px, panel.y_px + block.height_px + 2.0 * gap)
            } else {
                (panel.x_px + bar_w + 2.0 * gap, panel.y_px)
            };
            figure.items.extend(block.place(panel.x_px, panel.y_px));
        }
        if let Some(block) = legend {
            figure.regions.push(Region {
                name: "legend".into(),
                rect: Rect::new(legend_at.0, legend_at.1, block.width_px, block.height_px),
                content: false,
            });
            figure.items.extend(block.place(legend_at.0, legend_at.1));
        }
    }

    if let Some(block) = legend_below {
        let x = views_x0 + 0.5 * (views_x1 - views_x0 - block.width_px).max(0.0);
        let y = views_y1 + gap + bottom_h + gap;
        figure.regions.push(Region {
            name: "legend".into(),
            rect: Rect::new(x, y, block.width_px, block.height_px),
            content: false,
        });
        figure.items.extend(block.place(x, y));
    }

    figure.metadata = figure_metadata(view, t_s, opts, fig, sizing);
    Ok(figure)
}

/// What a figure shows, for its file's metadata: software and caution, time, theme, size and
/// the colour range (and whether the user fixed it).
pub fn figure_metadata(
    view: &BodyView,
    t_s: f64,
    opts: &ViewOptions,
    fig: &FigureOptions,
    sizing: Sizing,
) -> Vec<(String, String)> {
    let mut m = vec![
        (
            "Software".to_string(),
            "Spinfall (research and planning tool, not flight-certified)".to_string(),
        ),
        ("Time".into(), format!("{t_s} s")),
        ("Theme".into(), opts.theme.name().into()),
        (
            "Size".into(),
            format!("{} ({:.3} px per pt)", fig.size, sizing.px_per_pt()),
        ),
    ];
    if let Some(mc) = shown_map(view, opts) {
        m.push((
            "ColorRange".into(),
            format!(
                "{}: {} to {} ({}, colour map {})",
                field_label(mc.field),
                mc.min,
                mc.max,
                if mc.fixed_range {
                    "fixed by the user"
                } else {
                    "range of the data"
                },
                mc.colormap.name()
            ),
        ));
    }
    m
}
