//! The background work of the session: loading shape models and scenarios, rebuilding the body
//! (with the interpolated field's build, progress and cancel), the surface map (read from or
//! stored into the cache), and runs. Started from commands, collected once per frame.

use std::path::PathBuf;
use std::sync::Arc;

use spinfall_dynamics::scenario::{BUILTIN_QUILLON, FieldSpec, Scenario};
use spinfall_dynamics::surface_map::SurfaceMap;
use spinfall_gravity::LengthUnit;
use spinfall_scene::BodyView;
use spinfall_workflow::field_cache::BuildHooks;
use spinfall_workflow::gravity_method::{FieldUsed, GravityOptions};
use spinfall_workflow::map_cache::{
    MapSource, load_or_compute_scenario_map, map_key, read_stored_map,
};
use spinfall_workflow::prepare::{
    PrepareOptions, Purpose, build_body, prepare_shape_hooks, prepare_shape_targeting,
};
use spinfall_workflow::run::{RunEnd, run_keeping_finished};
use spinfall_workflow::scenario_file::{LoadedScenario, ScenarioSource, read_scenario};
use spinfall_workflow::shape::{OpenedShape, ShapeRequest, ShapeSource, open_shape};

use crate::app::{AUTO_MAP_MAX_FACES, ResultSet, RunState, SpinfallApp};
use crate::error::GuiError;
use crate::handlers::SESSION;
use crate::jobs::{Job, JobContext, Poll};
use crate::notify::{Notice, NoticeKind};
use crate::session::{BodyParams, new_scenario};
use crate::state::{RecentFile, RecentKind};

/// The result of a load job: the document, its folder, the opened shape and its body.
pub(crate) struct Loaded {
    pub scenario: Scenario,
    pub dir: PathBuf,
    pub shape: OpenedShape,
    pub view: Arc<BodyView>,
    pub field: FieldUsed,
    /// Set when a scenario file was loaded (its path).
    pub scenario_path: Option<PathBuf>,
}

/// The result of a body rebuild: the view of the new body and what it was built from.
pub(crate) struct BuiltBody {
    pub view: Arc<BodyView>,
    pub field: FieldUsed,
    pub params: BodyParams,
    pub field_spec: FieldSpec,
}

/// The result of a map job: the map and where it came from (`None`: only a stored map was
/// looked for, and there was none).
pub(crate) type MapFound = Option<(SurfaceMap, MapSource)>;

/// The result of a run job.
pub(crate) struct RunOutput {
    pub end: RunEnd,
    /// How the gravity was computed.
    pub field: FieldUsed,
}

/// The result of an export job: the files written and whether the folder was created.
pub(crate) struct ExportDone {
    pub paths: Vec<PathBuf>,
    pub created_folder: Option<PathBuf>,
}

/// The result of an animation job.
pub(crate) struct AnimationDone {
    pub path: PathBuf,
    pub frames: u32,
    pub created_folder: Option<PathBuf>,
}

/// Progress, cancel and warnings of a job, for the build of an interpolated gravity field.
pub(crate) fn field_hooks(ctx: &JobContext) -> BuildHooks<'_> {
    BuildHooks {
        progress: Box::new(move |p| {
            ctx.progress.set_stage(&format!(
                "building the interpolated gravity field: level {}, {} of {} cells",
                p.level, p.cells_done, p.cells_in_level
            ));
            ctx.progress.set(p.cells_done, p.cells_in_level);
            ctx.request_repaint();
        }),
        cancel: &ctx.cancel,
        warn: Box::new(move |w| ctx.progress.push_note(w)),
    }
}

/// Opens the shape model of `loaded` and builds its body (worker thread).
fn load_session(
    ctx: &JobContext,
    loaded: LoadedScenario,
    scenario_path: Option<PathBuf>,
    gravity: &GravityOptions,
) -> Result<Loaded, GuiError> {
    ctx.progress
        .set_stage("reading and checking the shape model");
    ctx.request_repaint();
    let request: ShapeRequest = loaded.shape_request();
    let shape = open_shape(&request)?;
    ctx.check_cancel()?;
    ctx.progress.set_stage("preparing the gravity field");
    ctx.request_repaint();
    let prepared = prepare_shape_hooks(
        loaded,
        shape,
        &PrepareOptions {
            gravity: gravity.clone(),
            ..PrepareOptions::new(Purpose::BodyOnly)
        },
        &field_hooks(ctx),
    )?;
    let view = Arc::new(BodyView::new(prepared.body.clone()));
    Ok(Loaded {
        scenario: prepared.loaded.scenario,
        dir: prepared.loaded.dir,
        shape: prepared.shape,
        view,
        field: prepared.field,
        scenario_path,
    })
}

