//! Menu bar, status line, notices, and the shape / body / map / run sections of the side panel.

use egui::{Color32, RichText, Ui};
use spinfall_dynamics::surface_map::SurfaceField;
use spinfall_gravity::LengthUnit;
use spinfall_render::Colormap;

use crate::app::{
    NoticeKind, RunState, SHORTCUT_EXPORT, SHORTCUT_OPEN, SHORTCUT_RUN, SHORTCUT_SAVE, SpinfallApp,
};
use crate::command::Command;
use crate::session::{AxisChoice, MassInput};
use crate::state::RecentKind;

/// The caution shown in the status line and the About text.
pub const CAUTION: &str = "Research and planning tool: results are not flight-certified.";

/// Format a length in m or km.
pub fn fmt_length(m: f64) -> String {
    if !m.is_finite() {
        "—".into()
    } else if m.abs() >= 10_000.0 {
        format!("{:.3} km", m / 1000.0)
    } else {
        format!("{m:.1} m")
    }
}

/// Format a number with a unit in engineering-friendly notation.
pub fn fmt_sci(v: f64, unit: &str) -> String {
    if !v.is_finite() {
        return format!("— {unit}");
    }
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e6).contains(&a) {
        format!("{v:.4e} {unit}")
    } else {
        format!("{v:.4} {unit}")
    }
}

pub use spinfall_scene::{field_label, pretty_unit};

/// Format a duration in s with hours in brackets when long.
pub fn fmt_duration(s: f64) -> String {
    if !s.is_finite() {
        "—".into()
    } else if s.abs() >= 3600.0 {
        format!("{s:.0} s ({:.2} h)", s / 3600.0)
    } else {
        format!("{s:.1} s")
    }
}

impl SpinfallApp {
    pub(crate) fn menu_bar_ui(&mut self, ui: &mut Ui) {
        egui::Panel::top("menu").show(ui, |ui| {
            egui::MenuBar::new().ui(ui, |ui| {
                ui.menu_button("File", |ui| {
                    if ui
                        .add(
                            egui::Button::new("Open shape model…")
                                .shortcut_text(ui.ctx().format_shortcut(&SHORTCUT_OPEN)),
                        )
                        .clicked()
                    {
                        self.commands.push(Command::BrowseShape);
                    }
                    if ui
                        .button(format!("Demo body ({})", spinfall_gravity::demo::NAME))
                        .clicked()
                    {
                        self.commands.push(Command::LoadDemo);
                    }
                    ui.menu_button("Recent files", |ui| {
                        if self.state.recent_files.is_empty() {
                            ui.label("(none yet)");
                        }
                        for f in self.state.recent_files.clone() {
                            let tag = match f.kind {
                                RecentKind::Shape => format!("shape, {}", f.unit),
                                RecentKind::Scenario => "scenario".into(),
                            };
                            if ui.button(format!("{} ({tag})", f.path.display())).clicked() {
                                self.commands.push(match f.kind {
                                    RecentKind::Shape => Command::LoadShape(f.path.clone(), f.unit),
                                    RecentKind::Scenario => Command::LoadScenario(f.path.clone()),
                                });
                            }
                        }
                    });
                    ui.separator();
                    if ui.button("Load scenario…").clicked() {
                        self.commands.push(Command::BrowseScenario);
                    }
                    if ui
                        .add(
                            egui::Button::new("Save scenario…")
                                .shortcut_text(ui.ctx().format_shortcut(&SHORTCUT_SAVE)),
                        )
                        .clicked()
                    {
                        self.commands.push(Command::BrowseSaveScenario);
                    }
                    if ui
                        .add(
                            egui::Button::new("Export…")
                                .shortcut_text(ui.ctx().format_shortcut(&SHORTCUT_EXPORT)),
                        )
                        .clicked()
                    {
                        self.commands.push(Command::ShowExport);
                    }
                    ui.separator();
                    if ui.button("Quit").clicked() {
                        ui.ctx().send_viewport_cmd(egui::ViewportCommand::Close);
                    }
                });
                ui.menu_button("Run", |ui| {
                    if ui
                        .add(egui::Button::new("Fly all launches").shortcut_text(format!(
                            "{} / F5",
                            ui.ctx().format_shortcut(&SHORTCUT_RUN)
                        )))
                        .clicked()
                    {
                        self.commands.push(Command::Run);
                    }
                    if ui
                        .add_enabled(self.busy(), egui::Button::new("Cancel"))
                        .clicked()
                    {
                        self.commands.push(Command::CancelJobs);
                    }
                });
                ui.menu_button("View", |ui| {
                    let v = &mut self.state.view;
                    ui.checkbox(&mut self.state.link_cameras, "Link the two cameras");
                    ui.checkbox(
                        &mut v.overlay_other_frame,
                        "Overlay the other frame's trace (dashed)",
                    );
                    ui.checkbox(
                        &mut v.trail_to_time,
                        "Draw traces up to the current time only",
                    );
                    ui.checkbox(&mut v.show_wireframe, "Wireframe");
                    ui.checkbox(&mut v.smooth_shading, "Smooth shading");
                    let mut faint = v.hidden_trace_style == spinfall_scene::HiddenTraceStyle::Faint;
                    if ui
                        .checkbox(&mut faint, "Show traces behind the body (faint)")
                        .changed()
                    {
                        v.hidden_trace_style = if faint {
                            spinfall_scene::HiddenTraceStyle::Faint
                        } else {
                            spinfall_scene::HiddenTraceStyle::Hidden
                        };
                    }
                    ui.checkbox(&mut v.show_spin_axis, "Spin axis");
                    ui.checkbox(&mut v.show_triad, "Axis triad");
                    ui.checkbox(&mut v.show_legend, "Legend");
                    ui.checkbox(&mut v.show_scale_bar, "Scale bar");
                    ui.checkbox(&mut self.state.show_results, "Results panel");
                    if ui.button("Reset cameras").clicked() {
                        self.commands.push(Command::ResetCameras);
                    }
                });
                ui.menu_button("Help", |ui| {
                    ui.label("Spinfall: where things go on spinning small bodies.");
                    ui.label("Drag: orbit · right/middle drag: pan · wheel: zoom");
                    ui.label("Click on the body: place a launch site (when enabled)");
                    ui.label("Space: play/pause · Ctrl+R or F5: run · Ctrl+E: export");
                    ui.colored_label(Color32::from_rgb(230, 180, 60), CAUTION);
                });
            });
        });
    }

