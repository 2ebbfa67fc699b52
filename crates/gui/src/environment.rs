//! The side panel's "Environment" section: zero-velocity surfaces of a launch (or of any Jacobi
//! constant) on a plane through the body and on its surface, with the region the launch can
//! never reach hatched, and the equilibrium points of the rotating body with their stability.
//!
//! The heavy work (the geopotential on the plane grid and at the mesh vertices, the equilibrium
//! search) runs as background jobs through `spinfall-workflow`; the curves for a level are
//! contoured on the UI thread from those values (cheap), so changing the selected launch or
//! the constant redraws at once. What is drawn goes to the views as `spinfall_scene::Guides`
//! on the body view, so exported figures show it too.

use std::sync::Arc;

use egui::{RichText, Ui};
use nalgebra::Point3;
use spinfall_dynamics::Body;
use spinfall_dynamics::equilibria::{EquilibriumSearch, EquilibriumSet};
use spinfall_dynamics::zero_velocity::{Axis, PlaneSlice, SlicePlane, SliceSpec, geopotential};
use spinfall_scene::Guides;
use spinfall_workflow::zero_velocity::{CurveParts, equilibrium_marks, zero_velocity_curves};

use crate::app::SpinfallApp;
use crate::command::Command;
use crate::jobs::{Job, Poll};
use crate::number_field::NumberField;
use crate::units::fmt_sci;

/// Whose Jacobi constant the zero-velocity curves show.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LevelSource {
    /// The launch selected in the results table or the views.
    #[default]
    SelectedLaunch,
    /// A constant typed in.
    Constant,
}

/// The geopotential values the curves are contoured from, for one body.
pub(crate) struct SliceValues {
    body: Arc<Body>,
    slice: PlaneSlice,
    vertex_phi: Vec<f64>,
}

/// What the guides were last built from (rebuilt when it changes).
#[derive(Debug, Clone, PartialEq)]
struct GuidesKey {
    level_m2_s2: Option<f64>,
    label: String,
    show_plane: bool,
    show_surface: bool,
    show_hatch: bool,
    show_equilibria: bool,
    slice_generation: u64,
    equilibria_generation: u64,
    landings_generation: u64,
    show_landing_ellipses: bool,
}

/// State of the environment section.
pub(crate) struct Environment {
    /// Whose constant the curves show.
    pub level_source: LevelSource,
    /// The constant typed in, m^2/s^2.
    pub constant_m2_s2: f64,
    /// The plane's normal axis.
    pub axis: Axis,
    /// The plane's offset along its axis, m.
    pub offset_m: f64,
    /// Width of the plane grid in Brillouin radii.
    pub extent_radii: f64,
    /// Cells per side of the plane grid.
    pub cells: usize,
    /// Draw the curves on the plane.
    pub show_plane: bool,
    /// Draw where the surface meets the zero-velocity surface.
    pub show_surface: bool,
    /// Hatch the forbidden part of the plane.
    pub show_hatch: bool,
    /// Mark the equilibrium points.
    pub show_equilibria: bool,
    pub(crate) slice_job: Option<Job<SliceValues>>,
    slice: Option<SliceValues>,
    slice_generation: u64,
    pub(crate) equilibria_job: Option<Job<(Arc<Body>, EquilibriumSet)>>,
    equilibria: Option<(Arc<Body>, EquilibriumSet)>,
    equilibria_generation: u64,
    /// The constant of the selected launch: (results identity, index, C).
    launch_level: Option<(u64, usize, f64)>,
    guides: Arc<Guides>,
    guides_key: Option<GuidesKey>,
}

impl Default for Environment {
    fn default() -> Self {
        Environment {
            level_source: LevelSource::default(),
            constant_m2_s2: 0.0,
            axis: Axis::Z,
            offset_m: 0.0,
            extent_radii: 4.0,
            cells: 200,
            show_plane: true,
            show_surface: true,
            show_hatch: true,
            show_equilibria: true,
            slice_job: None,
            slice: None,
            slice_generation: 0,
            equilibria_job: None,
            equilibria: None,
            equilibria_generation: 0,
            launch_level: None,
            guides: Arc::default(),
            guides_key: None,
        }
    }
}

impl Environment {
    /// The equilibrium points found for the current body, if any search ran.
    pub(crate) fn equilibria(&self) -> Option<&EquilibriumSet> {
        self.equilibria.as_ref().map(|(_, set)| set)
    }

    /// Whether the plane and vertex values are ready.
    pub(crate) fn has_slice(&self) -> bool {
        self.slice.is_some()
    }
}

