//! [`Figure`]: a 2D display list in output pixels (embedded rasters, rectangles, lines,
//! polygons, markers, text, colour gradients) with two back ends: [`Figure::to_image`]
//! rasterizes it, [`crate::write_svg`] writes it as SVG with the same geometry.

use std::sync::Arc;

use crate::color::Color;
use crate::colormap::Colormap;
use crate::image::Image;
use crate::scene::{Anchor, MarkerShape, Rect};
use crate::text::GlyphCache;

/// One thing drawn on a figure, in output pixels from the top-left.
#[derive(Clone, Debug)]
pub enum Item {
    /// A raster image placed with its top-left pixel at `(x_px, y_px)` (rounded), one image
    /// pixel per output pixel.
    Raster {
        /// Left edge.
        x_px: f32,
        /// Top edge.
        y_px: f32,
        /// The pixels.
        image: Arc<Image>,
    },
    /// A filled rectangle.
    Rect {
        /// The rectangle.
        rect: Rect,
        /// Fill (alpha blended).
        fill: Color,
    },
    /// An open polyline with round joins and caps.
    Line {
        /// Points.
        points: Vec<[f32; 2]>,
        /// Colour (alpha blended).
        color: Color,
        /// Width, pixels.
        width_px: f32,
        /// Dash pattern `(on_px, off_px)`, or solid.
        dash: Option<(f32, f32)>,
        /// Length of the pattern already used before the first point, pixels.
        dash_offset_px: f32,
    },
    /// A filled polygon (even-odd rule).
    Polygon {
        /// Corners.
        points: Vec<[f32; 2]>,
        /// Fill.
        fill: Color,
    },
    /// A marker centred on a point.
    Marker {
        /// Centre x.
        x_px: f32,
        /// Centre y.
        y_px: f32,
        /// Shape.
        shape: MarkerShape,
        /// Full size (diameter), pixels.
        size_px: f32,
        /// Stroke width of outlined shapes, pixels.
        stroke_px: f32,
        /// Colour.
        color: Color,
    },
    /// Text in the bundled DejaVu Sans.
    Text {
        /// The text (`\n` starts a new line).
        text: String,
        /// Anchor point x.
        x_px: f32,
        /// Anchor point y.
        y_px: f32,
        /// Font size (em), pixels.
        size_px: f32,
        /// Colour.
        color: Color,
        /// Placement of the text box relative to the anchor point (of the unrotated text).
        anchor: Anchor,
        /// Rotated 90 degrees counter-clockwise (reading bottom to top) about the anchor.
        vertical: bool,
    },
    /// A rectangle filled with a colour map, low end at the bottom (vertical) or left.
    Gradient {
        /// The rectangle.
        rect: Rect,
        /// The colour map.
        colormap: Colormap,
        /// Vertical (bottom = 0) or horizontal (left = 0).
        vertical: bool,
    },
}

impl Item {
    /// The same item moved by `(dx, dy)` pixels.
    pub fn translated(mut self, dx: f32, dy: f32) -> Item {
        let mv = |p: &mut Vec<[f32; 2]>| {
            for q in p {
                q[0] += dx;
                q[1] += dy;
            }
        };
        match &mut self {
            Item::Raster { x_px, y_px, .. }
            | Item::Marker { x_px, y_px, .. }
            | Item::Text { x_px, y_px, .. } => {
                *x_px += dx;
                *y_px += dy;
            }
            Item::Rect { rect, .. } | Item::Gradient { rect, .. } => {
                rect.x_px += dx;
                rect.y_px += dy;
            }
            Item::Line { points, .. } | Item::Polygon { points, .. } => mv(points),
        }
        self
    }
}

