//! The results table (sortable, selects the trace in the views) and the plots of the selected
//! launch.

use egui::Ui;
use egui_extras::{Column, TableBuilder};
use egui_plot::{Legend, Line, Plot, PlotPoints};
use spinfall_dynamics::{FlightReport, Outcome};

use crate::app::SpinfallApp;
use crate::command::Command;
use crate::jobs::{Job, Poll};

/// Table columns.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ResultColumn {
    /// Launch identifier.
    Id,
    /// Outcome.
    Outcome,
    /// Time to first contact.
    FlightTime,
    /// Time to rest.
    RestTime,
    /// Landing latitude.
    Lat,
    /// Landing longitude.
    Lon,
    /// Downrange distance.
    Downrange,
    /// Max altitude.
    MaxAltitude,
    /// First impact speed.
    ImpactSpeed,
    /// First impact angle.
    ImpactAngle,
    /// Number of contacts.
    Bounces,
    /// Jacobi drift.
    Jacobi,
    /// Frame agreement.
    Agreement,
}

const COLUMNS: [(ResultColumn, &str); 13] = [
    (ResultColumn::Id, "Launch"),
    (ResultColumn::Outcome, "Outcome"),
    (ResultColumn::FlightTime, "Flight time (s)"),
    (ResultColumn::RestTime, "Rest at (s)"),
    (ResultColumn::Lat, "Land lat (°)"),
    (ResultColumn::Lon, "Land lon (°)"),
    (ResultColumn::Downrange, "Downrange (m)"),
    (ResultColumn::MaxAltitude, "Max alt (m)"),
    (ResultColumn::ImpactSpeed, "Impact (m/s)"),
    (ResultColumn::ImpactAngle, "Impact angle (°)"),
    (ResultColumn::Bounces, "Contacts"),
    (ResultColumn::Jacobi, "Jacobi drift"),
    (ResultColumn::Agreement, "Frame agree (m)"),
];

/// Sorting of the table.
#[derive(Default)]
pub struct TableState {
    /// Column and ascending flag.
    pub sort: Option<(ResultColumn, bool)>,
    /// Which plot: 0 altitude, 1 speed, 2 Jacobi drift.
    pub plot_kind: usize,
    /// Plot job for the selected launch.
    pub(crate) plot_job: Option<Job<PlotSeries>>,
}

/// Outcome as short text.
pub fn outcome_text(o: &Outcome) -> String {
    match o {
        Outcome::Landed => "landed".into(),
        Outcome::Escaped => "escaped".into(),
        Outcome::StillFlying => "still flying".into(),
        Outcome::Failed { reason } => format!("failed: {reason}"),
    }
}

/// Numeric value of a column for sorting (NaN when absent).
fn sort_value(r: &FlightReport, c: ResultColumn) -> f64 {
    let first = r.contacts.first();
    match c {
        ResultColumn::Id | ResultColumn::Outcome => f64::NAN,
        ResultColumn::FlightTime => r.first_contact_time_s.unwrap_or(f64::NAN),
        ResultColumn::RestTime => r.rest_time_s.unwrap_or(f64::NAN),
        ResultColumn::Lat => r.landing.as_ref().map(|l| l.lat_deg).unwrap_or(f64::NAN),
        ResultColumn::Lon => r.landing.as_ref().map(|l| l.lon_deg).unwrap_or(f64::NAN),
        ResultColumn::Downrange => r.downrange_m.unwrap_or(f64::NAN),
        ResultColumn::MaxAltitude => r.max_altitude_m,
        ResultColumn::ImpactSpeed => first.map(|c| c.impact_speed_m_s).unwrap_or(f64::NAN),
        ResultColumn::ImpactAngle => first.map(|c| c.impact_angle_deg).unwrap_or(f64::NAN),
        ResultColumn::Bounces => r.contacts.len() as f64,
        ResultColumn::Jacobi => r.jacobi_rel_drift,
        ResultColumn::Agreement => r.frame_agreement_m,
    }
}

/// A cell's sort key.
#[derive(Debug, Clone, PartialEq)]
pub enum SortKey {
    /// Text (sorted lexically).
    Text(String),
    /// A number (NaN: missing, always last).
    Num(f64),
}

/// Row order for a sort (stable; missing values last).
pub fn sorted_order(reports: &[FlightReport], sort: Option<(ResultColumn, bool)>) -> Vec<usize> {
    let Some((col, asc)) = sort else {
        return (0..reports.len()).collect();
    };
    let keys: Vec<SortKey> = reports
        .iter()
        .map(|r| match col {
            ResultColumn::Id => SortKey::Text(r.id.clone()),
            ResultColumn::Outcome => SortKey::Text(outcome_text(&r.outcome)),
            _ => SortKey::Num(sort_value(r, col)),
        })
        .collect();
    order_by_keys(&keys, asc)
}

