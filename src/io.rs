//! File input and output for the commands: shape and scenario loading, atomic writes.

use std::fs::File;
use std::io::{BufReader, BufWriter, Write};
use std::path::{Path, PathBuf};

use anyhow::Context;
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

/// Writes a file atomically: the content goes to a temporary file in the same folder, which
/// is renamed over `path` only when everything was written and flushed. A failed write leaves
/// no half file behind.
pub fn write_atomic(
    path: &Path,
    write: impl FnOnce(&mut BufWriter<File>) -> anyhow::Result<()>,
) -> CmdResult<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .with_context(|| format!("{} is not a file path", path.display()))
        .map_err(CliError::input)?;
    let tmp = dir.join(format!(
        ".{}.{}.tmp",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| -> anyhow::Result<()> {
        let file =
            File::create(&tmp).with_context(|| format!("cannot create {}", tmp.display()))?;
        let mut w = BufWriter::new(file);
        write(&mut w)?;
        w.flush()?;
        w.get_ref().sync_all()?;
        drop(w);
        std::fs::rename(&tmp, path)
            .with_context(|| format!("cannot rename {} to {}", tmp.display(), path.display()))?;
        Ok(())
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result.map_err(|e| CliError::output(e.context(format!("writing {}", path.display()))))
}
