//! 2D plots as figures: lines and markers over round-ticked axes, an optional image under the
//! data (a map), a legend and a colour bar beside the plot area, never over the data.

use std::sync::Arc;

use crate::color::Color;
use crate::colormap::Colormap;
use crate::error::{RenderError, Result};
use crate::figure::{Figure, Item, Region};
use crate::image::Image;
use crate::overlay::{LegendEntry, color_bar_block, frame_items, legend_block};
use crate::scene::{Anchor, MarkerShape, Rect};
use crate::style::{Style, pt};
use crate::text::measure_text;
use crate::ticks::nice_ticks;

/// A line of data.
#[derive(Clone, Debug, PartialEq)]
pub struct Series {
    /// Colour.
    pub color: Color,
    /// Points `[x, y]` in data units; non-finite points break the line.
    pub points: Vec<[f64; 2]>,
    /// Dashed instead of solid.
    pub dashed: bool,
}

/// A marker at a data point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PlotMarker {
    /// x, data units.
    pub x: f64,
    /// y, data units.
    pub y: f64,
    /// Shape.
    pub shape: MarkerShape,
    /// Colour.
    pub color: Color,
}

/// An image covering the whole plot range (e.g. a surface map on latitude and longitude),
/// with the colour bar that explains it.
#[derive(Clone, Debug)]
pub struct PlotImage {
    /// The pixels, first row at the top of the y range; resampled to the plot area.
    pub image: Arc<Image>,
    /// Colour map of the image.
    pub colormap: Colormap,
    /// Value at the low end of the colour map.
    pub min: f64,
    /// Value at the high end.
    pub max: f64,
    /// Colour bar title with unit.
    pub label: String,
}

/// An axis: its title (with unit) and a fixed range, or the data's range when `None`.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct PlotAxis {
    /// Title with unit, e.g. "time (s)".
    pub label: String,
    /// Fixed `[min, max]`.
    pub range: Option<[f64; 2]>,
    /// Fixed tick values (e.g. every 30 degrees); `None`: round ticks.
    pub ticks: Option<Vec<f64>>,
}

/// Everything a plot shows.
#[derive(Clone, Debug, Default)]
pub struct PlotSpec {
    /// Title above the plot.
    pub title: String,
    /// Lines of smaller text under the title (notes on reading the plot).
    pub notes: Vec<String>,
    /// Horizontal axis.
    pub x: PlotAxis,
    /// Vertical axis.
    pub y: PlotAxis,
    /// Lines.
    pub series: Vec<Series>,
    /// Markers.
    pub markers: Vec<PlotMarker>,
    /// Image under the data.
    pub image: Option<PlotImage>,
    /// Legend entries (beside the plot area).
    pub legend: Vec<LegendEntry>,
}

fn data_range(values: impl Iterator<Item = f64>, pad: f64) -> [f64; 2] {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !(lo.is_finite() && hi.is_finite()) {
        return [0.0, 1.0];
    }
    if hi - lo <= f64::EPSILON * hi.abs().max(1.0) {
        let d = (hi.abs() * 0.05).max(1e-12);
        return [lo - d, hi + d];
    }
    let d = (hi - lo) * pad;
    [lo - d, hi + d]
}

fn resample_nearest(src: &Image, w: u32, h: u32) -> Image {
    let mut out = Image::new(w.max(1), h.max(1), Color::TRANSPARENT);
    if src.width == 0 || src.height == 0 {
        return out;
    }
    for y in 0..out.height {
        let sy = ((y as u64 * src.height as u64) / out.height as u64) as u32;
        for x in 0..out.width {
            let sx = ((x as u64 * src.width as u64) / out.width as u64) as u32;
            if let Some(c) = src.get(sx, sy) {
                out.set(x, y, c);
            }
        }
    }
    out
}

