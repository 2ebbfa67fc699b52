//! Export and animation jobs: figures (PNG or SVG through the scene's figure layout, framed as
//! the views show them), plots, results, trajectories, surface map and scenario written as one
//! set with a manifest (`<prefix>_manifest.json`); animations streamed into a GIF or APNG, or
//! numbered PNG frames. Everything is written through `spinfall_workflow::output`, into a
//! folder created if missing.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::surface_map::{SurfaceField, SurfaceMap};
use spinfall_render::{AnimationFormat, Camera, Figure, write_svg};
use spinfall_scene::plots::{PlotKind, PlotOptions, plot};
use spinfall_scene::{
    AnimationSettings, BodyView, FigureOptions, Output, SiteMarker, ViewOptions, Views,
    build_figure, render_frames, write_animation,
};
use spinfall_workflow::export::write_surface_map_csv;
use spinfall_workflow::gravity_method::FieldUsed;
use spinfall_workflow::images::{png_summary, write_png};
use spinfall_workflow::map_cache::load_or_compute_scenario_map;
use spinfall_workflow::output::RunInfo;
use spinfall_workflow::output::{OutputFolder, OutputTarget, SetFile, io_error, write_file};
use spinfall_workflow::results_file::{EmbeddedScenario, ShapeCheck};
use spinfall_workflow::run_files::{ResultSelection, result_files, run_info};
use spinfall_workflow::scenario_file::scenario_json;
use spinfall_workflow::series::plot_series;

use crate::app::SpinfallApp;
use crate::command::{AnimationRequest, AnimationTarget, ExportRequest, FigureChoice, ImageFormat};
use crate::error::GuiError;
use crate::jobs::{Job, JobContext, Poll};
use crate::notify::NoticeKind;
use crate::work::{AnimationDone, ExportDone};

/// Samples per plotted series in exported plots.
const PLOT_SAMPLES: usize = 2000;

/// What an export needs, copied from the app.
struct Snapshot {
    view: Arc<BodyView>,
    reports: Arc<Vec<FlightReport>>,
    map: Option<Arc<SurfaceMap>>,
    map_key: Option<String>,
    cache: Option<PathBuf>,
    options: ViewOptions,
    cameras: [Option<Camera>; 2],
    t_s: f64,
    scenario: Scenario,
    /// Embedded in results.json: the scenario (relocated to the export folder), that folder and
    /// the shape check, so `spinfall stats` can reopen the body from the file alone.
    embedded: EmbeddedScenario,
    title: String,
    sites: Vec<SiteMarker>,
    field: FieldUsed,
    selected_launch: Option<usize>,
}

impl Snapshot {
    /// The view options of a figure: the app's, with the figure's theme and colour range.
    fn view_options(&self, figure: &FigureChoice) -> ViewOptions {
        ViewOptions {
            theme: figure.theme,
            color_range: figure.color_range,
            ..self.options.clone()
        }
    }

    fn figure_options(&self, figure: &FigureChoice, views: Views, output: Output) -> FigureOptions {
        FigureOptions {
            size: figure.size,
            views,
            cameras: self.cameras.clone(),
            fit_body: figure.fit_body,
            sites: self.sites.clone(),
            output,
            ..FigureOptions::default()
        }
    }

    /// Text chunks of a PNG: the session and the figure's own metadata.
    fn metadata(&self, figure: &Figure) -> Vec<(String, String)> {
        let mut m = png_summary(&self.title, &self.view, self.reports.len(), self.t_s);
        m.push(("Gravity".into(), self.field.describe_method()));
        m.extend(
            figure
                .metadata
                .iter()
                .filter(|(k, _)| !m.iter().any(|(mk, _)| mk == k))
                .cloned()
                .collect::<Vec<_>>(),
        );
        m
    }
}

/// Whether `folder` must be created (it does not exist yet).
fn to_be_created(folder: &Path) -> Option<PathBuf> {
    (!folder.exists()).then(|| folder.to_path_buf())
}

