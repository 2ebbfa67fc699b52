//! The results panel: how the results were computed (gravity method and bound), whether they
//! are out of date or the finished part of a cancelled run, the sortable table (selects the
//! trace in the views) and the plots of the selected launch.

use egui::{RichText, Ui};
use egui_extras::{Column, TableBuilder};
use spinfall_dynamics::{FlightReport, Outcome};
use spinfall_scene::DisplayUnits;
use spinfall_workflow::export::outcome_text;

use crate::app::{RunState, SpinfallApp};
use crate::command::Command;
use crate::menu::AMBER;

/// Table columns.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ResultColumn {
    /// Launch identifier.
    Id,
    /// Outcome.
    Outcome,
    /// Time to first contact.
    FlightTime,
    /// When the flight ended (rest, escape, time limit).
    EndTime,
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

/// The columns with their headers in the display units.
fn columns(units: DisplayUnits) -> [(ResultColumn, String); 13] {
    let (t, l) = (units.time_symbol(), units.length_symbol());
    [
        (ResultColumn::Id, "Launch".into()),
        (ResultColumn::Outcome, "Outcome".into()),
        (ResultColumn::FlightTime, format!("First contact ({t})")),
        (ResultColumn::EndTime, format!("Ended at ({t})")),
        (ResultColumn::Lat, "Land lat (°)".into()),
        (ResultColumn::Lon, "Land lon (°)".into()),
        (ResultColumn::Downrange, format!("Downrange ({l})")),
        (ResultColumn::MaxAltitude, format!("Max alt ({l})")),
        (ResultColumn::ImpactSpeed, "Impact (m/s)".into()),
        (ResultColumn::ImpactAngle, "Impact angle (°)".into()),
        (ResultColumn::Bounces, "Contacts".into()),
        (ResultColumn::Jacobi, "Jacobi drift".into()),
        (ResultColumn::Agreement, "Frame agree (m)".into()),
    ]
}

/// Sorting of the table.
#[derive(Default)]
pub struct TableState {
    /// Column and ascending flag.
    pub sort: Option<(ResultColumn, bool)>,
}

