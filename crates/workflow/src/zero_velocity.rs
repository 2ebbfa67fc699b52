//! Zero-velocity surfaces for both front ends: the geopotential on a plane through a prepared
//! body, the Jacobi constant of one of its launches, and the surface curves, with progress and
//! cancel. The physics is `spinfall_dynamics::zero_velocity`; this module maps its errors and
//! finds launches by id.

use spinfall_dynamics::launch::LaunchState;
use spinfall_dynamics::zero_velocity::{PlaneSlice, SliceSpec, plane_slice, vertex_geopotential};
use spinfall_dynamics::{Body, Cancel};

use crate::error::{Result, WorkflowError};

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
    plane_slice(body, spec, progress, cancel).map_err(|e| WorkflowError::from_dynamics("slice", e))
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
    vertex_geopotential(body, progress, cancel)
        .map_err(|e| WorkflowError::from_dynamics("surface geopotential", e))
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

/// Which parts of the zero-velocity curves to draw.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CurveParts {
    /// The level curves on the plane.
    pub plane: bool,
    /// Where the zero-velocity surface meets the body surface.
    pub surface: bool,
    /// A hatch over the forbidden part of the plane.
    pub hatch: bool,
}

impl CurveParts {
    /// Every part.
    pub const ALL: CurveParts = CurveParts {
        plane: true,
        surface: true,
        hatch: true,
    };
}

/// The zero-velocity curves of the Jacobi constant `level_m2_s2` as guides for the body-fixed
/// view (the app's and the figures'), from the plane values `slice` and the vertex values
/// `vertex_phi` of `body`; `label` names the constant in the legend.
pub fn zero_velocity_curves(
    body: &Body,
    slice: &PlaneSlice,
    vertex_phi: &[f64],
    level_m2_s2: f64,
    label: String,
    parts: CurveParts,
) -> spinfall_scene::ZeroVelocityCurves {
    let to_arrays = |curves: Vec<Vec<nalgebra::Point3<f64>>>| -> Vec<Vec<[f64; 3]>> {
        curves
            .into_iter()
            .map(|c| c.into_iter().map(|p| [p.x, p.y, p.z]).collect())
            .collect()
    };
    let plane_curves = if parts.plane {
        to_arrays(slice.contour(level_m2_s2))
    } else {
        Vec::new()
    };
    let surface_curves = if parts.surface {
        to_arrays(spinfall_dynamics::zero_velocity::surface_contour(
            body,
            vertex_phi,
            level_m2_s2,
        ))
    } else {
        Vec::new()
    };
    let forbidden_hatch = if parts.hatch {
        // About 50 hatch lines across the plane, whatever its grid.
        let every = (slice.spec.cells / 50).max(2);
        slice
            .hatch(level_m2_s2, every)
            .into_iter()
            .map(|[a, b]| [[a.x, a.y, a.z], [b.x, b.y, b.z]])
            .collect()
    } else {
        Vec::new()
    };
    spinfall_scene::ZeroVelocityCurves {
        label,
        plane_curves,
        surface_curves,
        forbidden_hatch,
    }
}

/// The equilibrium points of `set` as markers for the body-fixed view.
pub fn equilibrium_marks(
    set: &spinfall_dynamics::equilibria::EquilibriumSet,
) -> Vec<spinfall_scene::EquilibriumMark> {
    set.equilibria
        .iter()
        .map(|e| spinfall_scene::EquilibriumMark {
            pos_body_m: e.position_m,
            linearly_stable: e.linearly_stable,
        })
        .collect()
}
