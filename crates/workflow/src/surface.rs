//! The surface map of a prepared body, with progress and cancel, and its sunlight layer for a
//! scenario with a Sun.

use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::surface_map::{SurfaceMap, sunlight_map, surface_map};
use spinfall_dynamics::{Body, Cancel};

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
    surface_map(body, progress, cancel).map_err(|e| WorkflowError::from_dynamics("surface map", e))
}

/// The surface map of `body` for `scenario`: [`compute_surface_map`], with the sunlight layer
/// ([`add_sunlight`]) when the scenario has a Sun.
///
/// # Errors
/// [`WorkflowError::Cancelled`] when `cancel` was set.
pub fn compute_scenario_surface_map(
    body: &Body,
    scenario: &Scenario,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Result<SurfaceMap> {
    let mut map = compute_surface_map(body, progress, cancel)?;
    add_sunlight(body, scenario, &mut map, cancel)?;
    Ok(map)
}

/// Adds (or replaces) the sunlight layer of `map` for `scenario`'s Sun and default grain
/// (`environment.particle`), at the scenario's epoch (t = 0, the spin at `phase_deg`); removes
/// it when the scenario has no Sun. Cheap: one ray test per face, no gravity.
///
/// # Errors
/// [`WorkflowError::Cancelled`] when `cancel` was set.
pub fn add_sunlight(
    body: &Body,
    scenario: &Scenario,
    map: &mut SurfaceMap,
    cancel: &Cancel,
) -> Result<()> {
    map.sunlight = match scenario.sun() {
        None => None,
        Some(sun) => Some(
            sunlight_map(
                body,
                map,
                sun,
                scenario.default_particle().as_ref(),
                0.0,
                cancel,
            )
            .map_err(|e| WorkflowError::from_dynamics("surface map, sunlight", e))?,
        ),
    };
    Ok(())
}
