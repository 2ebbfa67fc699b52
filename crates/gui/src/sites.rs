//! Launches: list, rename, remove, add a site by latitude/longitude, the launch parameters of
//! the selected one with an escape-speed gauge (edited in the scenario document itself, so what
//! the app does not show is kept); and the flight settings.

use egui::{Color32, RichText, Ui};
use spinfall_dynamics::launch::FanQuantity;
use spinfall_dynamics::scenario::{
    BounceSpec, DispersionSpec, FanSpec, IntegratorSpec, LaunchEntry,
};

use crate::app::SpinfallApp;
use crate::command::Command;

impl SpinfallApp {
    pub(crate) fn sites_ui(&mut self, ui: &mut Ui) {
        ui.heading("Launches");
        ui.checkbox(
            &mut self.click_to_place,
            "Click on the body to place a site",
        );
        ui.horizontal(|ui| {
            let l = ui.label("lat");
            ui.add(
                egui::DragValue::new(&mut self.lat_field_deg)
                    .range(-90.0..=90.0)
                    .speed(0.5)
                    .suffix(" °"),
            )
            .labelled_by(l.id);
            let l = ui.label("lon");
            ui.add(
                egui::DragValue::new(&mut self.lon_field_deg)
                    .range(-180.0..=180.0)
                    .speed(0.5)
                    .suffix(" °"),
            )
            .labelled_by(l.id);
            if ui
                .add_enabled(self.view.is_some(), egui::Button::new("Add site"))
                .on_hover_text("Planetocentric latitude/longitude about the spin axis")
                .clicked()
            {
                self.commands.push(Command::AddSiteLatLon {
                    lat_deg: self.lat_field_deg,
                    lon_deg: self.lon_field_deg,
                });
            }
        });
        if self.scenario.launches.is_empty() {
            ui.weak("No launches yet.");
        }
        let mut remove = None;
        for i in 0..self.scenario.launches.len() {
            ui.horizontal(|ui| {
                let selected = self.selected_site == Some(i);
                if ui.radio(selected, "").clicked() {
                    self.selected_site = Some(i);
                }
                let l = &mut self.scenario.launches[i];
                ui.add(egui::TextEdit::singleline(&mut l.id).desired_width(110.0));
                let n = l.member_count();
                ui.weak(format!("{n} launch{}", if n == 1 { "" } else { "es" }));
                if ui
                    .small_button("Remove")
                    .on_hover_text("Remove this launch")
                    .clicked()
                {
                    remove = Some(i);
                }
            });
        }
        if let Some(i) = remove {
            self.commands.push(Command::RemoveSite(i));
        }
        let Some(i) = self
            .selected_site
            .filter(|&i| i < self.scenario.launches.len())
        else {
            return;
        };
        // Where the selected site is and what it takes to leave.
        let site_info = self.resolved_sites().get(i).cloned();
        ui.separator();
        let entry = &self.scenario.launches[i];
        ui.label(RichText::new(format!("Selected: {}", entry.id)).strong());
        if let Some(state) = &entry.state {
            ui.label(format!(
                "Explicit state: position {:?} m, velocity {:?} m/s (body frame); flown as written",
                state.position_m, state.velocity_m_s
            ));
            return;
        }
        let mut escape_normal = None;
        match &site_info {
            Some(Ok(Some(site))) => {
                ui.label(format!(
                    "lat {:.2}°, lon {:.2}°, face {}",
                    site.lat_deg, site.lon_deg, site.face
                ));
                escape_normal = Some((site.escape_speed_normal_m_s, site.escape_speed_min_m_s));
            }
            Some(Err(e)) => {
                ui.colored_label(Color32::from_rgb(255, 110, 100), e);
            }
            _ => {}
        }
        let launch = &mut self.scenario.launches[i];
        let (mut speed, mut azimuth, mut elevation) = crate::session::launch_defaults(launch);
        egui::Grid::new("launch").num_columns(2).show(ui, |ui| {
            let l = ui.label("Speed:");
            if ui
                .add(
                    egui::DragValue::new(&mut speed)
                        .range(0.0..=1000.0)
                        .speed(0.005)
                        .max_decimals(4)
                        .suffix(" m/s"),
                )
                .labelled_by(l.id)
                .changed()
            {
                launch.speed_m_s = Some(speed);
            }
            ui.end_row();
            let l = ui.label("Azimuth (from north, east +):");
            if ui
                .add(
                    egui::DragValue::new(&mut azimuth)
                        .range(-360.0..=360.0)
                        .speed(1.0)
                        .suffix(" °"),
                )
                .labelled_by(l.id)
                .changed()
            {
                launch.azimuth_deg = Some(azimuth);
            }
            ui.end_row();
            let l = ui.label("Elevation:");
            if ui
                .add(
                    egui::DragValue::new(&mut elevation)
                        .range(0.0..=90.0)
                        .speed(1.0)
                        .suffix(" °"),
                )
                .labelled_by(l.id)
                .changed()
            {
                launch.elevation_deg = Some(elevation);
            }
            ui.end_row();
        });
        if let Some((v_normal, v_min)) = escape_normal {
            escape_gauge_ui(ui, speed, v_normal, v_min);
        }
        spread_ui(ui, launch, azimuth);
    }
}

