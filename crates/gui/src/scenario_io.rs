//! Session <-> scenario file (the JSON format `spinfall fly` reads).

use std::path::Path;

use crate::app::{Loaded, LoadedShape, SpinfallApp};
use crate::jobs::JobContext;

/// The session as scenario JSON.
pub(crate) fn to_json(_app: &SpinfallApp) -> Result<String, String> {
    Err("scenario files are not available yet".into())
}

/// Load a scenario and its shape model.
pub(crate) fn load(
    _ctx: &JobContext,
    path: &Path,
    _current: Option<LoadedShape>,
) -> Result<Loaded, String> {
    Err(format!("{}: scenario files are not available yet", path.display()))
}
