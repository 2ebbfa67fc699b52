//! The export window and the export job: images (rendered on a worker thread), results,
//! trajectories, surface map and scenario, each written atomically.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use egui::Context;
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::surface_map::SurfaceMap;
use spinfall_render::{Camera, Image, RenderOptions, Renderer, encode_png};
use spinfall_scene::{
    BodyView, CompositeOptions, Frame, ViewOptions, add_title, composite, frame_scene,
};

use crate::app::SpinfallApp;
use crate::atomic::write_atomic;
use crate::command::{Command, ExportRequest};
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
    scenario_json: Result<String, String>,
    body_name: String,
    sites: Vec<spinfall_scene::SiteMarker>,
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
            map: self.map.clone(),
            options: self.state.view.clone(),
            cameras: [self.panes[0].camera.clone(), self.panes[1].camera.clone()],
            t_s: self.t_s,
            scenario_json: crate::scenario_io::to_json_in(self, Some(&req.folder)),
            body_name: self
                .shape
                .as_ref()
                .map(|s| s.name.clone())
                .unwrap_or_default(),
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
) -> Result<Vec<PathBuf>, String> {
    if !req.folder.is_dir() {
        return Err(format!("folder {} does not exist", req.folder.display()));
    }
    let path = |suffix: &str| req.folder.join(format!("{}_{suffix}", req.stem));
    let mut written = Vec::new();
    let [w, h] = req.size_px;
    let t_text = format!("{:.3}", s.t_s);
    let chunks = [
        ("Software", "Spinfall"),
        ("Body", s.body_name.as_str()),
        ("Time_s", t_text.as_str()),
        ("Caution", crate::body_panel::CAUTION),
    ];
    let write_png = |p: &Path, image: &Image| {
        write_atomic(p, |out| {
            encode_png(image, &chunks, out).map_err(|e| e.to_string())
        })
    };
    if req.composite_png {
        ctx.progress.set_stage("rendering the side-by-side image");
        ctx.request_repaint();
        let image = composite(
            &s.view,
            &s.reports,
            s.t_s,
            &s.options,
            &CompositeOptions {
                width_px: w,
                height_px: h,
                supersample: 2,
                body_camera: s.cameras[0].clone(),
                inertial_camera: s.cameras[1].clone(),
                sites: s.sites.clone(),
            },
        )
        .map_err(|e| e.to_string())?;
        let p = path("views.png");
        write_png(&p, &image)?;
        written.push(p);
    }
    for (wanted, frame, cam, suffix) in [
        (
            req.body_png,
            Frame::BodyFixed,
            &s.cameras[0],
            "body_fixed.png",
        ),
        (
            req.inertial_png,
            Frame::Inertial,
            &s.cameras[1],
            "inertial.png",
        ),
    ] {
        if !wanted || ctx.cancelled() {
            continue;
        }
        ctx.progress.set_stage(&format!("rendering {suffix}"));
        ctx.request_repaint();
        let mut camera = cam
            .clone()
            .unwrap_or_else(|| spinfall_scene::default_camera(&s.view.body().shape, w, h));
        camera.set_viewport(w, h);
        let mut scene = frame_scene(&s.view, &s.reports, s.t_s, &s.options, [w, h], frame);
        spinfall_scene::add_site_markers(&mut scene, &s.view, &s.sites, s.t_s, frame);
        add_title(
            &mut scene,
            frame,
            s.t_s,
            s.view.body().spin.period_s,
            [w, h],
        );
        let mut renderer = Renderer::new();
        let image = renderer
            .render(
                &scene,
                &camera,
                &RenderOptions::new(w, h).with_supersample(2),
            )
            .clone();
        let p = path(suffix);
        write_png(&p, &image)?;
        written.push(p);
    }
    if req.results && !s.reports.is_empty() {
        ctx.progress.set_stage("writing results");
        let p = path("results.json");
        write_atomic(&p, |out| {
            spinfall_dynamics::export::write_results_json(out, &s.reports)
                .map_err(|e| e.to_string())
        })?;
        written.push(p);
        let p = path("results.csv");
        write_atomic(&p, |out| {
            write_results_csv(out, &s.reports).map_err(|e| e.to_string())
        })?;
        written.push(p);
    }
    if req.trajectories && !s.reports.is_empty() {
        ctx.progress.set_stage("writing trajectories");
        let p = path("trajectories.csv");
        write_atomic(&p, |out| {
            spinfall_dynamics::export::write_trajectories_csv(out, &s.reports)
                .map_err(|e| e.to_string())
        })?;
        written.push(p);
    }
    if req.surface_map {
        // Compute the map here when the user has not shown one yet.
        let computed;
        let map = match &s.map {
            Some(m) => m.as_ref(),
            None => {
                ctx.progress.set_stage("computing the surface map");
                ctx.request_repaint();
                let progress = |done: usize, total: usize| {
                    ctx.progress.set(done, total);
                    ctx.request_repaint();
                };
                computed = spinfall_dynamics::surface_map::surface_map(
                    s.view.body(),
                    &progress,
                    &ctx.cancel,
                )
                .map_err(|e| format!("surface map: {e}"))?;
                &computed
            }
        };
        ctx.progress.set_stage("writing the surface map");
        let p = path("surface_map.csv");
        write_atomic(&p, |out| {
            spinfall_dynamics::export::write_surface_map_csv(out, s.view.body(), map)
                .map_err(|e| e.to_string())
        })?;
        written.push(p);
    }
    if req.scenario {
        let text = s.scenario_json.clone()?;
        let p = path("scenario.json");
        write_atomic(&p, |out| {
            out.write_all(text.as_bytes()).map_err(|e| e.to_string())
        })?;
        written.push(p);
    }
    if written.is_empty() {
        return Err("nothing selected to export (or no results yet)".into());
    }
    Ok(written)
}

/// The results table as CSV (one row per launch, units in the header).
pub fn write_results_csv(out: &mut dyn Write, reports: &[FlightReport]) -> std::io::Result<()> {
    writeln!(
        out,
        "id,outcome,first_contact_time_s,rest_time_s,landing_lat_deg,landing_lon_deg,downrange_m,max_altitude_m,first_impact_speed_m_s,first_impact_angle_deg,contacts,jacobi_rel_drift,frame_agreement_m"
    )?;
    let f = |v: Option<f64>| v.map(|v| format!("{v}")).unwrap_or_default();
    for r in reports {
        let first = r.contacts.first();
        writeln!(
            out,
            "{},{},{},{},{},{},{},{},{},{},{},{},{}",
            csv_text(&r.id),
            csv_text(&crate::results::outcome_text(&r.outcome)),
            f(r.first_contact_time_s),
            f(r.rest_time_s),
            f(r.landing.as_ref().map(|l| l.lat_deg)),
            f(r.landing.as_ref().map(|l| l.lon_deg)),
            f(r.downrange_m),
            r.max_altitude_m,
            f(first.map(|c| c.impact_speed_m_s)),
            f(first.map(|c| c.impact_angle_deg)),
            r.contacts.len(),
            r.jacobi_rel_drift,
            r.frame_agreement_m
        )?;
    }
    Ok(())
}

fn csv_text(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}