/// The fan and the dispersion set of a launch from a site (either, both or none).
fn spread_ui(ui: &mut Ui, launch: &mut LaunchEntry, azimuth_deg: f64) {
    ui.horizontal(|ui| {
        ui.label("Spread:");
        let mut fan = launch.fan.is_some();
        if ui.checkbox(&mut fan, "fan").changed() {
            launch.fan = fan.then_some(FanSpec {
                vary: FanQuantity::AzimuthDeg,
                to: azimuth_deg + 315.0,
                count: 8,
            });
        }
        let mut disp = launch.dispersion.is_some();
        if ui.checkbox(&mut disp, "dispersion").changed() {
            launch.dispersion = disp.then_some(DispersionSpec {
                count: 20,
                speed_sigma_m_s: None,
                speed_sigma_percent: Some(10.0),
                direction_sigma_deg: 5.0,
            });
        }
    });
    if let Some(FanSpec { vary, to, count }) = &mut launch.fan {
        egui::Grid::new("fan").num_columns(2).show(ui, |ui| {
            ui.label("Sweep:");
            egui::ComboBox::from_id_salt("fan_vary")
                .selected_text(fan_name(*vary))
                .show_ui(ui, |ui| {
                    for q in [
                        FanQuantity::AzimuthDeg,
                        FanQuantity::ElevationDeg,
                        FanQuantity::SpeedMS,
                    ] {
                        ui.selectable_value(vary, q, fan_name(q));
                    }
                });
            ui.end_row();
            let l = ui.label("Up to:");
            let unit = if *vary == FanQuantity::SpeedMS {
                " m/s"
            } else {
                " °"
            };
            ui.add(egui::DragValue::new(to).speed(0.5).suffix(unit))
                .labelled_by(l.id);
            ui.end_row();
            let l = ui.label("Launches:");
            ui.add(egui::DragValue::new(count).range(1..=100_000))
                .labelled_by(l.id);
            ui.end_row();
        });
    }
    if let Some(d) = &mut launch.dispersion {
        egui::Grid::new("disp").num_columns(2).show(ui, |ui| {
            let l = ui.label("Launches:");
            ui.add(egui::DragValue::new(&mut d.count).range(1..=1_000_000))
                .labelled_by(l.id);
            ui.end_row();
            let l = ui.label("Speed error (1 sigma):");
            match (&mut d.speed_sigma_percent, &mut d.speed_sigma_m_s) {
                (Some(pct), _) => {
                    ui.add(
                        egui::DragValue::new(pct)
                            .range(0.0..=100.0)
                            .speed(0.5)
                            .suffix(" %"),
                    )
                    .labelled_by(l.id);
                }
                (None, Some(ms)) => {
                    ui.add(
                        egui::DragValue::new(ms)
                            .range(0.0..=100.0)
                            .speed(0.001)
                            .suffix(" m/s"),
                    )
                    .labelled_by(l.id);
                }
                (None, None) => {
                    let mut pct = 0.0;
                    if ui
                        .add(
                            egui::DragValue::new(&mut pct)
                                .range(0.0..=100.0)
                                .suffix(" %"),
                        )
                        .labelled_by(l.id)
                        .changed()
                    {
                        d.speed_sigma_percent = Some(pct);
                    }
                }
            }
            ui.end_row();
            let l = ui.label("Direction error (1 sigma):");
            ui.add(
                egui::DragValue::new(&mut d.direction_sigma_deg)
                    .range(0.0..=45.0)
                    .speed(0.2)
                    .suffix(" °"),
            )
            .labelled_by(l.id);
            ui.end_row();
        });
    }
}