impl SpinfallApp {
    /// The field section in force for the session's document.
    pub(crate) fn field_in_force(&self) -> FieldSpec {
        self.gravity.resolve(self.scenario.field.as_ref())
    }

    /// Whether the body panel (mass, spin, gravity method) differs from the body built.
    pub(crate) fn body_edits_pending(&self) -> bool {
        self.built_params.as_ref() != Some(&self.params)
            || self.built_field != Some(self.field_in_force())
    }

    pub(crate) fn start_load(&mut self, file: Option<(PathBuf, LengthUnit)>) {
        if self.load_job.is_some() {
            self.error("a shape model is already loading; wait or cancel it first");
            return;
        }
        // A plain load keeps the session's body settings and settings; the demo body starts
        // afresh. Launches stay when the same shape is opened again.
        let (scenario, label) = match &file {
            Some((path, unit)) => {
                let shape = std::path::absolute(path)
                    .unwrap_or_else(|_| path.clone())
                    .display()
                    .to_string();
                let mut scenario =
                    new_scenario(shape, *unit, self.recenter_new_shapes, &self.params);
                if scenario.body.shape == self.scenario.body.shape
                    && scenario.body.unit == self.scenario.body.unit
                {
                    scenario.launches = self.scenario.launches.clone();
                }
                scenario.seed = self.scenario.seed;
                scenario.integrator = self.scenario.integrator.clone();
                scenario.bounce = self.scenario.bounce.clone();
                scenario.field = self.scenario.field;
                (scenario, format!("Loading {}", path.display()))
            }
            None => (
                new_scenario(
                    BUILTIN_QUILLON.into(),
                    LengthUnit::Kilometre,
                    true,
                    &BodyParams::default(),
                ),
                format!("Loading the demo body {}", spinfall_gravity::demo::NAME),
            ),
        };
        let dir = self.scenario_dir.clone();
        let gravity = self.gravity.clone();
        self.load_job = Some(Job::spawn(label, self.repaint.clone(), move |ctx| {
            load_session(
                ctx,
                LoadedScenario::in_memory(scenario, SESSION, dir),
                None,
                &gravity,
            )
        }));
    }

    pub(crate) fn start_load_scenario(&mut self, path: PathBuf) {
        if self.load_job.is_some() {
            self.error("a shape model is already loading; wait or cancel it first");
            return;
        }
        let label = format!("Loading scenario {}", path.display());
        let gravity = self.gravity.clone();
        self.load_job = Some(Job::spawn_at_stage(
            label,
            "reading the scenario",
            self.repaint.clone(),
            move |ctx| {
                let loaded = read_scenario(&ScenarioSource::File(path.clone()))?;
                load_session(ctx, loaded, Some(path), &gravity)
            },
        ));
    }

    pub(crate) fn start_rebuild_body(&mut self) {
        let (Some(shape), Some(old)) = (self.shape.clone(), self.view.clone()) else {
            return;
        };
        if let Some(job) = &self.body_job {
            job.cancel();
        }
        let mut scenario = self.scenario.clone();
        self.params.write_into(&mut scenario.body);
        let params = self.params.clone();
        let field_spec = self.field_in_force();
        let gravity = self.gravity.clone();
        self.body_job = Some(Job::spawn_at_stage(
            "Preparing the body",
            "preparing the gravity field",
            self.repaint.clone(),
            move |ctx| {
                let (body, field) = build_body(&scenario, &shape, &gravity, &field_hooks(ctx))?;
                Ok(BuiltBody {
                    view: Arc::new(old.with_body(Arc::new(body))),
                    field,
                    params,
                    field_spec,
                })
            },
        ));
    }

    /// Whether the surface map may be computed without being asked: its cost grows with the
    /// square of the face count, so large models wait for the button.
    pub(crate) fn map_starts_by_itself(&self) -> bool {
        self.view
            .as_ref()
            .is_some_and(|v| v.triangles().len() <= AUTO_MAP_MAX_FACES)
    }