impl SpinfallApp {
    fn snapshot(&mut self, figure: &FigureChoice, folder: &Path) -> Option<Snapshot> {
        let view = self.view.clone()?;
        let scenario = self.scenario_for(folder);
        Some(Snapshot {
            sites: self.site_markers(),
            view,
            reports: self.reports.clone(),
            map: self.map.clone(),
            map_key: self.current_map_key(),
            cache: self.gravity.cache_folder(),
            options: ViewOptions {
                color_range: figure.color_range,
                ..self.state.view.clone()
            },
            cameras: [self.panes[0].camera.clone(), self.panes[1].camera.clone()],
            t_s: self.t_s,
            embedded: EmbeddedScenario {
                scenario: scenario.clone(),
                scenario_dir: std::path::absolute(folder).ok(),
                shape_check: self.shape.as_ref().map(|s| ShapeCheck {
                    faces: s.shape.face_count(),
                    volume_m3: s.shape.mass_properties().volume_m3,
                }),
            },
            scenario,
            title: self
                .scenario
                .name
                .clone()
                .unwrap_or_else(|| self.scenario.body_name()),
            field: self.reports_field.clone(),
            selected_launch: self.state.view.selected_launch,
        })
    }

    /// What an export into `folder` with `stem` needs, or `None` (with a notice) when there is
    /// no body, no folder or no plain prefix.
    fn export_snapshot(
        &mut self,
        folder: &Path,
        stem: &str,
        figure: &FigureChoice,
    ) -> Option<Snapshot> {
        let refused = if self.view.is_none() {
            Some("nothing to export: no body loaded")
        } else if folder.as_os_str().is_empty() {
            Some("export: type a folder (or use Browse…)")
        } else if stem.is_empty() || stem.contains(['/', '\\']) {
            Some("export: the file name prefix must be a plain name")
        } else {
            None
        };
        if let Some(why) = refused {
            self.error(why);
            return None;
        }
        self.snapshot(figure, folder)
    }

    pub(crate) fn start_export(&mut self, req: ExportRequest) {
        if self.export_job.is_some() {
            self.error("an export is in progress");
            return;
        }
        if let Some(snapshot) = self.export_snapshot(&req.folder, &req.stem, &req.figure) {
            self.export_job = Some(Job::spawn(
                format!("Exporting to {}", req.folder.display()),
                self.repaint.clone(),
                move |ctx| run_export(ctx, &req, &snapshot),
            ));
        }
    }

    pub(crate) fn start_animation(&mut self, req: AnimationRequest) {
        if self.animation_job.is_some() {
            self.error("an animation is being exported");
            return;
        }
        if let Some(snapshot) = self.export_snapshot(&req.folder, &req.stem, &req.figure) {
            self.animation_job = Some(Job::spawn(
                format!("Animation into {}", req.folder.display()),
                self.repaint.clone(),
                move |ctx| run_animation(ctx, &req, &snapshot),
            ));
        }
    }

