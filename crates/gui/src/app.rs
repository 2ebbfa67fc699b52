//! [`SpinfallApp`]: state, the frame function, job polling and the one place commands are
//! handled.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::mpsc::{Receiver, Sender, channel};
use std::time::{Duration, Instant};

use egui::{Context, Key, KeyboardShortcut, Modifiers};
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::{BUILTIN_QUILLON, LaunchEntry, Scenario, SiteSpec};
use spinfall_dynamics::surface_map::SurfaceMap;
use spinfall_gravity::LengthUnit;
use spinfall_scene::BodyView;
use spinfall_workflow::field_cache::BuildHooks;
use spinfall_workflow::gravity_method::{FieldUsed, GravityOptions};
use spinfall_workflow::limits::{Estimate, estimate};
use spinfall_workflow::output::{OutputTarget, write_file};
use spinfall_workflow::prepare::{PrepareOptions, Purpose, build_body, prepare_shape_hooks};
use spinfall_workflow::scenario_file::{
    LoadedScenario, ScenarioSource, read_scenario, relocated, scenario_json,
};
use spinfall_workflow::shape::{OpenedShape, ShapeRequest, ShapeSource, open_shape};

use crate::GuiOptions;
use crate::command::Command;
use crate::error::GuiError;
use crate::jobs::{Job, JobContext, Poll};
use crate::session::{BodyParams, launch_defaults, new_scenario};
use crate::state::{PersistedState, RecentFile, RecentKind};
use crate::views::ViewPane;

/// How the session's scenario is named in messages.
const SESSION: &str = "of this session";

/// Largest model whose surface map starts by itself when a map is chosen.
pub const AUTO_MAP_MAX_FACES: usize = 50_000;

/// Shortcut: open a shape model.
pub const SHORTCUT_OPEN: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::O);
/// Shortcut: save the scenario.
pub const SHORTCUT_SAVE: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::S);
/// Shortcut: run.
pub const SHORTCUT_RUN: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::R);
/// Shortcut: run (alternative).
pub const SHORTCUT_RUN_F5: KeyboardShortcut = KeyboardShortcut::new(Modifiers::NONE, Key::F5);
/// Shortcut: export.
pub const SHORTCUT_EXPORT: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::E);

/// A site of the document resolved on the body: `None` for an explicit state, an error text
/// when it cannot be placed.
pub(crate) type ResolvedSite = Result<Option<spinfall_dynamics::site::Site>, String>;

/// Sites resolved on a body: `(site specs, data generation, resolved sites)`. Keyed by the
/// site specs only, so renaming a launch or dragging its speed does not place it again.
type SiteCache = (Vec<Option<SiteSpec>>, u64, Vec<ResolvedSite>);

/// The result of a load job: the document, its folder, the opened shape and its body.
pub(crate) struct Loaded {
    pub scenario: Scenario,
    pub dir: PathBuf,
    pub shape: OpenedShape,
    pub view: Arc<BodyView>,
    /// Set when a scenario file was loaded (its path).
    pub scenario_path: Option<PathBuf>,
}

/// The result of a run job.
pub(crate) struct RunOutput {
    pub reports: Vec<FlightReport>,
    pub elapsed: Duration,
    /// How the gravity was computed.
    pub field: FieldUsed,
}

/// State of the last run, for the status line.
#[derive(Debug, Clone, PartialEq)]
pub enum RunState {
    /// Nothing run yet (or the body changed since).
    NotRun,
    /// Finished.
    Done {
        /// Launches flown.
        launches: usize,
        /// Wall-clock time.
        elapsed_s: f64,
    },
    /// Cancelled by the user; its partial results were dropped.
    Cancelled,
    /// Failed with a message.
    Failed(String),
}

/// Severity of a notice.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoticeKind {
    /// Something went wrong.
    Error,
    /// Worth knowing (validation warnings, finished exports).
    Info,
}

/// A message shown until dismissed.
#[derive(Debug, Clone, PartialEq)]
pub struct Notice {
    /// Severity.
    pub kind: NoticeKind,
    /// Text.
    pub text: String,
}

/// What a file dialog was opened for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum DialogPurpose {
    OpenShape,
    OpenScenario,
    SaveScenario,
    ExportFolder,
}

/// What a file dialog thread sends back: the purpose, the chosen path and how long it took.
type DialogAnswer = (DialogPurpose, Option<PathBuf>, Duration);

/// The Spinfall app.
pub struct SpinfallApp {
    /// Remembered between runs.
    pub(crate) state: PersistedState,
    pub(crate) test_mode: bool,
    pub(crate) repaint: Arc<dyn Fn() + Send + Sync>,

