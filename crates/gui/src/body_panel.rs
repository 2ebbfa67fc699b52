//! The side panel: shape model, body (mass, spin, gravity method, derived figures), surface
//! map, launches and flight settings, each a section that folds away.

use egui::{Color32, Key, RichText, Ui};
use spinfall_dynamics::scenario::{FieldMethodSpec, FieldSpec};
use spinfall_dynamics::surface_map::SurfaceField;
use spinfall_gravity::LengthUnit;
use spinfall_render::Colormap;
use spinfall_workflow::gravity_method::DEFAULT_FIELD_MEMORY_MB;

use crate::app::SpinfallApp;
use crate::command::Command;
use crate::menu::AMBER;
use crate::number_field::NumberField;
use crate::session::{AxisChoice, MassInput};
use crate::units::{field_label, fmt_sci};

/// A section of the side panel that folds away.
fn section(ui: &mut Ui, title: &str, add: impl FnOnce(&mut Ui)) {
    egui::CollapsingHeader::new(RichText::new(title).heading())
        .id_salt(("section", title))
        .default_open(true)
        .show(ui, add);
}

/// Scale that shows a value stored in hours in the display time unit.
fn hours_scale(units: spinfall_scene::DisplayUnits) -> f64 {
    units.seconds_per_time_unit() / 3600.0
}

impl SpinfallApp {
    pub(crate) fn side_panel_ui(&mut self, ui: &mut Ui) {
        section(ui, "Shape model", |ui| self.shape_ui(ui));
        section(ui, "Body", |ui| self.body_ui(ui));
        section(ui, "Surface map", |ui| self.map_ui(ui));
        section(ui, "Environment", |ui| self.environment_ui(ui));
        section(ui, "Launches", |ui| self.sites_ui(ui));
        section(ui, "Flights", |ui| self.run_ui(ui));
    }