/// Indices ordering `keys` ascending or descending; NaN numbers go last either way.
pub fn order_by_keys(keys: &[SortKey], ascending: bool) -> Vec<usize> {
    let mut order: Vec<usize> = (0..keys.len()).collect();
    order.sort_by(|&a, &b| {
        let ord = match (&keys[a], &keys[b]) {
            (SortKey::Num(va), SortKey::Num(vb)) => match (va.is_nan(), vb.is_nan()) {
                (true, true) => std::cmp::Ordering::Equal,
                (true, false) => return std::cmp::Ordering::Greater,
                (false, true) => return std::cmp::Ordering::Less,
                _ => va.total_cmp(vb),
            },
            (SortKey::Text(ta), SortKey::Text(tb)) => ta.cmp(tb),
            (SortKey::Text(_), SortKey::Num(_)) => std::cmp::Ordering::Less,
            (SortKey::Num(_), SortKey::Text(_)) => std::cmp::Ordering::Greater,
        };
        if ascending { ord } else { ord.reverse() }
    });
    order
}

fn opt(v: Option<f64>, decimals: usize) -> String {
    match v {
        Some(v) if v.is_finite() => format!("{v:.decimals$}"),
        _ => "—".into(),
    }
}

pub use spinfall_scene::plots::{PlotSeries, plot_series};

/// A named line of a plot.
type NamedSeries<'a> = (&'a str, &'a Vec<[f64; 2]>);

impl SpinfallApp {
    pub(crate) fn results_ui(&mut self, ui: &mut Ui) {
        ui.horizontal(|ui| {
            ui.heading("Results");
            ui.weak(format!("{} launch(es)", self.reports.len()));
            if ui.button("Export…").clicked() {
                self.commands.push(Command::ShowExport);
            }
        });
        if self.reports.is_empty() {
            ui.weak("Run to fill this table (Ctrl+R).");
            return;
        }
        let width = ui.available_width();
        ui.horizontal_top(|ui| {
            ui.vertical(|ui| {
                ui.set_width((width * 0.58).max(300.0));
                self.table_ui(ui);
            });
            ui.separator();
            ui.vertical(|ui| self.plots_ui(ui));
        });
    }

    fn table_ui(&mut self, ui: &mut Ui) {
        let reports = self.reports.clone();
        let order = sorted_order(&reports, self.table.sort);
        let selected = self.state.view.selected_launch;
        let mut clicked_row = None;
        let mut clicked_header = None;
        egui::ScrollArea::horizontal().show(ui, |ui| {
            let max_h = ui.available_height() - 24.0;
            let mut table = TableBuilder::new(ui)
                .striped(true)
                .resizable(true)
                .sense(egui::Sense::click())
                .cell_layout(egui::Layout::left_to_right(egui::Align::Center))
                .min_scrolled_height(60.0)
                .max_scroll_height(max_h);
            for (i, _) in COLUMNS.iter().enumerate() {
                table = table.column(if i == 1 {
                    Column::auto().at_least(70.0)
                } else {
                    Column::auto().at_least(50.0)
                });
            }
            table
                .header(22.0, |mut header| {
                    for (col, name) in COLUMNS {
                        header.col(|ui| {
                            let arrow = match self.table.sort {
                                Some((c, true)) if c == col => " (up)",
                                Some((c, false)) if c == col => " (down)",
                                _ => "",
                            };
                            if ui
                                .add(
                                    egui::Button::new(
                                        egui::RichText::new(format!("{name}{arrow}")).strong(),
                                    )
                                    .frame(false),
                                )
                                .on_hover_text("Sort by this column")
                                .clicked()
                            {
                                clicked_header = Some(col);
                            }
                        });
                    }
                })
                .body(|body| {
                    body.rows(20.0, order.len(), |mut row| {
                        let i = order[row.index()];
                        let r = &reports[i];
                        row.set_selected(selected == Some(i));
                        let first = r.contacts.first();
                        let cells = [
                            r.id.clone(),
                            outcome_text(&r.outcome),
                            opt(r.first_contact_time_s, 1),
                            opt(r.rest_time_s, 1),
                            opt(r.landing.as_ref().map(|l| l.lat_deg), 2),
                            opt(r.landing.as_ref().map(|l| l.lon_deg), 2),
                            opt(r.downrange_m, 1),
                            opt(Some(r.max_altitude_m), 1),
                            opt(first.map(|c| c.impact_speed_m_s), 4),
                            opt(first.map(|c| c.impact_angle_deg), 1),
                            r.contacts.len().to_string(),
                            format!("{:.1e}", r.jacobi_rel_drift),
                            format!("{:.1e}", r.frame_agreement_m),
                        ];
                        for (k, text) in cells.into_iter().enumerate() {
                            row.col(|ui| {
                                if k == 0 {
                                    let c = spinfall_scene::launch_color(i);
                                    let (r, _) = ui.allocate_exact_size(
                                        egui::vec2(10.0, 10.0),
                                        egui::Sense::hover(),
                                    );
                                    ui.painter().rect_filled(
                                        r,
                                        2.0,
                                        egui::Color32::from_rgb(c.r, c.g, c.b),
                                    );
                                }
                                ui.label(text);
                            });
                        }
                        if row.response().clicked() {
                            clicked_row = Some(i);
                        }
                    });
                });
        });
        if let Some(col) = clicked_header {
            self.table.sort = match self.table.sort {
                Some((c, asc)) if c == col => Some((col, !asc)),
                _ => Some((col, true)),
            };
        }
        if let Some(i) = clicked_row {
            self.commands.push(Command::SelectLaunch(Some(i)));
        }
    }

