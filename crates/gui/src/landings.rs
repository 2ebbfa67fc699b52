//! Landing statistics of the results shown: for every fan and dispersion group of the scenario
//! flown, the mean rest point, the 50/90/99 % ellipses in the local east/north plane and the
//! member counts (a table under the results), the ellipses drawn on the body, and the landing
//! density of every face as a surface-map layer ("Landing density" among the map choices).
//!
//! The numbers come from `spinfall_workflow::statistics`, the same code `spinfall fly` writes
//! `statistics.json` with; they are recomputed when the results or the body change (ray tests
//! only, no gravity), on the UI thread.

use std::sync::Arc;

use egui::{RichText, Ui};
use spinfall_scene::LandingEllipse;
use spinfall_workflow::statistics::{
    RunStatistics, StatisticsRequest, compute_statistics, landing_density_layer,
    landing_ellipse_guides,
};

use crate::app::SpinfallApp;

/// State of the landing statistics.
pub(crate) struct Landings {
    /// Draw the groups' ellipses on the body.
    pub show_ellipses: bool,
    /// The results (allocation) and body the statistics are for.
    stats_for: Option<(usize, usize)>,
    stats: Option<RunStatistics>,
    error: Option<String>,
    ellipses: Vec<LandingEllipse>,
    /// Bumped when the ellipses change.
    pub generation: u64,
    /// The map (allocation, after the layer was added) and results the landing layer is for.
    layer_for: Option<(usize, usize)>,
}

impl Default for Landings {
    fn default() -> Self {
        Landings {
            show_ellipses: true,
            stats_for: None,
            stats: None,
            error: None,
            ellipses: Vec::new(),
            generation: 0,
            layer_for: None,
        }
    }
}

impl Landings {
    /// The ellipses to draw (none when switched off).
    pub(crate) fn ellipses(&self) -> &[LandingEllipse] {
        if self.show_ellipses {
            &self.ellipses
        } else {
            &[]
        }
    }
}

impl SpinfallApp {
    /// Recomputes the statistics and the landing layer when the results, the body or the map
    /// changed.
    pub(crate) fn poll_landings(&mut self) {
        let Some(view) = self.view.clone() else {
            return;
        };
        let body = view.body().clone();
        let reports_id = Arc::as_ptr(&self.reports) as usize;
        let body_id = Arc::as_ptr(&body) as usize;
        if self.landings.stats_for != Some((reports_id, body_id)) {
            self.landings.stats_for = Some((reports_id, body_id));
            let scenario = self.reports_doc.as_ref().unwrap_or(&self.scenario);
            let computed = if self.reports.is_empty() {
                Ok(None)
            } else {
                compute_statistics(
                    &body,
                    scenario,
                    &self.reports,
                    &StatisticsRequest::default(),
                )
            };
            match computed {
                Ok(found) => {
                    let stats = found.map(|(s, _)| s);
                    self.landings.ellipses = stats
                        .as_ref()
                        .map(|s| landing_ellipse_guides(&body, s))
                        .unwrap_or_default();
                    self.landings.stats = stats;
                    self.landings.error = None;
                }
                Err(e) => {
                    self.landings.stats = None;
                    self.landings.ellipses.clear();
                    self.landings.error = Some(e.to_string());
                }
            }
            self.landings.generation += 1;
        }
        // The landing layer rides on the map shown.
        if let Some(map) = &self.map {
            let map_id = Arc::as_ptr(map) as usize;
            if self.landings.layer_for != Some((map_id, reports_id)) {
                let mut with_layer = (**map).clone();
                with_layer.landing_density_per_m2 = landing_density_layer(&body, &self.reports);
                let with_layer = Arc::new(with_layer);
                let mut v = view.with_guides(view.guides().clone());
                v.set_map(Some(with_layer.clone()));
                if let Some(f) = self.state.view.map
                    && !with_layer.fields().contains(&f)
                {
                    self.state.view.map = None;
                }
                self.landings.layer_for = Some((Arc::as_ptr(&with_layer) as usize, reports_id));
                self.map = Some(with_layer);
                self.view = Some(Arc::new(v));
                self.data_generation += 1;
            }
        }
    }

    /// The landing statistics under the results table.
    pub(crate) fn landing_statistics_ui(&mut self, ui: &mut Ui) {
        if let Some(e) = &self.landings.error {
            ui.colored_label(
                ui.visuals().warn_fg_color,
                format!("Landing statistics: {e}"),
            );
            return;
        }
        let Some(stats) = &self.landings.stats else {
            return;
        };
        let units = self.state.view.units;
        let len = |m: f64| format!("{:.*}", units.length_decimals(), units.length(m));
        egui::CollapsingHeader::new(RichText::new("Landing statistics").strong())
            .id_salt("landing_statistics")
            .default_open(true)
            .show(ui, |ui| {
                ui.checkbox(
                    &mut self.landings.show_ellipses,
                    "Draw ellipses on the body",
                )
                .on_hover_text(
                    "50 % (thick), 90 % (thin) and 99 % (dashed) ellipses of the rest points \
                         of each fan and dispersion group",
                );
                egui::Grid::new("landing_stats_table")
                    .striped(true)
                    .num_columns(6)
                    .show(ui, |ui| {
                        ui.strong("group");
                        ui.strong("landed");
                        ui.strong("mean lat, lon (°)");
                        let u = units.length_symbol();
                        ui.strong(format!("50 % a × b ({u}), az"));
                        ui.strong(format!("90 % a × b ({u})"));
                        ui.strong(format!("99 % a × b ({u})"));
                        ui.end_row();
                        for g in &stats.groups {
                            ui.label(&g.id);
                            ui.label(format!("{} / {}", g.counts.landed, g.counts.members));
                            match g.rest.spread() {
                                Some(s) => {
                                    ui.label(format!(
                                        "{:.2}, {:.2}",
                                        s.mean.lat_deg, s.mean.lon_deg
                                    ));
                                    for (k, e) in s.ellipses.iter().take(3).enumerate() {
                                        let axes = format!(
                                            "{} × {}",
                                            len(e.semi_major_m),
                                            len(e.semi_minor_m)
                                        );
                                        if k == 0 {
                                            ui.label(format!(
                                                "{axes}, {:.0}°",
                                                e.major_azimuth_deg
                                            ));
                                        } else {
                                            ui.label(axes);
                                        }
                                    }
                                }
                                None => {
                                    ui.weak("too few landed");
                                }
                            }
                            ui.end_row();
                        }
                    });
                ui.weak(
                    "Rest points projected on the plane tangent at the mean point; ellipses hold \
                     50/90/99 % of a 2-D normal spread (1/2/3 sigma hold 39.3/86.5/98.9 %). \
                     Escaped and failed launches are left out.",
                );
            });
    }
}
