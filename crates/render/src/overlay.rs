//! Decorations as blocks of figure items: colour bar, legend, scale bar, axis triad, text.
//!
//! Each builder returns a [`Block`]: items laid out from its own top-left corner with the size
//! it needs, so a layout can measure blocks first and place them where nothing overlaps. The
//! scene's [`Overlay`]s (the app's views) are drawn through the same builders.

use nalgebra::Vector3;

use crate::camera::Camera;
use crate::color::Color;
use crate::colormap::Colormap;
use crate::figure::Item;
use crate::scene::{Anchor, Corner, MarkerShape, Overlay, Rect};
use crate::style::{Sizing, Style, pt};
use crate::text::measure_text;
use crate::theme::Theme;
use crate::ticks::nice_ticks;

/// Items laid out from `(0, 0)` and the size they take.
#[derive(Clone, Debug, Default)]
pub struct Block {
    /// The items, relative to the block's top-left corner.
    pub items: Vec<Item>,
    /// Width, pixels.
    pub width_px: f32,
    /// Height, pixels.
    pub height_px: f32,
}

impl Block {
    /// The items moved so the block's top-left corner is at `(x_px, y_px)`.
    pub fn place(self, x_px: f32, y_px: f32) -> Vec<Item> {
        self.items
            .into_iter()
            .map(|i| i.translated(x_px, y_px))
            .collect()
    }
}

/// What a legend entry shows next to its text.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Swatch {
    /// A solid line.
    Line,
    /// A dashed line.
    Dashed,
    /// A marker.
    Marker(MarkerShape),
}

/// One legend entry.
#[derive(Clone, Debug, PartialEq)]
pub struct LegendEntry {
    /// Swatch colour.
    pub color: Color,
    /// Text.
    pub text: String,
    /// Swatch kind.
    pub swatch: Swatch,
}

impl LegendEntry {
    /// An entry.
    pub fn new(color: Color, text: impl Into<String>, swatch: Swatch) -> LegendEntry {
        LegendEntry {
            color,
            text: text.into(),
            swatch,
        }
    }
}

