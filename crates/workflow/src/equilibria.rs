//! The equilibrium points of a prepared body, with progress and cancel.

use spinfall_dynamics::equilibria::{EquilibriumSearch, EquilibriumSet, find_equilibria};
use spinfall_dynamics::{Body, Cancel};

use crate::error::{Result, WorkflowError};

/// The equilibria of `body` outside it (see [`spinfall_dynamics::equilibria`]).
///
/// # Errors
/// [`WorkflowError::Invalid`] for a search setting out of range, [`WorkflowError::Cancelled`]
/// when `cancel` was set.
pub fn compute_equilibria(
    body: &Body,
    search: &EquilibriumSearch,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Result<EquilibriumSet> {
    find_equilibria(body, search, progress, cancel)
        .map_err(|e| WorkflowError::from_dynamics("equilibrium search", e))
}