    // Session: the scenario document (what a saved file holds and what runs fly), the folder
    // its relative shape path means, the opened shape and the body panel's draft.
    pub(crate) scenario: Scenario,
    pub(crate) scenario_dir: PathBuf,
    pub(crate) shape: Option<OpenedShape>,
    pub(crate) params: BodyParams,
    /// The parameters the current body was built with.
    pub(crate) built_params: Option<BodyParams>,
    pub(crate) selected_site: Option<usize>,
    /// Recentre shape models opened from now on (a loaded scenario says for itself).
    pub(crate) recenter_new_shapes: bool,
    pub(crate) view: Option<Arc<BodyView>>,
    pub(crate) map: Option<Arc<SurfaceMap>>,
    pub(crate) reports: Arc<Vec<FlightReport>>,
    /// How the gravity of `reports` was computed.
    pub(crate) reports_field: FieldUsed,
    pub(crate) run_state: RunState,
    /// Bumped whenever what the views show changes (body, map, reports).
    pub(crate) data_generation: u64,

    // Time.
    pub(crate) t_s: f64,
    pub(crate) playing: bool,
    pub(crate) last_frame: Option<Instant>,

    // Views.
    pub(crate) panes: [ViewPane; 2],
    pub(crate) click_to_place: bool,
    pub(crate) hover: Option<crate::views::HoverInfo>,
    pub(crate) frame_ms: f32,
    /// Smoothed time between frames (whole loop: UI, upload, paint, swap), s.
    pub(crate) frame_interval_s: f32,

    // Jobs.
    pub(crate) load_job: Option<Job<Loaded>>,
    pub(crate) body_job: Option<Job<Arc<BodyView>>>,
    pub(crate) map_job: Option<Job<SurfaceMap>>,
    pub(crate) run_job: Option<Job<RunOutput>>,
    pub(crate) export_job: Option<Job<Vec<PathBuf>>>,
    pub(crate) save_job: Option<Job<(Scenario, PathBuf)>>,
    /// Start a run as soon as the body being rebuilt is ready.
    pub(crate) run_after_body: bool,
    pub(crate) plot_cache: Option<crate::results::PlotSeries>,
    /// Sites resolved on the current body: `(sites, data generation, resolved)`.
    site_cache: Option<SiteCache>,

    // UI state.
    pub(crate) commands: Vec<Command>,
    pub(crate) notices: Vec<Notice>,
    pub(crate) shape_path_field: String,
    pub(crate) scenario_path_field: String,
    pub(crate) lat_field_deg: f64,
    pub(crate) lon_field_deg: f64,
    pub(crate) show_export: bool,
    pub(crate) export_form: crate::export::ExportForm,
    pub(crate) table: crate::results::TableState,
    pub(crate) last_exported: Vec<PathBuf>,
    dialog_tx: Sender<DialogAnswer>,
    dialog_rx: Receiver<DialogAnswer>,
}

impl SpinfallApp {
    /// The app as eframe creates it: restores persisted state and starts loading the shape
    /// model given on the command line, or the demo body.
    pub fn new(cc: &eframe::CreationContext<'_>, options: GuiOptions) -> Self {
        let state: PersistedState = cc
            .storage
            .and_then(|s| eframe::get_value(s, eframe::APP_KEY))
            .unwrap_or_default();
        let ctx = cc.egui_ctx.clone();
        let mut app = Self::with_state(state, Arc::new(move || ctx.request_repaint()), false);
        app.start(options);
        app
    }

    /// The app for tests: no persistence, no file dialogs. Starts loading `options` (the demo
    /// body when `shape_path` is `None`); use [`SpinfallApp::wait_for_jobs`] to await it.
    pub fn new_for_test(options: GuiOptions) -> Self {
        let mut app = Self::with_state(PersistedState::default(), Arc::new(|| {}), true);
        app.start(options);
        app.handle_commands();
        app
    }

    fn with_state(
        state: PersistedState,
        repaint: Arc<dyn Fn() + Send + Sync>,
        test_mode: bool,
    ) -> Self {
        let (dialog_tx, dialog_rx) = channel();
        let export_form = crate::export::ExportForm::from_state(&state);
        Self {
            state,
            test_mode,
            repaint,
            scenario: new_scenario(
                BUILTIN_QUILLON.into(),
                LengthUnit::Kilometre,
                true,
                &BodyParams::default(),
            ),
            scenario_dir: PathBuf::from("."),
            shape: None,
            params: BodyParams::default(),
            built_params: None,
            selected_site: None,
            recenter_new_shapes: true,
            view: None,
            map: None,
            reports: Arc::new(Vec::new()),
            reports_field: FieldUsed::direct(),
            run_state: RunState::NotRun,
            data_generation: 0,
            t_s: 0.0,
            playing: false,
            last_frame: None,
            panes: [
                ViewPane::new(spinfall_scene::Frame::BodyFixed),
                ViewPane::new(spinfall_scene::Frame::Inertial),
            ],
            click_to_place: true,
            hover: None,
            frame_ms: 0.0,
            frame_interval_s: 0.0,
            load_job: None,
            body_job: None,
            map_job: None,
            run_job: None,
            export_job: None,
            save_job: None,
            run_after_body: false,
            plot_cache: None,
            site_cache: None,
            commands: Vec::new(),
            notices: Vec::new(),
            shape_path_field: String::new(),
            scenario_path_field: String::new(),
            lat_field_deg: 0.0,
            lon_field_deg: 0.0,
            show_export: false,
            export_form,
            table: Default::default(),
            last_exported: Vec::new(),
            dialog_tx,
            dialog_rx,
        }
    }