/// Numeric value of a column for sorting (NaN when absent).
fn sort_value(r: &FlightReport, c: ResultColumn) -> f64 {
    let first = r.contacts.first();
    match c {
        ResultColumn::Id | ResultColumn::Outcome => f64::NAN,
        ResultColumn::FlightTime => r.first_contact_time_s.unwrap_or(f64::NAN),
        ResultColumn::EndTime => r.end_time_s,
        ResultColumn::Lat => r.landing.as_ref().map(|l| l.lat_deg).unwrap_or(f64::NAN),
        ResultColumn::Lon => r.landing.as_ref().map(|l| l.lon_deg).unwrap_or(f64::NAN),
        ResultColumn::Downrange => r.downrange_m.unwrap_or(f64::NAN),
        ResultColumn::MaxAltitude => r.max_altitude_m,
        ResultColumn::ImpactSpeed => first.map(|c| c.impact_speed_m_s).unwrap_or(f64::NAN),
        ResultColumn::ImpactAngle => first.map(|c| c.impact_angle_deg).unwrap_or(f64::NAN),
        ResultColumn::Bounces => r.contacts.len() as f64,
        ResultColumn::Jacobi => r.jacobi_rel_drift.unwrap_or(f64::NAN),
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

/// The cells of one row, lengths and times in the display units.
pub fn row_cells(r: &FlightReport, units: DisplayUnits) -> [String; 13] {
    let first = r.contacts.first();
    let (td, ld) = (units.time_decimals(), units.length_decimals());
    let time = |s: Option<f64>| opt(s.map(|s| units.time(s)), td);
    let length = |m: Option<f64>| opt(m.map(|m| units.length(m)), ld);
    // Every flight that ended has an end time: rest, escape, the time limit or a failure.
    let end = match &r.outcome {
        Outcome::Landed if r.rest_time_s.is_some() => time(r.rest_time_s),
        _ => time(Some(r.end_time_s)),
    };
    [
        r.id.clone(),
        outcome_text(&r.outcome),
        time(r.first_contact_time_s),
        end,
        opt(r.landing.as_ref().map(|l| l.lat_deg), 2),
        opt(r.landing.as_ref().map(|l| l.lon_deg), 2),
        length(r.downrange_m),
        length(Some(r.max_altitude_m)),
        opt(first.map(|c| c.impact_speed_m_s), 4),
        opt(first.map(|c| c.impact_angle_deg), 1),
        r.contacts.len().to_string(),
        r.jacobi_rel_drift
            .map_or_else(|| "n/a".into(), |d| format!("{d:.1e}")),
        format!("{:.1e}", r.frame_agreement_m),
    ]
}

/// The gravity of a set of results in one line.
pub fn field_line(f: &spinfall_workflow::gravity_method::FieldUsed) -> String {
    match f.max_rel_error {
        Some(e) => {
            let store = f
                .store
                .as_deref()
                .map(|s| {
                    if s.starts_with("read") {
                        ", read from the cache"
                    } else if s.starts_with("built and stored") {
                        ", built and kept in the cache"
                    } else {
                        ", built (not kept)"
                    }
                })
                .unwrap_or("");
            format!("Gravity: interpolated field, relative error ≤ {e:e}{store}")
        }
        None => "Gravity: direct sums (Werner & Scheeres 1997)".to_string(),
    }
}

impl SpinfallApp {
    pub(crate) fn results_ui(&mut self, ui: &mut Ui) {
        ui.horizontal(|ui| {
            ui.heading("Results");
            ui.weak(format!("{} launch(es)", self.reports.len()));
            if !self.reports.is_empty() {
                ui.separator();
                ui.label(field_line(&self.reports_field))
                    .on_hover_text(self.reports_field.describe());
            }
            if ui.button("Export…").clicked() {
                self.commands.push(Command::ShowExport);
            }
        });
        self.results_banners_ui(ui);
        if self.reports.is_empty() {
            ui.weak("Run to fill this table (Ctrl+R).");
            return;
        }
        let width = ui.available_width();
        ui.horizontal_top(|ui| {
            ui.vertical(|ui| {
                ui.set_width((width * 0.45).max(300.0));
                self.table_ui(ui);
                self.targeting_ui(ui);
                self.landing_statistics_ui(ui);
            });
            ui.separator();
            ui.vertical(|ui| self.plots_ui(ui));
        });
    }

    /// Out of date, cancelled, partial: said above the table.
    fn results_banners_ui(&mut self, ui: &mut Ui) {
        let stale = self.stale_reasons();
        if !self.reports.is_empty() && !stale.is_empty() {
            ui.colored_label(
                AMBER,
                format!(
                    "Out of date: the {} changed after this run. Run again (Ctrl+R) to update; \
                     Undo (Ctrl+Z) goes back.",
                    stale.join(", ")
                ),
            );
        }
        if let Some(launches) = self.reports_partial_of {
            ui.colored_label(
                AMBER,
                format!(
                    "Partial run (cancelled): only the {} of {launches} launches that had \
                     finished are shown; the others were not flown.",
                    self.reports.len()
                ),
            );
        }
        if let RunState::Cancelled { finished, launches } = self.run_state {
            ui.horizontal(|ui| {
                let kept = if self.reports_partial_of.is_some() {
                    String::new()
                } else if self.reports.is_empty() {
                    " Nothing finished, so there is nothing to show.".into()
                } else {
                    format!(
                        " The previous complete results ({} launches) are shown.",
                        self.reports.len()
                    )
                };
                ui.colored_label(
                    AMBER,
                    format!("Run cancelled: {finished} of {launches} launches had finished.{kept}"),
                );
                if let Some(other) = &self.set_aside {
                    let label = match other.partial_of {
                        Some(_) => format!("Show the {} finished launches", other.reports.len()),
                        None => format!(
                            "Back to the previous complete results ({})",
                            other.reports.len()
                        ),
                    };
                    if ui.button(label).clicked() {
                        self.commands.push(Command::SwitchResults);
                    }
                }
            });
        }
    }

    fn table_ui(&mut self, ui: &mut Ui) {
        let reports = self.reports.clone();
        let units = self.state.view.units;
        let order = sorted_order(&reports, self.table.sort);
        let selected = self.state.view.selected_launch;
        let mut clicked_row = None;
        let mut clicked_header = None;
        let cols = columns(units);
        egui::ScrollArea::horizontal().show(ui, |ui| {
            let max_h = ui.available_height() - 24.0;
            let mut table = TableBuilder::new(ui)
                .striped(true)
                .resizable(true)
                .sense(egui::Sense::click())
                .cell_layout(egui::Layout::left_to_right(egui::Align::Center))
                .min_scrolled_height(60.0)
                .max_scroll_height(max_h);
            for (i, _) in cols.iter().enumerate() {
                table = table.column(if i == 1 {
                    Column::auto().at_least(70.0)
                } else {
                    Column::auto().at_least(50.0)
                });
            }
            table
                .header(22.0, |mut header| {
                    for (col, name) in &cols {
                        header.col(|ui| {
                            let arrow = match self.table.sort {
                                Some((c, true)) if c == *col => " (up)",
                                Some((c, false)) if c == *col => " (down)",
                                _ => "",
                            };
                            let hover = match col {
                                ResultColumn::Jacobi => {
                                    "Largest relative drift of the Jacobi constant over the \
                                     ballistic arcs: integration error only (contacts lose \
                                     energy and are not counted). Sort by this column."
                                }
                                ResultColumn::EndTime => {
                                    "When the flight ended: at rest, escaped, at the time limit \
                                     or failed. Sort by this column."
                                }
                                _ => "Sort by this column",
                            };
                            if ui
                                .add(
                                    egui::Button::new(
                                        RichText::new(format!("{name}{arrow}")).strong(),
                                    )
                                    .frame(false),
                                )
                                .on_hover_text(hover)
                                .clicked()
                            {
                                clicked_header = Some(*col);
                            }
                        });
                    }
                })
                .body(|body| {
                    body.rows(20.0, order.len(), |mut row| {
                        let i = order[row.index()];
                        let r = &reports[i];
                        row.set_selected(selected == Some(i));
                        for (k, text) in row_cells(r, units).into_iter().enumerate() {
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
