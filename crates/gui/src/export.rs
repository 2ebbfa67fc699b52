//! The export window and the export job: images (rendered on a worker thread), results,
//! trajectories, surface map and scenario, written through the workflow's output module as one
//! set with a manifest (`<prefix>_manifest.json`), into a folder created if missing.

use std::path::PathBuf;
use std::sync::Arc;

use egui::Context;
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::surface_map::SurfaceMap;
use spinfall_render::{Camera, Image};
use spinfall_scene::{BodyView, ViewOptions};
use spinfall_workflow::export::write_surface_map_csv;
use spinfall_workflow::images::{ImageRequest, ViewChoice, png_summary, render_image, write_png};
use spinfall_workflow::output::{OutputFolder, SetFile};
use spinfall_workflow::run_files::{ResultSelection, result_files, run_info};
use spinfall_workflow::scenario_file::scenario_json;

use crate::app::SpinfallApp;
use crate::command::{Command, ExportRequest};
use crate::error::GuiError;
use crate::jobs::{Job, JobContext};
use crate::state::PersistedState;

/// The export form's fields.
#[derive(Debug, Clone)]
pub struct ExportForm {
    /// Target folder, typed or chosen.
    pub folder: String,
    /// File name stem.
    pub stem: String,
    /// What to write.
    pub request: ExportRequest,
}

impl ExportForm {
    pub(crate) fn from_state(state: &PersistedState) -> Self {
        Self {
            folder: state.export_folder.clone(),
            stem: "spinfall".into(),
            request: ExportRequest {
                folder: PathBuf::new(),
                stem: String::new(),
                composite_png: true,
                body_png: false,
                inertial_png: false,
                size_px: state.export_size_px,
                results: true,
                trajectories: true,
                surface_map: true,
                scenario: true,
            },
        }
    }

    /// The request with the typed folder and stem.
    pub fn to_request(&self) -> ExportRequest {
        ExportRequest {
            folder: PathBuf::from(self.folder.trim()),
            stem: self.stem.trim().to_string(),
            ..self.request.clone()
        }
    }
}

/// What an export job needs, copied from the app.
struct ExportSnapshot {
    view: Arc<BodyView>,
    reports: Arc<Vec<FlightReport>>,
    map: Option<Arc<SurfaceMap>>,
    options: ViewOptions,
    cameras: [Option<Camera>; 2],
    t_s: f64,
    scenario: Scenario,
    title: String,
    sites: Vec<spinfall_scene::SiteMarker>,
    field: spinfall_workflow::gravity_method::FieldUsed,
}

impl SpinfallApp {
    pub(crate) fn export_window(&mut self, ctx: &Context) {
        if !self.show_export {
            return;
        }
        let mut open = true;
        egui::Window::new("Export")
            .open(&mut open)
            .resizable(false)
            .show(ctx, |ui| {
                let form = &mut self.export_form;
                egui::Grid::new("export").num_columns(2).show(ui, |ui| {
                    ui.label("Folder:");
                    ui.horizontal(|ui| {
                        ui.add(
                            egui::TextEdit::singleline(&mut form.folder)
                                .desired_width(260.0)
                                .hint_text("/path/to/folder"),
                        );
                        if ui.button("Browse…").clicked() {
                            self.commands.push(Command::BrowseExportFolder);
                        }
                    });
                    ui.end_row();
                    ui.label("File name prefix:");
                    ui.text_edit_singleline(&mut form.stem);
                    ui.end_row();
                    let r = &mut form.request;
                    ui.label("Images (PNG):");
                    ui.vertical(|ui| {
                        ui.checkbox(&mut r.composite_png, "both views side by side");
                        ui.checkbox(&mut r.body_png, "body-fixed view");
                        ui.checkbox(&mut r.inertial_png, "inertial view");
                    });
                    ui.end_row();
                    let l = ui.label("Image size (width x height):");
                    ui.horizontal(|ui| {
                        ui.add(
                            egui::DragValue::new(&mut r.size_px[0])
                                .range(64..=8192)
                                .suffix(" px"),
                        )
                        .labelled_by(l.id);
                        ui.label("x");
                        ui.add(
                            egui::DragValue::new(&mut r.size_px[1])
                                .range(64..=8192)
                                .suffix(" px"),
                        )
                        .labelled_by(l.id);
                    });
                    ui.end_row();
                    ui.label("Data:");
                    ui.vertical(|ui| {
                        ui.checkbox(&mut r.results, "results (JSON and CSV)");
                        ui.checkbox(&mut r.trajectories, "trajectories (CSV)");
                        ui.checkbox(&mut r.surface_map, "surface map per face (CSV)");
                        ui.checkbox(&mut r.scenario, "scenario (JSON)");
                    });
                    ui.end_row();
                });
                ui.horizontal(|ui| {
                    let busy = self.export_job.is_some();
                    if ui.add_enabled(!busy, egui::Button::new("Export")).clicked() {
                        self.state.export_size_px = self.export_form.request.size_px;
                        self.state.export_folder = self.export_form.folder.clone();
                        self.commands
                            .push(Command::Export(self.export_form.to_request()));
                    }
                    if let Some(job) = &self.export_job {
                        ui.spinner();
                        ui.label(job.progress.stage());
                    }
                });
                ui.weak("Files are written to a temporary name and renamed when complete.");
            });
        if !open {
            self.show_export = false;
        }
    }