    /// The key of the current body's surface map in the cache.
    pub(crate) fn current_map_key(&self) -> Option<String> {
        let view = self.view.as_ref()?;
        let recentred = self.shape.as_ref().is_some_and(|s| s.request.recenter);
        Some(map_key(view.body(), recentred, &self.body_field))
    }

    /// Starts the surface map: read from the cache when stored there, else computed (when
    /// `compute`) and stored.
    pub(crate) fn start_map(&mut self, compute: bool) {
        let (Some(view), Some(key)) = (self.view.clone(), self.current_map_key()) else {
            return;
        };
        if let Some(job) = &self.map_job {
            job.cancel();
        }
        let folder = self.gravity.cache_folder();
        let scenario = self.scenario.clone();
        self.map_job_key = key.clone();
        let label = if compute {
            "Surface map"
        } else {
            "Looking for a stored surface map"
        };
        self.map_job = Some(Job::spawn(label, self.repaint.clone(), move |ctx| {
            let body = view.body();
            if !compute {
                return Ok(folder.and_then(|f| {
                    match read_stored_map(&f, &key, body.shape.face_count()) {
                        Some(Ok(mut map)) => {
                            // The stored map has no sunlight layer: added for this scenario.
                            if let Err(e) = spinfall_workflow::surface::add_sunlight(
                                body,
                                &scenario,
                                &mut map,
                                &ctx.cancel,
                            ) {
                                ctx.progress
                                    .push_note(format!("sunlight layer not added: {e}"));
                            }
                            Some((
                                map,
                                MapSource::Read(spinfall_workflow::map_cache::map_path(&f, &key)),
                            ))
                        }
                        Some(Err(why)) => {
                            ctx.progress
                                .push_note(format!("stored surface map not used: {why}"));
                            None
                        }
                        None => None,
                    }
                }));
            }
            ctx.progress.set_stage("computing the surface map");
            let progress = |done: usize, total: usize| {
                ctx.progress.set(done, total);
                ctx.request_repaint();
            };
            let warn = |w: String| ctx.progress.push_note(w);
            let found = load_or_compute_scenario_map(
                body,
                &scenario,
                &key,
                folder.as_deref(),
                &progress,
                &ctx.cancel,
                &warn,
            )?;
            Ok(Some(found))
        }));
    }

    pub(crate) fn start_run(&mut self) {
        if self.run_job.is_some() {
            self.error("a run is in progress; cancel it first");
            return;
        }
        let (Some(_), Some(shape)) = (self.view.clone(), self.shape.clone()) else {
            self.error("no body loaded yet");
            return;
        };
        if self.scenario.launches.is_empty() {
            self.error("no launches: click on the body or add a site by latitude/longitude");
            return;
        }
        if self.body_edits_pending() || self.body_job.is_some() {
            // Body settings were edited but not applied: apply them first, then run.
            if self.body_job.is_none() {
                self.start_rebuild_body();
            }
            self.run_after_body = true;
            return;
        }
        self.params.write_into(&mut self.scenario.body);
        let doc = self.scenario.clone();
        let loaded = LoadedScenario::in_memory(doc.clone(), SESSION, self.scenario_dir.clone());
        let launches = self.run_estimate().launches;
        self.run_launches = usize::try_from(launches).unwrap_or(usize::MAX);
        self.run_doc = Some(doc);
        let gravity = self.gravity.clone();
        self.run_job = Some(Job::spawn_at_stage(
            format!("Flying {launches} launches"),
            "preparing the gravity field and the launches",
            self.repaint.clone(),
            move |ctx| {
                // Targeted launches are solved first, each with its trial flights counted.
                let targeting = |id: &str, flights: usize, max: usize| {
                    ctx.progress
                        .set_stage(&format!("solving the launch aimed by {id}"));
                    ctx.progress.set(flights, max);
                    ctx.request_repaint();
                };
                let prepared = prepare_shape_targeting(
                    loaded,
                    shape,
                    &PrepareOptions {
                        gravity,
                        ..PrepareOptions::new(Purpose::Fly)
                    },
                    &field_hooks(ctx),
                    &targeting,
                )?;
                for t in &prepared.targeting {
                    if let Some(why) = &t.report.reason {
                        ctx.progress.push_note(format!("{}: {why}", t.id));
                    }
                }
                ctx.progress.set(0, prepared.launches.len());
                ctx.progress.set_stage("flying");
                ctx.request_repaint();
                let progress = ctx.progress_fn();
                let end = run_keeping_finished(&prepared, &progress, &ctx.cancel);
                Ok(RunOutput {
                    end,
                    field: prepared.field.clone(),
                })
            },
        ));
    }