    fn plots_ui(&mut self, ui: &mut Ui) {
        let Some(i) = self
            .state
            .view
            .selected_launch
            .filter(|&i| i < self.reports.len())
        else {
            ui.weak("Select a launch to plot it.");
            return;
        };
        // Start or collect the plot job for the selected launch.
        if let Some(job) = &self.table.plot_job
            && let Poll::Done(result) = job.poll()
        {
            self.table.plot_job = None;
            if let Ok(series) = result {
                self.plot_cache = Some(series);
            }
        }
        let have = self.plot_cache.as_ref().map(|p| p.launch) == Some(i);
        if !have
            && self.table.plot_job.is_none()
            && let Some(view) = &self.view
        {
            let body = view.body().clone();
            let reports = self.reports.clone();
            self.table.plot_job = Some(Job::spawn("Plot", self.repaint.clone(), move |_| {
                Ok(plot_series(&body, &reports[i], i))
            }));
        }
        let Some(series) = self.plot_cache.as_ref().filter(|p| p.launch == i) else {
            ui.spinner();
            return;
        };
        ui.horizontal(|ui| {
            ui.strong(format!("Launch {}", self.reports[i].id));
            ui.separator();
            for (k, name) in ["Altitude", "Speed", "Jacobi drift"]
                .into_iter()
                .enumerate()
            {
                ui.selectable_value(&mut self.table.plot_kind, k, name);
            }
        });
        let t_now = self.t_s;
        let (id, y_label, lines): (&str, &str, Vec<NamedSeries<'_>>) = match self.table.plot_kind {
            0 => (
                "alt",
                "altitude above the surface (m)",
                vec![("altitude (m)", &series.altitude_m)],
            ),
            1 => (
                "speed",
                "speed (m/s)",
                vec![
                    ("relative to the surface (m/s)", &series.speed_body_m_s),
                    ("inertial (m/s)", &series.speed_inertial_m_s),
                ],
            ),
            _ => (
                "jacobi",
                "(C - C0) / |C0|",
                vec![("Jacobi constant, relative drift", &series.jacobi_rel)],
            ),
        };
        Plot::new(id)
            .height(ui.available_height().max(80.0))
            .legend(Legend::default())
            .x_axis_label("t (s)")
            .y_axis_label(y_label)
            .allow_scroll(false)
            .show(ui, |plot_ui| {
                for (name, pts) in lines {
                    plot_ui.line(Line::new(name, PlotPoints::from(pts.clone())));
                }
                plot_ui.vline(egui_plot::VLine::new("", t_now));
            });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sorting_puts_missing_values_last_both_ways() {
        let keys: Vec<SortKey> = [Some(5.0), None, Some(1.0), Some(9.0)]
            .iter()
            .map(|v| SortKey::Num(v.unwrap_or(f64::NAN)))
            .collect();
        assert_eq!(order_by_keys(&keys, true), [2, 0, 3, 1]);
        assert_eq!(order_by_keys(&keys, false), [3, 0, 2, 1]);
        let text: Vec<SortKey> = ["b", "a", "c"]
            .iter()
            .map(|t| SortKey::Text(t.to_string()))
            .collect();
        assert_eq!(order_by_keys(&text, false), [2, 0, 1]);
    }
}
