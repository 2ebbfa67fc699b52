//! [`SpinfallApp`]: state, the frame function and read access for tests. Commands are handled
//! in [`crate::handlers`], jobs started and collected in [`crate::work`].

use std::path::PathBuf;
use std::sync::Arc;
use std::sync::mpsc::{Receiver, Sender, channel};
use std::time::{Duration, Instant};

use egui::{Context, Key, KeyboardShortcut, Modifiers};
use spinfall_dynamics::FlightReport;
use spinfall_dynamics::scenario::{BUILTIN_QUILLON, FieldSpec, LaunchEntry, Scenario, SiteSpec};
use spinfall_dynamics::surface_map::{SurfaceField, SurfaceMap};
use spinfall_gravity::LengthUnit;
use spinfall_scene::{BodyView, DisplayUnits};
use spinfall_workflow::gravity_method::{FieldUsed, GravityOptions};
use spinfall_workflow::limits::{Estimate, estimate};

use crate::GuiOptions;
use crate::command::Command;
use crate::history::{DocState, History};
use crate::jobs::{Job, JobKind, RunningJob};
use crate::notify::Notice;
use crate::session::{BodyParams, new_scenario};
use crate::state::PersistedState;
use crate::views::ViewPane;
use crate::work::{AnimationDone, BuiltBody, ExportDone, Loaded, MapFound, RunOutput};

/// Largest model whose surface map is computed without being asked when a map is chosen
/// (a stored map is read whatever the size).
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
/// Shortcut: undo a site or body edit.
pub const SHORTCUT_UNDO: KeyboardShortcut = KeyboardShortcut::new(Modifiers::COMMAND, Key::Z);
/// Shortcut: redo.
pub const SHORTCUT_REDO: KeyboardShortcut =
    KeyboardShortcut::new(Modifiers::COMMAND.plus(Modifiers::SHIFT), Key::Z);

/// A site of the document resolved on the body: `None` for an explicit state, an error text
/// when it cannot be placed.
pub(crate) type ResolvedSite = Result<Option<spinfall_dynamics::site::Site>, String>;

/// Sites resolved on a body, keyed by the launches' site specs and normal choices and the data
/// generation, so renaming a launch or changing its speed does not place it again.
type SiteCache = (
    Vec<(
        Option<SiteSpec>,
        Option<spinfall_dynamics::site::NormalMode>,
    )>,
    u64,
    Vec<ResolvedSite>,
);

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
    /// Cancelled by the user.
    Cancelled {
        /// Launches that had ended on their own before the cancel.
        finished: usize,
        /// Launches the run had.
        launches: usize,
    },
    /// Failed with a message.
    Failed(String),
}

/// A set of results: the reports of one run, how its gravity was computed, the document it
/// flew, and whether it is the finished part of a cancelled run.
#[derive(Debug, Clone)]
pub(crate) struct ResultSet {
    pub reports: Arc<Vec<FlightReport>>,
    pub field: FieldUsed,
    /// The scenario flown (the body panel's values written in).
    pub doc: Option<Scenario>,
    /// `Some(launches of the run)` when these are the launches a cancelled run finished.
    pub partial_of: Option<usize>,
}

impl ResultSet {
    pub(crate) fn empty() -> Self {
        Self {
            reports: Arc::new(Vec::new()),
            field: FieldUsed::direct(),
            doc: None,
            partial_of: None,
        }
    }
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
pub(crate) type DialogAnswer = (DialogPurpose, Option<PathBuf>, Duration);

/// The Spinfall app.
pub struct SpinfallApp {
    /// Remembered between runs.
    pub(crate) state: PersistedState,
    pub(crate) test_mode: bool,
    pub(crate) repaint: Arc<dyn Fn() + Send + Sync>,
    /// Where interpolated fields and surface maps are stored.
    pub(crate) gravity: GravityOptions,