    fn start(&mut self, options: GuiOptions) {
        match options.shape_path {
            Some(path) => {
                self.state.unit = options.unit;
                self.shape_path_field = path.display().to_string();
                self.commands.push(Command::LoadShape(path, options.unit));
            }
            None => self.commands.push(Command::LoadDemo),
        }
    }

    /// Queue a command (handled at the end of the next frame, or by
    /// [`SpinfallApp::handle_commands`]).
    pub fn push_command(&mut self, command: Command) {
        self.commands.push(command);
    }

    /// Whether any background job is running.
    pub fn busy(&self) -> bool {
        self.load_job.is_some()
            || self.body_job.is_some()
            || self.map_job.is_some()
            || self.run_job.is_some()
            || self.export_job.is_some()
            || self.save_job.is_some()
    }

    /// Poll jobs and handle commands until nothing is running or `timeout` passes (tests).
    /// Returns whether everything finished.
    pub fn wait_for_jobs(&mut self, timeout: Duration) -> bool {
        let start = Instant::now();
        loop {
            self.handle_commands();
            self.poll_jobs();
            self.handle_commands();
            if !self.busy() && self.commands.is_empty() {
                return true;
            }
            if start.elapsed() > timeout {
                return false;
            }
            std::thread::sleep(Duration::from_millis(5));
        }
    }

    // ----- read access for tests and the status line -----

    /// The opened shape model.
    pub fn shape(&self) -> Option<&OpenedShape> {
        self.shape.as_ref()
    }

    /// The scenario document of the session (body, launches, settings).
    pub fn scenario(&self) -> &Scenario {
        &self.scenario
    }

    /// The scenario document, to change (tests and scripted use; body changes take effect at
    /// the next Apply or Run).
    pub fn scenario_mut(&mut self) -> &mut Scenario {
        &mut self.scenario
    }

    /// The launches of the session.
    pub fn sites(&self) -> &[LaunchEntry] {
        &self.scenario.launches
    }

    /// The launches, to change (tests and scripted use).
    pub fn sites_mut(&mut self) -> &mut Vec<LaunchEntry> {
        &mut self.scenario.launches
    }

    /// What a run of the session would need (launch count, memory, output).
    pub fn run_estimate(&self) -> Estimate {
        let faces = self.shape.as_ref().map_or(0, |s| s.shape.face_count());
        estimate(&self.scenario, faces, &self.scenario.flight_settings())
    }

    /// Reports of the last run.
    pub fn reports(&self) -> &[FlightReport] {
        &self.reports
    }

    /// State of the last run.
    pub fn run_state(&self) -> &RunState {
        &self.run_state
    }

    /// Messages shown to the user (errors, warnings, finished exports).
    pub fn notices(&self) -> &[Notice] {
        &self.notices
    }

    /// Body settings.
    pub fn params_mut(&mut self) -> &mut BodyParams {
        &mut self.params
    }

    /// Files written by the last export.
    pub fn last_exported(&self) -> &[PathBuf] {
        &self.last_exported
    }

    /// Show time `t_s` (clamped to the slider's range).
    pub fn set_time_s(&mut self, t_s: f64) {
        self.t_s = t_s.clamp(0.0, self.end_time_s());
    }

    /// The launch selected in the table and the views.
    pub fn selected_launch(&self) -> Option<usize> {
        self.state.view.selected_launch
    }

    /// Whether the animation is playing.
    pub fn is_playing(&self) -> bool {
        self.playing
    }

    /// The current simulation time shown, s.
    pub fn time_s(&self) -> f64 {
        self.t_s
    }

    /// The body view (body, mesh buffers, map).
    pub fn body_view(&self) -> Option<&Arc<BodyView>> {
        self.view.as_ref()
    }

    /// The persisted state.
    pub fn persisted(&self) -> &PersistedState {
        &self.state
    }

    pub(crate) fn error(&mut self, text: impl Into<String>) {
        self.notices.push(Notice {
            kind: NoticeKind::Error,
            text: text.into(),
        });
    }

    pub(crate) fn info(&mut self, text: impl Into<String>) {
        self.notices.push(Notice {
            kind: NoticeKind::Info,
            text: text.into(),
        });
    }

    // ----- the frame -----

