//! `spinfall render`: fly a scenario and draw the body-fixed and/or inertial view as a figure,
//! PNG or SVG by the output's extension. Also the figure options shared with `animate` and
//! `plot`.

use std::path::Path;
use std::process::ExitCode;
use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use anyhow::anyhow;
use spinfall_dynamics::surface_map::{SurfaceField, surface_map};
use spinfall_render::{Figure, FigureSize, encode_png, write_svg};
use spinfall_scene::{
    BodyView, FigureOptions, Output, ViewOptions, Views, build_figure, end_time_s,
};

use super::scenario::{Prepared, fly_with_progress, prepare, run_exit_code};
use crate::cli::{FigureArgs, MapArg, RenderArgs, ViewArg};
use crate::exit::{CliError, CmdResult};
use crate::io::write_atomic;

/// File formats of a still figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum StillFormat {
    Png,
    Svg,
}

/// The format for `path`'s extension, or a clear error.
pub(super) fn still_format(path: &Path) -> CmdResult<StillFormat> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    match ext.as_str() {
        "png" => Ok(StillFormat::Png),
        "svg" => Ok(StillFormat::Svg),
        "pdf" => Err(CliError::input(anyhow!(
            "--out {}: PDF is not written (no PDF crate met the bar for embedded images and \
             text); write .svg and convert it, e.g. with Inkscape or rsvg-convert",
            path.display()
        ))),
        _ => Err(CliError::input(anyhow!(
            "--out {}: the extension must be .png or .svg",
            path.display()
        ))),
    }
}

/// The figure size from `--size` and `--dpi`.
pub(super) fn figure_size(args: &FigureArgs) -> CmdResult<FigureSize> {
    FigureSize::parse(&args.size, args.dpi).map_err(CliError::input)
}

pub(super) fn map_field(m: MapArg) -> SurfaceField {
    match m {
        MapArg::Slope => SurfaceField::Slope,
        MapArg::Geopotential => SurfaceField::Geopotential,
        MapArg::EffectiveG => SurfaceField::EffectiveGravity,
        MapArg::EscapeSpeed => SurfaceField::EscapeSpeedNormal,
    }
}

/// What the views show: the map and the theme from the command line.
pub(super) fn view_options(map: Option<MapArg>, figure: &FigureArgs) -> ViewOptions {
    ViewOptions {
        map: map.map(map_field),
        theme: figure.theme.into(),
        ..ViewOptions::default()
    }
}

pub(super) fn views(v: ViewArg) -> Views {
    match v {
        ViewArg::Both => Views::Both,
        ViewArg::Body => Views::BodyFixed,
        ViewArg::Inertial => Views::Inertial,
    }
}

/// The body view with the surface map attached when `field` is shown.
pub(super) fn body_view(prepared: &Prepared, with_map: bool) -> CmdResult<BodyView> {
    let mut view = BodyView::new(Arc::clone(&prepared.body));
    if with_map {
        let cancel = AtomicBool::new(false);
        let map = surface_map(&prepared.body, &|_, _| {}, &cancel).map_err(CliError::output)?;
        view.set_map(Some(Arc::new(map)));
    }
    Ok(view)
}

/// Metadata of the scenario, body and spin, for the figure's file.
pub(super) fn scenario_metadata(prepared: &Prepared, launches: usize) -> Vec<(String, String)> {
    let spin = &prepared.body.spin;
    vec![
        (
            "Title".into(),
            prepared
                .scenario
                .name
                .clone()
                .unwrap_or_else(|| prepared.body.name.clone()),
        ),
        (
            "Body".into(),
            format!(
                "{} ({} faces)",
                prepared.body.name,
                prepared.body.shape.face_count()
            ),
        ),
        (
            "Spin".into(),
            format!(
                "period {:.6} h, axis [{:.6}, {:.6}, {:.6}], phase {:.3} deg",
                spin.period_s / 3600.0,
                spin.axis_body.x,
                spin.axis_body.y,
                spin.axis_body.z,
                spin.phase_rad.to_degrees()
            ),
        ),
        ("Launches".into(), launches.to_string()),
    ]
}

/// Writes a still figure as PNG (raster, metadata in text chunks) or SVG.
pub(super) fn write_figure(path: &Path, format: StillFormat, figure: &Figure) -> CmdResult<()> {
    match format {
        StillFormat::Png => {
            let image = figure.to_image();
            let chunks: Vec<(&str, &str)> = figure
                .metadata
                .iter()
                .map(|(k, v)| (k.as_str(), v.as_str()))
                .collect();
            write_atomic(path, |w| Ok(encode_png(&image, &chunks, w)?))
        }
        StillFormat::Svg => write_atomic(path, |w| Ok(write_svg(figure, w)?)),
    }
}

pub fn run(args: &RenderArgs) -> CmdResult<ExitCode> {
    let format = still_format(&args.out)?;
    let size = figure_size(&args.figure)?;
    if let Some(t) = args.time
        && !(t.is_finite() && t >= 0.0)
    {
        return Err(CliError::input(anyhow!(
            "--time must be a number of seconds >= 0, got {t}"
        )));
    }
    let color_range = match (args.color_min, args.color_max) {
        (Some(lo), Some(hi)) => {
            if args.map.is_none() {
                return Err(CliError::input(anyhow!(
                    "--color-min/--color-max need --map (they set the map's colour range)"
                )));
            }
            if !(lo.is_finite() && hi.is_finite() && hi > lo) {
                return Err(CliError::input(anyhow!(
                    "--color-min {lo} must be below --color-max {hi}"
                )));
            }
            Some([lo, hi])
        }
        _ => None,
    };
    let prepared = prepare(&args.scenario)?;
    let reports = fly_with_progress(&prepared);
    let view = body_view(&prepared, args.map.is_some())?;
    let options = ViewOptions {
        color_range,
        ..view_options(args.map, &args.figure)
    };
    let t_s = args.time.unwrap_or_else(|| end_time_s(&reports));
    let fig = FigureOptions {
        size,
        views: views(args.view),
        fit_body: args.fit_body,
        output: match format {
            StillFormat::Png => Output::Raster,
            StillFormat::Svg => Output::Vector,
        },
        ..FigureOptions::default()
    };
    let mut figure = build_figure(&view, &reports, t_s, &options, &fig).map_err(CliError::input)?;
    figure
        .metadata
        .extend(scenario_metadata(&prepared, reports.len()));
    write_figure(&args.out, format, &figure)?;
    eprintln!(
        "wrote {}x{} figure to {}",
        figure.width_px,
        figure.height_px,
        args.out.display()
    );
    Ok(run_exit_code(&reports))
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn formats_come_from_the_extension() {
        assert_eq!(
            still_format(Path::new("a/b.PNG")).unwrap(),
            StillFormat::Png
        );
        assert_eq!(still_format(Path::new("b.svg")).unwrap(), StillFormat::Svg);
        for bad in ["b.pdf", "b.jpg", "b"] {
            assert!(still_format(Path::new(bad)).is_err(), "{bad}");
        }
    }
}
