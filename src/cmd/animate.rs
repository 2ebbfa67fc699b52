//! `spinfall animate`: the views over time as an animated GIF, APNG or numbered PNG frames.

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::AtomicBool;

use anyhow::anyhow;
use spinfall_render::{AnimationFormat, encode_png};
use spinfall_scene::{
    AnimationSettings, FigureOptions, end_time_s, render_frames, write_animation,
};

use super::render::{body_view, figure_size, view_options, views};
use super::scenario::{fly_with_progress, prepare, progress_printer, run_exit_code};
use crate::cli::AnimateArgs;
use crate::exit::{CliError, CmdResult};
use crate::io::write_atomic;

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
                CliError::input(anyhow!(
                    "--out {}: use .gif, .png (animated PNG) or a folder for numbered PNG frames",
                    out.display()
                ))
            }),
    }
}

/// Name of frame `i` in a folder.
fn frame_path(dir: &Path, i: u32) -> PathBuf {
    dir.join(format!("frame_{i:04}.png"))
}

pub fn run(args: &AnimateArgs) -> CmdResult<ExitCode> {
    let target = target(&args.out)?;
    let size = figure_size(&args.figure)?;
    let (w, h, _) = size.resolve().map_err(CliError::input)?;
    // Check what can be checked before flying (the end time needs the flights).
    AnimationSettings {
        frames: args.frames,
        fps: args.fps,
        from_s: args.from_s,
        to_s: args.to_s.unwrap_or(args.from_s).max(args.from_s),
    }
    .check(w, h)
    .map_err(CliError::input)?;
    let prepared = prepare(&args.scenario)?;
    let reports = fly_with_progress(&prepared);
    let view = body_view(&prepared, args.map.is_some())?;
    let options = view_options(args.map, &args.figure);
    let settings = AnimationSettings {
        frames: args.frames,
        fps: args.fps,
        from_s: args.from_s,
        to_s: args.to_s.unwrap_or_else(|| end_time_s(&reports)),
    };
    settings.check(w, h).map_err(CliError::input)?;
    let fig = FigureOptions {
        size,
        views: views(args.view),
        ..FigureOptions::default()
    };
    let progress = progress_printer("rendering", "frames");
    let cancel = AtomicBool::new(false);
    match target {
        Target::File(format) => write_atomic(&args.out, |out| {
            write_animation(
                &view, &reports, &options, &fig, &settings, format, out, &progress, &cancel,
            )?;
            Ok(())
        })?,
        Target::Folder => {
            std::fs::create_dir_all(&args.out).map_err(|e| {
                CliError::output(anyhow!("cannot create folder {}: {e}", args.out.display()))
            })?;
            let mut write_frame = |i: u32, image: &spinfall_render::Image| {
                let path = frame_path(&args.out, i);
                write_atomic(&path, |w| Ok(encode_png(image, &[], w)?))
                    .map_err(|e| format!("{}: {e:?}", path.display()))
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
            .map_err(CliError::output)?;
        }
    }
    eprintln!(
        "wrote {} frames of {w}x{h} to {}",
        settings.frames,
        args.out.display()
    );
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