impl SpinfallApp {
    /// Starts the geopotential on the chosen plane and at the mesh vertices.
    pub(crate) fn start_slice(&mut self) {
        let Some(view) = self.view.clone() else {
            self.error("no body loaded yet");
            return;
        };
        if let Some(job) = self.env.slice_job.take() {
            job.cancel();
        }
        let body = view.body().clone();
        let spec = SliceSpec {
            plane: SlicePlane {
                axis: self.env.axis,
                offset_m: self.env.offset_m,
            },
            extent_m: self.env.extent_radii * view.brillouin_radius_m(),
            cells: self.env.cells,
        };
        if let Err(e) = spec.validate() {
            self.error(format!("zero-velocity plane: {e}"));
            return;
        }
        self.env.slice_job = Some(Job::spawn_at_stage(
            "Zero-velocity surfaces",
            "geopotential on the plane",
            self.repaint.clone(),
            move |ctx| {
                let slice = spinfall_workflow::zero_velocity::compute_slice(
                    &body,
                    &spec,
                    &ctx.progress_fn(),
                    &ctx.cancel,
                )?;
                ctx.progress
                    .set_stage("geopotential at the surface vertices");
                let vertex_phi = spinfall_workflow::zero_velocity::compute_vertex_geopotential(
                    &body,
                    &ctx.progress_fn(),
                    &ctx.cancel,
                )?;
                Ok(SliceValues {
                    body,
                    slice,
                    vertex_phi,
                })
            },
        ));
    }

    /// Starts the search of equilibrium points.
    pub(crate) fn start_equilibria(&mut self) {
        let Some(view) = self.view.clone() else {
            self.error("no body loaded yet");
            return;
        };
        if let Some(job) = self.env.equilibria_job.take() {
            job.cancel();
        }
        let body = view.body().clone();
        self.env.equilibria_job = Some(Job::spawn_at_stage(
            "Equilibrium points",
            "searching",
            self.repaint.clone(),
            move |ctx| {
                let set = spinfall_workflow::equilibria::compute_equilibria(
                    &body,
                    &EquilibriumSearch::default(),
                    &ctx.progress_fn(),
                    &ctx.cancel,
                )?;
                Ok((body, set))
            },
        ));
    }

    /// Takes finished environment jobs, drops values of another body, rebuilds the guides
    /// when what they show changed and hands them to the views.
    pub(crate) fn poll_environment(&mut self) {
        if let Some(job) = &self.env.slice_job
            && let Poll::Done(result) = job.poll()
        {
            self.env.slice_job = None;
            match result {
                Ok(values) => {
                    self.env.slice = Some(values);
                    self.env.slice_generation += 1;
                }
                Err(e) if e.is_cancelled() => {}
                Err(e) => self.error(format!("zero-velocity surfaces: {e}")),
            }
        }
        if let Some(job) = &self.env.equilibria_job
            && let Poll::Done(result) = job.poll()
        {
            self.env.equilibria_job = None;
            match result {
                Ok((body, set)) => {
                    let n = set.equilibria.len();
                    if n == 0 {
                        self.info("no equilibrium points outside the body");
                    } else {
                        self.info(format!(
                            "{n} equilibrium point{} found",
                            if n == 1 { "" } else { "s" }
                        ));
                    }
                    self.env.equilibria = Some((body, set));
                    self.env.equilibria_generation += 1;
                }
                Err(e) if e.is_cancelled() => {}
                Err(e) => self.error(format!("equilibrium points: {e}")),
            }
        }
        self.poll_landings();
        let Some(view) = self.view.clone() else {
            return;
        };
        let body = view.body();
        // Values of another body (mass, spin or shape changed) no longer apply.
        if self
            .env
            .slice
            .as_ref()
            .is_some_and(|s| !Arc::ptr_eq(&s.body, body))
        {
            self.env.slice = None;
            self.env.slice_generation += 1;
        }
        if self
            .env
            .equilibria
            .as_ref()
            .is_some_and(|(b, _)| !Arc::ptr_eq(b, body))
        {
            self.env.equilibria = None;
            self.env.equilibria_generation += 1;
        }
        let (level, label) = self.zero_velocity_level();
        let key = GuidesKey {
            level_m2_s2: level,
            label: label.clone(),
            show_plane: self.env.show_plane,
            show_surface: self.env.show_surface,
            show_hatch: self.env.show_hatch,
            show_equilibria: self.env.show_equilibria,
            slice_generation: self.env.slice_generation,
            equilibria_generation: self.env.equilibria_generation,
            landings_generation: self.landings.generation,
            show_landing_ellipses: self.landings.show_ellipses,
        };
        if self.env.guides_key.as_ref() != Some(&key) {
            let mut guides = build_guides(&self.env, level, label);
            guides.landing_ellipses = self.landings.ellipses().to_vec();
            self.env.guides = Arc::new(guides);
            self.env.guides_key = Some(key);
        }
        if !Arc::ptr_eq(view.guides(), &self.env.guides) {
            self.view = Some(Arc::new(view.with_guides(self.env.guides.clone())));
            self.data_generation += 1;
        }
    }