    /// Draw one frame (eframe's `App::ui` calls this; tests call it through the harness).
    pub fn ui(&mut self, ui: &mut egui::Ui) {
        let ctx = ui.ctx().clone();
        let frame_start = Instant::now();
        self.poll_jobs();
        self.poll_dialogs();
        self.shortcuts(&ctx);
        self.dropped_files(&ctx);
        self.advance_time(&ctx);

        self.menu_bar_ui(ui);
        self.toolbar_ui(ui);
        self.status_bar_ui(ui);
        egui::Panel::left("controls")
            .resizable(true)
            .default_size(340.0)
            .min_size(260.0)
            .show(ui, |ui| {
                egui::ScrollArea::vertical().show(ui, |ui| {
                    self.notices_ui(ui);
                    self.shape_ui(ui);
                    ui.separator();
                    self.body_ui(ui);
                    ui.separator();
                    self.map_ui(ui);
                    ui.separator();
                    self.sites_ui(ui);
                    ui.separator();
                    self.run_ui(ui);
                });
            });
        if self.state.show_results {
            let min_h = if self.reports.is_empty() { 80.0 } else { 230.0 };
            egui::Panel::bottom("results")
                .resizable(true)
                .default_size(300.0)
                .min_size(min_h)
                .show(ui, |ui| self.results_ui(ui));
        }
        egui::CentralPanel::default().show(ui, |ui| self.views_ui(ui));
        self.export_window(&ctx);

        self.handle_commands();
        if self.busy() {
            ctx.request_repaint_after(Duration::from_millis(50));
        }
        let dt = ctx.input(|i| i.unstable_dt);
        if dt > 0.0 && dt < 1.0 {
            self.frame_interval_s = if self.frame_interval_s == 0.0 {
                dt
            } else {
                0.9 * self.frame_interval_s + 0.1 * dt
            };
        }
        let ms = frame_start.elapsed().as_secs_f32() * 1000.0;
        self.frame_ms = if self.frame_ms == 0.0 {
            ms
        } else {
            0.9 * self.frame_ms + 0.1 * ms
        };
    }

    fn shortcuts(&mut self, ctx: &Context) {
        let typing = ctx.egui_wants_keyboard_input();
        ctx.input_mut(|i| {
            if i.consume_shortcut(&SHORTCUT_OPEN) {
                self.commands.push(Command::BrowseShape);
            }
            if i.consume_shortcut(&SHORTCUT_SAVE) {
                self.commands.push(Command::BrowseSaveScenario);
            }
            if i.consume_shortcut(&SHORTCUT_RUN) || i.consume_shortcut(&SHORTCUT_RUN_F5) {
                self.commands.push(Command::Run);
            }
            if i.consume_shortcut(&SHORTCUT_EXPORT) {
                self.commands.push(Command::ShowExport);
            }
            if !typing && i.consume_key(Modifiers::NONE, Key::Space) {
                self.commands.push(Command::TogglePlay);
            }
        });
    }

    fn dropped_files(&mut self, ctx: &Context) {
        let dropped: Vec<PathBuf> = ctx.input(|i| {
            i.raw
                .dropped_files
                .iter()
                .map(|f| f.path().to_path_buf())
                .filter(|p| !p.as_os_str().is_empty())
                .collect()
        });
        for path in dropped {
            let ext = path
                .extension()
                .map(|e| e.to_string_lossy().to_ascii_lowercase())
                .unwrap_or_default();
            match ext.as_str() {
                "obj" => {
                    self.shape_path_field = path.display().to_string();
                    self.commands
                        .push(Command::LoadShape(path, self.state.unit));
                }
                "json" => self.commands.push(Command::LoadScenario(path)),
                _ => self.error(format!(
                    "{}: drop a Wavefront .obj shape model or a .json scenario",
                    path.display()
                )),
            }
        }
    }

    fn advance_time(&mut self, ctx: &Context) {
        let now = Instant::now();
        let dt = self
            .last_frame
            .map(|l| now.duration_since(l).as_secs_f64())
            .unwrap_or(0.0)
            .min(0.25);
        self.last_frame = Some(now);
        if self.playing {
            let end = self.end_time_s();
            self.t_s += dt * self.state.playback_speed;
            if self.t_s > end {
                self.t_s = 0.0;
            }
            ctx.request_repaint();
        }
    }

    /// End of the time slider: the last sample of the last run, or one spin period.
    pub(crate) fn end_time_s(&self) -> f64 {
        let end = spinfall_scene::end_time_s(&self.reports);
        if end > 0.0 {
            end
        } else {
            self.view
                .as_ref()
                .map(|v| v.body().spin.period_s)
                .unwrap_or(3600.0)
        }
    }

    // ----- dialogs -----

    fn open_dialog(&mut self, purpose: DialogPurpose) {
        if self.test_mode {
            return;
        }
        let tx = self.dialog_tx.clone();
        let repaint = self.repaint.clone();
        let spawned = std::thread::Builder::new()
            .name("spinfall file dialog".into())
            .spawn(move || {
                let asked = Instant::now();
                let d = rfd::AsyncFileDialog::new();
                let handle = match purpose {
                    DialogPurpose::OpenShape => block_on(
                        d.add_filter("Wavefront OBJ shape model", &["obj", "OBJ"])
                            .set_title("Open a shape model")
                            .pick_file(),
                    ),
                    DialogPurpose::OpenScenario => block_on(
                        d.add_filter("Scenario (JSON)", &["json"])
                            .set_title("Load a scenario")
                            .pick_file(),
                    ),
                    DialogPurpose::SaveScenario => block_on(
                        d.add_filter("Scenario (JSON)", &["json"])
                            .set_file_name("scenario.json")
                            .set_title("Save the scenario")
                            .save_file(),
                    ),
                    DialogPurpose::ExportFolder => {
                        block_on(d.set_title("Export folder").pick_folder())
                    }
                };
                let path = handle.map(|h| h.path().to_path_buf());
                let _ = tx.send((purpose, path, asked.elapsed()));
                repaint();
            });
        if let Err(e) = spawned {
            self.error(format!(
                "could not open a file dialog: {e}; type the path instead"
            ));
        }
    }

