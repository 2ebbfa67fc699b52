//! 2D overlays: text, colour bar, scale bar, axis triad, legend, panels.

use crate::camera::Camera;
use crate::color::Color;
use crate::colormap::Colormap;
use crate::image::Image;
use crate::scene::{Anchor, Corner, Overlay, Rect};
use crate::text::GlyphCache;

/// Margin from the image edge for corner-placed overlays, pixels.
const MARGIN_PX: f32 = 12.0;
const LABEL_PX: f32 = 13.0;

/// Draws every overlay of the scene in order onto `img`.
pub(crate) fn draw_overlays(
    img: &mut Image,
    overlays: &[Overlay],
    camera: &Camera,
    glyphs: &mut GlyphCache,
    text_color: Color,
) {
    for o in overlays {
        match o {
            Overlay::Text {
                text,
                x_px,
                y_px,
                size_px,
                color,
                anchor,
            } => glyphs.draw(img, text, *x_px, *y_px, *size_px, *color, *anchor),
            Overlay::ColorBar {
                colormap,
                min,
                max,
                label,
                ticks,
                rect,
            } => color_bar(
                img, glyphs, *colormap, *min, *max, label, *ticks, *rect, text_color,
            ),
            Overlay::ScaleBar { unit_label, corner } => {
                scale_bar(img, glyphs, camera, unit_label, *corner, text_color)
            }
            Overlay::AxisTriad { corner, size_px } => {
                axis_triad(img, glyphs, camera, *corner, *size_px)
            }
            Overlay::Legend { entries, corner } => {
                legend(img, glyphs, entries, *corner, text_color)
            }
            Overlay::Panel { rect, fill } => img.fill_rect(
                rect.x_px,
                rect.y_px,
                rect.x_px + rect.width_px,
                rect.y_px + rect.height_px,
                *fill,
            ),
        }
    }
}

/// A text colour readable on `background` (black or white by luminance).
pub(crate) fn contrast_text(background: Color) -> Color {
    let l =
        0.2126 * background.r as f32 + 0.7152 * background.g as f32 + 0.0722 * background.b as f32;
    if l > 140.0 {
        Color::rgb(20, 20, 20)
    } else {
        Color::rgb(235, 235, 235)
    }
}

/// Formats a tick value with few significant digits.
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

/// Colour of the bar at relative height `t` (0 = bottom = min).
fn bar_color(colormap: Colormap, t: f64) -> Color {
    colormap.map(t)
}

