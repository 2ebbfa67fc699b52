//! The one place UI requests become actions: commands, file dialogs, site edits, undo and
//! redo, saving.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

use spinfall_dynamics::scenario::{LaunchEntry, Scenario, SiteSpec};
use spinfall_workflow::output::{OutputTarget, write_file};
use spinfall_workflow::scenario_file::{LoadedScenario, relocated, scenario_json};

use crate::app::{DialogPurpose, ResultSet, SpinfallApp};
use crate::command::Command;
use crate::jobs::Job;
use crate::notify::{Notice, NoticeAction, NoticeKind};
use crate::session::launch_defaults;

/// How the session's scenario is named in messages.
pub(crate) const SESSION: &str = "of this session";

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

impl SpinfallApp {
    /// Handle every queued command.
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
            Command::ComputeMap => self.start_map(true),
            Command::AddSiteAtPoint { point_body_m, .. } => {
                self.add_site(SiteSpec {
                    point_m: Some(point_body_m.into()),
                    ..SiteSpec::default()
                });
            }
            Command::AddSiteLatLon { lat_deg, lon_deg } => self.add_site_lat_lon(lat_deg, lon_deg),
            Command::RemoveSite(i) => self.remove_site(i),
            Command::Undo => self.undo_redo(true),
            Command::Redo => self.undo_redo(false),
            Command::Run => self.start_run(),
            Command::CancelJobs => self.cancel_jobs(),
            Command::ComputeZeroVelocity => self.start_slice(),
            Command::SetTarget { point_body_m } => self.set_target(point_body_m),
            Command::FindEquilibria => self.start_equilibria(),
            Command::SwitchResults => self.switch_results(),
            Command::SelectLaunch(i) => {
                self.state.view.selected_launch = i;
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
            Command::ExportAnimation(req) => self.start_animation(req),
        }
    }

    fn cancel_jobs(&mut self) {
        for job in self.running_jobs() {
            job.cancel.store(true, std::sync::atomic::Ordering::Relaxed);
        }
    }

    /// Undo (or redo) the last site or body edit.
    fn undo_redo(&mut self, undo: bool) {
        let now = self.doc_state();
        let step = if undo {
            self.history.undo(&now)
        } else {
            self.history.redo(&now)
        };
        match step {
            Some(doc) => {
                self.scenario = doc.scenario;
                self.params = doc.params;
                let n = self.scenario.launches.len();
                self.selected_site = match self.selected_site {
                    Some(s) if s < n => Some(s),
                    _ => n.checked_sub(1),
                };
            }
            None => self.info(if undo {
                "nothing to undo"
            } else {
                "nothing to redo"
            }),
        }
    }

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
                        d.add_filter(
                            "Shape model (OBJ, PLY, STL)",
                            &["obj", "OBJ", "ply", "PLY", "stl", "STL"],
                        )
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

    pub(crate) fn poll_dialogs(&mut self) {
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
            // A new site starts untargeted (a target is picked for it afterwards).
            target: None,
            mode: None,
            miss_tolerance_m: None,
            ..template
        });
        self.selected_site = Some(self.scenario.launches.len() - 1);
    }

    /// Aims the selected launch at `point_body_m`: a targeted hop (speed and direction are
    /// solved when it is flown; a fan does not go with a target).
    fn set_target(&mut self, point_body_m: nalgebra::Point3<f64>) {
        let Some(i) = self
            .selected_site
            .filter(|&i| i < self.scenario.launches.len())
        else {
            self.error("select a launch first, then Shift+click its target on the body");
            return;
        };
        let (lat, lon) = match &self.view {
            Some(v) => spinfall_dynamics::site::lat_lon_deg(v.body(), &point_body_m),
            None => (f64::NAN, f64::NAN),
        };
        if self.scenario.launches[i].site.is_none() {
            let id = self.scenario.launches[i].id.clone();
            self.error(format!(
                "{id} has no surface site (an explicit state cannot be aimed)"
            ));
            return;
        }
        let launch = &mut self.scenario.launches[i];
        launch.target = Some(SiteSpec {
            point_m: Some(point_body_m.into()),
            ..SiteSpec::default()
        });
        launch.speed_m_s = None;
        launch.azimuth_deg = None;
        launch.elevation_deg = None;
        launch.fan = None;
        let id = launch.id.clone();
        self.info(format!(
            "{id} aimed at lat {lat:.2}°, lon {lon:.2}°: its launch is solved when it is flown"
        ));
    }

    /// Removes a launch; the removal is one undo step, offered in the notice.
    fn remove_site(&mut self, i: usize) {
        if i >= self.scenario.launches.len() {
            return;
        }
        // Record what was there, so the removal is its own step.
        let before = self.doc_state();
        self.history.record(&before);
        let removed = self.scenario.launches.remove(i);
        let after = self.doc_state();
        self.history.record(&after);
        self.selected_site = match self.selected_site {
            Some(s) if s == i => None,
            Some(s) if s > i => Some(s - 1),
            other => other,
        };
        self.notify(Notice {
            action: Some(NoticeAction::Undo),
            ..Notice::new(
                NoticeKind::Info,
                format!("removed “{}” (Undo or Ctrl+Z brings it back)", removed.id),
            )
        });
    }

    /// Shows the other set of results (the previous complete run, or the finished part of a
    /// cancelled one).
    fn switch_results(&mut self) {
        let Some(other) = self.set_aside.take() else {
            return;
        };
        let shown = ResultSet {
            reports: self.reports.clone(),
            field: self.reports_field.clone(),
            doc: self.reports_doc.clone(),
            partial_of: self.reports_partial_of,
        };
        self.show_results(other);
        self.set_aside = Some(shown);
    }

    /// Shows `set` in the table, the plots and the views.
    pub(crate) fn show_results(&mut self, set: ResultSet) {
        let n = set.reports.len();
        self.reports = set.reports;
        self.reports_field = set.field;
        self.reports_doc = set.doc;
        self.reports_partial_of = set.partial_of;
        self.state.view.selected_launch = (n > 0).then_some(0);
        self.plot.clear();
        self.data_generation += 1;
        // Show the whole flights; Play starts over from t = 0.
        self.t_s = self.end_time_s();
    }

    /// What changed since the results shown were flown: "body", "launches", "flight
    /// settings", "gravity method" (empty when they are current).
    pub fn stale_reasons(&self) -> Vec<&'static str> {
        let Some(flown) = &self.reports_doc else {
            return Vec::new();
        };
        let now = self.doc_state().scenario;
        let mut out = Vec::new();
        if now.body != flown.body {
            out.push("body");
        }
        if now.launches != flown.launches {
            out.push("launches");
        }
        if now.integrator != flown.integrator
            || now.bounce != flown.bounce
            || now.seed != flown.seed
            || now.limits != flown.limits
        {
            out.push("flight settings");
        }
        if now.field != flown.field {
            out.push("gravity method");
        }
        out
    }

    /// The session's document with the body panel's values, as a scenario ready to be written
    /// into `folder` (its shape path rewritten for that folder when needed).
    pub(crate) fn scenario_for(&self, folder: &Path) -> Scenario {
        relocated(
            &LoadedScenario::in_memory(
                self.doc_state().scenario,
                SESSION,
                self.scenario_dir.clone(),
            ),
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
        let path: PathBuf = path.to_path_buf();
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
