//! `spinfall animate`: the views over time as an animated GIF, APNG or numbered PNG frames.

use std::path::Path;
#[cfg(test)]
use std::path::PathBuf;
use std::process::ExitCode;
use std::sync::atomic::AtomicBool;

use spinfall_render::AnimationFormat;
use spinfall_scene::{
    AnimationSettings, FigureOptions, end_time_s, render_frames, write_animation,
};
use spinfall_workflow::WorkflowError;
use spinfall_workflow::images::write_png;
use spinfall_workflow::output::{OutputFolder, OutputTarget, check_file, write_file};

use super::render::{body_view, figure_size, prepare_and_fly, view_options, views};
use super::{progress_printer, run_exit_code};
use crate::cli::AnimateArgs;
use crate::exit::{CliError, CmdResult, OUTPUT_FAILED, note};

/// Where the frames go.
enum Target {
    File(AnimationFormat),
    Folder,
}

fn target(out: &Path) -> CmdResult<Target> {
    let text = out.to_string_lossy();
    if out.is_dir() || text.ends_with('/') || text.ends_with(std::path::MAIN_SEPARATOR) {
        return Ok(Target::Folder);
    }
    match out.extension().and_then(|e| e.to_str()) {
        None => Ok(Target::Folder),
        Some(ext) => AnimationFormat::from_extension(ext)
            .map(Target::File)
            .ok_or_else(|| {
                CliError::input(format!(
                    "--out {}: use .gif, .png (animated PNG) or a folder for numbered PNG frames",
                    out.display()
                ))
            }),
    }
}

/// Name of frame `i` in a folder.
fn frame_name(i: u32) -> String {
    format!("frame_{i:04}.png")
}

/// Path of frame `i` in a folder.
#[cfg(test)]
fn frame_path(dir: &Path, i: u32) -> PathBuf {
    dir.join(frame_name(i))
}

pub fn run(args: &AnimateArgs) -> CmdResult<ExitCode> {
    let target = target(&args.out)?;
    let size = figure_size(&args.figure)?;
    let (w, h, _) = size.resolve().map_err(|e| CliError::input(e.to_string()))?;
    // Check what can be checked before flying (the end time needs the flights).
    AnimationSettings {
        frames: args.frames,
        fps: args.fps,
        from_s: args.from_s,
        to_s: args.to_s.unwrap_or(args.from_s).max(args.from_s),
    }
    .check(w, h)
    .map_err(|e| CliError::input(e.to_string()))?;
    // The outputs are checked before any work too.
    let file = match target {
        Target::File(_) => Some(check_file(&OutputTarget::from_arg(&args.out))?),
        Target::Folder => None,
    };
    let folder = match target {
        Target::Folder => Some(OutputFolder::prepare(&args.out)?),
        Target::File(_) => None,
    };
    let (prepared, reports) = prepare_and_fly(&args.scenario, &args.limits, &args.field)?;
    let view = body_view(&prepared, args.map.is_some(), &reports)?;
    let options = view_options(args.map, &args.figure);
    let settings = AnimationSettings {
        frames: args.frames,
        fps: args.fps,
        from_s: args.from_s,
        to_s: args.to_s.unwrap_or_else(|| end_time_s(&reports)),
    };
    settings
        .check(w, h)
        .map_err(|e| CliError::input(e.to_string()))?;
    let fig = FigureOptions {
        size,
        views: views(args.view),
        ..FigureOptions::default()
    };
    let progress = progress_printer("rendering", "frames");
    let cancel = AtomicBool::new(false);
    match (target, file, folder) {
        (Target::File(format), Some(file), _) => {
            file.write(|out| {
                write_animation(
                    &view, &reports, &options, &fig, &settings, format, out, &progress, &cancel,
                )
                .map_err(|e| WorkflowError::output_msg(&args.out, e.to_string()))
            })?;
        }
        (_, _, Some(folder)) => {
            // Each frame written completely as it is rendered (never all held in memory).
            let mut write_frame = |i: u32, image: &spinfall_render::Image| {
                let path = folder.path().join(frame_name(i));
                write_file(&OutputTarget::Path(path.clone()), |w| {
                    write_png(w, image, &[])
                })
                .map(|_| ())
                .map_err(|e| e.to_string())
            };
            render_frames(
                &view,
                &reports,
                &options,
                &fig,
                &settings,
                &mut write_frame,
                &progress,
                &cancel,
            )
            .map_err(|e| CliError::with_code(OUTPUT_FAILED, e.to_string()))?;
        }
        _ => return Err(CliError::input("no output")),
    }
    note(&format!(
        "wrote {} frames of {w}x{h} to {}",
        settings.frames,
        args.out.display()
    ));
    Ok(run_exit_code(&reports))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn targets_come_from_the_path() {
        assert!(matches!(
            target(Path::new("a.gif")),
            Ok(Target::File(AnimationFormat::Gif))
        ));
        assert!(matches!(
            target(Path::new("a.PNG")),
            Ok(Target::File(AnimationFormat::Apng))
        ));
        assert!(matches!(target(Path::new("frames/")), Ok(Target::Folder)));
        assert!(matches!(target(Path::new("frames")), Ok(Target::Folder)));
        assert!(target(Path::new("a.mp4")).is_err());
        assert_eq!(
            frame_path(Path::new("d"), 7),
            Path::new("d").join("frame_0007.png")
        );
    }
}