/// Lays out and draws a plot as a `width_px x height_px` figure in `style`.
pub fn plot_figure(
    spec: &PlotSpec,
    width_px: u32,
    height_px: u32,
    style: &Style,
) -> Result<Figure> {
    let th = &style.theme;
    let (w, h) = (width_px as f32, height_px as f32);
    let margin = style.px(pt::MARGIN);
    let gap = style.px(pt::GAP);
    let (title_px, label_px, text_px) =
        (style.px(pt::TITLE), style.px(pt::LABEL), style.px(pt::TEXT));
    let rule = style.px(pt::RULE).max(1.0);
    let tick = style.px(pt::TICK);
    let mut fig = Figure::new(width_px, height_px, th.background);

    // Data ranges and ticks (needed for the tick label widths).
    let xr = spec.x.range.unwrap_or_else(|| {
        data_range(
            spec.series
                .iter()
                .flat_map(|s| s.points.iter().map(|p| p[0]))
                .chain(spec.markers.iter().map(|m| m.x)),
            0.0,
        )
    });
    let yr = spec.y.range.unwrap_or_else(|| {
        data_range(
            spec.series
                .iter()
                .flat_map(|s| s.points.iter().map(|p| p[1]))
                .chain(spec.markers.iter().map(|m| m.y)),
            0.05,
        )
    });
    let ticks_for = |axis: &PlotAxis, r: [f64; 2], count: usize| match &axis.ticks {
        Some(t) => {
            let values: Vec<f64> = t
                .iter()
                .copied()
                .filter(|v| *v >= r[0] && *v <= r[1])
                .collect();
            let step = values.windows(2).map(|w| w[1] - w[0]).fold(0.0, f64::max);
            crate::ticks::Ticks { values, step }
        }
        None => nice_ticks(r[0], r[1], count),
    };
    let y_ticks = ticks_for(&spec.y, yr, 7);
    let y_labels = y_ticks.labels();
    let y_label_w = y_labels
        .iter()
        .map(|l| measure_text(l, text_px).0)
        .fold(0.0f32, f32::max);
    let (_, text_h) = measure_text("0", text_px);
    let (_, label_h) = measure_text("Ag", label_px);
    let (_, title_h) = measure_text("Ag", title_px);

    // Vertical bands: title, notes, plot, x ticks, x label.
    let mut y = margin;
    let mut regions = Vec::new();
    if !spec.title.is_empty() {
        let (tw, _) = measure_text(&spec.title, title_px);
        regions.push((
            "title".to_string(),
            Rect::new(0.5 * (w - tw), y, tw, title_h),
        ));
        fig.items.push(Item::Text {
            text: spec.title.clone(),
            x_px: 0.5 * w,
            y_px: y,
            size_px: title_px,
            color: th.text,
            anchor: Anchor::TopCenter,
            vertical: false,
        });
        y += title_h + 0.4 * gap;
    }
    for (i, note) in spec.notes.iter().enumerate() {
        let (nw, _) = measure_text(note, text_px);
        regions.push((
            format!("note {}", i + 1),
            Rect::new(0.5 * (w - nw), y, nw, text_h),
        ));
        fig.items.push(Item::Text {
            text: note.clone(),
            x_px: 0.5 * w,
            y_px: y,
            size_px: text_px,
            color: th.text_muted,
            anchor: Anchor::TopCenter,
            vertical: false,
        });
        y += text_h;
    }
    let plot_top = y + gap + 0.5 * text_h;
    let plot_bottom = h - margin - label_h - gap - text_h - tick - 0.5 * gap;
    // Horizontal bands: y label, y ticks, plot, side panel.
    let plot_left = margin + label_h + gap + y_label_w + tick + 0.5 * gap;
    let legend = (!spec.legend.is_empty()).then(|| legend_block(&spec.legend, style, false));
    let plot_h = plot_bottom - plot_top;
    let bar = spec.image.as_ref().map(|img| {
        color_bar_block(
            img.colormap,
            img.min,
            img.max,
            &img.label,
            (0.5 * plot_h).max(2.0 * text_h),
            style,
        )
    });
    let panel_w = bar
        .as_ref()
        .map(|(b, _)| b.width_px)
        .into_iter()
        .chain(legend.as_ref().map(|b| b.width_px))
        .fold(0.0f32, f32::max);
    let plot_right = w
        - margin
        - if panel_w > 0.0 {
            panel_w + 2.0 * gap
        } else {
            0.0
        };
    let plot_w = plot_right - plot_left;
    let panel_h = bar.as_ref().map_or(0.0, |(b, _)| b.height_px + 2.0 * gap)
        + legend.as_ref().map_or(0.0, |b| b.height_px);
    if !(plot_w >= 48.0 && plot_h >= 48.0 && panel_h <= h - 2.0 * margin) {
        return Err(RenderError::FigureSize {
            text: format!("{width_px}x{height_px} px"),
            reason: format!(
                "too small for the plot: the data area would be {:.0} x {:.0} px",
                plot_w.max(0.0),
                plot_h.max(0.0)
            ),
        });
    }
    let area = Rect::new(
        plot_left.round(),
        plot_top.round(),
        (plot_right - plot_left).round(),
        (plot_bottom - plot_top).round(),
    );
    let to_px = |x: f64, y: f64| -> [f32; 2] {
        let fx = (x - xr[0]) / (xr[1] - xr[0]);
        let fy = (y - yr[0]) / (yr[1] - yr[0]);
        [
            area.x_px + (fx as f32) * area.width_px,
            area.y_px + (1.0 - fy as f32) * area.height_px,
        ]
    };

    // Image under the data, grid, data, frame.
    if let Some(img) = &spec.image {
        let scaled = resample_nearest(&img.image, area.width_px as u32, area.height_px as u32);
        fig.items.push(Item::Raster {
            x_px: area.x_px,
            y_px: area.y_px,
            image: Arc::new(scaled),
        });
    }
    let x_ticks = ticks_for(
        &spec.x,
        xr,
        ((area.width_px / (6.0 * text_h)) as usize).clamp(2, 11),
    );
    let grid_w = rule.max(1.0) * 0.8;
    for &v in &x_ticks.values {
        let [px, _] = to_px(v, yr[0]);
        if spec.image.is_none() {
            fig.items.push(Item::Rect {
                rect: Rect::new(px - 0.5 * grid_w, area.y_px, grid_w, area.height_px),
                fill: th.grid,
            });
        }
    }
    for &v in &y_ticks.values {
        let [_, py] = to_px(xr[0], v);
        if spec.image.is_none() {
            fig.items.push(Item::Rect {
                rect: Rect::new(area.x_px, py - 0.5 * grid_w, area.width_px, grid_w),
                fill: th.grid,
            });
        }
    }
    let line_w = style.px(pt::DATA_LINE).max(1.0);
    for s in &spec.series {
        // Non-finite points break the line.
        for run in s.points.split(|p| !(p[0].is_finite() && p[1].is_finite())) {
            if run.is_empty() {
                continue;
            }
            let line = Item::Line {
                points: run.iter().map(|p| to_px(p[0], p[1])).collect(),
                color: s.color,
                width_px: line_w,
                dash: s.dashed.then(|| (style.px(3.5), style.px(2.5))),
                dash_offset_px: 0.0,
            };
            fig.items.extend(line.clipped(area));
        }
    }
    let marker_px = style.px(7.0);
    for m in &spec.markers {
        let [px, py] = to_px(m.x, m.y);
        let item = Item::Marker {
            x_px: px,
            y_px: py,
            shape: m.shape,
            size_px: marker_px,
            stroke_px: (0.2 * marker_px).max(1.0),
            color: m.color,
        };
        fig.items.extend(item.clipped(area));
    }
    fig.items.extend(frame_items(area, rule, th.rule));

    // Ticks and their labels.
    for (v, label) in x_ticks.values.iter().zip(x_ticks.labels()) {
        let [px, _] = to_px(*v, yr[0]);
        let yb = area.y_px + area.height_px;
        fig.items.push(Item::Rect {
            rect: Rect::new(px - 0.5 * rule, yb, rule, tick),
            fill: th.rule,
        });
        fig.items.push(Item::Text {
            text: label,
            x_px: px,
            y_px: yb + tick + 0.25 * gap,
            size_px: text_px,
            color: th.text,
            anchor: Anchor::TopCenter,
            vertical: false,
        });
    }
    for (v, label) in y_ticks.values.iter().zip(y_labels) {
        let [_, py] = to_px(xr[0], *v);
        fig.items.push(Item::Rect {
            rect: Rect::new(area.x_px - tick, py - 0.5 * rule, tick, rule),
            fill: th.rule,
        });
        fig.items.push(Item::Text {
            text: label,
            x_px: area.x_px - tick - 0.25 * gap,
            y_px: py,
            size_px: text_px,
            color: th.text,
            anchor: Anchor::CenterRight,
            vertical: false,
        });
    }
    // Axis titles.
    fig.items.push(Item::Text {
        text: spec.x.label.clone(),
        x_px: area.x_px + 0.5 * area.width_px,
        y_px: h - margin,
        size_px: label_px,
        color: th.text,
        anchor: Anchor::BottomCenter,
        vertical: false,
    });
    let (xl_w, _) = measure_text(&spec.x.label, label_px);
    regions.push((
        "x label".into(),
        Rect::new(
            area.x_px + 0.5 * (area.width_px - xl_w),
            h - margin - label_h,
            xl_w,
            label_h,
        ),
    ));
    fig.items.push(Item::Text {
        text: spec.y.label.clone(),
        x_px: margin,
        y_px: area.y_px + 0.5 * area.height_px,
        size_px: label_px,
        color: th.text,
        anchor: Anchor::TopCenter,
        vertical: true,
    });
    let (yl_w, _) = measure_text(&spec.y.label, label_px);
    regions.push((
        "y label".into(),
        Rect::new(
            margin,
            area.y_px + 0.5 * (area.height_px - yl_w),
            label_h,
            yl_w,
        ),
    ));

    // Side panel: colour bar, then legend.
    let mut py = area.y_px;
    let px0 = area.x_px + area.width_px + 2.0 * gap;
    if let Some((block, _)) = bar {
        regions.push((
            "colour bar".into(),
            Rect::new(px0, py, block.width_px, block.height_px),
        ));
        let bh = block.height_px;
        fig.items.extend(block.place(px0, py));
        py += bh + 2.0 * gap;
    }
    if let Some(block) = legend {
        regions.push((
            "legend".into(),
            Rect::new(px0, py, block.width_px, block.height_px),
        ));
        fig.items.extend(block.place(px0, py));
    }
    fig.regions = regions
        .into_iter()
        .map(|(name, rect)| Region {
            name,
            rect,
            content: false,
        })
        .chain(std::iter::once(Region {
            name: "plot".into(),
            rect: area,
            content: true,
        }))
        .collect();
    Ok(fig)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;
    use crate::style::Sizing;
    use crate::theme::Theme;

    #[test]
    fn data_lands_at_its_coordinates_and_stays_in_the_plot_area() {
        let spec = PlotSpec {
            title: "t".into(),
            x: PlotAxis {
                label: "x (s)".into(),
                range: Some([0.0, 10.0]),
                ticks: None,
            },
            y: PlotAxis {
                label: "y (m)".into(),
                range: Some([0.0, 1.0]),
                ticks: None,
            },
            series: vec![Series {
                color: Color::rgb(255, 0, 0),
                // The second half leaves the range and must be cut at the frame.
                points: vec![[0.0, 0.0], [10.0, 1.0], [20.0, 2.0]],
                dashed: false,
            }],
            ..PlotSpec::default()
        };
        let style = Style::new(Sizing::for_pixels(640, 400), Theme::light());
        let fig = plot_figure(&spec, 640, 400, &style).unwrap();
        let area = fig.regions.iter().find(|r| r.name == "plot").unwrap().rect;
        for item in &fig.items {
            if let Item::Line { points, .. } = item
                && item_is_red(item)
            {
                for p in points {
                    assert!(
                        p[0] >= area.x_px - 0.01 && p[0] <= area.x_px + area.width_px + 0.01,
                        "{p:?} outside {area:?}"
                    );
                }
                // The diagonal runs corner to corner.
                assert!((points[0][0] - area.x_px).abs() < 0.5);
                assert!((points[0][1] - (area.y_px + area.height_px)).abs() < 0.5);
            }
        }
        let img = fig.to_image();
        let mid = (
            (area.x_px + 0.5 * area.width_px) as u32,
            (area.y_px + 0.5 * area.height_px) as u32,
        );
        let c = img.get(mid.0, mid.1).unwrap();
        assert!(c.r > 200 && c.g < 120, "no red line at the centre: {c:?}");
    }

    fn item_is_red(item: &Item) -> bool {
        matches!(item, Item::Line { color, .. } if *color == Color::rgb(255, 0, 0))
    }

    #[test]
    fn a_tiny_plot_is_refused() {
        let style = Style::new(Sizing::screen(), Theme::dark());
        assert!(plot_figure(&PlotSpec::default(), 60, 60, &style).is_err());
    }
}
