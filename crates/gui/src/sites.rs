//! Launches: list, rename, remove (undoable), add a site by latitude/longitude; the selected
//! launch's site (latitude/longitude, start height, local vertical) and launch parameters with
//! an escape-speed gauge, edited in the scenario document itself (so what the app does not show
//! is kept); and the flight settings.

use egui::{Color32, RichText, Ui};
use spinfall_dynamics::launch::FanQuantity;
use spinfall_dynamics::scenario::{
    BounceSpec, DispersionSpec, FanSpec, IntegratorSpec, LaunchEntry, SiteSpec,
};
use spinfall_dynamics::site::NormalMode;
use spinfall_dynamics::targeting::{ArcChoice, TargetMode};
use spinfall_scene::DisplayUnits;

use crate::app::SpinfallApp;
use crate::command::Command;
use crate::number_field::{ERROR_RED, NumberField};

/// Default start height above the surface of the scenario format, m.
const DEFAULT_ALTITUDE_M: f64 = 0.05;

impl SpinfallApp {
    pub(crate) fn sites_ui(&mut self, ui: &mut Ui) {
        ui.checkbox(
            &mut self.click_to_place,
            "Click on the body to place a site",
        );
        ui.horizontal(|ui| {
            let l = ui.label("New site at lat");
            NumberField::new(&mut self.lat_field_deg, "new_lat")
                .range(-90.0, 90.0)
                .unit("°", 1.0)
                .width(50.0)
                .show(ui)
                .labelled_by(l.id);
            let l = ui.label("lon");
            NumberField::new(&mut self.lon_field_deg, "new_lon")
                .range(-360.0, 360.0)
                .unit("°", 1.0)
                .width(50.0)
                .show(ui)
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
                    .on_hover_text("Remove this launch (Undo or Ctrl+Z brings it back)")
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
        self.selected_launch_ui(ui, i);
    }

    /// Where the selected launch leaves from and how.
    fn selected_launch_ui(&mut self, ui: &mut Ui, i: usize) {
        let units = self.state.view.units;
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
        let mut where_deg = None;
        match &site_info {
            Some(Ok(Some(site))) => {
                where_deg = Some((site.lat_deg, site.lon_deg));
                escape_normal = Some((site.escape_speed_normal_m_s, site.escape_speed_min_m_s));
            }
            Some(Err(e)) => {
                ui.colored_label(ERROR_RED, e);
            }
            _ => {}
        }
        let launch = &mut self.scenario.launches[i];
        let placed = match &launch.site {
            Some(SiteSpec {
                lat_deg: Some(_), ..
            }) => "by latitude/longitude".to_string(),
            Some(SiteSpec { face: Some(f), .. }) => format!("at the centre of face {f}"),
            Some(SiteSpec {
                point_m: Some(_), ..
            }) => "at a picked point".to_string(),
            _ => "nowhere yet".to_string(),
        };
        let (mut speed, mut azimuth, mut elevation) = crate::session::launch_defaults(launch);
        egui::Grid::new(("launch", i))
            .num_columns(2)
            .show(ui, |ui| {
                // Site: a picked point becomes a latitude/longitude site once either is edited.
                // The document's own numbers for a latitude/longitude site (so editing one keeps
                // the other exactly), else where the site was placed.
                let (mut lat, mut lon) = match &launch.site {
                    Some(SiteSpec {
                        lat_deg: Some(a),
                        lon_deg: Some(o),
                        ..
                    }) => (*a, *o),
                    _ => where_deg.unwrap_or((0.0, 0.0)),
                };
                let l = ui.label("Latitude:");
                let lat_changed = NumberField::new(&mut lat, ("site_lat", i))
                    .range(-90.0, 90.0)
                    .decimals(6)
                    .unit("°", 1.0)
                    .show(ui)
                    .labelled_by(l.id)
                    .on_hover_text(format!(
                        "Placed {placed}; editing moves it to this latitude"
                    ))
                    .changed();
                ui.end_row();
                let l = ui.label("Longitude:");
                let lon_changed = NumberField::new(&mut lon, ("site_lon", i))
                    .range(-360.0, 360.0)
                    .decimals(6)
                    .unit("° east", 1.0)
                    .show(ui)
                    .labelled_by(l.id)
                    .changed();
                ui.end_row();
                if lat_changed || lon_changed {
                    launch.site = Some(SiteSpec {
                        lat_deg: Some(lat),
                        lon_deg: Some(lon),
                        ..SiteSpec::default()
                    });
                }
                let l = ui.label("Start height:");
                let mut altitude_m = launch.altitude_m.unwrap_or(DEFAULT_ALTITUDE_M);
                if NumberField::new(&mut altitude_m, ("altitude", i))
                    .range(0.0, 1.0e6)
                    .unit(units.length_symbol(), units.metres_per_length_unit())
                    .show(ui)
                    .labelled_by(l.id)
                    .on_hover_text("Above the surface along the local vertical")
                    .changed()
                {
                    launch.altitude_m = Some(altitude_m);
                }
                ui.end_row();
                ui.label("Local vertical:");
                ui.horizontal(|ui| {
                    let mut normal = launch.normal.unwrap_or_default();
                    let before = normal;
                    ui.radio_value(&mut normal, NormalMode::Face, "face normal");
                    ui.radio_value(&mut normal, NormalMode::Smoothed, "smoothed")
                        .on_hover_text("Area-weighted mean over the face and its three neighbours");
                    if normal != before {
                        launch.normal = Some(normal);
                    }
                });
                ui.end_row();
                if launch.target.is_some() {
                    target_rows_ui(ui, launch, i, units);
                    return;
                }
                let l = ui.label("Speed:");
                if NumberField::new(&mut speed, ("speed", i))
                    .range(0.0, 1000.0)
                    .unit("m/s", 1.0)
                    .show(ui)
                    .labelled_by(l.id)
                    .changed()
                {
                    launch.speed_m_s = Some(speed);
                }
                ui.end_row();
                let l = ui.label("Azimuth (from north, east +):");
                if NumberField::new(&mut azimuth, ("azimuth", i))
                    .range(-360.0, 360.0)
                    .unit("°", 1.0)
                    .show(ui)
                    .labelled_by(l.id)
                    .changed()
                {
                    launch.azimuth_deg = Some(azimuth);
                }
                ui.end_row();
                let l = ui.label("Elevation:");
                if NumberField::new(&mut elevation, ("elevation", i))
                    .range(0.0, 90.0)
                    .unit("°", 1.0)
                    .show(ui)
                    .labelled_by(l.id)
                    .changed()
                {
                    launch.elevation_deg = Some(elevation);
                }
                ui.end_row();
            });
        if launch.target.is_some() {
            if ui
                .button("Clear target")
                .on_hover_text("Back to a launch of given speed and direction")
                .clicked()
            {
                launch.target = None;
                launch.mode = None;
                launch.miss_tolerance_m = None;
                launch.speed_m_s = Some(speed);
                launch.azimuth_deg = Some(azimuth);
                launch.elevation_deg = Some(elevation);
            }
            return;
        }
        ui.horizontal_wrapped(|ui| {
            let pick = ui
                .selectable_label(self.pick_target, "Pick target")
                .on_hover_text(
                    "Aim this launch at a point: click the target on the body next (or \
                     Shift+click it at any time); speed and direction are then solved",
                );
            if pick.clicked() {
                self.pick_target = !self.pick_target;
            }
            if self.pick_target {
                ui.weak("click the target on the body");
            }
        });
        let launch = &mut self.scenario.launches[i];
        if let Some((v_normal, v_min)) = escape_normal {
            escape_gauge_ui(ui, speed, v_normal, v_min);
        }
        spread_ui(ui, launch, azimuth, i);
    }
}

/// The rows of a targeted launch: where it is aimed, what is fixed or minimised, the miss
/// tolerance.
fn target_rows_ui(ui: &mut Ui, launch: &mut LaunchEntry, i: usize, units: DisplayUnits) {
    let target_text = match &launch.target {
        Some(SiteSpec {
            lat_deg: Some(a),
            lon_deg: Some(o),
            ..
        }) => format!("lat {a:.3}°, lon {o:.3}°"),
        Some(SiteSpec { face: Some(f), .. }) => format!("face {f}"),
        Some(SiteSpec {
            point_m: Some(p), ..
        }) => format!(
            "picked point ({})",
            p.iter()
                .map(|c| units.fmt_length(*c))
                .collect::<Vec<_>>()
                .join(", ")
        ),
        _ => "—".into(),
    };
    ui.label("Target:");
    ui.label(target_text);
    ui.end_row();
    let mut mode = launch.mode.unwrap_or(TargetMode::MinSpeed);
    let before = mode;
    ui.label("Solve for:");
    egui::ComboBox::from_id_salt(("target_mode", i))
        .selected_text(mode_name(&mode))
        .show_ui(ui, |ui| {
            for m in [
                TargetMode::MinSpeed,
                TargetMode::FixedElevation {
                    elevation_deg: 45.0,
                },
                TargetMode::FixedSpeed {
                    speed_m_s: 0.3,
                    arc: ArcChoice::Low,
                },
                TargetMode::FixedSpeed {
                    speed_m_s: 0.3,
                    arc: ArcChoice::High,
                },
            ] {
                let same = std::mem::discriminant(&m) == std::mem::discriminant(&mode)
                    && arc_of(&m) == arc_of(&mode);
                if ui.selectable_label(same, mode_name(&m)).clicked() && !same {
                    mode = m;
                }
            }
        });
    ui.end_row();
    match &mut mode {
        TargetMode::MinSpeed => {}
        TargetMode::FixedElevation { elevation_deg } => {
            let l = ui.label("Elevation:");
            NumberField::new(elevation_deg, ("target_elevation", i))
                .range(0.1, 89.9)
                .unit("°", 1.0)
                .show(ui)
                .labelled_by(l.id);
            ui.end_row();
        }
        TargetMode::FixedSpeed { speed_m_s, .. } => {
            let l = ui.label("Speed:");
            NumberField::new(speed_m_s, ("target_speed", i))
                .range(1e-6, 1000.0)
                .unit("m/s", 1.0)
                .show(ui)
                .labelled_by(l.id);
            ui.end_row();
        }
    }
    if mode != before || (launch.mode.is_none() && mode != TargetMode::MinSpeed) {
        launch.mode = Some(mode);
    }
    let l = ui.label("Miss tolerance:");
    let mut tol_m = launch.miss_tolerance_m.unwrap_or(0.5);
    if NumberField::new(&mut tol_m, ("miss_tolerance", i))
        .range(1e-4, 1e6)
        .unit(units.length_symbol(), units.metres_per_length_unit())
        .show(ui)
        .labelled_by(l.id)
        .changed()
    {
        launch.miss_tolerance_m = Some(tol_m);
    }
    ui.end_row();
}

fn arc_of(m: &TargetMode) -> Option<ArcChoice> {
    match m {
        TargetMode::FixedSpeed { arc, .. } => Some(*arc),
        _ => None,
    }
}

fn mode_name(m: &TargetMode) -> &'static str {
    match m {
        TargetMode::MinSpeed => "least speed",
        TargetMode::FixedElevation { .. } => "speed, at a given elevation",
        TargetMode::FixedSpeed {
            arc: ArcChoice::Low,
            ..
        } => "elevation, at a given speed (low arc)",
        TargetMode::FixedSpeed {
            arc: ArcChoice::High,
            ..
        } => "elevation, at a given speed (high arc)",
    }
}

/// The fan and the dispersion set of a launch from a site (either, both or none).
fn spread_ui(ui: &mut Ui, launch: &mut LaunchEntry, azimuth_deg: f64, i: usize) {
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
        egui::Grid::new(("fan", i)).num_columns(2).show(ui, |ui| {
            ui.label("Sweep:");
            egui::ComboBox::from_id_salt(("fan_vary", i))
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
                "m/s"
            } else {
                "°"
            };
            NumberField::new(to, ("fan_to", i))
                .range(-1.0e6, 1.0e6)
                .unit(unit, 1.0)
                .show(ui)
                .labelled_by(l.id);
            ui.end_row();
            let l = ui.label("Launches in the fan:");
            NumberField::new(count, ("fan_count", i))
                .range(1.0, 100_000.0)
                .show(ui)
                .labelled_by(l.id);
            ui.end_row();
        });
    }
    if let Some(d) = &mut launch.dispersion {
        egui::Grid::new(("disp", i)).num_columns(2).show(ui, |ui| {
            let l = ui.label("Launches in the set:");
            NumberField::new(&mut d.count, ("disp_count", i))
                .range(1.0, 1_000_000.0)
                .show(ui)
                .labelled_by(l.id);
            ui.end_row();
            let l = ui.label("Speed error (1 sigma):");
            match (&mut d.speed_sigma_percent, &mut d.speed_sigma_m_s) {
                (Some(pct), _) => {
                    NumberField::new(pct, ("disp_pct", i))
                        .range(0.0, 100.0)
                        .unit("%", 1.0)
                        .show(ui)
                        .labelled_by(l.id);
                }
                (None, Some(ms)) => {
                    NumberField::new(ms, ("disp_ms", i))
                        .range(0.0, 100.0)
                        .unit("m/s", 1.0)
                        .show(ui)
                        .labelled_by(l.id);
                }
                (None, None) => {
                    let mut pct = 0.0;
                    if NumberField::new(&mut pct, ("disp_pct", i))
                        .range(0.0, 100.0)
                        .unit("%", 1.0)
                        .show(ui)
                        .labelled_by(l.id)
                        .changed()
                    {
                        d.speed_sigma_percent = Some(pct);
                    }
                }
            }
            ui.end_row();
            let l = ui.label("Direction error (1 sigma):");
            NumberField::new(&mut d.direction_sigma_deg, ("disp_dir", i))
                .range(0.0, 45.0)
                .unit("°", 1.0)
                .show(ui)
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
    units: DisplayUnits,
    ui: &mut Ui,
) {
    egui::CollapsingHeader::new("Flight settings")
        .default_open(false)
        .show(ui, |ui| {
            egui::Grid::new("flight").num_columns(2).show(ui, |ui| {
                let l = ui.label("Time limit:");
                NumberField::new(&mut integrator.max_time_s, "max_time")
                    .range(1.0, 1000.0 * 3600.0)
                    .unit(units.time_symbol(), units.seconds_per_time_unit())
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Relative tolerance:");
                NumberField::new(&mut integrator.rel_tol, "rel_tol")
                    .range(1e-14, 1e-3)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let b = bounce;
                let l = ui.label("Normal restitution:");
                NumberField::new(&mut b.normal_restitution, "e_n")
                    .range(0.0, 1.0)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Tangential restitution:");
                NumberField::new(&mut b.tangential_restitution, "e_t")
                    .range(0.0, 1.0)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Max bounces:");
                NumberField::new(&mut b.max_bounces, "max_bounces")
                    .range(0.0, 1000.0)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Rest below:");
                NumberField::new(&mut b.rest_speed_m_s, "rest_speed")
                    .range(0.0, 10.0)
                    .unit("m/s", 1.0)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
            });
        });
}
