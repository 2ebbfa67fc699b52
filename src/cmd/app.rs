//! No subcommand: open the desktop app, after making sure the first word was meant as a shape
//! file and that there is a display to open a window on.

use std::path::PathBuf;
use std::process::ExitCode;

use spinfall_gravity::LengthUnit;

use crate::exit::{CliError, CmdResult, NO_DISPLAY};

/// The subcommands, for the "unknown command" message.
const COMMANDS: &str = "info, gravity, fly, map, render";

pub fn run(shape: Option<PathBuf>, unit: LengthUnit) -> CmdResult<ExitCode> {
    if let Some(path) = &shape
        && !path.exists()
    {
        let word = path.to_string_lossy();
        let looks_like_a_command = path.components().count() == 1 && path.extension().is_none();
        return Err(CliError::input(if looks_like_a_command {
            format!(
                "unknown command {}; the commands are {COMMANDS} (spinfall --help), and a shape \
                 model file opens the app",
                spinfall_gravity::text::excerpt(&word)
            )
        } else {
            format!("cannot open shape model {}: no such file", path.display())
        }));
    }
    if !display_available() {
        return Err(CliError::with_code(
            NO_DISPLAY,
            "no display to open the Spinfall window on (neither DISPLAY nor WAYLAND_DISPLAY is \
             set); the subcommands work without one: spinfall --help",
        ));
    }
    let options = spinfall_gui::GuiOptions {
        shape_path: shape,
        unit,
        cache_dir: None,
    };
    spinfall_gui::run(options).map_err(|e| CliError::with_code(NO_DISPLAY, e.to_string()))?;
    Ok(ExitCode::SUCCESS)
}

/// Whether a graphical session is there (X11 or Wayland; other systems always have one).
fn display_available() -> bool {
    if cfg!(any(
        target_os = "linux",
        target_os = "freebsd",
        target_os = "openbsd"
    )) {
        let set = |name: &str| std::env::var_os(name).is_some_and(|v| !v.is_empty());
        set("DISPLAY") || set("WAYLAND_DISPLAY")
    } else {
        true
    }
}
