//! Zero-velocity surfaces for both front ends: the geopotential on a plane through a prepared
//! body, the Jacobi constant of one of its launches, and the surface curves, with progress and
//! cancel. The physics is `spinfall_dynamics::zero_velocity`; this module maps its errors and
//! finds launches by id.

use spinfall_dynamics::launch::LaunchState;
use spinfall_dynamics::zero_velocity::{PlaneSlice, SliceSpec, plane_slice, vertex_geopotential};
use spinfall_dynamics::{Body, Cancel, DynamicsError};

use crate::error::{Result, WorkflowError};

fn map_error(what: &str, e: DynamicsError) -> WorkflowError {
    match e {
        DynamicsError::Cancelled => WorkflowError::Cancelled,
        other => WorkflowError::Invalid(format!("{what}: {other}")),
    }
}

/// The geopotential on the plane grid of `spec`.
///
/// # Errors
/// [`WorkflowError::Invalid`] for a bad grid (named), [`WorkflowError::Cancelled`] when `cancel`
/// was set.
pub fn compute_slice(
    body: &Body,
    spec: &SliceSpec,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Result<PlaneSlice> {
    plane_slice(body, spec, progress, cancel).map_err(|e| map_error("slice", e))
}

/// The geopotential at every vertex of the body's mesh (for the zero-velocity curves on the
/// surface).
///
/// # Errors
/// [`WorkflowError::Cancelled`] when `cancel` was set.
pub fn compute_vertex_geopotential(
    body: &Body,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Result<Vec<f64>> {
    vertex_geopotential(body, progress, cancel).map_err(|e| map_error("surface geopotential", e))
}

/// The launch with id `id` among `launches`.
///
/// # Errors
/// [`WorkflowError::Invalid`] naming the id and a few of those that exist.
pub fn find_launch<'a>(launches: &'a [LaunchState], id: &str) -> Result<&'a LaunchState> {
    launches.iter().find(|l| l.id == id).ok_or_else(|| {
        let known: Vec<&str> = launches.iter().take(8).map(|l| l.id.as_str()).collect();
        let more = if launches.len() > known.len() {
            format!(" and {} more", launches.len() - known.len())
        } else {
            String::new()
        };
        WorkflowError::Invalid(format!(
            "no launch {id:?} in the scenario (launches: {}{more})",
            if known.is_empty() {
                "none".to_string()
            } else {
                known.join(", ")
            }
        ))
    })
}
