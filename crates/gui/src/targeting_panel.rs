//! The targeting solution of the selected launch, under the results table: the solved launch
//! (speed, azimuth, elevation in the site's east/north/up frame), flight time, miss distance and
//! how far the landing point moves per error in speed and direction; or why the target is out of
//! reach.

use egui::{RichText, Ui};
use spinfall_dynamics::targeting::TargetingStatus;

use crate::app::SpinfallApp;
use crate::units::fmt_sci;

impl SpinfallApp {
    /// The selected launch's targeting report, if it was aimed.
    pub(crate) fn targeting_ui(&mut self, ui: &mut Ui) {
        let Some(report) = self
            .state
            .view
            .selected_launch
            .and_then(|i| self.reports.get(i))
        else {
            return;
        };
        let Some(t) = &report.targeting else {
            return;
        };
        let units = self.state.view.units;
        ui.separator();
        ui.label(RichText::new(format!("Targeting: {}", report.id)).strong());
        match t.status {
            TargetingStatus::Unreachable => {
                ui.colored_label(
                    ui.visuals().warn_fg_color,
                    format!(
                        "Unreachable: {}",
                        t.reason.as_deref().unwrap_or("no launch found")
                    ),
                );
            }
            TargetingStatus::Solved => {
                if let Some(v) = &t.launch {
                    ui.label(format!(
                        "Launch {:.4} m/s, azimuth {:.2}°, elevation {:.2}°",
                        v.speed_m_s, v.azimuth_deg, v.elevation_deg
                    ));
                }
                ui.label(format!(
                    "Flight time {}, miss {} (tolerance {}), {} trial flights",
                    t.flight_time_s.map_or("—".into(), |s| units.fmt_time(s)),
                    t.miss_m.map_or("—".into(), |m| units.fmt_length(m)),
                    units.fmt_length(t.miss_tolerance_m),
                    t.flights
                ));
                if let Some(s) = &t.sensitivity {
                    let f =
                        |x: Option<f64>, unit: &str| x.map_or("—".into(), |v| fmt_sci(v, unit));
                    ui.label(format!(
                        "Landing point moves {} per cm/s of speed, {} per degree of azimuth, {} per degree of elevation",
                        f(s.m_per_cm_s, "m"),
                        f(s.m_per_deg_azimuth, "m"),
                        f(s.m_per_deg_elevation, "m")
                    ));
                }
            }
        }
        ui.weak(&t.note);
    }
}