fn fan_name(q: FanQuantity) -> &'static str {
    match q {
        FanQuantity::AzimuthDeg => "azimuth (°)",
        FanQuantity::ElevationDeg => "elevation (°)",
        FanQuantity::SpeedMS => "speed (m/s)",
    }
}

/// A bar showing the launch speed against the local escape speeds.
fn escape_gauge_ui(ui: &mut Ui, speed_m_s: f64, v_normal_m_s: f64, v_min_m_s: f64) {
    let full = (v_normal_m_s.max(v_min_m_s) * 1.5)
        .max(speed_m_s * 1.05)
        .max(1e-9);
    let (rect, _) = ui.allocate_exact_size(
        egui::vec2(ui.available_width().min(300.0), 18.0),
        egui::Sense::hover(),
    );
    let painter = ui.painter_at(rect);
    painter.rect_filled(rect, 3.0, Color32::from_gray(40));
    let x = |v: f64| rect.left() + rect.width() * (v / full).clamp(0.0, 1.0) as f32;
    let regime_color = if speed_m_s >= v_normal_m_s {
        Color32::from_rgb(230, 80, 70)
    } else if speed_m_s >= v_min_m_s {
        Color32::from_rgb(230, 180, 60)
    } else {
        Color32::from_rgb(90, 190, 110)
    };
    painter.rect_filled(
        egui::Rect::from_min_max(rect.min, egui::pos2(x(speed_m_s), rect.max.y)),
        3.0,
        regime_color,
    );
    for (v, c) in [
        (v_min_m_s, Color32::LIGHT_BLUE),
        (v_normal_m_s, Color32::WHITE),
    ] {
        painter.line_segment(
            [
                egui::pos2(x(v), rect.top()),
                egui::pos2(x(v), rect.bottom()),
            ],
            egui::Stroke::new(2.0, c),
        );
    }
    let regime = if speed_m_s >= v_normal_m_s {
        "above the escape speed along the normal"
    } else if speed_m_s >= v_min_m_s {
        "between the minimum and normal escape speeds"
    } else {
        "below escape: it comes back down"
    };
    ui.label(format!(
        "Escape speed here: {v_normal_m_s:.3} m/s along the normal (white), {v_min_m_s:.3} m/s minimum (blue). Launch is {regime}."
    ));
}

/// Flight settings (time limit, contacts), edited in the scenario document.
pub(crate) fn flight_settings_ui(
    integrator: &mut IntegratorSpec,
    bounce: &mut BounceSpec,
    ui: &mut Ui,
) {
    egui::CollapsingHeader::new("Flight settings")
        .default_open(false)
        .show(ui, |ui| {
            egui::Grid::new("flight").num_columns(2).show(ui, |ui| {
                let mut hours = integrator.max_time_s / 3600.0;
                let l = ui.label("Time limit:");
                if ui
                    .add(
                        egui::DragValue::new(&mut hours)
                            .range(0.01..=1000.0)
                            .speed(0.1)
                            .suffix(" h"),
                    )
                    .labelled_by(l.id)
                    .changed()
                {
                    integrator.max_time_s = hours * 3600.0;
                }
                ui.end_row();
                let l = ui.label("Relative tolerance:");
                ui.add(
                    egui::DragValue::new(&mut integrator.rel_tol)
                        .range(1e-14..=1e-4)
                        .speed(1e-11)
                        .custom_formatter(|v, _| format!("{v:.1e}")),
                )
                .labelled_by(l.id);
                ui.end_row();
                let b = bounce;
                let l = ui.label("Normal restitution:");
                ui.add(
                    egui::DragValue::new(&mut b.normal_restitution)
                        .range(0.0..=1.0)
                        .speed(0.01),
                )
                .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Tangential restitution:");
                ui.add(
                    egui::DragValue::new(&mut b.tangential_restitution)
                        .range(0.0..=1.0)
                        .speed(0.01),
                )
                .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Max bounces:");
                ui.add(egui::DragValue::new(&mut b.max_bounces).range(0..=1000))
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Rest below:");
                ui.add(
                    egui::DragValue::new(&mut b.rest_speed_m_s)
                        .range(0.0..=10.0)
                        .speed(0.001)
                        .suffix(" m/s"),
                )
                .labelled_by(l.id);
                ui.end_row();
            });
        });
}