impl Item {
    /// The parts of the item inside `clip`: lines are cut at its edges (keeping their dash
    /// phase), polygons clipped (Sutherland–Hodgman), markers kept when their centre is
    /// inside; rasters, rectangles, text and gradients are kept as they are.
    pub fn clipped(self, clip: Rect) -> Vec<Item> {
        let (x0, y0) = (clip.x_px, clip.y_px);
        let (x1, y1) = (x0 + clip.width_px, y0 + clip.height_px);
        let inside = |p: [f32; 2]| p[0] >= x0 && p[0] <= x1 && p[1] >= y0 && p[1] <= y1;
        match self {
            Item::Line {
                points,
                color,
                width_px,
                dash,
                dash_offset_px,
            } => {
                let mut out = Vec::new();
                let mut cur: Vec<[f32; 2]> = Vec::new();
                let mut cur_offset = dash_offset_px;
                let mut along = dash_offset_px;
                let push = |cur: &mut Vec<[f32; 2]>, off: f32, out: &mut Vec<Item>| {
                    if cur.len() >= 2 {
                        out.push(Item::Line {
                            points: std::mem::take(cur),
                            color,
                            width_px,
                            dash,
                            dash_offset_px: off,
                        });
                    }
                    cur.clear();
                };
                for w in points.windows(2) {
                    let (a, b) = (w[0], w[1]);
                    let seg = ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2)).sqrt();
                    match clip_segment(a, b, x0, y0, x1, y1) {
                        Some((t0, t1)) => {
                            let at = |t: f32| [a[0] + (b[0] - a[0]) * t, a[1] + (b[1] - a[1]) * t];
                            if t0 > 0.0 || cur.is_empty() {
                                push(&mut cur, cur_offset, &mut out);
                                cur_offset = along + t0 * seg;
                                cur.push(at(t0));
                            }
                            cur.push(at(t1));
                            if t1 < 1.0 {
                                push(&mut cur, cur_offset, &mut out);
                            }
                        }
                        None => push(&mut cur, cur_offset, &mut out),
                    }
                    along += seg;
                }
                push(&mut cur, cur_offset, &mut out);
                out
            }
            Item::Polygon { points, fill } => {
                let clipped = clip_polygon(points, x0, y0, x1, y1);
                if clipped.len() >= 3 {
                    vec![Item::Polygon {
                        points: clipped,
                        fill,
                    }]
                } else {
                    Vec::new()
                }
            }
            Item::Marker { x_px, y_px, .. } if !inside([x_px, y_px]) => Vec::new(),
            other => vec![other],
        }
    }
}

/// Liang–Barsky: the parameter range of segment `a`-`b` inside the rectangle, if any.
fn clip_segment(
    a: [f32; 2],
    b: [f32; 2],
    x0: f32,
    y0: f32,
    x1: f32,
    y1: f32,
) -> Option<(f32, f32)> {
    let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
    let (mut t0, mut t1) = (0.0f32, 1.0f32);
    for (p, q) in [
        (-dx, a[0] - x0),
        (dx, x1 - a[0]),
        (-dy, a[1] - y0),
        (dy, y1 - a[1]),
    ] {
        if p == 0.0 {
            if q < 0.0 {
                return None;
            }
        } else {
            let r = q / p;
            if p < 0.0 {
                t0 = t0.max(r);
            } else {
                t1 = t1.min(r);
            }
        }
    }
    (t0 <= t1 && t0.is_finite() && t1.is_finite()).then_some((t0, t1))
}

/// Sutherland–Hodgman polygon clipping against an axis-aligned rectangle.
fn clip_polygon(points: Vec<[f32; 2]>, x0: f32, y0: f32, x1: f32, y1: f32) -> Vec<[f32; 2]> {
    let mut poly = points;
    // (axis, bound, keep-greater)
    for (axis, bound, greater) in [(0, x0, true), (0, x1, false), (1, y0, true), (1, y1, false)] {
        let keep = |p: &[f32; 2]| {
            if greater {
                p[axis] >= bound
            } else {
                p[axis] <= bound
            }
        };
        let mut out = Vec::with_capacity(poly.len() + 2);
        for i in 0..poly.len() {
            let (a, b) = (poly[(i + poly.len() - 1) % poly.len()], poly[i]);
            let cross = |a: [f32; 2], b: [f32; 2]| {
                let t = (bound - a[axis]) / (b[axis] - a[axis]);
                [a[0] + (b[0] - a[0]) * t, a[1] + (b[1] - a[1]) * t]
            };
            match (keep(&a), keep(&b)) {
                (true, true) => out.push(b),
                (true, false) => out.push(cross(a, b)),
                (false, true) => {
                    out.push(cross(a, b));
                    out.push(b);
                }
                (false, false) => {}
            }
        }
        poly = out;
        if poly.is_empty() {
            break;
        }
    }
    poly
}