    /// Warnings the jobs pushed, as notices.
    fn collect_job_notes(&mut self) {
        let notes: Vec<String> = self
            .running_jobs()
            .iter()
            .flat_map(|j| j.progress.take_notes())
            .collect();
        for n in notes {
            self.notify(Notice::new(NoticeKind::Info, n));
        }
    }

    pub(crate) fn poll_jobs(&mut self) {
        self.collect_job_notes();
        self.plot.poll();
        if let Some(job) = &self.load_job
            && let Poll::Done(result) = job.poll()
        {
            self.load_job = None;
            match result {
                Ok(loaded) => self.install_loaded(loaded),
                Err(e) if e.is_cancelled() => {
                    self.shape_path_field = self.loaded_shape_path.clone();
                    self.scenario_path_field = self.loaded_scenario_path.clone();
                    self.info("loading cancelled; the previous body stays loaded");
                }
                Err(e) => {
                    let keep = if self.shape.is_some() {
                        " (the previous body stays loaded)"
                    } else {
                        ""
                    };
                    // The fields show what is loaded, not the path that failed.
                    self.shape_path_field = self.loaded_shape_path.clone();
                    self.scenario_path_field = self.loaded_scenario_path.clone();
                    self.error(format!("{e}{keep}"));
                }
            }
        }
        if let Some(job) = &self.body_job
            && let Poll::Done(result) = job.poll()
        {
            let cancelled = job.is_cancelled();
            self.body_job = None;
            match result {
                Ok(built) if !cancelled => {
                    self.built_params = Some(built.params);
                    self.built_field = Some(built.field_spec);
                    self.body_field = built.field;
                    self.install_view(built.view);
                    if std::mem::take(&mut self.run_after_body) {
                        self.start_run();
                    }
                }
                Ok(_) => self.run_after_body = false,
                Err(e) if e.is_cancelled() => {
                    self.run_after_body = false;
                    self.info("body settings not applied (cancelled); the body is unchanged");
                }
                Err(e) => {
                    self.run_after_body = false;
                    self.error(format!("body settings not applied: {e}"));
                }
            }
        }
        if let Some(job) = &self.map_job
            && let Poll::Done(result) = job.poll()
        {
            self.map_job = None;
            match result {
                Ok(Some((map, source))) => {
                    if self.current_map_key().as_deref() == Some(self.map_job_key.as_str())
                        && let Some(view) = &self.view
                    {
                        let map = Arc::new(map);
                        let mut v = view.with_body(view.body().clone());
                        v.set_map(Some(map.clone()));
                        self.view = Some(Arc::new(v));
                        // A field of a layer this map lacks (sunlight) cannot stay chosen.
                        if let Some(f) = self.state.view.map
                            && !map.fields().contains(&f)
                        {
                            self.state.view.map = None;
                        }
                        self.map = Some(map);
                        self.map_source = Some(match source {
                            MapSource::Read(p) => format!("read from the cache ({})", p.display()),
                            MapSource::Stored(p) => {
                                format!("computed and kept in the cache ({})", p.display())
                            }
                            MapSource::NotStored(why) => format!("computed, not kept: {why}"),
                        });
                        self.data_generation += 1;
                    }
                }
                Ok(None) => {
                    // Nothing stored: compute it now when it is cheap and a map is shown.
                    if self.state.view.map.is_some() && self.map_starts_by_itself() {
                        self.start_map(true);
                    }
                }
                Err(e) if e.is_cancelled() => {}
                Err(e) => self.error(format!("surface map: {e}")),
            }
        }
        if let Some(job) = &self.run_job
            && let Poll::Done(result) = job.poll()
        {
            self.run_job = None;
            let doc = self.run_doc.take();
            match result {
                Ok(RunOutput {
                    end: RunEnd::Complete(done),
                    field,
                }) => {
                    self.run_state = RunState::Done {
                        launches: done.reports.len(),
                        elapsed_s: done.elapsed.as_secs_f64(),
                    };
                    self.set_aside = None;
                    self.show_results(ResultSet {
                        reports: Arc::new(done.reports),
                        field,
                        doc,
                        partial_of: None,
                    });
                }
                Ok(RunOutput {
                    end:
                        RunEnd::Cancelled {
                            finished, launches, ..
                        },
                    field,
                }) => {
                    self.run_state = RunState::Cancelled {
                        finished: finished.len(),
                        launches,
                    };
                    let partial = ResultSet {
                        reports: Arc::new(finished),
                        field,
                        doc,
                        partial_of: Some(launches),
                    };
                    // The previous complete results stay; the finished part is kept aside
                    // (shown at once when there is nothing else to show).
                    if self.reports.is_empty() && !partial.reports.is_empty() {
                        self.show_results(partial);
                        self.set_aside = None;
                    } else if partial.reports.is_empty() {
                        self.set_aside = None;
                    } else {
                        self.set_aside = Some(partial);
                    }
                }
                Err(e) if e.is_cancelled() => {
                    // Cancelled before the first launch (while the field was built).
                    self.run_state = RunState::Cancelled {
                        finished: 0,
                        launches: self.run_launches,
                    };
                }
                Err(e) => {
                    self.run_state = RunState::Failed(e.to_string());
                    self.error(format!("run failed: {e}"));
                }
            }
        }
        self.poll_export_jobs();
        if let Some(job) = &self.save_job
            && let Poll::Done(result) = job.poll()
        {
            self.save_job = None;
            match result {
                Ok((saved, path)) => {
                    self.info(format!("scenario saved to {}", path.display()));
                    // The document now lives there: its shape path is written for that folder.
                    self.scenario = saved;
                    self.scenario_dir = spinfall_workflow::output::parent_folder(&path);
                    self.loaded_scenario_path = path.display().to_string();
                    self.state.remember(RecentFile {
                        path,
                        kind: RecentKind::Scenario,
                        unit: self.state.unit,
                    });
                    // The rewritten shape path is no edit of the user's.
                    let now = self.doc_state();
                    self.history.record(&now);
                }
                Err(e) => self.error(format!("scenario not saved: {e}")),
            }
        }
        // Last: the guides follow the view installed above.
        self.poll_environment();
    }

