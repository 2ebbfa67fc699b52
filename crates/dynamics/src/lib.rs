//! Flights of particles over a spinning small body: the dynamics core of Spinfall.
//!
//! What it is: a [`Body`] (shape + homogeneous polyhedron gravity + uniform [`Spin`]) with the
//! transforms between its body-fixed and inertial frames; launch [`site::Site`]s with their
//! east-north-up frames and planetocentric coordinates; launches ([`launch::LaunchSpec`], fans,
//! seeded dispersion sets, explicit states) expanding to [`launch::LaunchState`]s; an adaptive
//! Dormand–Prince 8(5,3) integrator with dense output ([`dop853`]); flights integrated in both
//! frames with impact location, bouncing, escape and Jacobi-integral monitoring ([`fly`],
//! [`fly_all`] → [`FlightReport`]), optionally with the Sun's radiation pressure, shadow and
//! tide ([`sunlight`]); per-face surface maps ([`surface_map::surface_map`]); the equilibrium
//! points of the rotating body with their linear stability ([`equilibria::find_equilibria`]);
//! zero-velocity surfaces of the Jacobi integral ([`zero_velocity`]); the
//! versioned JSON scenario format ([`scenario::Scenario`], documented in `SCENARIO.md`).
//!
//! What it is not: no GUI, no rendering, no file I/O and no exporters — scenarios parse from
//! `&str` or bytes, shape paths are returned to the caller; files are opened and written by the
//! workflow layer (`spinfall-workflow`). Long work takes a progress callback
//! and a cancel flag. Spinfall is a research and planning tool, **not flight-certified**.
//!
//! ```
//! use std::sync::{Arc, atomic::AtomicBool};
//! use nalgebra::Vector3;
//! use spinfall_dynamics::{fly, Body, FlightSettings, Outcome, Spin};
//! use spinfall_dynamics::launch::LaunchSpec;
//! use spinfall_dynamics::site::{NormalMode, Site};
//! use spinfall_gravity::{generate, MassSpec, ShapeModel};
//!
//! let shape = Arc::new(ShapeModel::new(generate::icosphere(1000.0, 2)).unwrap().0);
//! let spin = Spin::from_hours(6.0, Vector3::z_axis(), 0.0).unwrap();
//! let body = Body::new("Pebble", shape, MassSpec::DensityKgM3(2000.0), spin).unwrap();
//! let site = Site::from_lat_lon(&body, 10.0, 40.0, NormalMode::Face).unwrap();
//! let launch = LaunchSpec {
//!     id: "hop".into(), site, speed_m_s: 0.2, azimuth_deg: 90.0, elevation_deg: 45.0,
//!     start_altitude_m: 0.05,
//! }
//! .state()
//! .unwrap();
//! let report = fly(&body, &launch, &FlightSettings::default(), &AtomicBool::new(false));
//! assert_eq!(report.outcome, Outcome::Landed);
//! assert!(report.frame_agreement_m < 0.01);
//! ```
#![warn(missing_docs)]

mod body;
pub mod contact;
pub mod dop853;
pub mod equilibria;
mod error;
mod flight;
mod gravity_model;
pub mod launch;
mod roots;
pub mod scenario;
pub mod site;
pub mod statistics;
pub mod sunlight;
pub mod surface_map;
pub mod targeting;
pub mod zero_velocity;

pub use body::{Body, BodyFigures, Spin, SpinAxis};
pub use error::{DynamicsError, Result};
pub use flight::{
    BounceModel, Cancel, Contact, FlightReport, FlightSettings, IntegratorSettings, LandingPoint,
    Outcome, SamplingSettings, ShadowEvent, TrajectorySample, fly, fly_all,
};
pub use gravity_model::{GravityModel, PointMass};
