//! Plots of flights: altitude, speed and Jacobi-constant drift against time, and landing
//! positions on a latitude/longitude map of the body with a surface map behind. The time
//! series ([`PlotSeries`]) are computed by the caller (the workflow's `series`, which the app
//! uses too): this crate draws, it does no physics of its own.

use std::sync::Arc;

use nalgebra::Point3;
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::site::{direction_from_lat_lon, lat_lon_deg};
use spinfall_dynamics::surface_map::SurfaceField;
use spinfall_render::{
    Color, Figure, FigureSize, Image, LegendEntry, MarkerShape, PlotAxis, PlotImage, PlotMarker,
    PlotSpec, Series, Style, Swatch, measure_text, nice_ticks, plot_figure, pt,
};

use crate::body_view::BodyView;
use crate::error::{Result, SceneError};
use crate::palette::Palette;
use crate::scenes::field_label;
use crate::units::DisplayUnits;

/// Time series of one launch.
#[derive(Debug, Clone, Default)]
pub struct PlotSeries {
    /// Index of the launch.
    pub launch: usize,
    /// `[t_s, altitude_m]`.
    pub altitude_m: Vec<[f64; 2]>,
    /// `[t_s, speed relative to the surface m/s]`.
    pub speed_body_m_s: Vec<[f64; 2]>,
    /// `[t_s, inertial speed m/s]`.
    pub speed_inertial_m_s: Vec<[f64; 2]>,
    /// `[t_s, (C - C0)/|C0|]` of the Jacobi constant in the body frame.
    pub jacobi_rel: Vec<[f64; 2]>,
}

/// Which plot.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PlotKind {
    /// Altitude above the surface (along the radial line) against time.
    Altitude,
    /// Speed relative to the surface (and inertial speed for a single launch) against time.
    Speed,
    /// Relative drift of the Jacobi constant against time.
    JacobiDrift,
    /// Landing (rest) positions on a latitude/longitude map with a surface map behind.
    Landing,
}

/// Most launches drawn with their own legend entry (more get one entry for all).
const MAX_LEGEND_LAUNCHES: usize = 8;

fn launch_legend(reports: &[FlightReport], chosen: &[usize], pal: &Palette) -> Vec<LegendEntry> {
    if chosen.len() > MAX_LEGEND_LAUNCHES {
        return vec![LegendEntry::new(
            pal.launch(0),
            format!("{} launches (colours cycle)", chosen.len()),
            Swatch::Line,
        )];
    }
    chosen
        .iter()
        .map(|&i| LegendEntry::new(pal.launch(i), reports[i].id.clone(), Swatch::Line))
        .collect()
}

