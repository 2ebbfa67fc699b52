//! placeholder
#![warn(missing_docs)]
mod error;
pub mod dop853;
mod gravity_model;
mod body;
pub mod site;
pub mod launch;
pub mod surface_map;
pub mod flight;
mod roots;
pub use error::{DynamicsError, Result};
pub use gravity_model::{GravityModel, PointMass};
pub use body::{Body, BodyFigures, Spin, SpinAxis};
pub use flight::*;