/// A named area of a figure's layout (for tests and for callers that place more content).
#[derive(Clone, Debug, PartialEq)]
pub struct Region {
    /// What it holds ("view 1", "colour bar", "legend", "title", ...).
    pub name: String,
    /// Where, output pixels.
    pub rect: Rect,
    /// Whether 3D content (body, traces) is drawn there; decorations never are.
    pub content: bool,
}

/// A figure: size, background, items drawn in order, layout regions and metadata.
#[derive(Clone, Debug, Default)]
pub struct Figure {
    /// Width, pixels.
    pub width_px: u32,
    /// Height, pixels.
    pub height_px: u32,
    /// Background colour.
    pub background: Color,
    /// Items in drawing order.
    pub items: Vec<Item>,
    /// Layout regions (not drawn).
    pub regions: Vec<Region>,
    /// `(key, value)` pairs written into the file (PNG text chunks, SVG metadata).
    pub metadata: Vec<(String, String)>,
    /// Print resolution, when the figure has a physical size.
    pub dpi: Option<f64>,
    /// Physical width and height in millimetres, when the figure has one (the SVG's size).
    pub size_mm: Option<[f64; 2]>,
}

impl Figure {
    /// An empty figure.
    pub fn new(width_px: u32, height_px: u32, background: Color) -> Figure {
        Figure {
            width_px,
            height_px,
            background,
            ..Figure::default()
        }
    }

    /// Rasterizes the figure.
    pub fn to_image(&self) -> Image {
        let mut img = Image::new(self.width_px.max(1), self.height_px.max(1), self.background);
        let mut glyphs = GlyphCache::default();
        draw_items(&mut img, &self.items, &mut glyphs);
        img
    }
}

/// Draws `items` onto `img` in order.
pub(crate) fn draw_items(img: &mut Image, items: &[Item], glyphs: &mut GlyphCache) {
    for item in items {
        match item {
            Item::Raster { x_px, y_px, image } => paste(img, image, *x_px, *y_px),
            Item::Rect { rect, fill } => img.fill_rect(
                rect.x_px,
                rect.y_px,
                rect.x_px + rect.width_px,
                rect.y_px + rect.height_px,
                *fill,
            ),
            Item::Line {
                points,
                color,
                width_px,
                dash,
                dash_offset_px,
            } => draw_line(img, points, *color, *width_px, *dash, *dash_offset_px),
            Item::Polygon { points, fill } => fill_polygon(img, points, *fill),
            Item::Marker {
                x_px,
                y_px,
                shape,
                size_px,
                stroke_px,
                color,
            } => {
                let r = 0.5 * size_px.clamp(1.0, 2048.0) as f64;
                let t = stroke_px.clamp(0.5, 256.0) as f64;
                let (cx, cy) = (*x_px as f64, *y_px as f64);
                let (x0, x1) = ((cx - r - 1.0).floor() as i64, (cx + r + 1.0).ceil() as i64);
                let (y0, y1) = ((cy - r - 1.0).floor() as i64, (cy + r + 1.0).ceil() as i64);
                for y in y0.max(0)..=y1.min(img.height as i64) {
                    for x in x0.max(0)..=x1.min(img.width as i64) {
                        let cov =
                            marker_coverage(*shape, r, t, x as f64 + 0.5 - cx, y as f64 + 0.5 - cy);
                        if cov > 0.0 {
                            img.blend(x, y, *color, cov);
                        }
                    }
                }
            }
            Item::Text {
                text,
                x_px,
                y_px,
                size_px,
                color,
                anchor,
                vertical,
            } => {
                if *vertical {
                    draw_vertical_text(img, glyphs, text, *x_px, *y_px, *size_px, *color, *anchor)
                } else {
                    glyphs.draw(img, text, *x_px, *y_px, *size_px, *color, *anchor)
                }
            }
            Item::Gradient {
                rect,
                colormap,
                vertical,
            } => draw_gradient(img, *rect, *colormap, *vertical),
        }
    }
}