    fn poll_dialogs(&mut self) {
        while let Ok((purpose, path, took)) = self.dialog_rx.try_recv() {
            let Some(path) = path else {
                // An answer within a moment means no dialog could be shown (no desktop portal).
                if took < Duration::from_millis(300) {
                    self.info(
                        "No file dialog is available here: type the path in the field instead.",
                    );
                }
                continue;
            };
            match purpose {
                DialogPurpose::OpenShape => {
                    self.shape_path_field = path.display().to_string();
                    self.commands
                        .push(Command::LoadShape(path, self.state.unit));
                }
                DialogPurpose::OpenScenario => {
                    self.scenario_path_field = path.display().to_string();
                    self.commands.push(Command::LoadScenario(path));
                }
                DialogPurpose::SaveScenario => {
                    self.scenario_path_field = path.display().to_string();
                    self.commands.push(Command::SaveScenario(path));
                }
                DialogPurpose::ExportFolder => {
                    self.export_form.folder = path.display().to_string();
                }
            }
        }
    }

    // ----- commands -----

    /// Handle every queued command (the one place UI requests become actions).
    pub fn handle_commands(&mut self) {
        let commands = std::mem::take(&mut self.commands);
        for command in commands {
            self.handle(command);
        }
    }

    fn handle(&mut self, command: Command) {
        match command {
            Command::BrowseShape => self.open_dialog(DialogPurpose::OpenShape),
            Command::BrowseScenario => self.open_dialog(DialogPurpose::OpenScenario),
            Command::BrowseSaveScenario => self.open_dialog(DialogPurpose::SaveScenario),
            Command::BrowseExportFolder => self.open_dialog(DialogPurpose::ExportFolder),
            Command::LoadDemo => self.start_load(None),
            Command::LoadShape(path, unit) => {
                self.state.unit = unit;
                self.start_load(Some((path, unit)));
            }
            Command::LoadScenario(path) => self.start_load_scenario(path),
            Command::SaveScenario(path) => self.save_scenario(&path),
            Command::RebuildBody => self.start_rebuild_body(),
            Command::ComputeMap => self.start_map(),
            Command::AddSiteAtPoint { point_body_m, face } => {
                self.add_site_at_point(point_body_m, face)
            }
            Command::AddSiteLatLon { lat_deg, lon_deg } => self.add_site_lat_lon(lat_deg, lon_deg),
            Command::RemoveSite(i) => {
                if i < self.scenario.launches.len() {
                    self.scenario.launches.remove(i);
                    self.selected_site = match self.selected_site {
                        Some(s) if s == i => None,
                        Some(s) if s > i => Some(s - 1),
                        other => other,
                    };
                }
            }
            Command::Run => self.start_run(),
            Command::CancelJobs => {
                for job in [
                    self.load_job.as_ref().map(|j| j as &dyn Cancel),
                    self.body_job.as_ref().map(|j| j as &dyn Cancel),
                    self.map_job.as_ref().map(|j| j as &dyn Cancel),
                    self.run_job.as_ref().map(|j| j as &dyn Cancel),
                    self.export_job.as_ref().map(|j| j as &dyn Cancel),
                    self.save_job.as_ref().map(|j| j as &dyn Cancel),
                ]
                .into_iter()
                .flatten()
                {
                    job.cancel_job();
                }
            }
            Command::SelectLaunch(i) => {
                self.state.view.selected_launch = i;
                self.plot_cache = None;
            }
            Command::TogglePlay => {
                self.playing = !self.playing;
                if self.playing && self.t_s >= self.end_time_s() {
                    self.t_s = 0.0;
                }
            }
            Command::ResetCameras => {
                for pane in &mut self.panes {
                    pane.reset_camera = true;
                }
            }
            Command::ShowExport => self.show_export = true,
            Command::Export(req) => self.start_export(req),
        }
    }

    fn start_load(&mut self, file: Option<(PathBuf, LengthUnit)>) {
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
        self.load_job = Some(Job::spawn(label, self.repaint.clone(), move |ctx| {
            load_session(ctx, LoadedScenario::in_memory(scenario, SESSION, dir), None)
        }));
    }

    fn start_load_scenario(&mut self, path: PathBuf) {
        if self.load_job.is_some() {
            self.error("a shape model is already loading; wait or cancel it first");
            return;
        }
        let label = format!("Loading scenario {}", path.display());
        self.load_job = Some(Job::spawn(label, self.repaint.clone(), move |ctx| {
            ctx.progress.set_stage("reading the scenario");
            let loaded = read_scenario(&ScenarioSource::File(path.clone()))?;
            load_session(ctx, loaded, Some(path))
        }));
    }