/// The data of a time plot of `kind` for the launches `chosen`.
fn time_plot(
    series: &[PlotSeries],
    reports: &[FlightReport],
    chosen: &[usize],
    kind: PlotKind,
    pal: &Palette,
    units: DisplayUnits,
) -> PlotSpec {
    let series: Vec<&PlotSeries> = chosen
        .iter()
        .filter_map(|&i| series.iter().find(|s| s.launch == i))
        .collect();
    let mut spec = PlotSpec {
        x: PlotAxis {
            label: format!("time after launch ({})", units.time_symbol()),
            ..PlotAxis::default()
        },
        legend: launch_legend(reports, chosen, pal),
        ..PlotSpec::default()
    };
    // Times (and altitudes) in the shown units; speeds and the drift have one unit.
    let (t_per, y_per) = (
        units.seconds_per_time_unit(),
        units.metres_per_length_unit(),
    );
    let scaled = |points: &[[f64; 2]], y_scale: f64| -> Vec<[f64; 2]> {
        points
            .iter()
            .map(|p| [p[0] / t_per, p[1] / y_scale])
            .collect()
    };
    let line = |i: usize, points: &[[f64; 2]], dashed: bool| Series {
        color: pal.launch(i),
        points: scaled(points, 1.0),
        dashed,
    };
    match kind {
        PlotKind::Altitude => {
            spec.title = "Altitude above the surface".into();
            spec.y.label = format!("altitude ({})", units.length_symbol());
            spec.series = series
                .iter()
                .map(|s| Series {
                    points: scaled(&s.altitude_m, y_per),
                    ..line(s.launch, &[], false)
                })
                .collect();
        }
        PlotKind::Speed => {
            spec.title = "Speed".into();
            spec.y.label = "speed (m/s)".into();
            spec.series = series
                .iter()
                .map(|s| line(s.launch, &s.speed_body_m_s, false))
                .collect();
            if chosen.len() == 1 {
                spec.series.extend(
                    series
                        .iter()
                        .map(|s| line(s.launch, &s.speed_inertial_m_s, true)),
                );
                spec.legend = vec![
                    LegendEntry::new(
                        pal.launch(chosen[0]),
                        "relative to the surface",
                        Swatch::Line,
                    ),
                    LegendEntry::new(pal.launch(chosen[0]), "inertial", Swatch::Dashed),
                ];
            } else {
                spec.notes
                    .push("speed relative to the rotating surface".into());
            }
        }
        // (The landing map is drawn by `landing_plot`.)
        PlotKind::JacobiDrift | PlotKind::Landing => {
            // With sunlight or the solar tide the integral is not conserved: its change is the
            // energy those forces add, not a drift of the integrator.
            let forced = chosen
                .iter()
                .any(|&i| reports[i].jacobi_rel_drift.is_none());
            spec.title = if forced {
                "Jacobi constant change".into()
            } else {
                "Jacobi constant drift".into()
            };
            spec.y.label = "(C − C₀) / |C₀|".into();
            spec.series = series
                .iter()
                .map(|s| line(s.launch, &s.jacobi_rel, false))
                .collect();
            if forced {
                spec.notes.push(
                    "not conserved under sunlight or the solar tide: the change is the energy they add"
                        .into(),
                );
            }
            if chosen.iter().any(|&i| !reports[i].contacts.is_empty()) {
                spec.notes.push(
                    "steps at contacts are energy lost in bounces, not integration error".into(),
                );
            }
        }
    }
    spec
}

/// A latitude/longitude raster of `field` on the body: for each pixel the face met coming in
/// along the radial line at that latitude and longitude, coloured through the map.
fn lat_lon_image(
    view: &BodyView,
    field: SurfaceField,
    colormap: spinfall_render::Colormap,
    range: Option<[f64; 2]>,
    width_px: u32,
) -> Option<(Image, f64, f64)> {
    let colors = view.map_colors_in(field, colormap, range)?;
    let body = view.body();
    let (w, h) = (width_px.clamp(16, 2048), (width_px / 2).clamp(8, 1024));
    let far = body.brillouin_radius_m() * 2.0 + 1.0;
    let mut img = Image::new(w, h, Color::GREY);
    for y in 0..h {
        let lat = 90.0 - (y as f64 + 0.5) * 180.0 / h as f64;
        for x in 0..w {
            let lon = -180.0 + (x as f64 + 0.5) * 360.0 / w as f64;
            let d = direction_from_lat_lon(body, lat, lon);
            let origin = Point3::from(d * far);
            if let Some(hit) = body.shape.ray_first_hit(&origin, &(-d), far)
                && let Some(c) = colors.colors.get(hit.face)
            {
                img.set(x, y, *c);
            }
        }
    }
    Some((img, colors.min, colors.max))
}