    /// The Jacobi constant the curves show, with what it belongs to.
    fn zero_velocity_level(&mut self) -> (Option<f64>, String) {
        match self.env.level_source {
            LevelSource::Constant => (
                Some(self.env.constant_m2_s2).filter(|c| c.is_finite()),
                "constant".into(),
            ),
            LevelSource::SelectedLaunch => {
                let Some(i) = self.state.view.selected_launch else {
                    return (None, String::new());
                };
                let (Some(report), Some(view)) = (self.reports.get(i), self.view.as_ref()) else {
                    return (None, String::new());
                };
                let label = report.id.clone();
                if let Some((generation, index, c)) = self.env.launch_level
                    && generation == self.results_identity()
                    && index == i
                {
                    return (Some(c), label);
                }
                let p = Point3::from(report.launch_pos_body_m);
                let v = nalgebra::Vector3::from(report.launch_vel_body_m_s);
                let c = 0.5 * v.norm_squared() + geopotential(view.body(), &p);
                self.env.launch_level = Some((self.results_identity(), i, c));
                (Some(c).filter(|c| c.is_finite()), label)
            }
        }
    }

    /// Identifies the results shown (their allocation), so a launch's constant is computed once.
    fn results_identity(&self) -> u64 {
        Arc::as_ptr(&self.reports) as usize as u64
    }

    /// The environment section of the side panel.
    pub(crate) fn environment_ui(&mut self, ui: &mut Ui) {
        ui.label(RichText::new("Zero-velocity surfaces").strong());
        if self.scenario.sun().is_some() {
            ui.add(
                egui::Label::new(
                    RichText::new(
                        "The scenario's Sun adds forces the Jacobi constant does not include: \
                         these surfaces describe the motion without them.",
                    )
                    .weak(),
                )
                .wrap(),
            );
        }
        let before = self.env.level_source;
        ui.horizontal(|ui| {
            ui.radio_value(
                &mut self.env.level_source,
                LevelSource::SelectedLaunch,
                "Selected launch",
            );
            ui.radio_value(
                &mut self.env.level_source,
                LevelSource::Constant,
                "Jacobi constant",
            );
        });
        // Switching to a typed constant starts from the launch's, so the curves stay put.
        if before == LevelSource::SelectedLaunch
            && self.env.level_source == LevelSource::Constant
            && let Some(GuidesKey {
                level_m2_s2: Some(c),
                ..
            }) = &self.env.guides_key
        {
            self.env.constant_m2_s2 = *c;
        }
        match self.env.level_source {
            LevelSource::SelectedLaunch => {
                let text = match (self.state.view.selected_launch, &self.env.guides_key) {
                    (
                        Some(_),
                        Some(GuidesKey {
                            level_m2_s2: Some(c),
                            label,
                            ..
                        }),
                    ) => format!("{label}: C = {}", fmt_sci(*c, "m²/s²")),
                    _ => "Select a launch in the results or the views.".into(),
                };
                ui.weak(text);
            }
            LevelSource::Constant => {
                ui.horizontal(|ui| {
                    let l = ui.label("C (m²/s²):");
                    NumberField::new(&mut self.env.constant_m2_s2, "jacobi_constant")
                        .range(-1e12, 1e12)
                        .show(ui)
                        .labelled_by(l.id);
                });
            }
        }
        ui.horizontal(|ui| {
            let l = ui.label("Plane:");
            egui::ComboBox::from_id_salt("zv_axis")
                .width(40.0)
                .selected_text(axis_name(self.env.axis))
                .show_ui(ui, |ui| {
                    for a in [Axis::X, Axis::Y, Axis::Z] {
                        ui.selectable_value(&mut self.env.axis, a, axis_name(a));
                    }
                })
                .response
                .labelled_by(l.id);
            let l = ui.label("= (m)");
            NumberField::new(&mut self.env.offset_m, "plane_offset")
                .range(-1e9, 1e9)
                .show(ui)
                .labelled_by(l.id);
        });
        ui.horizontal(|ui| {
            let l = ui.label("Width (Brillouin radii):");
            NumberField::new(&mut self.env.extent_radii, "plane_width")
                .range(0.1, 1000.0)
                .show(ui)
                .labelled_by(l.id);
        });
        ui.horizontal(|ui| {
            let l = ui.label("Cells per side:");
            NumberField::new(&mut self.env.cells, "plane_cells")
                .range(
                    2.0,
                    spinfall_dynamics::zero_velocity::MAX_SLICE_CELLS as f64,
                )
                .show(ui)
                .labelled_by(l.id);
        });
        ui.horizontal(|ui| {
            let label = if self.env.has_slice() {
                "Recompute values"
            } else {
                "Compute values"
            };
            let button = ui
                .add_enabled(self.view.is_some(), egui::Button::new(label))
                .on_hover_text(
                    "Geopotential on the plane grid and at every surface vertex; the curves of any \
                     constant are then drawn from these values at once",
                );
            if button.clicked() {
                self.commands.push(Command::ComputeZeroVelocity);
            }
            job_progress_ui(ui, self.env.slice_job.as_ref());
        });
        ui.horizontal_wrapped(|ui| {
            ui.checkbox(&mut self.env.show_plane, "On the plane");
            ui.checkbox(&mut self.env.show_surface, "On the surface");
            ui.checkbox(&mut self.env.show_hatch, "Hatch forbidden region");
        });
        if self.env.has_slice()
            && self
                .env
                .guides
                .zero_velocity
                .as_ref()
                .is_some_and(|z| z.plane_curves.is_empty() && z.surface_curves.is_empty())
        {
            ui.weak("No curve at this constant on the plane or the surface.");
        }

        ui.separator();
        ui.label(RichText::new("Equilibrium points").strong());
        ui.horizontal(|ui| {
            let label = if self.env.equilibria().is_some() {
                "Search again"
            } else {
                "Find equilibrium points"
            };
            if ui
                .add_enabled(self.view.is_some(), egui::Button::new(label))
                .on_hover_text(
                    "Points above the surface where gravity and the centrifugal acceleration \
                     balance in the rotating frame (resting points on the surface are the slope \
                     map's business)",
                )
                .clicked()
            {
                self.commands.push(Command::FindEquilibria);
            }
            job_progress_ui(ui, self.env.equilibria_job.as_ref());
        });
        ui.checkbox(&mut self.env.show_equilibria, "Mark on the body");
        self.equilibria_table_ui(ui);
    }