    pub(crate) fn status_bar_ui(&mut self, ui: &mut Ui) {
        egui::Panel::bottom("status").show(ui, |ui| {
            ui.horizontal(|ui| {
                match &self.shape {
                    Some(s) => {
                        ui.label(format!("{}: {} faces", s.name(), s.shape.face_count()));
                    }
                    None => {
                        ui.label("no body");
                    }
                }
                if let Some(v) = &self.view {
                    ui.separator();
                    ui.label(format!("mass {}", fmt_sci(v.figures().mass_kg, "kg")));
                }
                ui.separator();
                let run = match &self.run_state {
                    RunState::NotRun => "not run yet".to_string(),
                    RunState::Done {
                        launches,
                        elapsed_s,
                    } => {
                        format!("last run: {launches} launches in {elapsed_s:.2} s")
                    }
                    RunState::Cancelled => "last run cancelled".to_string(),
                    RunState::Failed(e) => format!("last run failed: {e}"),
                };
                ui.label(run);
                for (label, progress) in self.job_progress() {
                    ui.separator();
                    ui.spinner();
                    ui.label(label);
                    if let Some(f) = progress {
                        ui.add(
                            egui::ProgressBar::new(f)
                                .desired_width(120.0)
                                .show_percentage(),
                        );
                    }
                }
                ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                    ui.colored_label(Color32::from_rgb(230, 180, 60), CAUTION);
                    ui.label(format!("UI {:.1} ms/frame", self.frame_ms))
                        .on_hover_text(
                            "Time spent building the frame (views rendered on the CPU included)",
                        );
                    // Shown while the views animate or are being dragged (orbit, pan).
                    let dragging = ui.ctx().input(|i| i.pointer.any_down());
                    if (self.playing || dragging) && self.frame_interval_s > 0.0 {
                        ui.label(format!("{:.0} fps", 1.0 / self.frame_interval_s));
                    }
                });
            });
        });
    }

    /// `(label with stage, fraction)` of every running job.
    pub(crate) fn job_progress(&self) -> Vec<(String, Option<f32>)> {
        let mut out = Vec::new();
        macro_rules! add {
            ($job:expr) => {
                if let Some(j) = &$job {
                    let stage = j.progress.stage();
                    let label = if stage.is_empty() {
                        j.label.clone()
                    } else {
                        format!("{}: {stage}", j.label)
                    };
                    out.push((label, j.progress.fraction()));
                }
            };
        }
        add!(self.load_job);
        add!(self.body_job);
        add!(self.map_job);
        add!(self.run_job);
        add!(self.export_job);
        add!(self.save_job);
        out
    }

    pub(crate) fn notices_ui(&mut self, ui: &mut Ui) {
        let mut dismiss = None;
        for (i, n) in self.notices.iter().enumerate() {
            let color = match n.kind {
                NoticeKind::Error => Color32::from_rgb(255, 110, 100),
                NoticeKind::Info => Color32::from_rgb(150, 200, 255),
            };
            ui.horizontal(|ui| {
                if ui.small_button("x").on_hover_text("Dismiss").clicked() {
                    dismiss = Some(i);
                }
                ui.add(egui::Label::new(RichText::new(&n.text).color(color)).wrap());
            });
        }
        if let Some(i) = dismiss {
            self.notices.remove(i);
        }
        if self.notices.len() > 1 && ui.small_button("Dismiss all").clicked() {
            self.notices.clear();
        }
        if !self.notices.is_empty() {
            ui.separator();
        }
    }

    pub(crate) fn shape_ui(&mut self, ui: &mut Ui) {
        ui.heading("Shape model");
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
        ui.horizontal(|ui| {
            let l = ui.label("OBJ file:");
            ui.add(
                egui::TextEdit::singleline(&mut self.shape_path_field)
                    .hint_text("/path/to/shape.obj")
                    .desired_width(180.0),
            )
            .labelled_by(l.id);
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
            let loading = self.load_job.is_some();
            if ui
                .add_enabled(
                    !loading && !self.shape_path_field.trim().is_empty(),
                    egui::Button::new("Open"),
                )
                .clicked()
            {
                self.commands.push(Command::LoadShape(
                    self.shape_path_field.trim().into(),
                    self.state.unit,
                ));
            }
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
        ui.horizontal(|ui| {
            let l = ui.label("Scenario:");
            ui.add(
                egui::TextEdit::singleline(&mut self.scenario_path_field)
                    .hint_text("/path/to/scenario.json")
                    .desired_width(180.0),
            )
            .labelled_by(l.id);
        });
        ui.horizontal(|ui| {
            let path = self.scenario_path_field.trim().to_string();
            let have_path = !path.is_empty();
            if ui
                .add_enabled(
                    have_path && self.load_job.is_none(),
                    egui::Button::new("Load scenario"),
                )
                .on_hover_text("Body, sites and settings from a scenario file")
                .clicked()
            {
                self.commands
                    .push(Command::LoadScenario(path.clone().into()));
            }
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
        ui.heading("Body");
        let volume = self
            .view
            .as_ref()
            .map(|v| v.body().shape.mass_properties().volume_m3)
            .unwrap_or(0.0);
        let before = self.params.clone();
        let mass_speed = self.params.mass_kg.abs() * 0.005 + 1.0;
        let gm_speed = self.params.gm_m3_s2.abs() * 0.005 + 1e-9;
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
                ui.add_enabled(
                    p.mass_input == MassInput::Density,
                    egui::DragValue::new(&mut p.density_kg_m3)
                        .range(1.0..=30_000.0)
                        .speed(10.0)
                        .suffix(" kg/m³"),
                )
                .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Mass:");
                ui.add_enabled(
                    p.mass_input == MassInput::Mass,
                    egui::DragValue::new(&mut p.mass_kg)
                        .range(1e-3..=1e22)
                        .speed(mass_speed)
                        .custom_formatter(|v, _| format!("{v:.4e}"))
                        .suffix(" kg"),
                )
                .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("GM:");
                ui.add_enabled(
                    p.mass_input == MassInput::Gm,
                    egui::DragValue::new(&mut p.gm_m3_s2)
                        .range(1e-12..=1e12)
                        .speed(gm_speed)
                        .custom_formatter(|v, _| format!("{v:.4e}"))
                        .suffix(" m³/s²"),
                )
                .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Spin period:");
                ui.add(
                    egui::DragValue::new(&mut p.period_h)
                        .range(0.01..=10_000.0)
                        .speed(0.01)
                        .suffix(" h"),
                )
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
                        for c in &mut p.custom_axis {
                            ui.add(egui::DragValue::new(c).range(-1.0..=1.0).speed(0.01))
                                .labelled_by(l.id);
                        }
                    });
                    ui.end_row();
                }
                let l = ui.label("Phase at t = 0:");
                ui.add(
                    egui::DragValue::new(&mut p.phase_deg)
                        .range(-360.0..=360.0)
                        .speed(1.0)
                        .suffix(" °"),
                )
                .labelled_by(l.id);
                ui.end_row();
            });
        if self.params != before {
            self.params.sync_derived(volume);
        }
        let pending = self.built_params.as_ref() != Some(&self.params);
        ui.horizontal(|ui| {
            if ui
                .add_enabled(
                    pending && self.view.is_some(),
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
                ui.colored_label(Color32::from_rgb(230, 180, 60), "edited, not applied");
            }
            if self.body_job.is_some() {
                ui.spinner();
            }
        });
        if let Some(v) = &self.view {
            let f = *v.figures();
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
                        row("Volume", fmt_sci(f.volume_m3 / 1e9, "km³"));
                        row("Equivalent radius", fmt_length(f.equivalent_radius_m));
                        row("Brillouin radius", fmt_length(f.brillouin_radius_m));
                        row("Spin period", format!("{:.4} h", f.period_s / 3600.0));
                        row(
                            "Critical period (this density)",
                            format!("{:.4} h", f.critical_period_s / 3600.0),
                        );
                        row("Synchronous orbit radius", fmt_length(f.synchronous_radius_m));
                    });
                    if f.period_s < f.critical_period_s {
                        ui.colored_label(
                            Color32::from_rgb(255, 150, 90),
                            "Spins faster than the critical period: loose material at the equator is lifted off.",
                        );
                    }
                });
        }
    }

    pub(crate) fn map_ui(&mut self, ui: &mut Ui) {
        ui.heading("Surface map");
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
                            "{faces} faces: the map takes a while (its cost grows with the square of the face count)"
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
        ui.heading("Flights");
        let scenario = &mut self.scenario;
        crate::sites::flight_settings_ui(&mut scenario.integrator, &mut scenario.bounce, ui);
        ui.horizontal(|ui| {
            let l = ui.label("Dispersion seed:");
            let mut seed = scenario.seed.unwrap_or(0);
            if ui
                .add(egui::DragValue::new(&mut seed))
                .labelled_by(l.id)
                .changed()
            {
                scenario.seed = Some(seed);
            }
        });
    }

    /// The row of main actions under the menu: open, run/cancel, export, and job progress.
    pub(crate) fn toolbar_ui(&mut self, ui: &mut Ui) {
        egui::Panel::top("toolbar").show(ui, |ui| {
            ui.horizontal(|ui| {
                if ui.button("Open shape…").on_hover_text("Ctrl+O").clicked() {
                    self.commands.push(Command::BrowseShape);
                }
                ui.separator();
                let estimate = self.run_estimate();
                let launches = estimate.launches;
                let can_run = self.run_job.is_none() && self.view.is_some() && launches > 0;
                if ui
                    .add_enabled(
                        can_run,
                        egui::Button::new(
                            RichText::new(format!("Run {launches} launch(es)")).strong(),
                        ),
                    )
                    .on_hover_text(format!(
                        "Fly every launch (Ctrl+R or F5). Needs {estimate}; runs with more than \
                         {} launches are refused.",
                        self.scenario.max_launches()
                    ))
                    .clicked()
                {
                    self.commands.push(Command::Run);
                }
                if launches > 0 {
                    ui.weak(format!(
                        "up to {} memory",
                        spinfall_workflow::limits::bytes_text(estimate.memory_bytes)
                    ));
                }
                if self.busy() && ui.button("Cancel").clicked() {
                    self.commands.push(Command::CancelJobs);
                }
                if let Some(job) = &self.run_job {
                    let (done, total) = job.progress.counts();
                    ui.add(
                        egui::ProgressBar::new(job.progress.fraction().unwrap_or(0.0))
                            .desired_width(220.0)
                            .text(format!("{done} / {total} launches"))
                            .animate(true),
                    );
                }
                ui.separator();
                if ui.button("Export…").on_hover_text("Ctrl+E").clicked() {
                    self.commands.push(Command::ShowExport);
                }
                if ui
                    .button("Save scenario…")
                    .on_hover_text("Ctrl+S")
                    .clicked()
                {
                    self.commands.push(Command::BrowseSaveScenario);
                }
            });
        });
    }
}
