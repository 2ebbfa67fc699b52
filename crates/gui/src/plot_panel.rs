//! Plots of the selected launch in the results panel, drawn by the same code as the exported
//! plot figures (`spinfall_scene::plots`): tick labels chosen to fit at any time range, the
//! legend beside the plot area, the axis labels outside it, units from the display units.
//! The series are computed on a worker; the figure is rasterized here only when something it
//! shows changes, and the current time is drawn over it as a cursor.

use std::sync::Arc;

use egui::{Color32, Rect, Sense, TextureHandle, TextureOptions, Ui};
use spinfall_render::{Figure, FigureSize, ThemeKind};
use spinfall_scene::DisplayUnits;
use spinfall_scene::plots::{PlotKind, PlotOptions, PlotSeries, plot};
use spinfall_workflow::series::plot_series;

use crate::app::SpinfallApp;
use crate::jobs::{Job, Poll};
use crate::views::to_color_image;

/// What the Jacobi plot shows (the figure says the second half itself when there are contacts).
pub const JACOBI_NOTE: &str = "Between contacts the drift measures integration error (the \
     table's Jacobi column, typically 1e-9 or less). Steps at contacts are energy lost in \
     bounces, not integration error.";

/// Resolution the plot is drawn at per point of the screen: 1.5 pixels per typographic point.
const SCREEN_DPI: f64 = 108.0;

/// Most samples used for the plots (the trace is thinned evenly beyond that).
const MAX_PLOT_SAMPLES: usize = 600;

/// The plots the panel offers.
const KINDS: [(PlotKind, &str); 4] = [
    (PlotKind::Altitude, "Altitude"),
    (PlotKind::Speed, "Speed"),
    (PlotKind::JacobiDrift, "Jacobi"),
    (PlotKind::Landing, "Landing map"),
];

/// Everything the picture depends on.
#[derive(Debug, Clone, PartialEq)]
struct PlotKey {
    launch: usize,
    kind: PlotKind,
    size_px: [u32; 2],
    units: DisplayUnits,
    data_generation: u64,
}

/// A drawn plot: its texture, the figure (for tests) and where its data area is.
struct Drawn {
    key: PlotKey,
    texture: TextureHandle,
    figure: Figure,
}

/// State of the plot panel.
pub struct PlotPanel {
    /// Which plot.
    pub kind: PlotKind,
    job: Option<(usize, u64, Job<Vec<PlotSeries>>)>,
    series: Option<(usize, u64, Arc<Vec<PlotSeries>>)>,
    drawn: Option<Drawn>,
    /// Why the last plot could not be drawn.
    error: Option<String>,
}

impl Default for PlotPanel {
    fn default() -> Self {
        Self {
            kind: PlotKind::Altitude,
            job: None,
            series: None,
            drawn: None,
            error: None,
        }
    }
}

impl PlotPanel {
    /// Whether the series of a plot are being computed.
    pub fn busy(&self) -> bool {
        self.job.is_some()
    }

    /// Collects the series when they are ready.
    pub fn poll(&mut self) {
        if let Some((launch, g, job)) = &self.job
            && let Poll::Done(result) = job.poll()
        {
            if let Ok(series) = result {
                self.series = Some((*launch, *g, Arc::new(series)));
            }
            self.job = None;
        }
    }

    /// Forget the series and the picture (new results).
    pub fn clear(&mut self) {
        self.job = None;
        self.series = None;
        self.drawn = None;
        self.error = None;
    }
}

/// `(min, max)` of the x values of the plotted series (the plot's x range: it is fitted to the
/// data without padding).
fn x_range(series: &[PlotSeries], kind: PlotKind, units: DisplayUnits) -> Option<(f64, f64)> {
    let per = units.seconds_per_time_unit();
    let xs = series.iter().flat_map(|s| {
        let pts = match kind {
            PlotKind::Altitude => &s.altitude_m,
            PlotKind::Speed => &s.speed_body_m_s,
            _ => &s.jacobi_rel,
        };
        let extra = if kind == PlotKind::Speed {
            s.speed_inertial_m_s.as_slice()
        } else {
            &[]
        };
        pts.iter().chain(extra).map(move |p| p[0] / per)
    });
    let (lo, hi) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
        (a.min(x), b.max(x))
    });
    (lo.is_finite() && hi > lo).then_some((lo, hi))
}

impl SpinfallApp {
    /// The plot figure drawn last (its texts, regions and items), for tests.
    pub fn plot_figure(&self) -> Option<&Figure> {
        self.plot.drawn.as_ref().map(|d| &d.figure)
    }

    /// Which plot the results panel shows.
    pub fn set_plot_kind(&mut self, kind: PlotKind) {
        self.plot.kind = kind;
    }