    // Session: the scenario document (what a saved file holds and what runs fly), the folder
    // its relative shape path means, the opened shape and the body panel's draft.
    pub(crate) scenario: Scenario,
    pub(crate) scenario_dir: PathBuf,
    pub(crate) shape: Option<spinfall_workflow::shape::OpenedShape>,
    pub(crate) params: BodyParams,
    /// The body panel's values and the field section the current body was built with.
    pub(crate) built_params: Option<BodyParams>,
    pub(crate) built_field: Option<FieldSpec>,
    /// How the current body's gravity is computed.
    pub(crate) body_field: FieldUsed,
    pub(crate) selected_site: Option<usize>,
    /// Recentre shape models opened from now on (a loaded scenario says for itself).
    pub(crate) recenter_new_shapes: bool,
    pub(crate) view: Option<Arc<BodyView>>,
    pub(crate) map: Option<Arc<SurfaceMap>>,
    /// Where the map came from ("read from the cache …").
    pub(crate) map_source: Option<String>,
    /// The results shown.
    pub(crate) reports: Arc<Vec<FlightReport>>,
    /// How the gravity of `reports` was computed.
    pub(crate) reports_field: FieldUsed,
    pub(crate) reports_doc: Option<Scenario>,
    pub(crate) reports_partial_of: Option<usize>,
    /// The other set of results after a cancel (the previous complete run, or the finished
    /// part of the cancelled one), to switch to.
    pub(crate) set_aside: Option<ResultSet>,
    pub(crate) run_state: RunState,
    /// Launches of the run in progress (known before the first one ends).
    pub(crate) run_launches: usize,
    /// The scenario the run in progress flies.
    pub(crate) run_doc: Option<Scenario>,
    /// Bumped whenever what the views show changes (body, map, reports).
    pub(crate) data_generation: u64,

    // Time.
    pub(crate) t_s: f64,
    pub(crate) playing: bool,
    pub(crate) last_frame: Option<Instant>,

    // Views.
    pub(crate) panes: [ViewPane; 2],
    pub(crate) click_to_place: bool,
    /// The next click on the body sets the selected launch's target.
    pub(crate) pick_target: bool,
    pub(crate) hover: Option<crate::views::HoverInfo>,
    pub(crate) frame_ms: f32,
    /// Smoothed time between frames (whole loop: UI, upload, paint, swap), s.
    pub(crate) frame_interval_s: f32,

    // Jobs.
    pub(crate) load_job: Option<Job<Loaded>>,
    pub(crate) body_job: Option<Job<BuiltBody>>,
    pub(crate) map_job: Option<Job<MapFound>>,
    /// The key of the map the map job is for.
    pub(crate) map_job_key: String,
    pub(crate) run_job: Option<Job<RunOutput>>,
    pub(crate) export_job: Option<Job<ExportDone>>,
    pub(crate) animation_job: Option<Job<AnimationDone>>,
    pub(crate) save_job: Option<Job<(Scenario, PathBuf)>>,
    /// Start a run as soon as the body being rebuilt is ready.
    pub(crate) run_after_body: bool,
    pub(crate) plot: crate::plot_panel::PlotPanel,
    /// Zero-velocity surfaces and equilibrium points.
    pub(crate) env: crate::environment::Environment,
    /// Landing statistics of the results shown.
    pub(crate) landings: crate::landings::Landings,
    /// Sites resolved on the current body.
    site_cache: Option<SiteCache>,

    // UI state.
    pub(crate) commands: Vec<Command>,
    pub(crate) notices: Vec<Notice>,
    pub(crate) history: History,
    pub(crate) shape_path_field: String,
    /// The path of the shape model loaded now (the field goes back to it after a failed open).
    pub(crate) loaded_shape_path: String,
    pub(crate) scenario_path_field: String,
    pub(crate) loaded_scenario_path: String,
    pub(crate) lat_field_deg: f64,
    pub(crate) lon_field_deg: f64,
    pub(crate) show_export: bool,
    pub(crate) export_form: crate::export::ExportForm,
    pub(crate) table: crate::results::TableState,
    pub(crate) last_exported: Vec<PathBuf>,
    /// How the last export or animation ended, shown in the export window.
    pub(crate) export_status: Option<(crate::notify::NoticeKind, String)>,
    pub(crate) dialog_tx: Sender<DialogAnswer>,
    pub(crate) dialog_rx: Receiver<DialogAnswer>,
    /// The cache folder of a test app (removed with the app).
    test_cache: Option<tempfile::TempDir>,
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
        let cache_dir = options.cache_dir.clone();
        let mut app = Self::with_state(
            state,
            Arc::new(move || ctx.request_repaint()),
            false,
            cache_dir,
        );
        app.start(options);
        app
    }