    pub(crate) fn shape_ui(&mut self, ui: &mut Ui) {
        if let Some(s) = &self.shape {
            ui.label(format!(
                "{} — {} faces, {} vertices, {}",
                s.name(),
                s.shape.face_count(),
                s.shape.vertex_count(),
                if s.request.recenter {
                    "recentred"
                } else {
                    "as given (not recentred)"
                }
            ));
            if !s.warnings.is_empty() {
                ui.collapsing(
                    format!("{} validation warning(s)", s.warnings.len()),
                    |ui| {
                        for w in &s.warnings {
                            ui.label(w.to_string());
                        }
                    },
                );
            }
        }
        let loading = self.load_job.is_some();
        let mut open_typed = false;
        ui.horizontal(|ui| {
            let l = ui.label("Shape file:");
            let r = ui
                .add(
                    egui::TextEdit::singleline(&mut self.shape_path_field)
                        .hint_text("/path/to/shape.obj (.ply, .stl)")
                        .desired_width(190.0),
                )
                .labelled_by(l.id)
                .on_hover_text("Type a path and press Enter to open it");
            open_typed = r.lost_focus() && ui.input(|i| i.key_pressed(Key::Enter));
        });
        ui.horizontal(|ui| {
            ui.label("Length unit:");
            ui.radio_value(&mut self.state.unit, LengthUnit::Kilometre, "km");
            ui.radio_value(&mut self.state.unit, LengthUnit::Metre, "m");
            ui.checkbox(&mut self.recenter_new_shapes, "recentre")
                .on_hover_text(
                    "Move the next shape model opened so its centre of mass is the origin \
                     (a scenario file says for itself)",
                );
        });
        ui.horizontal(|ui| {
            let path = self.shape_path_field.trim().to_string();
            open_typed |= ui
                .add_enabled(!loading && !path.is_empty(), egui::Button::new("Open"))
                .clicked();
            if ui
                .add_enabled(!loading, egui::Button::new("Browse…"))
                .clicked()
            {
                self.commands.push(Command::BrowseShape);
            }
            if ui
                .add_enabled(!loading, egui::Button::new("Demo body"))
                .clicked()
            {
                self.commands.push(Command::LoadDemo);
            }
        });
        let typed = self.shape_path_field.trim().to_string();
        if open_typed && !loading && !typed.is_empty() {
            self.commands
                .push(Command::LoadShape(typed.into(), self.state.unit));
        }
        let mut load_typed = false;
        ui.horizontal(|ui| {
            let l = ui.label("Scenario:");
            let r = ui
                .add(
                    egui::TextEdit::singleline(&mut self.scenario_path_field)
                        .hint_text("/path/to/scenario.json")
                        .desired_width(190.0),
                )
                .labelled_by(l.id)
                .on_hover_text("Type a path and press Enter to load it");
            load_typed = r.lost_focus() && ui.input(|i| i.key_pressed(Key::Enter));
        });
        ui.horizontal(|ui| {
            let path = self.scenario_path_field.trim().to_string();
            let have_path = !path.is_empty();
            load_typed |= ui
                .add_enabled(have_path && !loading, egui::Button::new("Load scenario"))
                .on_hover_text("Body, sites and settings from a scenario file")
                .clicked();
            if ui
                .add_enabled(have_path, egui::Button::new("Save scenario"))
                .on_hover_text("Write the session as a scenario (the format `spinfall fly` reads)")
                .clicked()
            {
                self.commands.push(Command::SaveScenario(path.into()));
            }
            if ui.button("Browse…").clicked() {
                self.commands.push(Command::BrowseScenario);
            }
        });
        let typed = self.scenario_path_field.trim().to_string();
        if load_typed && !loading && !typed.is_empty() {
            self.commands.push(Command::LoadScenario(typed.into()));
        }
        if let Some(job) = &self.load_job {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.label(job.progress.stage());
                if ui.button("Cancel").clicked() {
                    job.cancel();
                }
            });
        }
    }

    pub(crate) fn body_ui(&mut self, ui: &mut Ui) {
        let units = self.state.view.units;
        let volume = self
            .view
            .as_ref()
            .map(|v| v.body().shape.mass_properties().volume_m3)
            .unwrap_or(0.0);
        let before = self.params.clone();
        egui::Grid::new("body_params")
            .num_columns(2)
            .show(ui, |ui| {
                let p = &mut self.params;
                ui.label("Mass from:");
                ui.horizontal(|ui| {
                    ui.radio_value(&mut p.mass_input, MassInput::Density, "density");
                    ui.radio_value(&mut p.mass_input, MassInput::Mass, "mass");
                    ui.radio_value(&mut p.mass_input, MassInput::Gm, "GM");
                });
                ui.end_row();
                let l = ui.label("Bulk density:");
                NumberField::new(&mut p.density_kg_m3, "density")
                    .range(1.0, 30_000.0)
                    .unit("kg/m³", 1.0)
                    .enabled(p.mass_input == MassInput::Density)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Mass:");
                NumberField::new(&mut p.mass_kg, "mass")
                    .range(1e-3, 1e22)
                    .width(140.0)
                    .unit("kg", 1.0)
                    .enabled(p.mass_input == MassInput::Mass)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("GM:");
                NumberField::new(&mut p.gm_m3_s2, "gm")
                    .range(1e-12, 1e12)
                    .width(140.0)
                    .unit("m³/s²", 1.0)
                    .enabled(p.mass_input == MassInput::Gm)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Spin period:");
                NumberField::new(&mut p.period_h, "period")
                    .range(0.01, 10_000.0)
                    .unit(units.time_symbol(), hours_scale(units))
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
                ui.label("Spin axis:");
                ui.horizontal(|ui| {
                    ui.radio_value(&mut p.axis, AxisChoice::MaxMoment, "max moment");
                    ui.radio_value(&mut p.axis, AxisChoice::PlusZ, "+z");
                    ui.radio_value(&mut p.axis, AxisChoice::Custom, "custom");
                });
                ui.end_row();
                if p.axis == AxisChoice::Custom {
                    let l = ui.label("Axis (body x, y, z):");
                    ui.horizontal(|ui| {
                        for (k, c) in p.custom_axis.iter_mut().enumerate() {
                            NumberField::new(c, ("axis", k))
                                .range(-1.0, 1.0)
                                .width(44.0)
                                .show(ui)
                                .labelled_by(l.id);
                        }
                    });
                    ui.end_row();
                }
                let l = ui.label("Phase at t = 0:");
                NumberField::new(&mut p.phase_deg, "phase")
                    .range(-360.0, 360.0)
                    .unit("°", 1.0)
                    .show(ui)
                    .labelled_by(l.id);
                ui.end_row();
            });
        if self.params != before {
            self.params.sync_derived(volume);
        }
        self.gravity_method_ui(ui);
        let pending = self.body_edits_pending();
        ui.horizontal(|ui| {
            if ui
                .add_enabled(
                    pending && self.view.is_some() && self.body_job.is_none(),
                    egui::Button::new("Apply body settings"),
                )
                .on_hover_text(
                    "Rebuild the gravity field and spin with these values (clears results)",
                )
                .clicked()
            {
                self.commands.push(Command::RebuildBody);
            }
            if pending {
                ui.colored_label(AMBER, "edited, not applied");
            }
        });
        if let Some(job) = &self.body_job {
            ui.add(egui::Label::new(RichText::new(job.progress.stage()).weak()).wrap());
            ui.horizontal(|ui| {
                ui.spinner();
                ui.add(
                    egui::ProgressBar::new(job.progress.fraction().unwrap_or(0.0))
                        .desired_width(180.0)
                        .show_percentage(),
                );
                if ui
                    .button("Cancel")
                    .on_hover_text("Stop the build; the body stays as it was")
                    .clicked()
                {
                    job.cancel();
                }
            });
        }
        self.derived_figures_ui(ui);
    }

    /// The gravity method of the scenario's `field` section: direct sums, or the interpolated
    /// field with its bound and memory limit.
    fn gravity_method_ui(&mut self, ui: &mut Ui) {
        let mut spec: FieldSpec = self.scenario.field.unwrap_or_default();
        let before = spec;
        egui::Grid::new("gravity_method")
            .num_columns(2)
            .show(ui, |ui| {
                ui.label("Gravity:");
                ui.horizontal(|ui| {
                    ui.radio_value(&mut spec.method, FieldMethodSpec::Direct, "direct")
                        .on_hover_text("The exact face and edge sums (Werner & Scheeres 1997)");
                    ui.radio_value(
                        &mut spec.method,
                        FieldMethodSpec::Interpolated,
                        "interpolated",
                    )
                    .on_hover_text(
                        "Built once per body to a relative error bound and kept in the cache \
                         folder; much faster for many launches",
                    );
                });
                ui.end_row();
                if spec.method == FieldMethodSpec::Interpolated {
                    let l = ui.label("Max. relative error:");
                    NumberField::new(&mut spec.max_rel_error, "max_rel_error")
                        .range(1e-12, 1e-3)
                        .show(ui)
                        .labelled_by(l.id)
                        .on_hover_text(
                            "Largest error of the acceleration as a fraction of the local \
                             gravity, 1e-12 to 1e-3",
                        );
                    ui.end_row();
                    let l = ui.label("Memory limit:");
                    let mut mb = spec.max_memory_mb.unwrap_or(DEFAULT_FIELD_MEMORY_MB);
                    if NumberField::new(&mut mb, "max_memory_mb")
                        .range(1.0, 1.0e7)
                        .unit("MB", 1.0)
                        .show(ui)
                        .labelled_by(l.id)
                        .on_hover_text(
                            "Most memory the interpolated field and its build may take; a \
                             build that would need more stops with an error",
                        )
                        .changed()
                    {
                        spec.max_memory_mb = Some(mb);
                    }
                    ui.end_row();
                }
            });
        if spec != before {
            self.scenario.field = Some(spec);
        }
        let f = &self.body_field;
        let now = match f.max_rel_error {
            Some(e) => format!("Body now: interpolated, relative error ≤ {e:e}"),
            None => "Body now: direct sums".to_string(),
        };
        ui.weak(now).on_hover_text(f.describe());
    }

    fn derived_figures_ui(&mut self, ui: &mut Ui) {
        let Some(v) = &self.view else {
            return;
        };
        let units = self.state.view.units;
        let f = *v.figures();
        let escape = self.escape_speed_ranges_m_s();
        let mut compute_map = false;
        egui::CollapsingHeader::new("Derived figures (applied body)")
            .default_open(true)
            .show(ui, |ui| {
                egui::Grid::new("figures").num_columns(2).striped(true).show(ui, |ui| {
                    let mut row = |k: &str, v: String| {
                        ui.label(k);
                        ui.label(v);
                        ui.end_row();
                    };
                    row("Mass", fmt_sci(f.mass_kg, "kg"));
                    row("Bulk density", format!("{:.1} kg/m³", f.density_kg_m3));
                    row("GM", fmt_sci(f.gm_m3_s2, "m³/s²"));
                    let per = units.metres_per_length_unit();
                    row(
                        "Volume",
                        fmt_sci(f.volume_m3 / per.powi(3), &format!("{}³", units.length_symbol())),
                    );
                    row("Equivalent radius", units.fmt_length(f.equivalent_radius_m));
                    row("Brillouin radius", units.fmt_length(f.brillouin_radius_m));
                    row("Spin period", units.fmt_time(f.period_s));
                    row(
                        "Critical period (this density)",
                        units.fmt_time(f.critical_period_s),
                    );
                    row("Synchronous orbit radius", units.fmt_length(f.synchronous_radius_m));
                    match escape {
                        Some([normal, min]) => {
                            row(
                                "Escape speed, along the normal",
                                format!("{:.4} to {:.4} m/s over the surface", normal.0, normal.1),
                            );
                            row(
                                "Escape speed, easiest direction",
                                format!("{:.4} to {:.4} m/s over the surface", min.0, min.1),
                            );
                        }
                        None => {
                            ui.label("Escape speed range");
                            ui.horizontal(|ui| {
                                ui.weak("needs the surface map");
                                compute_map = self.map_job.is_none()
                                    && ui.small_button("Compute").clicked();
                            });
                            ui.end_row();
                        }
                    }
                });
                if f.period_s < f.critical_period_s {
                    ui.colored_label(
                        Color32::from_rgb(255, 150, 90),
                        "Spins faster than the critical period: loose material at the equator is lifted off.",
                    );
                }
            });
        if compute_map {
            self.commands.push(Command::ComputeMap);
        }
    }

    pub(crate) fn map_ui(&mut self, ui: &mut Ui) {
        let before = self.state.view.map;
        egui::ComboBox::from_label("Colour by")
            .selected_text(match self.state.view.map {
                Some(f) => field_label(f),
                None => "none".into(),
            })
            .show_ui(ui, |ui| {
                ui.selectable_value(&mut self.state.view.map, None, "none");
                for f in SurfaceField::ALL {
                    ui.selectable_value(&mut self.state.view.map, Some(f), field_label(f));
                }
                // The sunlight layer, for a scenario with a Sun (its grain, at t = 0).
                if let Some(map) = &self.map {
                    for f in map.fields().into_iter().skip(SurfaceField::ALL.len()) {
                        ui.selectable_value(&mut self.state.view.map, Some(f), field_label(f));
                    }
                }
            });
        egui::ComboBox::from_label("Colour map")
            .selected_text(self.state.view.colormap.name())
            .show_ui(ui, |ui| {
                for c in Colormap::ALL {
                    ui.selectable_value(&mut self.state.view.colormap, c, c.name());
                }
            });
        let wanted = self.state.view.map.is_some() && self.map.is_none() && self.map_job.is_none();
        if wanted && self.state.view.map != before && self.map_starts_by_itself() {
            self.commands.push(Command::ComputeMap);
        } else if wanted && self.view.is_some() {
            let faces = self.view.as_ref().map_or(0, |v| v.triangles().len());
            if ui.button("Compute map").clicked() {
                self.commands.push(Command::ComputeMap);
            }
            if faces > crate::app::AUTO_MAP_MAX_FACES {
                ui.add(
                    egui::Label::new(
                        RichText::new(format!(
                            "{faces} faces: the map takes a while (its cost grows with the square of the face count); it is kept in the cache for later sessions"
                        ))
                        .weak(),
                    )
                    .wrap(),
                );
            }
        }
        if let Some(job) = &self.map_job {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.add(
                    egui::ProgressBar::new(job.progress.fraction().unwrap_or(0.0))
                        .desired_width(160.0)
                        .show_percentage(),
                );
                if ui.button("Cancel").clicked() {
                    job.cancel();
                }
            });
        }
        if let Some(source) = &self.map_source {
            // The cache file's path is long: shown on hover, not in the panel.
            let short = source.split(" (").next().unwrap_or(source);
            ui.add(egui::Label::new(RichText::new(format!("Map {short}")).weak()).wrap())
                .on_hover_text(format!("Map {source}"));
        }
        match &self.hover {
            Some(h) => {
                ui.label(format!(
                    "Pointer: lat {:.2}°, lon {:.2}° (face {})",
                    h.lat_deg, h.lon_deg, h.face
                ));
                for (name, value) in &h.values {
                    ui.label(format!("  {name}: {value}"));
                }
            }
            None => {
                ui.weak("Hover the body to read the map values there.");
            }
        }
    }

    pub(crate) fn run_ui(&mut self, ui: &mut Ui) {
        let units = self.state.view.units;
        let scenario = &mut self.scenario;
        crate::sites::flight_settings_ui(&mut scenario.integrator, &mut scenario.bounce, units, ui);
        ui.horizontal(|ui| {
            let l = ui.label("Dispersion seed:");
            let mut seed = scenario.seed.unwrap_or(0);
            if NumberField::new(&mut seed, "seed")
                .range(0.0, u64::MAX as f64)
                .show(ui)
                .labelled_by(l.id)
                .changed()
            {
                scenario.seed = Some(seed);
            }
        });
    }
}
