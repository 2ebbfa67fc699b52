//! The menu bar, the toolbar (run with its progress, cancel, export) and the status line.

use egui::{Color32, RichText, Ui};
use spinfall_scene::{LengthDisplay, TimeDisplay};

use crate::app::{
    RunState, SHORTCUT_EXPORT, SHORTCUT_OPEN, SHORTCUT_REDO, SHORTCUT_RUN, SHORTCUT_SAVE,
    SHORTCUT_UNDO, SpinfallApp,
};
use crate::command::Command;
use crate::jobs::JobKind;
use crate::state::RecentKind;

/// The caution shown in the status line and the About text.
pub const CAUTION: &str = "Research and planning tool: results are not flight-certified.";

/// Amber of warnings (edited, out of date).
pub const AMBER: Color32 = Color32::from_rgb(230, 180, 60);

impl SpinfallApp {
    pub(crate) fn menu_bar_ui(&mut self, ui: &mut Ui) {
        egui::Panel::top("menu").show(ui, |ui| {
            egui::MenuBar::new().ui(ui, |ui| {
                ui.menu_button("File", |ui| self.file_menu_ui(ui));
                ui.menu_button("Edit", |ui| {
                    let (undo, redo) = self.can_undo_redo();
                    let fmt = |s| ui.ctx().format_shortcut(s);
                    let (u, r) = (fmt(&SHORTCUT_UNDO), fmt(&SHORTCUT_REDO));
                    if ui
                        .add_enabled(undo, egui::Button::new("Undo").shortcut_text(u))
                        .on_hover_text("Undo the last site or body edit")
                        .clicked()
                    {
                        self.commands.push(Command::Undo);
                    }
                    if ui
                        .add_enabled(redo, egui::Button::new("Redo").shortcut_text(r))
                        .clicked()
                    {
                        self.commands.push(Command::Redo);
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
                ui.menu_button("View", |ui| self.view_menu_ui(ui));
                ui.menu_button("Help", |ui| {
                    ui.label("Spinfall: where things go on spinning small bodies.");
                    ui.label("Drag: orbit · right/middle drag: pan · wheel: zoom");
                    ui.label("Click on the body: place a launch site (when enabled)");
                    ui.label(
                        "Space: play/pause · Ctrl+R or F5: run · Ctrl+E: export · Ctrl+Z / \
                         Ctrl+Shift+Z: undo / redo",
                    );
                    ui.label("Numbers are taken on Enter or when you leave the field; Escape puts the value back.");
                    ui.colored_label(AMBER, CAUTION);
                });
            });
        });
    }

    fn file_menu_ui(&mut self, ui: &mut Ui) {
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
    }

    fn view_menu_ui(&mut self, ui: &mut Ui) {
        ui.label(RichText::new("Units (screen and figures; data files stay SI)").strong());
        units_ui(ui, &mut self.state.view.units);
        ui.separator();
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
    }

    pub(crate) fn status_bar_ui(&mut self, ui: &mut Ui) {
        egui::Panel::bottom("status").show(ui, |ui| {
            // The right-hand part first, so that the left-hand part (which can grow long while
            // work runs) is cut to the space left instead of running under it.
            ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
                ui.colored_label(AMBER, CAUTION);
                ui.label(format!("UI {:.1} ms/frame", self.frame_ms))
                    .on_hover_text(
                        "Time spent building the frame (views rendered on the CPU included)",
                    );
                // Shown while the views animate or are being dragged (orbit, pan).
                let dragging = ui.ctx().input(|i| i.pointer.any_down());
                if (self.playing || dragging) && self.frame_interval_s > 0.0 {
                    ui.label(format!("{:.0} fps", 1.0 / self.frame_interval_s));
                }
                ui.separator();
                ui.with_layout(egui::Layout::left_to_right(egui::Align::Center), |ui| {
                    self.status_left_ui(ui);
                });
            });
        });
    }

    /// The body, the last run and the running jobs, left to right; long labels are cut short
    /// (hover shows them whole).
    fn status_left_ui(&mut self, ui: &mut Ui) {
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
            ui.label(format!(
                "mass {}",
                crate::units::fmt_sci(v.figures().mass_kg, "kg")
            ));
        }
        ui.separator();
        ui.add(egui::Label::new(self.run_state_text()).truncate());
        let stale = self.stale_reasons();
        if !self.reports.is_empty() && !stale.is_empty() {
            ui.colored_label(AMBER, "· results out of date");
        }
        for (label, progress) in self.job_progress() {
            ui.separator();
            ui.spinner();
            if let Some(f) = progress {
                ui.add(
                    egui::ProgressBar::new(f)
                        .desired_width(120.0)
                        .show_percentage(),
                );
            }
            ui.add(egui::Label::new(label).truncate());
        }
    }

    /// The last run in words, with true counts.
    pub fn run_state_text(&self) -> String {
        match &self.run_state {
            RunState::NotRun => "not run yet".to_string(),
            RunState::Done {
                launches,
                elapsed_s,
            } => format!("last run: {launches} launches in {elapsed_s:.2} s"),
            RunState::Cancelled { finished, launches } => {
                format!("last run cancelled: {finished} of {launches} launches had finished")
            }
            RunState::Failed(e) => format!("last run failed: {e}"),
        }
    }

    /// `(label with stage, fraction)` of every running job but the run (the toolbar shows it).
    pub(crate) fn job_progress(&self) -> Vec<(String, Option<f32>)> {
        self.running_jobs()
            .into_iter()
            .filter(|j| j.kind != JobKind::Run)
            .map(|j| {
                let stage = j.progress.stage();
                let label = if stage.is_empty() {
                    j.label.to_string()
                } else {
                    format!("{}: {stage}", j.label)
                };
                (label, j.progress.fraction())
            })
            .collect()
    }

    /// The run's progress text: the launches known from the start, never "0 / 0".
    pub(crate) fn run_progress(&self) -> Option<(String, f32)> {
        let job = self.run_job.as_ref()?;
        let stage = job.progress.stage();
        let (done, total) = job.progress.counts();
        if stage == "flying" {
            let total = if total > 0 { total } else { self.run_launches };
            let f = if total > 0 {
                done as f32 / total as f32
            } else {
                0.0
            };
            Some((format!("{done} / {total} launches flown"), f))
        } else {
            // Before the flights (the gravity field, the launches): the stage and the count.
            let what = if stage.is_empty() {
                "preparing".to_string()
            } else {
                stage
            };
            Some((
                format!("{what} · 0 / {} launches flown", self.run_launches),
                job.progress.fraction().unwrap_or(0.0),
            ))
        }
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
                if self.busy()
                    && ui
                        .button("Cancel")
                        .on_hover_text("Stop the running work; complete results stay")
                        .clicked()
                {
                    self.commands.push(Command::CancelJobs);
                }
                if let Some((text, f)) = self.run_progress() {
                    ui.spinner();
                    ui.add(egui::ProgressBar::new(f).desired_width(300.0).text(text));
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

/// Radio buttons of the display units.
pub(crate) fn units_ui(ui: &mut Ui, units: &mut spinfall_scene::DisplayUnits) {
    ui.horizontal(|ui| {
        ui.label("Lengths:");
        ui.radio_value(&mut units.length, LengthDisplay::Metres, "m");
        ui.radio_value(&mut units.length, LengthDisplay::Kilometres, "km");
        ui.separator();
        ui.label("Times:");
        ui.radio_value(&mut units.time, TimeDisplay::Seconds, "s");
        ui.radio_value(&mut units.time, TimeDisplay::Hours, "h");
    });
}