fn paste(img: &mut Image, src: &Image, x_px: f32, y_px: f32) {
    let (x0, y0) = (x_px.round() as i64, y_px.round() as i64);
    for sy in 0..src.height as i64 {
        let y = y0 + sy;
        if y < 0 || y >= img.height as i64 {
            continue;
        }
        for sx in 0..src.width as i64 {
            let x = x0 + sx;
            if x < 0 || x >= img.width as i64 {
                continue;
            }
            if let Some(c) = src.get(sx as u32, sy as u32) {
                if c.a == 255 {
                    img.set(x as u32, y as u32, c);
                } else {
                    img.blend(x, y, c, 1.0);
                }
            }
        }
    }
}

/// Coverage (0..=1) of a pixel centred at offset `(dx, dy)` from a marker's centre, for a
/// marker of radius `r` and stroke width `t` (pixels), with a one-pixel soft edge.
pub(crate) fn marker_coverage(shape: MarkerShape, r: f64, t: f64, dx: f64, dy: f64) -> f32 {
    let soft = |d: f64| (0.5 - d).clamp(0.0, 1.0) as f32; // d: signed distance outside
    match shape {
        MarkerShape::Dot => soft((dx * dx + dy * dy).sqrt() - r),
        MarkerShape::Ring => {
            let q = (dx * dx + dy * dy).sqrt();
            soft((q - r).max(r - t - q))
        }
        MarkerShape::Cross => {
            let along = dx.abs().max(dy.abs()) - r;
            let across = (dx - dy).abs().min((dx + dy).abs()) / std::f64::consts::SQRT_2 - 0.5 * t;
            soft(along.max(across))
        }
        MarkerShape::Square => {
            let q = dx.abs().max(dy.abs());
            soft((q - r).max(r - t - q))
        }
        MarkerShape::Diamond => soft((dx.abs() + dy.abs() - r) / std::f64::consts::SQRT_2),
    }
}

