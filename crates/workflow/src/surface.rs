//! The surface map of a prepared body, with progress and cancel.

use spinfall_dynamics::surface_map::{SurfaceMap, surface_map};
use spinfall_dynamics::{Body, Cancel, DynamicsError};

use crate::error::{Result, WorkflowError};

/// The per-face surface map of `body`.
///
/// # Errors
/// [`WorkflowError::Cancelled`] when `cancel` was set.
pub fn compute_surface_map(
    body: &Body,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Result<SurfaceMap> {
    surface_map(body, progress, cancel).map_err(|e| match e {
        DynamicsError::Cancelled => WorkflowError::Cancelled,
        other => WorkflowError::Invalid(format!("surface map: {other}")),
    })
}