fn landing_plot(
    view: &BodyView,
    reports: &[FlightReport],
    chosen: &[usize],
    field: SurfaceField,
    pal: &Palette,
) -> PlotSpec {
    let body = view.body();
    let mut markers = Vec::new();
    let mut landed = 0;
    for &i in chosen {
        let r = &reports[i];
        let launch = lat_lon_deg(body, &Point3::from(r.launch_pos_body_m));
        markers.push(PlotMarker {
            x: launch.1,
            y: launch.0,
            shape: MarkerShape::Ring,
            color: pal.site,
        });
        if let Some(l) = &r.landing {
            landed += 1;
            markers.push(PlotMarker {
                x: l.lon_deg,
                y: l.lat_deg,
                shape: MarkerShape::Square,
                color: pal.launch(i),
            });
        }
    }
    let colormap = spinfall_render::Colormap::Viridis;
    let image = lat_lon_image(view, field, colormap, None, 720).map(|(img, min, max)| PlotImage {
        image: Arc::new(img),
        colormap,
        min,
        max,
        label: field_label(field),
    });
    let degrees =
        |lo: f64, hi: f64| Some((0..=12).map(|k| lo + (hi - lo) * k as f64 / 12.0).collect());
    PlotSpec {
        title: "Landing positions".into(),
        notes: vec![format!(
            "{landed} of {} launches came to rest (squares, launch colours); rings: launch sites",
            chosen.len()
        )],
        x: PlotAxis {
            label: "longitude (deg)".into(),
            range: Some([-180.0, 180.0]),
            ticks: degrees(-180.0, 180.0),
        },
        y: PlotAxis {
            label: "latitude (deg)".into(),
            range: Some([-90.0, 90.0]),
            ticks: degrees(-90.0, 90.0).map(|v: Vec<f64>| v.into_iter().step_by(2).collect()),
        },
        markers,
        image,
        legend: launch_legend(reports, chosen, pal)
            .into_iter()
            .map(|e| LegendEntry {
                swatch: Swatch::Marker(MarkerShape::Square),
                ..e
            })
            .chain([LegendEntry::new(
                pal.site,
                "launch site",
                Swatch::Marker(MarkerShape::Ring),
            )])
            .collect(),
        ..PlotSpec::default()
    }
}

/// Most x tick labels a time plot gets.
const MAX_X_TICKS: usize = 11;

/// How many x tick labels a plot figure has (texts between the data area and the x label).
fn x_tick_labels(fig: &Figure) -> usize {
    let region = |name: &str| fig.regions.iter().find(|r| r.name == name).map(|r| r.rect);
    let (Some(area), Some(label)) = (region("plot"), region("x label")) else {
        return 0;
    };
    let bottom = area.y_px + area.height_px;
    fig.items
        .iter()
        .filter(|i| {
            matches!(i, spinfall_render::Item::Text { y_px, vertical: false, .. }
                if *y_px > bottom && *y_px < label.y_px)
        })
        .count()
}

/// Round x ticks over the data of `spec`, as many as fit side by side in `width_px` with a gap
/// of one character between labels of `text_px`: three or more when they fit, else two;
/// `None` when not even two fit.
fn fitted_ticks(spec: &PlotSpec, width_px: f32, text_px: f32) -> Option<Vec<f64>> {
    let (lo, hi) = spec
        .series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| p[0]))
        .filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        });
    if !(lo.is_finite() && hi > lo) {
        return None;
    }
    let fitting = |count: usize| {
        let ticks = nice_ticks(lo, hi, count);
        let widest = ticks
            .labels()
            .iter()
            .map(|l| measure_text(l, text_px).0)
            .fold(0.0f32, f32::max);
        let n = ticks.values.len();
        (n as f32 * (widest + text_px) <= width_px).then_some(ticks.values)
    };
    // The densest that fits with three labels or more, else two (never one).
    (2..=MAX_X_TICKS)
        .rev()
        .filter_map(fitting)
        .find(|t| t.len() >= 3)
        .or_else(|| {
            (2..=MAX_X_TICKS)
                .rev()
                .filter_map(fitting)
                .find(|t| t.len() >= 2)
        })
}

/// Settings of a plot figure.
#[derive(Debug, Clone)]
pub struct PlotOptions {
    /// Which plot.
    pub kind: PlotKind,
    /// Size.
    pub size: FigureSize,
    /// Colours.
    pub theme: spinfall_render::ThemeKind,
    /// Only this launch (index into the reports); `None`: all.
    pub launch: Option<usize>,
    /// Surface field behind the landing map (needs the body view's map).
    pub field: SurfaceField,
    /// Units of time and altitude.
    pub units: DisplayUnits,
}