    fn start_rebuild_body(&mut self) {
        let (Some(shape), Some(old)) = (self.shape.clone(), self.view.clone()) else {
            return;
        };
        if let Some(job) = &self.body_job {
            job.cancel();
        }
        self.params.write_into(&mut self.scenario.body);
        let scenario = self.scenario.clone();
        self.body_job = Some(Job::spawn(
            "Preparing the body",
            self.repaint.clone(),
            move |ctx| {
                ctx.progress.set_stage("preparing the gravity field");
                let (body, _) = build_body(
                    &scenario,
                    &shape,
                    &GravityOptions::default(),
                    &field_hooks(ctx),
                )?;
                Ok(Arc::new(old.with_body(Arc::new(body))))
            },
        ));
        self.built_params = Some(self.params.clone());
    }

    /// Whether the surface map may start without being asked: its cost grows with the square
    /// of the face count, so large models wait for the button.
    pub(crate) fn map_starts_by_itself(&self) -> bool {
        self.view
            .as_ref()
            .is_some_and(|v| v.triangles().len() <= AUTO_MAP_MAX_FACES)
    }

    pub(crate) fn start_map(&mut self) {
        let Some(view) = self.view.clone() else {
            return;
        };
        if let Some(job) = &self.map_job {
            job.cancel();
        }
        self.map_job = Some(Job::spawn(
            "Computing the surface map",
            self.repaint.clone(),
            move |ctx| {
                ctx.progress.set_stage("surface map");
                let progress = |done: usize, total: usize| {
                    ctx.progress.set(done, total);
                    ctx.request_repaint();
                };
                Ok(spinfall_workflow::surface::compute_surface_map(
                    view.body(),
                    &progress,
                    &ctx.cancel,
                )?)
            },
        ));
    }

    fn start_run(&mut self) {
        if self.run_job.is_some() {
            self.error("a run is in progress; cancel it first");
            return;
        }
        let (Some(view), Some(shape)) = (self.view.clone(), self.shape.clone()) else {
            self.error("no body loaded yet");
            return;
        };
        if self.scenario.launches.is_empty() {
            self.error("no launches: click on the body or add a site by latitude/longitude");
            return;
        }
        if self.built_params.as_ref() != Some(&self.params) || self.body_job.is_some() {
            // Body settings were edited but not applied: apply them first, then run.
            if self.body_job.is_none() {
                self.start_rebuild_body();
            }
            self.run_after_body = true;
            return;
        }
        self.params.write_into(&mut self.scenario.body);
        let loaded =
            LoadedScenario::in_memory(self.scenario.clone(), SESSION, self.scenario_dir.clone());
        let launches = self.run_estimate().launches;
        self.run_job = Some(Job::spawn(
            format!("Flying {launches} launches"),
            self.repaint.clone(),
            move |ctx| run_flights(ctx, &view, loaded, shape),
        ));
    }

