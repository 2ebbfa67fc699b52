//! File input and output for the commands: shape and scenario loading, atomic writes.

use std::fs::File;
use std::io::{BufReader, Write};
use std::path::{Path, PathBuf};

use spinfall_gravity::{LengthUnit, ShapeModel, Warning};

use crate::exit::{CliError, CmdResult, InputContext};

/// The name that selects the built-in demo body instead of a file.
pub const BUILTIN_SHAPE: &str = "builtin:quillon";
/// The name that selects the built-in example scenario instead of a file.
pub const BUILTIN_SCENARIO: &str = "builtin:example";

/// A loaded shape model, its warnings and where it came from.
pub struct LoadedShape {
    pub shape: ShapeModel,
    pub warnings: Vec<Warning>,
    pub source: String,
}

/// Loads `spec` (a path or [`BUILTIN_SHAPE`]) in `unit`; the demo body is always in km.
pub fn load_shape(spec: &str, unit: LengthUnit, recenter: bool) -> CmdResult<LoadedShape> {
    let (shape, warnings) = if spec == BUILTIN_SHAPE {
        ShapeModel::from_obj(
            spinfall_gravity::demo::OBJ_KM.as_bytes(),
            LengthUnit::Kilometre,
        )
        .input_context("built-in demo body")?
    } else {
        let file = File::open(spec).input_context(format!("cannot open shape model {spec}"))?;
        ShapeModel::from_obj(BufReader::new(file), unit)
            .input_context(format!("shape model {spec}"))?
    };
    let shape = if recenter { shape.recentered() } else { shape };
    Ok(LoadedShape {
        shape,
        warnings,
        source: spec.to_owned(),
    })
}

/// Reads a scenario file's text, or the built-in example; returns the text and the folder that
/// relative shape paths are resolved against.
pub fn read_scenario_text(spec: &str) -> CmdResult<(String, PathBuf)> {
    if spec == BUILTIN_SCENARIO {
        let text = spinfall_dynamics::scenario::Scenario::builtin_example()
            .to_json_string_pretty()
            .map_err(CliError::output)?;
        return Ok((text, PathBuf::from(".")));
    }
    let text =
        std::fs::read_to_string(spec).input_context(format!("cannot read scenario file {spec}"))?;
    let dir = Path::new(spec)
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default();
    Ok((text, dir))
}

/// Writes a file atomically through the app's writer ([`spinfall_gui::write_atomic`]: temporary
/// file in the same folder, renamed over `path` only when complete), mapping failure to exit 4.
pub fn write_atomic(
    path: &Path,
    write: impl FnOnce(&mut dyn Write) -> anyhow::Result<()>,
) -> CmdResult<()> {
    spinfall_gui::write_atomic(path, |w| write(w).map_err(|e| format!("{e:#}")))
        .map_err(|e| CliError::output(anyhow::anyhow!("writing {}: {e}", path.display())))
}
