//! `spinfall plot`: altitude, speed or Jacobi drift against time, or the landing positions on
//! a latitude/longitude map, as PNG or SVG.

use std::process::ExitCode;

use anyhow::anyhow;
use spinfall_scene::plots::{PlotKind, PlotOptions, plot};

use super::render::{body_view, figure_size, map_field, still_format, write_figure};
use super::scenario::{fly_with_progress, prepare, run_exit_code};
use crate::cli::{PlotArgs, PlotKindArg};
use crate::exit::{CliError, CmdResult};

pub fn run(args: &PlotArgs) -> CmdResult<ExitCode> {
    let format = still_format(&args.out)?;
    let size = figure_size(&args.figure)?;
    let prepared = prepare(&args.scenario)?;
    let reports = fly_with_progress(&prepared);
    let launch = match &args.launch {
        None => None,
        Some(id) => Some(reports.iter().position(|r| &r.id == id).ok_or_else(|| {
            let ids: Vec<&str> = reports.iter().map(|r| r.id.as_str()).collect();
            CliError::input(anyhow!(
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
    let view = body_view(&prepared, kind == PlotKind::Landing)?;
    let opts = PlotOptions {
        kind,
        size,
        theme: args.figure.theme.into(),
        launch,
        field: map_field(args.map),
    };
    let figure = plot(&view, &reports, &opts).map_err(CliError::input)?;
    write_figure(&args.out, format, &figure)?;
    eprintln!(
        "wrote {}x{} plot to {}",
        figure.width_px,
        figure.height_px,
        args.out.display()
    );
    Ok(run_exit_code(&reports))
}