    fn install_loaded(&mut self, loaded: Loaded) {
        let Loaded {
            scenario,
            dir,
            shape,
            view,
            field,
            scenario_path,
        } = loaded;
        let name = shape.name();
        for w in &shape.warnings {
            self.info(format!("{name}: {w}"));
        }
        match &shape.request.source {
            ShapeSource::File(path) => {
                self.state.remember(RecentFile {
                    path: path.clone(),
                    kind: RecentKind::Shape,
                    unit: shape.request.unit,
                });
                self.loaded_shape_path = path.display().to_string();
            }
            _ => self.loaded_shape_path.clear(),
        }
        self.shape_path_field = self.loaded_shape_path.clone();
        if let Some(path) = scenario_path {
            self.loaded_scenario_path = path.display().to_string();
            self.state.remember(RecentFile {
                path,
                kind: RecentKind::Scenario,
                unit: self.state.unit,
            });
        }
        self.scenario_path_field = self.loaded_scenario_path.clone();
        self.params = BodyParams::from_spec(&scenario.body);
        self.params
            .sync_derived(shape.shape.mass_properties().volume_m3);
        self.scenario = scenario;
        self.scenario_dir = dir;
        self.selected_site = (!self.scenario.launches.is_empty()).then_some(0);
        self.shape = Some(shape);
        self.built_params = Some(self.params.clone());
        self.built_field = Some(self.field_in_force());
        self.body_field = field;
        for pane in &mut self.panes {
            pane.reset_camera = true;
        }
        self.install_view(view);
        // Another document: a new history.
        let now = self.doc_state();
        self.history.reset(now);
    }

    fn install_view(&mut self, view: Arc<BodyView>) {
        self.view = Some(view);
        self.map = None;
        self.map_source = None;
        // Work started for the previous body no longer applies.
        if let Some(j) = self.run_job.take() {
            j.cancel();
            self.run_doc = None;
        }
        if let Some(j) = self.map_job.take() {
            j.cancel();
        }
        self.show_results(ResultSet::empty());
        self.set_aside = None;
        self.run_state = RunState::NotRun;
        self.t_s = 0.0;
        // A stored map is read at once (it also gives the body's escape-speed range); one is
        // computed when a map is shown and the body is small.
        let compute = self.state.view.map.is_some() && self.map_starts_by_itself();
        self.start_map(compute);
    }
}