/// A polyline with round joins: each segment is a capsule; pixels covered by several segments
/// take the largest coverage, so translucent lines have no darker joints.
fn draw_line(
    img: &mut Image,
    points: &[[f32; 2]],
    color: Color,
    width_px: f32,
    dash: Option<(f32, f32)>,
    dash_offset_px: f32,
) {
    if points.is_empty() || !width_px.is_finite() {
        return;
    }
    let hw = (0.5 * width_px.clamp(0.5, 512.0)) as f64;
    let segs = dashed_segments(points, dash, dash_offset_px);
    if segs.is_empty() {
        return;
    }
    // Bounding box, clipped to the image.
    let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for s in &segs {
        for p in s {
            x0 = x0.min(p[0]);
            y0 = y0.min(p[1]);
            x1 = x1.max(p[0]);
            y1 = y1.max(p[1]);
        }
    }
    let xa = ((x0 - hw - 1.0).floor() as i64).max(0);
    let xb = ((x1 + hw + 1.0).ceil() as i64).min(img.width as i64 - 1);
    let ya = ((y0 - hw - 1.0).floor() as i64).max(0);
    let yb = ((y1 + hw + 1.0).ceil() as i64).min(img.height as i64 - 1);
    if xa > xb || ya > yb {
        return;
    }
    let (bw, bh) = ((xb - xa + 1) as usize, (yb - ya + 1) as usize);
    // Large boxes with few segments: per-segment boxes; coverage kept in a sparse map.
    let mut cov = std::collections::HashMap::<(i64, i64), f32>::new();
    let dense = bw * bh <= 4_000_000;
    let mut grid = if dense {
        vec![0f32; bw * bh]
    } else {
        Vec::new()
    };
    for s in &segs {
        let [[ax, ay], [bx, by]] = *s;
        let (dx, dy) = (bx - ax, by - ay);
        let len2 = dx * dx + dy * dy;
        let sx0 = ((ax.min(bx) - hw - 1.0).floor() as i64).max(xa);
        let sx1 = ((ax.max(bx) + hw + 1.0).ceil() as i64).min(xb);
        let sy0 = ((ay.min(by) - hw - 1.0).floor() as i64).max(ya);
        let sy1 = ((ay.max(by) + hw + 1.0).ceil() as i64).min(yb);
        for y in sy0..=sy1 {
            for x in sx0..=sx1 {
                let (px, py) = (x as f64 + 0.5 - ax, y as f64 + 0.5 - ay);
                let t = if len2 > 0.0 {
                    ((px * dx + py * dy) / len2).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                let (qx, qy) = (px - t * dx, py - t * dy);
                let d = (qx * qx + qy * qy).sqrt();
                let c = (hw + 0.5 - d).clamp(0.0, 1.0) as f32;
                if c > 0.0 {
                    if dense {
                        let i = (y - ya) as usize * bw + (x - xa) as usize;
                        grid[i] = grid[i].max(c);
                    } else {
                        let e = cov.entry((x, y)).or_insert(0.0);
                        *e = e.max(c);
                    }
                }
            }
        }
    }
    if dense {
        for (i, c) in grid.iter().enumerate() {
            if *c > 0.0 {
                img.blend(xa + (i % bw) as i64, ya + (i / bw) as i64, color, *c);
            }
        }
    } else {
        let mut keys: Vec<_> = cov.into_iter().collect();
        keys.sort_by_key(|(k, _)| *k);
        for ((x, y), c) in keys {
            img.blend(x, y, color, c);
        }
    }
}

/// The drawn pieces of a polyline under a dash pattern, as segments in `f64`.
pub(crate) fn dashed_segments(
    points: &[[f32; 2]],
    dash: Option<(f32, f32)>,
    offset_px: f32,
) -> Vec<[[f64; 2]; 2]> {
    let pts: Vec<[f64; 2]> = points
        .iter()
        .filter(|p| p[0].is_finite() && p[1].is_finite())
        .map(|p| [p[0] as f64, p[1] as f64])
        .collect();
    let mut out = Vec::new();
    if pts.len() == 1 {
        out.push([pts[0], pts[0]]);
        return out;
    }
    let Some((on, off)) = dash.filter(|(a, b)| *a > 0.0 && *b >= 0.0 && a.is_finite()) else {
        out.extend(pts.windows(2).map(|w| [w[0], w[1]]));
        return out;
    };
    let (on, off) = (on as f64, off as f64);
    let period = on + off;
    let mut phase = (offset_px as f64).rem_euclid(period);
    for w in pts.windows(2) {
        let (a, b) = (w[0], w[1]);
        let len = ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2)).sqrt();
        let mut s = 0.0;
        // Bounded: each pass advances s to the next dash boundary.
        let mut guard = 0;
        while s < len && guard < 100_000 {
            guard += 1;
            let (in_on, left) = if phase < on {
                (true, on - phase)
            } else {
                (false, period - phase)
            };
            let e = (s + left).min(len);
            if in_on {
                let at = |u: f64| {
                    [
                        a[0] + (b[0] - a[0]) * u / len,
                        a[1] + (b[1] - a[1]) * u / len,
                    ]
                };
                out.push([at(s), at(e)]);
            }
            phase = (phase + (e - s)).rem_euclid(period);
            s = e;
        }
    }
    out
}

