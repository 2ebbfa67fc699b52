//! SVG output of a [`Figure`]: rasters embedded as PNG, everything else as vectors.

use std::fmt::Write as _;
use std::io::Write;

use crate::color::Color;
use crate::error::{RenderError, Result};
use crate::figure::{Figure, Item};
use crate::png_out::encode_png;
use crate::scene::MarkerShape;
use crate::style::MM_PER_IN;
use crate::text::{clamp_size, line_metrics, measure_text};

/// Font family written into the SVG (the bundled font first).
const FONT_FAMILY: &str = "DejaVu Sans, Verdana, sans-serif";

/// Writes `figure` as an SVG 1.1 document: rasters as embedded PNG images, lines, polygons,
/// markers and gradients as vector shapes, text as `<text>` in DejaVu Sans (the bundled font).
/// The metadata go into `<title>` (the `Title` entry) and `<desc>`. A figure with a print
/// resolution gets its physical size in millimetres.
pub fn write_svg(figure: &Figure, mut out: impl Write) -> Result<()> {
    let svg = svg_string(figure)?;
    out.write_all(svg.as_bytes())
        .and_then(|_| out.flush())
        .map_err(|e| RenderError::Write(e.to_string()))
}

/// The SVG document as a string.
pub fn svg_string(figure: &Figure) -> Result<String> {
    let (w, h) = (figure.width_px.max(1), figure.height_px.max(1));
    let mut s = String::with_capacity(64 * 1024);
    let size = match (figure.size_mm, figure.dpi) {
        (Some([mw, mh]), _) if mw > 0.0 && mh > 0.0 => {
            format!(r#"width="{mw:.2}mm" height="{mh:.2}mm""#)
        }
        (_, Some(dpi)) if dpi.is_finite() && dpi > 0.0 => {
            let mm = |px: u32| px as f64 / dpi * MM_PER_IN;
            format!(r#"width="{:.2}mm" height="{:.2}mm""#, mm(w), mm(h))
        }
        _ => format!(r#"width="{w}" height="{h}""#),
    };
    let _ = writeln!(s, r#"<?xml version="1.0" encoding="UTF-8"?>"#);
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" version="1.1" {size} viewBox="0 0 {w} {h}">"#
    );
    if let Some((_, t)) = figure.metadata.iter().find(|(k, _)| k == "Title") {
        let _ = writeln!(s, "<title>{}</title>", esc(t));
    }
    if !figure.metadata.is_empty() {
        let body: Vec<String> = figure
            .metadata
            .iter()
            .map(|(k, v)| format!("{}: {}", esc(k), esc(v)))
            .collect();
        let _ = writeln!(s, "<desc>{}</desc>", body.join("\n"));
    }
    let _ = writeln!(
        s,
        r#"<rect x="0" y="0" width="{w}" height="{h}" fill="{}"/>"#,
        hex(figure.background)
    );
    let mut gradient_id = 0;
    for item in &figure.items {
        item_svg(&mut s, item, &mut gradient_id)?;
    }
    s.push_str("</svg>\n");
    Ok(s)
}

fn esc(t: &str) -> String {
    let mut o = String::with_capacity(t.len());
    for c in t.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&apos;"),
            // Characters XML 1.0 does not allow.
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' => {}
            c => o.push(c),
        }
    }
    o
}

fn hex(c: Color) -> String {
    format!("#{:02x}{:02x}{:02x}", c.r, c.g, c.b)
}

/// ` fill-opacity` / ` stroke-opacity` attribute when the colour is translucent.
fn opacity(attr: &str, c: Color) -> String {
    if c.a == 255 {
        String::new()
    } else {
        format!(r#" {attr}="{:.3}""#, c.a as f32 / 255.0)
    }
}

fn num(v: f32) -> String {
    let r = (v as f64 * 100.0).round() / 100.0;
    if r == r.trunc() {
        format!("{}", r as i64)
    } else {
        format!("{r}")
    }
}

fn points_attr(points: &[[f32; 2]]) -> String {
    let mut o = String::with_capacity(points.len() * 12);
    for (i, p) in points.iter().enumerate() {
        if i > 0 {
            o.push(' ');
        }
        o.push_str(&num(p[0]));
        o.push(',');
        o.push_str(&num(p[1]));
    }
    o
}

fn base64(data: &[u8]) -> String {
    // RFC 4648 base64 with padding.
    const A: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut o = String::with_capacity(data.len().div_ceil(3) * 4);
    for c in data.chunks(3) {
        let b = [c[0], *c.get(1).unwrap_or(&0), *c.get(2).unwrap_or(&0)];
        let n = (b[0] as u32) << 16 | (b[1] as u32) << 8 | b[2] as u32;
        for k in 0..4 {
            if k <= c.len() {
                o.push(A[(n >> (18 - 6 * k) & 63) as usize] as char);
            } else {
                o.push('=');
            }
        }
    }
    o
}

fn item_svg(s: &mut String, item: &Item, gradient_id: &mut u32) -> Result<()> {
    match item {
        Item::Raster { x_px, y_px, image } => {
            let mut png = Vec::new();
            encode_png(image, &[], &mut png)?;
            let _ = writeln!(
                s,
                r#"<image x="{}" y="{}" width="{}" height="{}" preserveAspectRatio="none" xlink:href="data:image/png;base64,{}"/>"#,
                x_px.round(),
                y_px.round(),
                image.width,
                image.height,
                base64(&png)
            );
        }
        Item::Rect { rect, fill } => {
            let _ = writeln!(
                s,
                r#"<rect x="{}" y="{}" width="{}" height="{}" fill="{}"{}/>"#,
                num(rect.x_px),
                num(rect.y_px),
                num(rect.width_px.max(0.0)),
                num(rect.height_px.max(0.0)),
                hex(*fill),
                opacity("fill-opacity", *fill)
            );
        }
        Item::Line {
            points,
            color,
            width_px,
            dash,
            dash_offset_px,
        } => {
            if points.is_empty() {
                return Ok(());
            }
            let dash_attr = match dash {
                Some((on, off)) if *on > 0.0 && *off >= 0.0 => format!(
                    r#" stroke-dasharray="{} {}" stroke-dashoffset="{}""#,
                    num(*on),
                    num(*off),
                    num(*dash_offset_px)
                ),
                _ => String::new(),
            };
            let _ = writeln!(
                s,
                r#"<polyline points="{}" fill="none" stroke="{}"{} stroke-width="{}" stroke-linecap="round" stroke-linejoin="round"{}/>"#,
                points_attr(points),
                hex(*color),
                opacity("stroke-opacity", *color),
                num(*width_px),
                dash_attr
            );
        }
        Item::Polygon { points, fill } => {
            let _ = writeln!(
                s,
                r#"<polygon points="{}" fill="{}"{} fill-rule="evenodd"/>"#,
                points_attr(points),
                hex(*fill),
                opacity("fill-opacity", *fill)
            );
        }
        Item::Marker {
            x_px,
            y_px,
            shape,
            size_px,
            stroke_px,
            color,
        } => marker_svg(s, *x_px, *y_px, *shape, *size_px, *stroke_px, *color),
        Item::Text {
            text,
            x_px,
            y_px,
            size_px,
            color,
            anchor,
            vertical,
        } => {
            let size = clamp_size(*size_px);
            let (ascent, line_h) = line_metrics(size);
            let (_, total_h) = measure_text(text, size);
            let (fx, fy) = anchor.fractions();
            let text_anchor = if fx == 0.0 {
                "start"
            } else if fx == 0.5 {
                "middle"
            } else {
                "end"
            };
            let top = -fy * total_h;
            let transform = if *vertical {
                format!(r#" transform="rotate(-90 {} {})""#, num(*x_px), num(*y_px))
            } else {
                String::new()
            };
            for (i, line) in text.split('\n').enumerate() {
                let baseline = y_px + top + ascent + i as f32 * line_h;
                let _ = writeln!(
                    s,
                    r#"<text x="{}" y="{}" font-family="{FONT_FAMILY}" font-size="{}" text-anchor="{text_anchor}" fill="{}"{}{}>{}</text>"#,
                    num(*x_px),
                    num(baseline),
                    num(size),
                    hex(*color),
                    opacity("fill-opacity", *color),
                    transform,
                    esc(line)
                );
            }
        }
        Item::Gradient {
            rect,
            colormap,
            vertical,
        } => {
            *gradient_id += 1;
            let id = format!("gradient{gradient_id}");
            let (x2, y1, y2) = if *vertical {
                ("0", "1", "0")
            } else {
                ("1", "0", "0")
            };
            let _ = writeln!(
                s,
                r#"<defs><linearGradient id="{id}" x1="0" y1="{y1}" x2="{x2}" y2="{y2}">"#
            );
            for k in 0..=32 {
                let t = k as f64 / 32.0;
                let _ = writeln!(
                    s,
                    r#"<stop offset="{t:.4}" stop-color="{}"/>"#,
                    hex(colormap.map(t))
                );
            }
            let _ = writeln!(s, "</linearGradient></defs>");
            let _ = writeln!(
                s,
                r#"<rect x="{}" y="{}" width="{}" height="{}" fill="url(#{id})"/>"#,
                num(rect.x_px),
                num(rect.y_px),
                num(rect.width_px.max(0.0)),
                num(rect.height_px.max(0.0))
            );
        }
    }
    Ok(())
}

fn marker_svg(
    s: &mut String,
    x: f32,
    y: f32,
    shape: MarkerShape,
    size_px: f32,
    stroke_px: f32,
    color: Color,
) {
    let r = 0.5 * size_px.clamp(1.0, 2048.0);
    let t = stroke_px.clamp(0.5, 256.0).min(r);
    let (c, fo, so) = (
        hex(color),
        opacity("fill-opacity", color),
        opacity("stroke-opacity", color),
    );
    let _ = match shape {
        MarkerShape::Dot => writeln!(
            s,
            r#"<circle cx="{}" cy="{}" r="{}" fill="{c}"{fo}/>"#,
            num(x),
            num(y),
            num(r)
        ),
        MarkerShape::Ring => writeln!(
            s,
            r#"<circle cx="{}" cy="{}" r="{}" fill="none" stroke="{c}"{so} stroke-width="{}"/>"#,
            num(x),
            num(y),
            num(r - 0.5 * t),
            num(t)
        ),
        MarkerShape::Cross => writeln!(
            s,
            r#"<path d="M{} {}L{} {}M{} {}L{} {}" fill="none" stroke="{c}"{so} stroke-width="{}"/>"#,
            num(x - r),
            num(y - r),
            num(x + r),
            num(y + r),
            num(x - r),
            num(y + r),
            num(x + r),
            num(y - r),
            num(t)
        ),
        MarkerShape::Square => writeln!(
            s,
            r#"<rect x="{}" y="{}" width="{}" height="{}" fill="none" stroke="{c}"{so} stroke-width="{}"/>"#,
            num(x - r + 0.5 * t),
            num(y - r + 0.5 * t),
            num(2.0 * r - t),
            num(2.0 * r - t),
            num(t)
        ),
        MarkerShape::Diamond => writeln!(
            s,
            r#"<polygon points="{},{} {},{} {},{} {},{}" fill="{c}"{fo}/>"#,
            num(x),
            num(y - r),
            num(x + r),
            num(y),
            num(x),
            num(y + r),
            num(x - r),
            num(y)
        ),
    };
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_matches_rfc_4648_test_vectors() {
        // RFC 4648, section 10.
        for (i, o) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64(i.as_bytes()), o);
        }
    }

    #[test]
    fn text_is_escaped() {
        assert_eq!(esc("a<b & \"c\"\u{1}"), "a&lt;b &amp; &quot;c&quot;");
    }
}
