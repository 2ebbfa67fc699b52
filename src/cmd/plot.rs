//! `spinfall plot`: altitude, speed or Jacobi drift against time, or the landing positions on
//! a latitude/longitude map, as PNG or SVG.

use std::process::ExitCode;

use spinfall_scene::plots::{PlotKind, PlotOptions, plot};

use super::render::{
    body_view, check_figure_output, figure_size, map_field, prepare_and_fly, write_figure,
};
use super::run_exit_code;
use spinfall_workflow::series::plot_series;

/// Most samples per launch in a time plot (thinned evenly beyond that).
const PLOT_SAMPLES: usize = 2000;
use crate::cli::{PlotArgs, PlotKindArg};
use crate::exit::{CliError, CmdResult, note};

pub fn run(args: &PlotArgs) -> CmdResult<ExitCode> {
    let (out, format) = check_figure_output(&args.out)?;
    let size = figure_size(&args.figure)?;
    let (prepared, reports) = prepare_and_fly(&args.scenario, &args.limits, &args.field)?;
    let launch = match &args.launch {
        None => None,
        Some(id) => Some(reports.iter().position(|r| &r.id == id).ok_or_else(|| {
            let ids: Vec<&str> = reports.iter().map(|r| r.id.as_str()).collect();
            CliError::input(format!(
                "--launch {id:?}: no such launch; the ids are {}",
                ids.join(", ")
            ))
        })?),
    };
    let kind = match args.kind {
        PlotKindArg::Altitude => PlotKind::Altitude,
        PlotKindArg::Speed => PlotKind::Speed,
        PlotKindArg::Jacobi => PlotKind::JacobiDrift,
        PlotKindArg::Landing => PlotKind::Landing,
    };
    let view = body_view(&prepared, kind == PlotKind::Landing, &reports)?;
    let chosen: Vec<usize> = match launch {
        Some(i) => vec![i],
        None => (0..reports.len()).collect(),
    };
    let series = if kind == PlotKind::Landing {
        Vec::new()
    } else {
        plot_series(&prepared.body, &reports, &chosen, PLOT_SAMPLES)
    };
    let opts = PlotOptions {
        kind,
        size,
        theme: args.figure.theme.into(),
        launch,
        field: map_field(args.map),
        // The command line draws in metres and seconds, as its data files are written.
        units: spinfall_scene::DisplayUnits::SI,
    };
    let figure =
        plot(&view, &reports, &series, &opts).map_err(|e| CliError::input(e.to_string()))?;
    write_figure(&out, format, &figure)?;
    note(&format!(
        "wrote {}x{} plot to {}",
        figure.width_px,
        figure.height_px,
        out.describe()
    ));
    Ok(run_exit_code(&reports))
}
