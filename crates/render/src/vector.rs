//! Vector output of a 3D view: polylines, markers and arrows projected to 2D figure items, cut
//! into runs where their visibility against the meshes' depth buffer changes.

use nalgebra::Point3;

use crate::color::Color;
use crate::figure::Item;
use crate::pipeline::{
    Frame, arrow_head_len, line_color_at, marker_size_px, marker_stroke_px, point_alpha,
    project_point,
};
use crate::scene::{LineColor, Occluded, Scene};

/// Most visibility samples on one segment (long segments are sampled more coarsely).
const MAX_SAMPLES_PER_SEGMENT: usize = 2048;

struct Run {
    alpha: f32,
    color: Color,
    points: Vec<[f32; 2]>,
    start_len_px: f32,
}

/// The scene's polylines, arrows and markers as figure items in output pixels; `depth` is the
/// depth buffer of the meshes drawn with `frame` (internal pixels, `frame.scale` per output
/// pixel).
pub(crate) fn vector_items(frame: &Frame, depth: &[f32], scene: &Scene) -> Vec<Item> {
    let mut items = Vec::new();
    for p in &scene.polylines {
        polyline_items(
            frame, depth, &p.points, &p.color, p.width_px, p.dash, p.occluded, &mut items,
        );
    }
    for a in &scene.arrows {
        polyline_items(
            frame,
            depth,
            &[a.from, a.to],
            &LineColor::Uniform(a.color),
            a.width_px,
            None,
            Occluded::Faint(0.35),
            &mut items,
        );
        if let Some(item) = arrow_head(frame, depth, a) {
            items.push(item);
        }
    }
    let s = frame.scale;
    for m in &scene.markers {
        let Some((x, y, d)) = project_point(frame, &m.position) else {
            continue;
        };
        let a = point_alpha(frame, depth, x, y, d, m.occluded);
        if a <= 0.0 {
            continue;
        }
        items.push(Item::Marker {
            x_px: x as f32 / s,
            y_px: y as f32 / s,
            shape: m.shape,
            size_px: marker_size_px(m.size_px),
            stroke_px: marker_stroke_px(m.size_px),
            color: faded(m.color, a),
        });
    }
    items
}

fn faded(c: Color, alpha: f32) -> Color {
    c.with_alpha((c.a as f32 * alpha.clamp(0.0, 1.0)).round() as u8)
}

#[allow(
    clippy::too_many_arguments,
    reason = "the fields of a polyline or arrow shaft"
)]
fn polyline_items(
    frame: &Frame,
    depth: &[f32],
    points: &[[f64; 3]],
    color: &LineColor,
    width_px: f32,
    dash: Option<(f32, f32)>,
    occluded: Occluded,
    items: &mut Vec<Item>,
) {
    let s = frame.scale as f64;
    let width_px = if width_px.is_finite() {
        width_px.clamp(1.0, 64.0)
    } else {
        1.0
    };
    let mut run: Option<Run> = None;
    let mut len_px = 0.0f32;
    let flush = |run: &mut Option<Run>, items: &mut Vec<Item>| {
        if let Some(r) = run.take()
            && r.alpha > 0.0
            && r.points.len() >= 2
        {
            items.push(Item::Line {
                points: r.points,
                color: faded(r.color, r.alpha),
                width_px,
                dash,
                dash_offset_px: r.start_len_px,
            });
        }
    };
    let out = |x: f64, y: f64| [(x / s) as f32, (y / s) as f32];
    for i in 0..points.len().saturating_sub(1) {
        let (a, b) = (Point3::from(points[i]), Point3::from(points[i + 1]));
        let (Some(pa), Some(pb)) = (
            project_point(frame, &points[i]),
            project_point(frame, &points[i + 1]),
        ) else {
            // Behind the eye or not finite: the line breaks here.
            flush(&mut run, items);
            continue;
        };
        let c = line_color_at(color, i);
        let seg_len = ((pb.0 - pa.0).powi(2) + (pb.1 - pa.1).powi(2)).sqrt();
        let n = ((seg_len / (1.5 * s)).ceil() as usize).clamp(1, MAX_SAMPLES_PER_SEGMENT);
        for k in 0..=n {
            let f = k as f64 / n as f64;
            let q = a + (b - a) * f;
            let Some((x, y, d)) = project_point(frame, &[q.x, q.y, q.z]) else {
                flush(&mut run, items);
                continue;
            };
            let alpha = point_alpha(frame, depth, x, y, d, occluded);
            let here_len = len_px + (seg_len * f / s) as f32;
            let p = out(x, y);
            match &mut run {
                Some(r) if r.alpha == alpha && r.color == c => {
                    // Keep the polyline's own vertices; samples in between only where
                    // visibility changes.
                    if k == n {
                        r.points.push(p);
                    }
                }
                _ => {
                    if let Some(r) = &mut run {
                        r.points.push(p);
                    }
                    flush(&mut run, items);
                    run = Some(Run {
                        alpha,
                        color: c,
                        points: vec![p],
                        start_len_px: here_len,
                    });
                }
            }
        }
        len_px += (seg_len / s) as f32;
    }
    flush(&mut run, items);
}

fn arrow_head(frame: &Frame, depth: &[f32], a: &crate::scene::Arrow) -> Option<Item> {
    let (Some((x0, y0, _)), Some((x1, y1, d1))) =
        (project_point(frame, &a.from), project_point(frame, &a.to))
    else {
        return None;
    };
    let (dx, dy) = (x1 - x0, y1 - y0);
    let len = (dx * dx + dy * dy).sqrt();
    if len < 1e-6 {
        return None;
    }
    let alpha = point_alpha(frame, depth, x1, y1, d1, Occluded::Faint(0.35));
    let (ux, uy) = (dx / len, dy / len);
    let head = arrow_head_len(a.width_px, frame.scale, len);
    let half = 0.5 * head;
    let (bx, by) = (x1 - ux * head, y1 - uy * head);
    let s = frame.scale as f64;
    let p = |x: f64, y: f64| [(x / s) as f32, (y / s) as f32];
    Some(Item::Polygon {
        points: vec![
            p(x1, y1),
            p(bx - uy * half, by + ux * half),
            p(bx + uy * half, by - ux * half),
        ],
        fill: faded(a.color, alpha),
    })
}