/// The plot as a figure (PNG through [`Figure::to_image`], SVG through
/// [`spinfall_render::write_svg`]); time plots draw `series` (one per launch plotted, matched by
/// [`PlotSeries::launch`]).
pub fn plot(
    view: &BodyView,
    reports: &[FlightReport],
    series: &[PlotSeries],
    opts: &PlotOptions,
) -> Result<Figure> {
    let (w, h, sizing) = opts.size.resolve()?;
    let pal = Palette::of(opts.theme);
    let chosen: Vec<usize> = match opts.launch {
        Some(i) if i < reports.len() => vec![i],
        Some(i) => {
            return Err(SceneError::Settings(format!(
                "launch {i} does not exist ({} launches)",
                reports.len()
            )));
        }
        None => (0..reports.len()).collect(),
    };
    if chosen.is_empty() {
        return Err(SceneError::Settings("no launches to plot".into()));
    }
    let spec = match opts.kind {
        PlotKind::Landing => {
            if view.map().is_none() {
                return Err(SceneError::Settings(
                    "the landing map needs the surface map of the body".into(),
                ));
            }
            landing_plot(view, reports, &chosen, opts.field, &pal)
        }
        kind => time_plot(series, reports, &chosen, kind, &pal, opts.units),
    };
    let style = Style::new(sizing, pal.theme);
    let mut fig = plot_figure(&spec, w, h, &style)?;
    // Small plots of long flights get few x tick labels from the default count (two over
    // 9000 s in a 400 px plot); then as many round ticks as their labels leave room for.
    if opts.kind != PlotKind::Landing
        && spec.x.ticks.is_none()
        && x_tick_labels(&fig) < 3
        && let Some(area) = fig
            .regions
            .iter()
            .find(|r| r.name == "plot")
            .map(|r| r.rect)
        && let Some(ticks) = fitted_ticks(&spec, area.width_px, style.px(pt::TEXT))
    {
        let mut denser = spec.clone();
        denser.x.ticks = Some(ticks);
        fig = plot_figure(&denser, w, h, &style)?;
    }
    fig.dpi = opts.size.dpi();
    fig.size_mm = opts.size.size_mm().map(|(a, b)| [a, b]);
    fig.metadata = vec![
        (
            "Software".into(),
            "Spinfall (research and planning tool, not flight-certified)".into(),
        ),
        ("Title".into(), spec.title.clone()),
        ("Theme".into(), opts.theme.name().into()),
        ("Launches".into(), chosen.len().to_string()),
    ];
    Ok(fig)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use spinfall_render::{Sizing, Theme};

    use super::*;

    /// Regression (issue 10): a small plot of a 9000 s flight had one or two x tick labels.
    #[test]
    fn small_plots_of_long_flights_get_at_least_three_x_tick_labels_that_fit() {
        let spec = PlotSpec {
            x: PlotAxis {
                label: "time after launch (s)".into(),
                ..PlotAxis::default()
            },
            series: vec![Series {
                color: Color::WHITE,
                points: (0..=90)
                    .map(|k| [100.0 * k as f64, (k as f64).sin()])
                    .collect(),
                dashed: false,
            }],
            ..PlotSpec::default()
        };
        let style = Style::new(Sizing::for_dpi(108.0), Theme::dark());
        let (w, h) = (420, 220);
        let fig = plot_figure(&spec, w, h, &style).unwrap();
        let area = fig.regions.iter().find(|r| r.name == "plot").unwrap().rect;
        let text_px = style.px(pt::TEXT);
        // The default count leaves this plot with fewer than three labels.
        assert!(x_tick_labels(&fig) < 3);
        let ticks = fitted_ticks(&spec, area.width_px, text_px).unwrap();
        assert!(ticks.len() >= 3, "{ticks:?}");
        let mut denser = spec.clone();
        denser.x.ticks = Some(ticks.clone());
        let fig = plot_figure(&denser, w, h, &style).unwrap();
        assert_eq!(x_tick_labels(&fig), ticks.len());
        // Side by side, the labels leave room between them.
        let labels = nice_ticks(0.0, 9000.0, 2).labels();
        let widest = labels
            .iter()
            .map(|l| measure_text(l, text_px).0)
            .fold(0.0, f32::max);
        assert!(ticks.len() as f32 * widest < area.width_px);
        // Nothing to fit in an empty plot.
        assert!(fitted_ticks(&PlotSpec::default(), 400.0, text_px).is_none());
    }
}