#[allow(clippy::too_many_arguments)]
fn color_bar(
    img: &mut Image,
    glyphs: &mut GlyphCache,
    colormap: Colormap,
    min: f64,
    max: f64,
    label: &str,
    ticks: usize,
    rect: Rect,
    text_color: Color,
) {
    let (x0, y0) = (rect.x_px.round(), rect.y_px.round());
    let (w, h) = (
        rect.width_px.round().max(1.0),
        rect.height_px.round().max(2.0),
    );
    // Nothing sensible to draw for rectangles far outside any image or absurdly large.
    let sane = |v: f32| v.is_finite() && v.abs() <= 1.0e6;
    if !(sane(x0) && sane(y0) && sane(w) && sane(h)) {
        return;
    }
    let rows = h as i64;
    // Only the rows and columns inside the image are visited.
    let r_lo = (-(y0 as i64)).clamp(0, rows);
    let r_hi = (img.height as i64 - y0 as i64).clamp(0, rows);
    let c_lo = (-(x0 as i64)).clamp(0, w as i64);
    let c_hi = (img.width as i64 - x0 as i64).clamp(0, w as i64);
    for r in r_lo..r_hi {
        // Top row is max, bottom row is min.
        let t = if rows > 1 {
            1.0 - r as f64 / (rows - 1) as f64
        } else {
            0.5
        };
        let c = bar_color(colormap, t);
        for x in c_lo..c_hi {
            img.blend(x0 as i64 + x, y0 as i64 + r, c, 1.0);
        }
    }
    // Outline.
    let frame = text_color.with_alpha(160);
    img.fill_rect(x0 - 1.0, y0 - 1.0, x0 + w + 1.0, y0, frame);
    img.fill_rect(x0 - 1.0, y0 + h, x0 + w + 1.0, y0 + h + 1.0, frame);
    img.fill_rect(x0 - 1.0, y0, x0, y0 + h, frame);
    img.fill_rect(x0 + w, y0, x0 + w + 1.0, y0 + h, frame);
    let n = ticks.clamp(2, 64);
    for i in 0..n {
        let f = i as f64 / (n - 1) as f64;
        let v = min + (max - min) * f;
        let y = y0 + (h - 1.0) * (1.0 - f as f32) + 0.5;
        img.fill_rect(x0 + w, y - 0.5, x0 + w + 5.0, y + 0.5, text_color);
        glyphs.draw(
            img,
            &format_value(v),
            x0 + w + 8.0,
            y,
            LABEL_PX,
            text_color,
            Anchor::CenterLeft,
        );
    }
    glyphs.draw(
        img,
        label,
        x0,
        y0 - 8.0,
        LABEL_PX + 1.0,
        text_color,
        Anchor::BottomLeft,
    );
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

fn corner_origin(img: &Image, corner: Corner, w: f32, h: f32) -> (f32, f32) {
    let (iw, ih) = (img.width as f32, img.height as f32);
    match corner {
        Corner::TopLeft => (MARGIN_PX, MARGIN_PX),
        Corner::TopRight => (iw - MARGIN_PX - w, MARGIN_PX),
        Corner::BottomLeft => (MARGIN_PX, ih - MARGIN_PX - h),
        Corner::BottomRight => (iw - MARGIN_PX - w, ih - MARGIN_PX - h),
    }
}

fn scale_bar(
    img: &mut Image,
    glyphs: &mut GlyphCache,
    camera: &Camera,
    unit_label: &str,
    corner: Corner,
    text_color: Color,
) {
    // Metres per output pixel (the camera may have been set for another size).
    let mpp = camera.metres_per_pixel_at_target() * camera.height_px() as f64 / img.height as f64;
    if !(mpp.is_finite() && mpp > 0.0) {
        return;
    }
    let len_m = round_length_m(120.0 * mpp);
    let len_px = (len_m / mpp) as f32;
    let label = length_label(len_m, unit_label);
    let ts = glyphs.measure(&label, LABEL_PX);
    let total_h = ts.height + 10.0;
    let (x, y) = corner_origin(img, corner, len_px.max(ts.width), total_h);
    let bar_y = y + total_h - 4.0;
    img.fill_rect(x, bar_y, x + len_px, bar_y + 3.0, text_color);
    img.fill_rect(x, bar_y - 6.0, x + 2.0, bar_y + 3.0, text_color);
    img.fill_rect(
        x + len_px - 2.0,
        bar_y - 6.0,
        x + len_px,
        bar_y + 3.0,
        text_color,
    );
    glyphs.draw(
        img,
        &label,
        x + 0.5 * len_px,
        bar_y - 8.0,
        LABEL_PX,
        text_color,
        Anchor::BottomCenter,
    );
}

/// Draws a thick anti-aliased-free 2D line (used by the triad and legend).
pub(crate) fn line_2d(img: &mut Image, x0: f32, y0: f32, x1: f32, y1: f32, width: f32, c: Color) {
    let (dx, dy) = (x1 - x0, y1 - y0);
    let len = (dx * dx + dy * dy).sqrt();
    let hw = (0.5 * width).max(0.5);
    let (xa, xb) = (
        (x0.min(x1) - hw).floor() as i64,
        (x0.max(x1) + hw).ceil() as i64,
    );
    let (ya, yb) = (
        (y0.min(y1) - hw).floor() as i64,
        (y0.max(y1) + hw).ceil() as i64,
    );
    for y in ya..=yb {
        for x in xa..=xb {
            let (px, py) = (x as f32 + 0.5 - x0, y as f32 + 0.5 - y0);
            let t = if len > 0.0 {
                ((px * dx + py * dy) / (len * len)).clamp(0.0, 1.0)
            } else {
                0.0
            };
            let (qx, qy) = (px - t * dx, py - t * dy);
            let d = (qx * qx + qy * qy).sqrt();
            // One-pixel soft edge.
            let cov = (hw + 0.5 - d).clamp(0.0, 1.0);
            if cov > 0.0 {
                img.blend(x, y, c, cov);
            }
        }
    }
}

fn axis_triad(
    img: &mut Image,
    glyphs: &mut GlyphCache,
    camera: &Camera,
    corner: Corner,
    size_px: f32,
) {
    let size = if size_px.is_finite() {
        size_px.clamp(8.0, 400.0)
    } else {
        40.0
    };
    let box_px = 2.0 * size + 16.0;
    let (ox, oy) = corner_origin(img, corner, box_px, box_px);
    let (cx, cy) = (ox + 0.5 * box_px, oy + 0.5 * box_px);
    let right = camera.right_direction();
    let up = camera.up_on_screen();
    let view = camera.view_direction();
    let mut axes: Vec<(f64, f32, f32, Color, &str)> = [
        (nalgebra::Vector3::x(), Color::RED, "x"),
        (nalgebra::Vector3::y(), Color::GREEN, "y"),
        (nalgebra::Vector3::z(), Color::BLUE, "z"),
    ]
    .iter()
    .map(|(a, c, l)| {
        (
            a.dot(&view),
            (a.dot(&right) as f32) * size,
            -(a.dot(&up) as f32) * size,
            *c,
            *l,
        )
    })
    .collect();
    // Draw the axis pointing farthest away first.
    axes.sort_by(|a, b| b.0.total_cmp(&a.0));
    for (_, dx, dy, c, l) in axes {
        line_2d(img, cx, cy, cx + dx, cy + dy, 2.5, c);
        let n = (dx * dx + dy * dy).sqrt().max(1e-3);
        glyphs.draw(
            img,
            l,
            cx + dx + 8.0 * dx / n,
            cy + dy + 8.0 * dy / n,
            LABEL_PX,
            c,
            Anchor::Center,
        );
    }
}

fn legend(
    img: &mut Image,
    glyphs: &mut GlyphCache,
    entries: &[(Color, String, bool)],
    corner: Corner,
    text_color: Color,
) {
    if entries.is_empty() {
        return;
    }
    let swatch = 26.0;
    let row_h = LABEL_PX * 1.5;
    let text_w = entries
        .iter()
        .map(|(_, t, _)| glyphs.measure(t, LABEL_PX).width)
        .fold(0.0f32, f32::max);
    let (w, h) = (
        swatch + 14.0 + text_w + 8.0,
        row_h * entries.len() as f32 + 8.0,
    );
    let (x, y) = corner_origin(img, corner, w, h);
    let panel = if text_color.r > 128 {
        Color::rgba(0, 0, 0, 110)
    } else {
        Color::rgba(255, 255, 255, 150)
    };
    img.fill_rect(x, y, x + w, y + h, panel);
    for (i, (c, t, dashed)) in entries.iter().enumerate() {
        let cy = y + 4.0 + row_h * (i as f32 + 0.5);
        if *dashed {
            let mut sx = x + 6.0;
            while sx < x + 6.0 + swatch {
                line_2d(img, sx, cy, (sx + 5.0).min(x + 6.0 + swatch), cy, 2.0, *c);
                sx += 9.0;
            }
        } else {
            line_2d(img, x + 6.0, cy, x + 6.0 + swatch, cy, 2.0, *c);
        }
        glyphs.draw(
            img,
            t,
            x + swatch + 14.0,
            cy,
            LABEL_PX,
            text_color,
            Anchor::CenterLeft,
        );
    }
}