    pub(crate) fn poll_jobs(&mut self) {
        if let Some(job) = &self.load_job
            && let Poll::Done(result) = job.poll()
        {
            self.load_job = None;
            match result {
                Ok(loaded) => self.install_loaded(loaded),
                Err(e) => {
                    let keep = if self.shape.is_some() {
                        " (the previous body stays loaded)"
                    } else {
                        ""
                    };
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
                Ok(view) if !cancelled => {
                    self.install_view(view);
                    if std::mem::take(&mut self.run_after_body) {
                        self.start_run();
                    }
                }
                Ok(_) => {}
                Err(e) => {
                    self.built_params = None;
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
                Ok(map) => {
                    let map = Arc::new(map);
                    if let Some(view) = &self.view
                        && map.len() == view.triangles().len()
                    {
                        let mut v = view.with_body(view.body().clone());
                        v.set_map(Some(map.clone()));
                        self.view = Some(Arc::new(v));
                        self.map = Some(map);
                        self.data_generation += 1;
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
            match result {
                Ok(out) => {
                    let n = out.reports.len();
                    self.run_state = RunState::Done {
                        launches: n,
                        elapsed_s: out.elapsed.as_secs_f64(),
                    };
                    self.reports = Arc::new(out.reports);
                    self.reports_field = out.field;
                    self.state.view.selected_launch = (n > 0).then_some(0);
                    self.plot_cache = None;
                    self.data_generation += 1;
                    // Show the whole flights; Play starts over from t = 0.
                    self.t_s = self.end_time_s();
                }
                Err(e) if e.is_cancelled() => self.run_state = RunState::Cancelled,
                Err(e) => {
                    self.run_state = RunState::Failed(e.to_string());
                    self.error(format!("run failed: {e}"));
                }
            }
        }
        if let Some(job) = &self.export_job
            && let Poll::Done(result) = job.poll()
        {
            self.export_job = None;
            match result {
                Ok(paths) => {
                    let list: Vec<String> = paths.iter().map(|p| p.display().to_string()).collect();
                    self.info(format!(
                        "exported {} file(s): {}",
                        paths.len(),
                        list.join(", ")
                    ));
                    self.last_exported = paths;
                }
                Err(e) if e.is_cancelled() => self.info("export cancelled; nothing was written"),
                Err(e) => self.error(format!("export failed: {e}")),
            }
        }
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
                    self.state.remember(RecentFile {
                        path,
                        kind: RecentKind::Scenario,
                        unit: self.state.unit,
                    });
                }
                Err(e) => self.error(format!("scenario not saved: {e}")),
            }
        }
    }

    fn install_loaded(&mut self, loaded: Loaded) {
        let Loaded {
            scenario,
            dir,
            shape,
            view,
            scenario_path,
        } = loaded;
        let name = shape.name();
        for w in &shape.warnings {
            self.notices.push(Notice {
                kind: NoticeKind::Info,
                text: format!("{name}: {w}"),
            });
        }
        if let ShapeSource::File(path) = &shape.request.source {
            self.state.remember(RecentFile {
                path: path.clone(),
                kind: RecentKind::Shape,
                unit: shape.request.unit,
            });
        }
        if let Some(path) = scenario_path {
            self.scenario_path_field = path.display().to_string();
            self.state.remember(RecentFile {
                path,
                kind: RecentKind::Scenario,
                unit: self.state.unit,
            });
        }
        self.params = BodyParams::from_spec(&scenario.body);
        self.params
            .sync_derived(shape.shape.mass_properties().volume_m3);
        self.scenario = scenario;
        self.scenario_dir = dir;
        self.selected_site = (!self.scenario.launches.is_empty()).then_some(0);
        self.shape = Some(shape);
        self.built_params = Some(self.params.clone());
        for pane in &mut self.panes {
            pane.reset_camera = true;
        }
        self.install_view(view);
    }

    fn install_view(&mut self, view: Arc<BodyView>) {
        self.view = Some(view);
        self.map = None;
        // Work started for the previous body no longer applies.
        for job in [
            self.run_job.take().map(|j| Box::new(j) as Box<dyn Cancel>),
            self.map_job.take().map(|j| Box::new(j) as Box<dyn Cancel>),
        ]
        .into_iter()
        .flatten()
        {
            job.cancel_job();
        }
        self.reports = Arc::new(Vec::new());
        self.plot_cache = None;
        self.state.view.selected_launch = None;
        self.run_state = RunState::NotRun;
        self.t_s = 0.0;
        self.data_generation += 1;
        if self.state.view.map.is_some() && self.map_starts_by_itself() {
            self.start_map();
        }
    }

    fn add_site_at_point(&mut self, point_body_m: nalgebra::Point3<f64>, _face: usize) {
        let site = SiteSpec {
            point_m: Some(point_body_m.into()),
            ..SiteSpec::default()
        };
        self.add_site(site);
    }

    fn add_site_lat_lon(&mut self, lat_deg: f64, lon_deg: f64) {
        let site = SiteSpec {
            lat_deg: Some(lat_deg),
            lon_deg: Some(lon_deg),
            ..SiteSpec::default()
        };
        if let Some(view) = &self.view {
            let probe = LaunchEntry {
                site: Some(site.clone()),
                ..LaunchEntry::default()
            };
            if let Err(e) = probe.site(view.body()) {
                self.error(format!("site at lat {lat_deg}, lon {lon_deg}: {e}"));
                return;
            }
        }
        self.add_site(site);
    }

    /// Adds a launch from `site` with the launch settings of the selected launch (or the
    /// defaults), named `Site N` with the first free N.
    fn add_site(&mut self, site: SiteSpec) {
        let template = self
            .selected_site
            .and_then(|i| self.scenario.launches.get(i))
            .filter(|l| l.site.is_some())
            .cloned()
            .unwrap_or_else(|| LaunchEntry {
                speed_m_s: Some(0.5),
                azimuth_deg: Some(90.0),
                elevation_deg: Some(45.0),
                ..LaunchEntry::default()
            });
        let taken = |id: &str| self.scenario.launches.iter().any(|l| l.id == id);
        let mut n = self.scenario.launches.len() + 1;
        while taken(&format!("Site {n}")) {
            n += 1;
        }
        let (speed, azimuth, elevation) = launch_defaults(&template);
        self.scenario.launches.push(LaunchEntry {
            id: format!("Site {n}"),
            state: None,
            site: Some(site),
            speed_m_s: Some(speed),
            azimuth_deg: Some(azimuth),
            elevation_deg: Some(elevation),
            ..template
        });
        self.selected_site = Some(self.scenario.launches.len() - 1);
    }

    /// The sites resolved on the current body (cached until the sites or the body change).
    pub(crate) fn resolved_sites(&mut self) -> &[ResolvedSite] {
        let specs: Vec<Option<SiteSpec>> = self
            .scenario
            .launches
            .iter()
            .map(|l| l.site.clone())
            .collect();
        let fresh = matches!(&self.site_cache, Some((l, g, _)) if *l == specs && *g == self.data_generation);
        if !fresh {
            let resolved = match &self.view {
                Some(v) => self
                    .scenario
                    .launches
                    .iter()
                    .map(|l| l.site(v.body()).map_err(|e| format!("{}: {e}", l.id)))
                    .collect(),
                None => Vec::new(),
            };
            self.site_cache = Some((specs, self.data_generation, resolved));
        }
        match &self.site_cache {
            Some((_, _, r)) => r,
            None => &[],
        }
    }

    /// Markers of the planned sites with their launch directions.
    pub(crate) fn site_markers(&mut self) -> Vec<spinfall_scene::SiteMarker> {
        let selected = self.selected_site;
        let directions: Vec<(f64, f64)> = self
            .scenario
            .launches
            .iter()
            .map(|l| {
                let (_, az, el) = launch_defaults(l);
                (az, el)
            })
            .collect();
        self.resolved_sites()
            .iter()
            .zip(directions)
            .enumerate()
            .filter_map(|(i, (r, (az, el)))| {
                let site = r.as_ref().ok()?.as_ref()?;
                let d = site.frame.direction(az.to_radians(), el.to_radians());
                Some(spinfall_scene::SiteMarker {
                    pos_body_m: [
                        site.point_body_m.x,
                        site.point_body_m.y,
                        site.point_body_m.z,
                    ],
                    launch_dir_body: Some([d.x, d.y, d.z]),
                    selected: selected == Some(i),
                })
            })
            .collect()
    }

    /// The session's document with the body panel's values, as a scenario ready to be written
    /// into `folder` (its shape path rewritten for that folder when needed).
    pub(crate) fn scenario_for(&self, folder: &Path) -> Scenario {
        let mut scenario = self.scenario.clone();
        self.params.write_into(&mut scenario.body);
        relocated(
            &LoadedScenario::in_memory(scenario, SESSION, self.scenario_dir.clone()),
            folder,
        )
    }

    fn save_scenario(&mut self, path: &Path) {
        if self.save_job.is_some() {
            self.error("the scenario is being saved");
            return;
        }
        let folder = spinfall_workflow::output::parent_folder(path);
        let scenario = self.scenario_for(&folder);
        let path = path.to_path_buf();
        self.save_job = Some(Job::spawn(
            format!("Saving {}", path.display()),
            self.repaint.clone(),
            move |_| {
                let text = scenario_json(&scenario)?;
                write_file(&OutputTarget::Path(path.clone()), |w| {
                    w.write_all(text.as_bytes())
                        .map_err(spinfall_workflow::output::io_error)
                })?;
                Ok((scenario, path))
            },
        ));
    }
}

/// Wakes a parked thread (the dialog thread waiting for the portal's answer).
struct ThreadWaker(std::thread::Thread);

impl std::task::Wake for ThreadWaker {
    fn wake(self: Arc<Self>) {
        self.0.unpark();
    }
}

/// Runs a future to completion on the current (dialog) thread.
fn block_on<F: std::future::Future>(future: F) -> F::Output {
    let mut future = std::pin::pin!(future);
    let waker = std::task::Waker::from(Arc::new(ThreadWaker(std::thread::current())));
    let mut cx = std::task::Context::from_waker(&waker);
    loop {
        match future.as_mut().poll(&mut cx) {
            std::task::Poll::Ready(v) => return v,
            std::task::Poll::Pending => std::thread::park(),
        }
    }
}

/// Cancel any kind of job.
trait Cancel {
    fn cancel_job(&self);
}

impl<T: Send + 'static> Cancel for Job<T> {
    fn cancel_job(&self) {
        self.cancel();
    }
}

/// Opens the shape model of `loaded` and builds its body (worker thread).
pub(crate) fn load_session(
    ctx: &JobContext,
    loaded: LoadedScenario,
    scenario_path: Option<PathBuf>,
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
        &PrepareOptions::new(Purpose::BodyOnly),
        &field_hooks(ctx),
    )?;
    let view = Arc::new(BodyView::new(prepared.body.clone()));
    Ok(Loaded {
        scenario: prepared.loaded.scenario,
        dir: prepared.loaded.dir,
        shape: prepared.shape,
        view,
        scenario_path,
    })
}