    /// The app for tests: no persistence, no file dialogs. Starts loading `options` (the demo
    /// body when `shape_path` is `None`); use [`SpinfallApp::wait_for_jobs`] to await it.
    /// Without a `cache_dir`, fields and maps are stored in a temporary folder of this app,
    /// never in the user's cache.
    pub fn new_for_test(options: GuiOptions) -> Self {
        // A cache folder of this app alone (removed with it), so tests never share stored maps.
        let own = match options.cache_dir {
            Some(_) => None,
            None => tempfile::Builder::new()
                .prefix("spinfall-gui-test-cache-")
                .tempdir()
                .ok(),
        };
        let cache_dir = options
            .cache_dir
            .clone()
            .or_else(|| own.as_ref().map(|d| d.path().to_path_buf()));
        let mut app = Self::with_state(PersistedState::default(), Arc::new(|| {}), true, cache_dir);
        app.test_cache = own;
        app.start(options);
        app.handle_commands();
        app
    }

    fn with_state(
        state: PersistedState,
        repaint: Arc<dyn Fn() + Send + Sync>,
        test_mode: bool,
        cache_dir: Option<PathBuf>,
    ) -> Self {
        let (dialog_tx, dialog_rx) = channel();
        let export_form = crate::export::ExportForm::from_state(&state);
        let params = BodyParams::default();
        let scenario = new_scenario(BUILTIN_QUILLON.into(), LengthUnit::Kilometre, true, &params);
        let mut history = History::default();
        history.reset(DocState {
            scenario: scenario.clone(),
            params: params.clone(),
        });
        Self {
            state,
            test_mode,
            repaint,
            gravity: GravityOptions {
                cache_dir,
                ..GravityOptions::default()
            },
            scenario,
            scenario_dir: PathBuf::from("."),
            shape: None,
            params,
            built_params: None,
            built_field: None,
            body_field: FieldUsed::direct(),
            selected_site: None,
            recenter_new_shapes: true,
            view: None,
            map: None,
            map_source: None,
            reports: Arc::new(Vec::new()),
            reports_field: FieldUsed::direct(),
            reports_doc: None,
            reports_partial_of: None,
            set_aside: None,
            run_state: RunState::NotRun,
            run_launches: 0,
            run_doc: None,
            data_generation: 0,
            t_s: 0.0,
            playing: false,
            last_frame: None,
            panes: [
                ViewPane::new(spinfall_scene::Frame::BodyFixed),
                ViewPane::new(spinfall_scene::Frame::Inertial),
            ],
            click_to_place: true,
            pick_target: false,
            hover: None,
            frame_ms: 0.0,
            frame_interval_s: 0.0,
            load_job: None,
            body_job: None,
            map_job: None,
            map_job_key: String::new(),
            run_job: None,
            export_job: None,
            animation_job: None,
            save_job: None,
            run_after_body: false,
            plot: Default::default(),
            env: Default::default(),
            landings: Default::default(),
            site_cache: None,
            commands: Vec::new(),
            notices: Vec::new(),
            history,
            shape_path_field: String::new(),
            loaded_shape_path: String::new(),
            scenario_path_field: String::new(),
            loaded_scenario_path: String::new(),
            lat_field_deg: 0.0,
            lon_field_deg: 0.0,
            show_export: false,
            export_form,
            table: Default::default(),
            last_exported: Vec::new(),
            export_status: None,
            dialog_tx,
            dialog_rx,
            test_cache: None,
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
        !self.running_jobs().is_empty() || self.plot.busy()
    }

    /// The background jobs running now.
    pub(crate) fn running_jobs(&self) -> Vec<RunningJob<'_>> {
        [
            self.load_job.as_ref().map(|j| j.running(JobKind::Load)),
            self.body_job.as_ref().map(|j| j.running(JobKind::Body)),
            self.map_job.as_ref().map(|j| j.running(JobKind::Map)),
            self.run_job.as_ref().map(|j| j.running(JobKind::Run)),
            self.export_job.as_ref().map(|j| j.running(JobKind::Export)),
            self.animation_job
                .as_ref()
                .map(|j| j.running(JobKind::Animation)),
            self.save_job.as_ref().map(|j| j.running(JobKind::Save)),
            self.env
                .slice_job
                .as_ref()
                .map(|j| j.running(JobKind::Environment)),
            self.env
                .equilibria_job
                .as_ref()
                .map(|j| j.running(JobKind::Environment)),
        ]
        .into_iter()
        .flatten()
        .collect()
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
    pub fn shape(&self) -> Option<&spinfall_workflow::shape::OpenedShape> {
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

    /// The launch selected in the side panel.
    pub fn selected_site(&self) -> Option<usize> {
        self.selected_site
    }

    /// What a run of the session would need (launch count, memory, output).
    pub fn run_estimate(&self) -> Estimate {
        let faces = self.shape.as_ref().map_or(0, |s| s.shape.face_count());
        estimate(&self.scenario, faces, &self.scenario.flight_settings())
    }

    /// The guides the body-fixed view draws now (equilibria, zero-velocity curves).
    pub fn guides(&self) -> Option<Arc<spinfall_scene::Guides>> {
        self.view.as_ref().map(|v| v.guides().clone())
    }

    /// The body shown now.
    pub fn view_body(&self) -> Option<Arc<spinfall_dynamics::Body>> {
        self.view.as_ref().map(|v| v.body().clone())
    }

    /// The body view drawn now.
    pub fn view(&self) -> Option<&spinfall_scene::BodyView> {
        self.view.as_deref()
    }

    /// Sets the typed Jacobi constant of the Environment section, m^2/s^2 (tests).
    pub fn set_zero_velocity_constant(&mut self, c_m2_s2: f64) {
        self.env.constant_m2_s2 = c_m2_s2;
    }

    /// The equilibrium points found for the current body, if a search ran.
    pub fn equilibria(&self) -> Option<&spinfall_dynamics::equilibria::EquilibriumSet> {
        self.env.equilibria()
    }

    /// Reports shown (the last complete run, or the finished part of a cancelled one when
    /// the user switched to it).
    pub fn reports(&self) -> &[FlightReport] {
        &self.reports
    }

    /// `Some(launches of the run)` when the reports shown are the finished part of a cancelled
    /// run.
    pub fn showing_partial_run(&self) -> Option<usize> {
        self.reports_partial_of
    }

    /// How the gravity of the reports shown was computed.
    pub fn reports_field(&self) -> &FieldUsed {
        &self.reports_field
    }

    /// How the current body's gravity is computed.
    pub fn body_field(&self) -> &FieldUsed {
        &self.body_field
    }

    /// `(done, total)` launches of the run in progress, once it is flying.
    pub fn run_progress_counts(&self) -> Option<(usize, usize)> {
        let job = self.run_job.as_ref()?;
        (job.progress.stage() == "flying").then(|| job.progress.counts())
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
    pub fn params(&self) -> &BodyParams {
        &self.params
    }

    /// Body settings, to change.
    pub fn params_mut(&mut self) -> &mut BodyParams {
        &mut self.params
    }

    /// Files written by the last export.
    pub fn last_exported(&self) -> &[PathBuf] {
        &self.last_exported
    }

    /// The surface map of the current body, when computed or read.
    pub fn surface_map(&self) -> Option<&Arc<SurfaceMap>> {
        self.map.as_ref()
    }

    /// Where the surface map came from (read from the cache, computed and stored).
    pub fn surface_map_source(&self) -> Option<&str> {
        self.map_source.as_deref()
    }

    /// The text of the shape path field.
    pub fn shape_path_text(&self) -> &str {
        &self.shape_path_field
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

    /// The units lengths and times are shown in.
    pub fn units(&self) -> DisplayUnits {
        self.state.view.units
    }

    /// Choose the units lengths and times are shown in (everywhere on screen and in figures).
    pub fn set_units(&mut self, units: DisplayUnits) {
        self.state.view.units = units;
    }

    /// Colour the body by a surface map field (`None`: plain).
    pub fn set_shown_map(&mut self, field: Option<SurfaceField>) {
        self.state.view.map = field;
    }

    /// Whether an edit can be undone / redone.
    pub fn can_undo_redo(&self) -> (bool, bool) {
        (self.history.can_undo(), self.history.can_redo())
    }

    /// `(min, max)` of the escape speed along the normal and of the minimum escape speed over
    /// the whole surface, m/s (needs the surface map).
    pub fn escape_speed_ranges_m_s(&self) -> Option<[(f64, f64); 2]> {
        let map = self.map.as_ref()?;
        Some([
            map.range(SurfaceField::EscapeSpeedNormal)?,
            map.range(SurfaceField::EscapeSpeedMin)?,
        ])
    }

    /// The document as undo and staleness see it: the scenario with the body panel's values
    /// written in.
    pub(crate) fn doc_state(&self) -> DocState {
        let mut scenario = self.scenario.clone();
        self.params.write_into(&mut scenario.body);
        DocState {
            scenario,
            params: self.params.clone(),
        }
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
            .default_size(350.0)
            .min_size(280.0)
            .show(ui, |ui| {
                egui::ScrollArea::vertical()
                    .id_salt("controls_scroll")
                    .show(ui, |ui| self.side_panel_ui(ui));
            });
        if self.state.show_results {
            let min_h = if self.reports.is_empty() { 80.0 } else { 260.0 };
            egui::Panel::bottom("results")
                .resizable(true)
                .default_size(340.0)
                .min_size(min_h)
                .show(ui, |ui| self.results_ui(ui));
        }
        egui::CentralPanel::default().show(ui, |ui| self.views_ui(ui));
        self.export_window(&ctx);
        self.notices_ui(&ctx);

        self.handle_commands();
        // One undo step per committed edit: not while typing or dragging.
        let editing = ctx.egui_wants_keyboard_input() || ctx.input(|i| i.pointer.any_down());
        if !editing {
            let now = self.doc_state();
            self.history.record(&now);
        }
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
            // A text field being typed in keeps its own undo.
            if !typing {
                // Redo first: Ctrl+Z alone would also match Ctrl+Shift+Z.
                if i.consume_shortcut(&SHORTCUT_REDO) {
                    self.commands.push(Command::Redo);
                }
                if i.consume_shortcut(&SHORTCUT_UNDO) {
                    self.commands.push(Command::Undo);
                }
                if i.consume_key(Modifiers::NONE, Key::Space) {
                    self.commands.push(Command::TogglePlay);
                }
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
                "obj" | "ply" | "stl" => {
                    self.shape_path_field = path.display().to_string();
                    self.commands
                        .push(Command::LoadShape(path, self.state.unit));
                }
                "json" => self.commands.push(Command::LoadScenario(path)),
                _ => self.error(format!(
                    "{}: drop a shape model (.obj, .ply or .stl) or a .json scenario",
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

    /// The sites resolved on the current body (cached until the sites or the body change).
    pub(crate) fn resolved_sites(&mut self) -> &[ResolvedSite] {
        let specs: Vec<_> = self
            .scenario
            .launches
            .iter()
            .map(|l| (l.site.clone(), l.normal))
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
        let body = self.view.as_ref().map(|v| v.body().clone());
        let targets: Vec<Option<[f64; 3]>> = self
            .scenario
            .launches
            .iter()
            .map(|l| {
                let spec = l.target.as_ref()?;
                if let Some(p) = spec.point_m {
                    return Some(p);
                }
                let target = spinfall_dynamics::scenario::target_of(spec)?;
                let body = body.as_ref()?;
                spinfall_dynamics::targeting::TargetPoint::resolve(body, &target)
                    .ok()
                    .map(|t| t.point_body_m)
            })
            .collect();
        let directions: Vec<(f64, f64)> = self
            .scenario
            .launches
            .iter()
            .map(|l| {
                let (_, az, el) = crate::session::launch_defaults(l);
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
                    // A targeted launch's direction is solved when it is flown.
                    launch_dir_body: targets[i].is_none().then_some([d.x, d.y, d.z]),
                    selected: selected == Some(i),
                    target_body_m: targets[i],
                })
            })
            .collect()
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