    pub(crate) fn poll_export_jobs(&mut self) {
        if let Some(job) = &self.export_job
            && let Poll::Done(result) = job.poll()
        {
            self.export_job = None;
            match result {
                Ok(done) => {
                    let list: Vec<String> = done
                        .paths
                        .iter()
                        .filter_map(|p| p.file_name())
                        .map(|n| n.to_string_lossy().into_owned())
                        .collect();
                    let folder = done
                        .paths
                        .first()
                        .map(|p| spinfall_workflow::output::parent_folder(p))
                        .unwrap_or_default();
                    let created = match &done.created_folder {
                        Some(f) => format!("created the folder {} and ", f.display()),
                        None => String::new(),
                    };
                    let text = format!(
                        "{created}exported {} file(s) into {}: {}",
                        done.paths.len(),
                        folder.display(),
                        list.join(", ")
                    );
                    self.export_status = Some((NoticeKind::Info, text.clone()));
                    self.info(text);
                    self.last_exported = done.paths;
                }
                Err(e) if e.is_cancelled() => {
                    let text = "export cancelled; nothing was written".to_string();
                    self.export_status = Some((NoticeKind::Info, text.clone()));
                    self.info(text);
                }
                Err(e) => {
                    let text = format!("export failed: {e}");
                    self.export_status = Some((NoticeKind::Error, text.clone()));
                    self.error(text);
                }
            }
        }
        if let Some(job) = &self.animation_job
            && let Poll::Done(result) = job.poll()
        {
            let frames_so_far = job.progress.counts().0;
            self.animation_job = None;
            match result {
                Ok(done) => {
                    let created = match &done.created_folder {
                        Some(f) => format!("created the folder {} and ", f.display()),
                        None => String::new(),
                    };
                    let text = format!(
                        "{created}wrote an animation of {} frames: {}",
                        done.frames,
                        done.path.display()
                    );
                    self.export_status = Some((NoticeKind::Info, text.clone()));
                    self.info(text);
                    self.last_exported = vec![done.path];
                }
                Err(e) if e.is_cancelled() => {
                    let text = format!(
                        "animation cancelled after {frames_so_far} frame(s); no animation file \
                         was written (frames already written to a frames folder stay)"
                    );
                    self.export_status = Some((NoticeKind::Info, text.clone()));
                    self.info(text);
                }
                Err(e) => {
                    let text = format!("animation not written: {e}");
                    self.export_status = Some((NoticeKind::Error, text.clone()));
                    self.error(text);
                }
            }
        }
    }
}

/// A figure or plot file of a set.
struct Picture {
    name: String,
    figure: Figure,
}

fn run_export(ctx: &JobContext, req: &ExportRequest, s: &Snapshot) -> Result<ExportDone, GuiError> {
    let created_folder = to_be_created(&req.folder);
    let folder = OutputFolder::prepare(&req.folder)?;
    let stem = &req.stem;
    let (ext, output) = match req.format {
        ImageFormat::Png => ("png", Output::Raster),
        ImageFormat::Svg => ("svg", Output::Vector),
    };
    let options = s.view_options(&req.figure);
    let mut pictures: Vec<Picture> = Vec::new();
    for (wanted, views, suffix) in [
        (req.composite, Views::Both, "views"),
        (req.body_view, Views::BodyFixed, "body_fixed"),
        (req.inertial_view, Views::Inertial, "inertial"),
    ] {
        if !wanted {
            continue;
        }
        ctx.check_cancel()?;
        ctx.progress.set_stage(&format!("drawing {suffix}.{ext}"));
        ctx.request_repaint();
        let fig = s.figure_options(&req.figure, views, output);
        let figure = build_figure(&s.view, &s.reports, s.t_s, &options, &fig)?;
        pictures.push(Picture {
            name: format!("{stem}_{suffix}.{ext}"),
            figure,
        });
    }
    if req.plots
        && let Some(i) = s.selected_launch.filter(|&i| i < s.reports.len())
    {
        ctx.progress.set_stage("drawing the plots");
        ctx.request_repaint();
        let series = plot_series(s.view.body(), &s.reports, &[i], PLOT_SAMPLES);
        for (kind, suffix) in [
            (PlotKind::Altitude, "altitude"),
            (PlotKind::Speed, "speed"),
            (PlotKind::JacobiDrift, "jacobi_drift"),
        ] {
            ctx.check_cancel()?;
            let opts = PlotOptions {
                kind,
                size: req.figure.size,
                theme: req.figure.theme,
                launch: Some(i),
                field: s.options.map.unwrap_or(SurfaceField::Slope),
                units: s.options.units,
            };
            pictures.push(Picture {
                name: format!("{stem}_{suffix}.{ext}"),
                figure: plot(&s.view, &s.reports, &series, &opts)?,
            });
        }
    }
    // The map: the one shown, else the stored one, else computed (and stored).
    let map = match (&s.map, req.surface_map) {
        (Some(m), true) => Some(m.clone()),
        (None, true) => {
            ctx.progress.set_stage("the surface map");
            ctx.request_repaint();
            let progress = ctx.progress_fn();
            let warn = |w: String| ctx.progress.push_note(w);
            let key = s.map_key.clone().unwrap_or_default();
            let (map, _) = load_or_compute_scenario_map(
                s.view.body(),
                &s.scenario,
                &key,
                s.cache.as_deref().filter(|_| !key.is_empty()),
                &progress,
                &ctx.cancel,
                &warn,
            )?;
            Some(Arc::new(map))
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
    let info = RunInfo {
        embedded: Some(s.embedded.clone()),
        ..run_info(Some(&s.scenario), &s.field)
    };
    let mut files: Vec<SetFile<'_>> = Vec::new();
    for p in &pictures {
        let figure = &p.figure;
        files.push(match req.format {
            ImageFormat::Png => {
                let meta = s.metadata(figure);
                SetFile::new(p.name.clone(), move |out| {
                    write_png(out, &figure.to_image(), &meta)
                })
            }
            ImageFormat::Svg => SetFile::new(p.name.clone(), move |out| {
                write_svg(figure, out)
                    .map_err(|e| spinfall_workflow::WorkflowError::output_msg("", e.to_string()))
            }),
        });
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
            out.write_all(text.as_bytes()).map_err(io_error)
        }));
    }
    if files.is_empty() {
        return Err(GuiError::Refused(
            "nothing selected to export (or no results yet)".into(),
        ));
    }
    let paths = folder.write_set(&format!("{stem}_manifest.json"), files, &info, &ctx.cancel)?;
    Ok(ExportDone {
        paths,
        created_folder,
    })
}