    pub(crate) fn plots_ui(&mut self, ui: &mut Ui) {
        let Some(i) = self
            .state
            .view
            .selected_launch
            .filter(|&i| i < self.reports.len())
        else {
            ui.weak("Select a launch to plot it.");
            return;
        };
        let Some(view) = self.view.clone() else {
            return;
        };
        let generation = self.data_generation;
        // Collect or start the series of the selected launch.
        self.plot.poll();
        let have = matches!(&self.plot.series, Some((l, g, _)) if *l == i && *g == generation);
        let running = matches!(&self.plot.job, Some((l, g, _)) if *l == i && *g == generation);
        if !have && !running {
            let body = view.body().clone();
            let reports = self.reports.clone();
            let job = Job::spawn("Plot", self.repaint.clone(), move |_| {
                Ok(plot_series(&body, &reports, &[i], MAX_PLOT_SAMPLES))
            });
            self.plot.job = Some((i, generation, job));
        }
        ui.horizontal(|ui| {
            ui.strong(format!("Launch {}", self.reports[i].id));
            ui.separator();
            for (kind, name) in KINDS {
                let enabled = kind != PlotKind::Landing || view.map().is_some();
                let r = ui.add_enabled(
                    enabled,
                    egui::Button::selectable(self.plot.kind == kind, name),
                );
                let r = match kind {
                    PlotKind::Landing if !enabled => {
                        r.on_disabled_hover_text("Needs the surface map")
                    }
                    PlotKind::JacobiDrift => r.on_hover_text(JACOBI_NOTE),
                    _ => r,
                };
                if r.clicked() {
                    self.plot.kind = kind;
                }
            }
        });
        if self.plot.kind == PlotKind::Landing && view.map().is_none() {
            self.plot.kind = PlotKind::Altitude;
        }
        let kind = self.plot.kind;
        let Some((_, _, series)) = self
            .plot
            .series
            .clone()
            .filter(|(l, g, _)| *l == i && *g == generation)
        else {
            ui.spinner();
            return;
        };
        let units = self.state.view.units;
        let ppp = ui.ctx().pixels_per_point();
        let avail = ui.available_size();
        let size_pt = egui::vec2(avail.x.max(120.0), avail.y.max(80.0));
        let size_px = [
            (size_pt.x * ppp).round() as u32,
            (size_pt.y * ppp).round() as u32,
        ];
        let key = PlotKey {
            launch: i,
            kind,
            size_px,
            units,
            data_generation: generation,
        };
        if self.plot.drawn.as_ref().map(|d| &d.key) != Some(&key) {
            let opts = PlotOptions {
                kind,
                // Text at the size of the app's own (8 pt at 1.5 px per pt and point).
                size: FigureSize::Physical {
                    width: size_px[0] as f64 / (SCREEN_DPI * ppp as f64),
                    height: size_px[1] as f64 / (SCREEN_DPI * ppp as f64),
                    unit: spinfall_render::PhysicalUnit::In,
                    dpi: SCREEN_DPI * ppp as f64,
                },
                theme: ThemeKind::Dark,
                launch: if kind == PlotKind::Landing {
                    None
                } else {
                    Some(i)
                },
                field: self
                    .state
                    .view
                    .map
                    .unwrap_or(spinfall_dynamics::surface_map::SurfaceField::Slope),
                units,
            };
            match plot(&view, &self.reports, &series, &opts) {
                Ok(figure) => {
                    let image = to_color_image(&figure.to_image());
                    let texture =
                        ui.ctx()
                            .load_texture("results plot", image, TextureOptions::LINEAR);
                    self.plot.drawn = Some(Drawn {
                        key,
                        texture,
                        figure,
                    });
                    self.plot.error = None;
                }
                Err(e) => {
                    self.plot.drawn = None;
                    self.plot.error = Some(e.to_string());
                }
            }
        }
        let Some(drawn) = &self.plot.drawn else {
            if let Some(e) = &self.plot.error {
                ui.weak("No room for the plot: drag the top edge of the results panel up.")
                    .on_hover_text(e);
            }
            return;
        };
        let (rect, response) = ui.allocate_exact_size(size_pt, Sense::hover());
        ui.painter().image(
            drawn.texture.id(),
            rect,
            Rect::from_min_max(egui::pos2(0.0, 0.0), egui::pos2(1.0, 1.0)),
            Color32::WHITE,
        );
        if kind == PlotKind::Landing {
            return;
        }
        // The current time as a cursor over the data area, and the value under the pointer.
        let area = drawn
            .figure
            .regions
            .iter()
            .find(|r| r.name == "plot")
            .map(|r| r.rect);
        let (Some(area), Some((x0, x1))) = (area, x_range(&series, kind, units)) else {
            return;
        };
        let area = Rect::from_min_size(
            rect.min + egui::vec2(area.x_px / ppp, area.y_px / ppp),
            egui::vec2(area.width_px / ppp, area.height_px / ppp),
        );
        let to_x = |t: f64| area.left() + area.width() * ((t - x0) / (x1 - x0)) as f32;
        let t_now = units.time(self.t_s);
        if (x0..=x1).contains(&t_now) {
            let x = to_x(t_now);
            ui.painter().line_segment(
                [egui::pos2(x, area.top()), egui::pos2(x, area.bottom())],
                egui::Stroke::new(1.0, Color32::from_rgba_unmultiplied(255, 255, 255, 140)),
            );
        }
        if let Some(p) = response.hover_pos()
            && area.contains(p)
        {
            let t_shown = x0 + (x1 - x0) * ((p.x - area.left()) / area.width()) as f64;
            let t_s = t_shown * units.seconds_per_time_unit();
            let s = &series[0];
            let nearest = |pts: &[[f64; 2]]| {
                pts.iter()
                    .min_by(|a, b| (a[0] - t_s).abs().total_cmp(&(b[0] - t_s).abs()))
                    .copied()
            };
            let text = match kind {
                PlotKind::Altitude => {
                    nearest(&s.altitude_m).map(|q| format!("altitude {}", units.fmt_length(q[1])))
                }
                PlotKind::Speed => nearest(&s.speed_body_m_s)
                    .map(|q| format!("speed {:.4} m/s relative to the surface", q[1])),
                _ => nearest(&s.jacobi_rel).map(|q| format!("drift {:.3e}", q[1])),
            };
            if let Some(text) = text {
                response.on_hover_text_at_pointer(format!("t = {}\n{text}", units.fmt_time(t_s)));
            }
        }
    }
}