    pub(crate) fn start_export(&mut self, req: ExportRequest) {
        if self.export_job.is_some() {
            self.error("an export is in progress");
            return;
        }
        let Some(view) = self.view.clone() else {
            self.error("nothing to export: no body loaded");
            return;
        };
        if req.folder.as_os_str().is_empty() {
            self.error("export: type a folder (or use Browse…)");
            return;
        }
        if req.stem.is_empty() || req.stem.contains(['/', '\\']) {
            self.error("export: the file name prefix must be a plain name");
            return;
        }
        let sites = self.site_markers();
        let snapshot = ExportSnapshot {
            sites,
            view,
            reports: self.reports.clone(),
            field: self.reports_field.clone(),
            map: self.map.clone(),
            options: self.state.view.clone(),
            cameras: [self.panes[0].camera.clone(), self.panes[1].camera.clone()],
            t_s: self.t_s,
            scenario: self.scenario_for(&req.folder),
            title: self
                .scenario
                .name
                .clone()
                .unwrap_or_else(|| self.scenario.body_name()),
        };
        self.export_job = Some(Job::spawn(
            format!("Exporting to {}", req.folder.display()),
            self.repaint.clone(),
            move |ctx| run_export(ctx, &req, &snapshot),
        ));
    }
}

fn run_export(
    ctx: &JobContext,
    req: &ExportRequest,
    s: &ExportSnapshot,
) -> Result<Vec<PathBuf>, GuiError> {
    let folder = OutputFolder::prepare(&req.folder)?;
    let stem = &req.stem;
    let [w, h] = req.size_px;
    let launches = s.reports.len();
    let chunks = png_summary(&s.title, &s.view, launches, s.t_s);
    let mut images: Vec<(String, Image)> = Vec::new();
    for (wanted, view, suffix) in [
        (req.composite_png, ViewChoice::Both, "views.png"),
        (req.body_png, ViewChoice::BodyFixed, "body_fixed.png"),
        (req.inertial_png, ViewChoice::Inertial, "inertial.png"),
    ] {
        if !wanted {
            continue;
        }
        ctx.check_cancel()?;
        ctx.progress.set_stage(&format!("rendering {suffix}"));
        ctx.request_repaint();
        let request = ImageRequest {
            view,
            width_px: w,
            height_px: h,
            t_s: s.t_s,
            options: s.options.clone(),
            cameras: s.cameras.clone(),
            sites: s.sites.clone(),
        };
        images.push((
            format!("{stem}_{suffix}"),
            render_image(&s.view, &s.reports, &request)?,
        ));
    }
    // Compute the map here when the user has not shown one yet.
    let map = match (&s.map, req.surface_map) {
        (Some(m), true) => Some(m.clone()),
        (None, true) => {
            ctx.progress.set_stage("computing the surface map");
            ctx.request_repaint();
            let progress = ctx.progress_fn();
            Some(Arc::new(spinfall_workflow::surface::compute_surface_map(
                s.view.body(),
                &progress,
                &ctx.cancel,
            )?))
        }
        (_, false) => None,
    };
    let scenario_text = if req.scenario {
        Some(scenario_json(&s.scenario)?)
    } else {
        None
    };
    ctx.progress.set_stage("writing the files");
    ctx.request_repaint();
    let info = run_info(Some(&s.scenario), &s.field);
    let mut files: Vec<SetFile<'_>> = Vec::new();
    for (name, image) in &images {
        let chunks = &chunks;
        files.push(SetFile::new(name.clone(), move |out| {
            write_png(out, image, chunks)
        }));
    }
    let prefix = format!("{stem}_");
    if !s.reports.is_empty() {
        let selection = ResultSelection {
            results: req.results,
            trajectories: req.trajectories,
        };
        files.extend(result_files(&s.reports, &info, &prefix, selection));
    }
    if let Some(map) = &map {
        let body = s.view.body();
        files.push(SetFile::new(
            format!("{stem}_surface_map.csv"),
            move |out| write_surface_map_csv(out, body, map),
        ));
    }
    if let Some(text) = &scenario_text {
        files.push(SetFile::new(format!("{stem}_scenario.json"), move |out| {
            out.write_all(text.as_bytes())
                .map_err(spinfall_workflow::output::io_error)
        }));
    }
    if files.is_empty() {
        return Err(GuiError::Refused(
            "nothing selected to export (or no results yet)".into(),
        ));
    }
    Ok(folder.write_set(&format!("{stem}_manifest.json"), files, &info, &ctx.cancel)?)
}