fn run_animation(
    ctx: &JobContext,
    req: &AnimationRequest,
    s: &Snapshot,
) -> Result<AnimationDone, GuiError> {
    let settings = AnimationSettings {
        frames: req.frames,
        fps: req.fps,
        from_s: req.from_s,
        to_s: req.to_s,
    };
    let (w, h, _) = req
        .figure
        .size
        .resolve()
        .map_err(|e| GuiError::Picture(e.to_string()))?;
    // Settings are checked before any folder is made.
    settings.check(w, h)?;
    let created_folder = to_be_created(&req.folder);
    let folder = OutputFolder::prepare(&req.folder)?;
    let options = s.view_options(&req.figure);
    let fig = s.figure_options(&req.figure, Views::Both, Output::Raster);
    ctx.progress.set(0, req.frames as usize);
    ctx.progress.set_stage("rendering frames");
    ctx.request_repaint();
    let progress = |done: usize, total: usize| {
        ctx.progress.set(done, total);
        ctx.request_repaint();
    };
    let path = match req.target {
        AnimationTarget::Gif | AnimationTarget::Apng => {
            let (format, ext) = if req.target == AnimationTarget::Gif {
                (AnimationFormat::Gif, "gif")
            } else {
                (AnimationFormat::Apng, "png")
            };
            let path = folder.path().join(format!("{}_animation.{ext}", req.stem));
            write_file(&OutputTarget::Path(path.clone()), |out| {
                write_animation(
                    &s.view,
                    &s.reports,
                    &options,
                    &fig,
                    &settings,
                    format,
                    out,
                    &progress,
                    &ctx.cancel,
                )
                .map_err(|e| match e {
                    spinfall_scene::SceneError::Cancelled => {
                        spinfall_workflow::WorkflowError::Cancelled
                    }
                    other => spinfall_workflow::WorkflowError::output_msg("", other.to_string()),
                })
            })?;
            path
        }
        AnimationTarget::Frames => {
            let frames =
                OutputFolder::prepare(&folder.path().join(format!("{}_frames", req.stem)))?;
            // Each frame is written completely as it is rendered (never all held in memory).
            let mut sink = |i: u32, image: &spinfall_render::Image| {
                let path = frames.path().join(format!("frame_{i:04}.png"));
                write_file(&OutputTarget::Path(path), |w| write_png(w, image, &[]))
                    .map(|_| ())
                    .map_err(|e| e.to_string())
            };
            render_frames(
                &s.view,
                &s.reports,
                &options,
                &fig,
                &settings,
                &mut sink,
                &progress,
                &ctx.cancel,
            )?;
            frames.path().to_path_buf()
        }
    };
    Ok(AnimationDone {
        path,
        frames: req.frames,
        created_folder,
    })
}
