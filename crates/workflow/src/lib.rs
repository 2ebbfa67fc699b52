//! The one workflow under Spinfall's two front ends, the command line and the desktop app.
//!
//! What it is: everything between a user's files and the physics, done once for both front
//! ends (as a library's `ops` layer under its command-line skin):
//!
//! - opening shape models from paths, bytes or the built-in demo body, in their unit and
//!   recentred or not ([`shape`]);
//! - reading scenario files and writing them elsewhere with their shape path still right
//!   ([`scenario_file`]);
//! - turning a scenario into a [`prepare::PreparedRun`] (body, launches, settings) after checking
//!   the launch limit and the memory estimate ([`limits`]), with the gravity method chosen in one
//!   place ([`gravity_method`]);
//! - flying it with progress and cancel ([`run::run`], or [`run::run_keeping_finished`] to keep
//!   the launches that ended before a cancel), the surface map ([`surface`]) and its on-disk
//!   store beside the interpolated fields ([`map_cache`]), the equilibrium points
//!   ([`equilibria`]), the geopotential on planes and the zero-velocity curves
//!   ([`zero_velocity`]), plot series ([`series`]) and pictures ([`images`]);
//! - sharded runs: a deterministic share of the launches ([`shard`]), the shards merged into
//!   the files one run writes ([`merge`]), and the driver script of a Slurm job array
//!   ([`slurm`]);
//! - every exporter ([`export`]: results JSON and CSV, trajectories CSV, surface map CSV, field
//!   samples, shape figures, equilibria JSON) and the one module that writes files
//!   ([`output`]: exclusive
//!   temporary files, renames only when a whole set is complete, manifests, a lock per folder,
//!   devices and symlinks respected, standard output).
//!
//! What it is not: no argument parsing, no exit codes, no GUI, no physics of its own (that is
//! `spinfall-gravity` and `spinfall-dynamics`), no rendering of its own (`spinfall-scene`,
//! `spinfall-render`). Errors are typed ([`WorkflowError`], with an [`ErrorKind`] for exit
//! codes); cancellation is [`WorkflowError::Cancelled`].
//!
//! Spinfall is a research and planning tool, **not flight-certified**.
//!
//! ```no_run
//! use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare};
//! use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};
//! use spinfall_workflow::output::{OutputFolder, RunInfo};
//! # fn main() -> spinfall_workflow::Result<()> {
//! let folder = OutputFolder::prepare("out".as_ref())?; // checked before the work
//! let loaded = read_scenario(&ScenarioSource::from_spec("builtin:example"))?;
//! let prepared = prepare(loaded, &PrepareOptions::new(Purpose::Fly))?;
//! let cancel = std::sync::atomic::AtomicBool::new(false);
//! let done = spinfall_workflow::run::run(&prepared, &|_, _| {}, &cancel)?;
//! let info = spinfall_workflow::run_files::run_info(Some(prepared.scenario()), &prepared.field);
//! spinfall_workflow::run_files::write_run_folder(&folder, &done.reports, &info)?;
//! # Ok(())
//! # }
//! ```
#![warn(missing_docs)]

pub mod equilibria;
mod error;
pub mod export;
pub mod field_cache;
pub mod gravity_method;
pub mod images;
pub mod limits;
pub mod map_cache;
pub mod merge;
pub mod output;
pub mod prepare;
pub mod results_file;
pub mod run;
pub mod run_files;
pub mod scenario_file;
pub mod series;
pub mod shape;
pub mod shard;
pub mod slurm;
pub mod statistics;
pub mod surface;
pub mod zero_velocity;

pub use error::{ErrorKind, Result, WorkflowError};

/// The caution that goes with every result file and picture.
pub const CAUTION: &str = "Spinfall is for research and planning, not flight-certified.";