/// Formats a value with about three significant digits (tick labels of the app's plots).
pub fn format_value(v: f64) -> String {
    if v == 0.0 {
        return "0".to_string();
    }
    if !v.is_finite() {
        return format!("{v}");
    }
    let a = v.abs();
    if !(1e-3..1e6).contains(&a) {
        return format!("{v:.2e}");
    }
    let digits = (3 - a.log10().floor() as i32 - 1).clamp(0, 6) as usize;
    let s = format!("{v:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A single line (or lines) of text as a block.
pub fn text_block(text: &str, size_px: f32, color: Color) -> Block {
    let (w, h) = measure_text(text, size_px);
    Block {
        items: vec![Item::Text {
            text: text.to_string(),
            x_px: 0.0,
            y_px: 0.0,
            size_px,
            color,
            anchor: Anchor::TopLeft,
            vertical: false,
        }],
        width_px: w,
        height_px: h,
    }
}

/// Outline of a rectangle as four thin filled rectangles (crisp in raster and vector output).
pub(crate) fn frame_items(r: Rect, t: f32, color: Color) -> [Item; 4] {
    let rect = |x, y, w, h| Item::Rect {
        rect: Rect::new(x, y, w, h),
        fill: color,
    };
    [
        rect(r.x_px - t, r.y_px - t, r.width_px + 2.0 * t, t),
        rect(r.x_px - t, r.y_px + r.height_px, r.width_px + 2.0 * t, t),
        rect(r.x_px - t, r.y_px, t, r.height_px),
        rect(r.x_px + r.width_px, r.y_px, t, r.height_px),
    ]
}

/// A vertical colour bar: its title (with unit) on top, the bar `bar_height_px` tall, round
/// tick values to its right. Returns the block and the bar's offset from the block's top.
pub fn color_bar_block(
    colormap: Colormap,
    min: f64,
    max: f64,
    label: &str,
    bar_height_px: f32,
    style: &Style,
) -> (Block, f32) {
    let th = &style.theme;
    let (text_px, label_px) = (style.px(pt::TEXT), style.px(pt::LABEL));
    let bar_w = style.px(pt::COLOR_BAR);
    let tick = style.px(pt::TICK);
    let rule = style.px(pt::RULE).max(1.0);
    let gap = style.px(2.0);
    let (title_w, title_h) = measure_text(label, label_px);
    let (_, text_h) = measure_text("0", text_px);
    let bar_top = title_h + gap + 0.5 * text_h;
    let bar_h = bar_height_px.max(2.0 * text_h);
    let mut items = vec![Item::Text {
        text: label.to_string(),
        x_px: 0.0,
        y_px: 0.0,
        size_px: label_px,
        color: th.text,
        anchor: Anchor::TopLeft,
        vertical: false,
    }];
    let bar = Rect::new(0.0, bar_top, bar_w, bar_h);
    items.push(Item::Gradient {
        rect: bar,
        colormap,
        vertical: true,
    });
    items.extend(frame_items(bar, rule, th.rule));
    let max_ticks = ((bar_h / (2.2 * text_h)).floor() as usize).clamp(2, 9);
    let ticks = nice_ticks(min, max, max_ticks);
    let mut label_w: f32 = 0.0;
    let span = max - min;
    for (v, text) in ticks.values.iter().zip(ticks.labels()) {
        let f = if span > 0.0 { (v - min) / span } else { 0.5 };
        let y = bar_top + bar_h * (1.0 - f as f32);
        items.push(Item::Rect {
            rect: Rect::new(bar_w, y - 0.5 * rule, tick, rule),
            fill: th.rule,
        });
        label_w = label_w.max(measure_text(&text, text_px).0);
        items.push(Item::Text {
            text,
            x_px: bar_w + tick + gap,
            y_px: y,
            size_px: text_px,
            color: th.text,
            anchor: Anchor::CenterLeft,
            vertical: false,
        });
    }
    let width = title_w.max(bar_w + tick + gap + label_w) + rule;
    let height = bar_top + bar_h + 0.5 * text_h + rule;
    (
        Block {
            items,
            width_px: width,
            height_px: height,
        },
        bar_top,
    )
}

/// A legend: swatch and text per entry, one entry per row, on a translucent panel when
/// `panel` is set (for legends drawn over content).
pub fn legend_block(entries: &[LegendEntry], style: &Style, panel: bool) -> Block {
    legend_block_in_columns(entries, style, panel, 1)
}

/// A legend in `columns` columns (filled row by row).
pub fn legend_block_in_columns(
    entries: &[LegendEntry],
    style: &Style,
    panel: bool,
    columns: usize,
) -> Block {
    if entries.is_empty() {
        return Block::default();
    }
    let columns = columns.clamp(1, entries.len());
    let rows = entries.len().div_ceil(columns);
    let th = &style.theme;
    let text_px = style.px(pt::TEXT);
    let swatch_w = style.px(16.0);
    let pad = style.px(3.0);
    let (_, text_h) = measure_text("Ag", text_px);
    let row_h = text_h * 1.25;
    let text_w = entries
        .iter()
        .map(|e| measure_text(&e.text, text_px).0)
        .fold(0.0f32, f32::max);
    let col_w = swatch_w + 2.0 * pad + text_w + 3.0 * pad;
    let (w, h) = (
        pad + col_w * columns as f32 - 2.0 * pad,
        row_h * rows as f32 + 2.0 * pad,
    );
    let mut items = Vec::new();
    if panel {
        items.push(Item::Rect {
            rect: Rect::new(0.0, 0.0, w, h),
            fill: th.panel,
        });
    }
    let line_w = style.px(pt::DATA_LINE).max(1.0);
    for (i, e) in entries.iter().enumerate() {
        let (row, col) = (i / columns, i % columns);
        let cy = pad + row_h * (row as f32 + 0.5);
        let x0 = pad + col as f32 * col_w;
        let x1 = x0 + swatch_w;
        match e.swatch {
            Swatch::Line | Swatch::Dashed => items.push(Item::Line {
                points: vec![[x0, cy], [x1, cy]],
                color: e.color,
                width_px: line_w,
                dash: (e.swatch == Swatch::Dashed).then(|| (style.px(3.5), style.px(2.5))),
                dash_offset_px: 0.0,
            }),
            Swatch::Marker(shape) => items.push(Item::Marker {
                x_px: 0.5 * (x0 + x1),
                y_px: cy,
                shape,
                size_px: style.px(5.5),
                stroke_px: style.px(0.9).max(1.0),
                color: e.color,
            }),
        }
        items.push(Item::Text {
            text: e.text.clone(),
            x_px: x1 + 2.0 * pad,
            y_px: cy,
            size_px: text_px,
            color: th.text,
            anchor: Anchor::CenterLeft,
            vertical: false,
        });
    }
    Block {
        items,
        width_px: w,
        height_px: h,
    }
}

/// The round length (1, 2 or 5 times a power of ten) nearest below `target_m`.
pub fn round_length_m(target_m: f64) -> f64 {
    if !(target_m.is_finite() && target_m > 0.0) {
        return 1.0;
    }
    let p = 10f64.powf(target_m.log10().floor());
    let m = target_m / p;
    let k = if m >= 5.0 {
        5.0
    } else if m >= 2.0 {
        2.0
    } else {
        1.0
    };
    k * p
}

fn length_label(len_m: f64, unit_label: &str) -> String {
    if !unit_label.is_empty() {
        return format!("{} {}", format_value(len_m), unit_label);
    }
    if len_m >= 1000.0 {
        format!("{} km", format_value(len_m / 1000.0))
    } else {
        format!("{} m", format_value(len_m))
    }
}

/// A scale bar of a round length about 74 pt long for `metres_per_px` (at the camera target's
/// depth), with its length written above. `None` when the scale is not finite.
pub fn scale_bar_block(metres_per_px: f64, unit_label: &str, style: &Style) -> Option<Block> {
    if !(metres_per_px.is_finite() && metres_per_px > 0.0) {
        return None;
    }
    let th = &style.theme;
    let text_px = style.px(pt::TEXT);
    let len_m = round_length_m(style.px(74.0) as f64 * metres_per_px);
    let len_px = (len_m / metres_per_px) as f32;
    if !(len_px.is_finite() && len_px < 1.0e6) {
        return None;
    }
    let label = length_label(len_m, unit_label);
    let (tw, thh) = measure_text(&label, text_px);
    let bar_t = style.px(1.8).max(1.0);
    let end_h = style.px(4.0);
    let w = len_px.max(tw);
    let x0 = 0.5 * (w - len_px);
    let bar_y = thh + style.px(2.0) + end_h - bar_t;
    let items = vec![
        Item::Text {
            text: label,
            x_px: 0.5 * w,
            y_px: 0.0,
            size_px: text_px,
            color: th.text,
            anchor: Anchor::TopCenter,
            vertical: false,
        },
        Item::Rect {
            rect: Rect::new(x0, bar_y, len_px, bar_t),
            fill: th.rule,
        },
        Item::Rect {
            rect: Rect::new(x0, bar_y + bar_t - end_h, bar_t, end_h),
            fill: th.rule,
        },
        Item::Rect {
            rect: Rect::new(x0 + len_px - bar_t, bar_y + bar_t - end_h, bar_t, end_h),
            fill: th.rule,
        },
    ];
    Some(Block {
        items,
        width_px: w,
        height_px: bar_y + bar_t,
    })
}

/// An axis triad: the world x, y, z axes as `camera` sees them, each `arm_px` long seen
/// side-on, with their letters.
pub fn triad_block(camera: &Camera, arm_px: f32, style: &Style) -> Block {
    let th = &style.theme;
    let arm = if arm_px.is_finite() {
        arm_px.clamp(4.0, 2000.0)
    } else {
        40.0
    };
    let text_px = style.px(pt::TEXT);
    let (_, text_h) = measure_text("x", text_px);
    let right = camera.right_direction();
    let up = camera.up_on_screen();
    let view = camera.view_direction();
    let mut axes: Vec<(f64, f32, f32, Color, &str)> = [
        (Vector3::x(), th.axes[0], "x"),
        (Vector3::y(), th.axes[1], "y"),
        (Vector3::z(), th.axes[2], "z"),
    ]
    .iter()
    .map(|(a, c, l)| {
        (
            a.dot(&view),
            (a.dot(&right) as f32) * arm,
            -(a.dot(&up) as f32) * arm,
            *c,
            *l,
        )
    })
    .collect();
    // The axis pointing farthest away first.
    axes.sort_by(|a, b| b.0.total_cmp(&a.0));
    let mut items = Vec::new();
    let half_text = 0.5 * text_h;
    let k = 0.55 * text_h;
    // Tight box around the origin, the axis ends and their letters.
    let (mut x0, mut y0, mut x1, mut y1) = (-half_text, -half_text, half_text, half_text);
    for (_, dx, dy, c, l) in axes {
        items.push(Item::Line {
            points: vec![[0.0, 0.0], [dx, dy]],
            color: c,
            width_px: style.px(1.5).max(1.0),
            dash: None,
            dash_offset_px: 0.0,
        });
        let n = (dx * dx + dy * dy).sqrt().max(1e-3);
        let (lx, ly) = (dx + k * dx / n, dy + k * dy / n);
        x0 = x0.min(lx - half_text);
        x1 = x1.max(lx + half_text);
        y0 = y0.min(ly - half_text);
        y1 = y1.max(ly + half_text);
        items.push(Item::Text {
            text: l.to_string(),
            x_px: lx,
            y_px: ly,
            size_px: text_px,
            color: c,
            anchor: Anchor::Center,
            vertical: false,
        });
    }
    Block {
        items: items.into_iter().map(|i| i.translated(-x0, -y0)).collect(),
        width_px: x1 - x0,
        height_px: y1 - y0,
    }
}

/// The theme whose text reads on `background` (the app's views pick their overlay colours so).
pub(crate) fn theme_for_background(background: Color) -> Theme {
    let l =
        0.2126 * background.r as f32 + 0.7152 * background.g as f32 + 0.0722 * background.b as f32;
    let mut t = if l > 140.0 {
        Theme::light()
    } else {
        Theme::dark()
    };
    t.background = background;
    t
}

fn corner_origin(
    w_img: f32,
    h_img: f32,
    corner: Corner,
    margin: f32,
    w: f32,
    h: f32,
) -> (f32, f32) {
    match corner {
        Corner::TopLeft => (margin, margin),
        Corner::TopRight => (w_img - margin - w, margin),
        Corner::BottomLeft => (margin, h_img - margin - h),
        Corner::BottomRight => (w_img - margin - w, h_img - margin - h),
    }
}

/// The scene's overlays as figure items for an image of `width_px x height_px` seen by
/// `camera` (whose viewport has that size), at the app's screen scale.
pub(crate) fn overlay_items(
    overlays: &[Overlay],
    camera: &Camera,
    width_px: u32,
    height_px: u32,
    background: Color,
) -> Vec<Item> {
    let style = Style::new(Sizing::screen(), theme_for_background(background));
    let (w, h) = (width_px as f32, height_px as f32);
    let margin = style.px(pt::MARGIN);
    let mut items = Vec::new();
    let at_corner = |block: Block, corner: Corner, items: &mut Vec<Item>| {
        let (x, y) = corner_origin(w, h, corner, margin, block.width_px, block.height_px);
        items.extend(block.place(x, y));
    };
    for o in overlays {
        match o {
            Overlay::Text {
                text,
                x_px,
                y_px,
                size_px,
                color,
                anchor,
            } => items.push(Item::Text {
                text: text.clone(),
                x_px: *x_px,
                y_px: *y_px,
                size_px: *size_px,
                color: *color,
                anchor: *anchor,
                vertical: false,
            }),
            Overlay::ColorBar {
                colormap,
                min,
                max,
                label,
                rect,
                ..
            } => {
                let (block, bar_top) =
                    color_bar_block(*colormap, *min, *max, label, rect.height_px, &style);
                items.extend(block.place(rect.x_px, rect.y_px - bar_top));
            }
            Overlay::ScaleBar { unit_label, corner } => {
                let mpp = camera.metres_per_pixel_at_target() * camera.height_px() as f64
                    / height_px.max(1) as f64;
                if let Some(b) = scale_bar_block(mpp, unit_label, &style) {
                    at_corner(b, *corner, &mut items);
                }
            }
            Overlay::AxisTriad { corner, size_px } => {
                at_corner(triad_block(camera, *size_px, &style), *corner, &mut items)
            }
            Overlay::Legend { entries, corner } => {
                at_corner(legend_block(entries, &style, true), *corner, &mut items)
            }
            Overlay::Panel { rect, fill } => items.push(Item::Rect {
                rect: *rect,
                fill: *fill,
            }),
        }
    }
    items
}