/// Even-odd fill with 4x4 samples per pixel.
fn fill_polygon(img: &mut Image, points: &[[f32; 2]], fill: Color) {
    if points.len() < 3
        || points
            .iter()
            .any(|p| !(p[0].is_finite() && p[1].is_finite()))
    {
        return;
    }
    let (mut x0, mut y0, mut x1, mut y1) = (f32::MAX, f32::MAX, f32::MIN, f32::MIN);
    for p in points {
        x0 = x0.min(p[0]);
        y0 = y0.min(p[1]);
        x1 = x1.max(p[0]);
        y1 = y1.max(p[1]);
    }
    let xa = (x0.floor() as i64).max(0);
    let xb = (x1.ceil() as i64).min(img.width as i64 - 1);
    let ya = (y0.floor() as i64).max(0);
    let yb = (y1.ceil() as i64).min(img.height as i64 - 1);
    let inside = |x: f32, y: f32| {
        let mut c = false;
        let n = points.len();
        for i in 0..n {
            let (a, b) = (points[i], points[(i + n - 1) % n]);
            if (a[1] > y) != (b[1] > y) && x < (b[0] - a[0]) * (y - a[1]) / (b[1] - a[1]) + a[0] {
                c = !c;
            }
        }
        c
    };
    for y in ya..=yb {
        for x in xa..=xb {
            let mut hits = 0;
            for sy in 0..4 {
                for sx in 0..4 {
                    let (px, py) = (
                        x as f32 + (sx as f32 + 0.5) / 4.0,
                        y as f32 + (sy as f32 + 0.5) / 4.0,
                    );
                    if inside(px, py) {
                        hits += 1;
                    }
                }
            }
            if hits > 0 {
                img.blend(x, y, fill, hits as f32 / 16.0);
            }
        }
    }
}

fn draw_gradient(img: &mut Image, rect: Rect, colormap: Colormap, vertical: bool) {
    let sane = |v: f32| v.is_finite() && v.abs() <= 1.0e6;
    if !(sane(rect.x_px) && sane(rect.y_px) && sane(rect.width_px) && sane(rect.height_px)) {
        return;
    }
    let xa = (rect.x_px.round() as i64).max(0);
    let xb = ((rect.x_px + rect.width_px).round() as i64).min(img.width as i64);
    let ya = (rect.y_px.round() as i64).max(0);
    let yb = ((rect.y_px + rect.height_px).round() as i64).min(img.height as i64);
    // The first and last rows (columns) of the bar get the map's end colours exactly.
    let (y_top, y_end) = (
        rect.y_px.round() as i64,
        (rect.y_px + rect.height_px).round() as i64,
    );
    let (x_left, x_end) = (
        rect.x_px.round() as i64,
        (rect.x_px + rect.width_px).round() as i64,
    );
    let frac = |i: i64, lo: i64, hi: i64| {
        if hi - lo > 1 {
            (i - lo) as f64 / (hi - lo - 1) as f64
        } else {
            0.5
        }
    };
    for y in ya..yb {
        for x in xa..xb {
            let t = if vertical {
                1.0 - frac(y, y_top, y_end)
            } else {
                frac(x, x_left, x_end)
            };
            img.blend(x, y, colormap.map(t.clamp(0.0, 1.0)), 1.0);
        }
    }
}