/// Prepares the session's scenario exactly as the command line does and flies it (worker
/// thread).
fn run_flights(
    ctx: &JobContext,
    view: &BodyView,
    loaded: LoadedScenario,
    shape: OpenedShape,
) -> Result<RunOutput, GuiError> {
    ctx.progress
        .set_stage("preparing the gravity field and the launches");
    let prepared = prepare_shape_hooks(
        loaded,
        shape,
        &PrepareOptions::new(Purpose::Fly),
        &field_hooks(ctx),
    )?;
    // The view shows the body the run flies around (same document, same shape).
    debug_assert_eq!(
        prepared.body.shape.face_count(),
        view.body().shape.face_count()
    );
    ctx.progress.set_stage("flying");
    let progress = ctx.progress_fn();
    let done = spinfall_workflow::run::run(&prepared, &progress, &ctx.cancel)?;
    Ok(RunOutput {
        reports: done.reports,
        elapsed: done.elapsed,
        field: prepared.field.clone(),
    })
}

/// Progress and cancel of a job, for the build of an interpolated gravity field.
fn field_hooks(ctx: &JobContext) -> BuildHooks<'_> {
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
        warn: Box::new(move |w| ctx.progress.set_stage(&w)),
    }
}

impl eframe::App for SpinfallApp {
    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        SpinfallApp::ui(self, ui);
    }

    fn save(&mut self, storage: &mut dyn eframe::Storage) {
        self.state.export_folder = self.export_form.folder.clone();
        eframe::set_value(storage, eframe::APP_KEY, &self.state);
    }
}