    fn equilibria_table_ui(&mut self, ui: &mut Ui) {
        let units = self.state.view.units;
        let Some(set) = self.env.equilibria() else {
            return;
        };
        if set.equilibria.is_empty() {
            ui.weak("None outside the body.");
        } else {
            egui::Grid::new("equilibria_table")
                .striped(true)
                .num_columns(6)
                .show(ui, |ui| {
                    ui.strong("#");
                    ui.strong("lat (°)");
                    ui.strong("lon (°)");
                    ui.strong(format!("r ({})", units.length_symbol()));
                    ui.strong("C (m²/s²)");
                    ui.strong("stability");
                    ui.end_row();
                    for (k, e) in set.equilibria.iter().enumerate() {
                        ui.label(format!("{}", k + 1));
                        ui.label(format!("{:.2}", e.lat_deg));
                        ui.label(format!("{:.2}", e.lon_deg));
                        ui.label(format!(
                            "{:.*}",
                            units.length_decimals(),
                            units.length(e.radius_m)
                        ));
                        ui.label(fmt_sci(e.jacobi_m2_s2, ""));
                        let stability = if e.linearly_stable {
                            "stable"
                        } else {
                            "unstable"
                        };
                        ui.label(stability).on_hover_text(&e.stability.summary);
                        ui.end_row();
                    }
                });
        }
        if let Some(ring) = &set.ring {
            ui.weak(format!(
                "The points lie on a ring of radius {} ({} points): a nearly symmetric body.",
                units.fmt_length(ring.radius_m),
                ring.points
            ));
        }
        for note in &set.notes {
            ui.add(egui::Label::new(RichText::new(note).weak()).wrap());
        }
    }
}

fn axis_name(a: Axis) -> &'static str {
    match a {
        Axis::X => "x",
        Axis::Y => "y",
        Axis::Z => "z",
    }
}

/// A spinner, a progress bar and Cancel for a running job.
fn job_progress_ui<T: Send + 'static>(ui: &mut Ui, job: Option<&Job<T>>) {
    if let Some(job) = job {
        ui.spinner();
        ui.add(
            egui::ProgressBar::new(job.progress.fraction().unwrap_or(0.0))
                .desired_width(90.0)
                .show_percentage(),
        );
        if ui.button("Cancel").clicked() {
            job.cancel();
        }
    }
}

/// The guides for the current values, level and switches.
fn build_guides(env: &Environment, level: Option<f64>, label: String) -> Guides {
    let mut guides = Guides::default();
    if env.show_equilibria
        && let Some(set) = env.equilibria()
    {
        guides.equilibria = equilibrium_marks(set);
    }
    if let (Some(values), Some(c)) = (&env.slice, level) {
        let parts = CurveParts {
            plane: env.show_plane,
            surface: env.show_surface,
            hatch: env.show_hatch,
        };
        guides.zero_velocity = Some(zero_velocity_curves(
            &values.body,
            &values.slice,
            &values.vertex_phi,
            c,
            label,
            parts,
        ));
    }
    guides
}