/// Text rotated 90 degrees counter-clockwise: drawn into a scratch image, then turned.
#[allow(
    clippy::too_many_arguments,
    reason = "mirrors the fields of Item::Text"
)]
fn draw_vertical_text(
    img: &mut Image,
    glyphs: &mut GlyphCache,
    text: &str,
    x: f32,
    y: f32,
    size_px: f32,
    color: Color,
    anchor: Anchor,
) {
    if !(x.is_finite() && y.is_finite()) {
        return;
    }
    let sz = glyphs.measure(text, size_px);
    let (w, h) = (sz.width.ceil() as u32 + 2, sz.height.ceil() as u32 + 2);
    if w > 8192 || h > 8192 {
        return;
    }
    let mut scratch = Image::new(w, h, Color::TRANSPARENT);
    // White glyph coverage in alpha.
    glyphs.draw(
        &mut scratch,
        text,
        1.0,
        1.0,
        size_px,
        Color::WHITE,
        Anchor::TopLeft,
    );
    // Offsets of the anchor in the unrotated box.
    let (fx, fy) = anchor.fractions();
    let (ax, ay) = (1.0 + fx * sz.width, 1.0 + fy * sz.height);
    // Rotation by +90 degrees on screen (counter-clockwise): (u, v) -> (v, -u) around anchor.
    for v in 0..h {
        for u in 0..w {
            let Some(p) = scratch.get(u, v) else { continue };
            // The scratch was cleared to transparent black; drawn pixels blended white over it.
            let cov = p.r as f32 / 255.0;
            if cov <= 0.0 {
                continue;
            }
            let (du, dv) = (u as f32 + 0.5 - ax, v as f32 + 0.5 - ay);
            let (ox, oy) = (x + dv, y - du);
            img.blend(ox.floor() as i64, oy.floor() as i64, color, cov);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dashes_follow_the_pattern_across_points() {
        let segs = dashed_segments(
            &[[0.0, 0.0], [10.0, 0.0], [10.0, 10.0]],
            Some((4.0, 2.0)),
            0.0,
        );
        // On 0-4 and 6-10 along x; the vertical starts 2 px into a gap: on 2-6 and 8-10.
        assert_eq!(segs.len(), 4, "{segs:?}");
        assert_eq!(segs[0], [[0.0, 0.0], [4.0, 0.0]]);
        assert_eq!(segs[2], [[10.0, 2.0], [10.0, 6.0]]);
        let total: f64 = segs
            .iter()
            .map(|s| ((s[1][0] - s[0][0]).powi(2) + (s[1][1] - s[0][1]).powi(2)).sqrt())
            .sum();
        assert!((total - 14.0).abs() < 1e-9);
    }

    #[test]
    fn clipping_cuts_lines_at_the_rectangle_and_keeps_the_dash_phase() {
        let line = Item::Line {
            points: vec![[-10.0, 5.0], [30.0, 5.0], [30.0, 40.0]],
            color: Color::BLACK,
            width_px: 1.0,
            dash: Some((3.0, 2.0)),
            dash_offset_px: 1.0,
        };
        let parts = line.clipped(Rect::new(0.0, 0.0, 20.0, 20.0));
        assert_eq!(parts.len(), 1);
        let Item::Line {
            points,
            dash_offset_px,
            ..
        } = &parts[0]
        else {
            panic!("not a line")
        };
        assert_eq!(points, &vec![[0.0, 5.0], [20.0, 5.0]]);
        assert!((dash_offset_px - 11.0).abs() < 1e-5);
        let tri = Item::Polygon {
            points: vec![[-5.0, -5.0], [10.0, 10.0], [-5.0, 10.0]],
            fill: Color::BLACK,
        };
        let Item::Polygon { points, .. } = &tri.clipped(Rect::new(0.0, 0.0, 20.0, 20.0))[0] else {
            panic!("not a polygon")
        };
        assert!(
            points.iter().all(|p| p[0] >= 0.0 && p[1] >= 0.0),
            "{points:?}"
        );
    }

    #[test]
    fn figure_items_land_where_placed() {
        let mut f = Figure::new(60, 40, Color::WHITE);
        f.items.push(Item::Rect {
            rect: Rect::new(10.0, 10.0, 5.0, 5.0),
            fill: Color::BLACK,
        });
        f.items.push(Item::Marker {
            x_px: 40.0,
            y_px: 20.0,
            shape: MarkerShape::Dot,
            size_px: 8.0,
            stroke_px: 1.0,
            color: Color::rgb(255, 0, 0),
        });
        let img = f.to_image();
        assert_eq!(img.get(12, 12), Some(Color::BLACK));
        assert_eq!(img.get(9, 12), Some(Color::WHITE));
        assert_eq!(img.get(40, 20), Some(Color::rgb(255, 0, 0)));
        assert_eq!(img.get(40, 27), Some(Color::WHITE));
    }
}
