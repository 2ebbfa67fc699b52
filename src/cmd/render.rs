//! `spinfall render`: fly a scenario and draw the body-fixed and/or inertial view to a PNG.

use std::process::ExitCode;
use std::sync::Arc;

use spinfall_dynamics::surface_map::SurfaceField;
use spinfall_scene::{BodyView, ViewOptions, end_time_s};
use spinfall_workflow::images::{
    ImageRequest, ViewChoice, check_size, parse_size, png_summary, render_image, write_png,
};
use spinfall_workflow::output::{OutputTarget, check_file};
use spinfall_workflow::prepare::{PrepareOptions, Purpose, prepare_with_hooks};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};
use spinfall_workflow::surface::compute_surface_map;

use super::{announce, fly_with_progress, limits, run_exit_code};
use crate::cli::{MapArg, RenderArgs, ViewArg};
use crate::exit::{CliError, CmdResult, note};

pub fn run(args: &RenderArgs) -> CmdResult<ExitCode> {
    // Everything about the output is checked before any work.
    let view_choice = match args.view {
        ViewArg::Body => ViewChoice::BodyFixed,
        ViewArg::Inertial => ViewChoice::Inertial,
        ViewArg::Both => ViewChoice::Both,
    };
    let (width_px, height_px) = parse_size(&args.size)?;
    check_size(view_choice, width_px, height_px)
        .map_err(|e| CliError::input(format!("--size: {e}")))?;
    if let Some(t) = args.time
        && !(t.is_finite() && t >= 0.0)
    {
        return Err(CliError::input(format!(
            "--time must be a number of seconds >= 0, got {t}"
        )));
    }
    let out = check_file(&OutputTarget::from_arg(&args.out))?;

    let loaded = read_scenario(&ScenarioSource::from_spec(&args.scenario))?;
    // Without launches, only the body is drawn.
    let purpose = if loaded.scenario.launches.is_empty() {
        Purpose::BodyOnly
    } else {
        Purpose::Fly
    };
    let options = PrepareOptions {
        limits: limits(&args.limits),
        gravity: super::gravity_options(&args.field),
        ..PrepareOptions::new(purpose)
    };
    let prepared = prepare_with_hooks(loaded, &options, &super::field_hooks())?;
    let reports = if purpose == Purpose::Fly {
        announce(&prepared.estimate);
        fly_with_progress(&prepared)?.reports
    } else {
        Vec::new()
    };
    let mut view = BodyView::new(Arc::clone(&prepared.body));
    let field = args.map.map(|m| match m {
        MapArg::Slope => SurfaceField::Slope,
        MapArg::Geopotential => SurfaceField::Geopotential,
        MapArg::EffectiveG => SurfaceField::EffectiveGravity,
        MapArg::EscapeSpeed => SurfaceField::EscapeSpeedNormal,
    });
    if field.is_some() {
        let cancel = spinfall_dynamics::Cancel::new(false);
        let map = compute_surface_map(&prepared.body, &|_, _| {}, &cancel)?;
        view.set_map(Some(Arc::new(map)));
    }
    let t_s = args.time.unwrap_or_else(|| end_time_s(&reports));
    let request = ImageRequest {
        view: view_choice,
        width_px,
        height_px,
        t_s,
        options: ViewOptions {
            map: field,
            ..ViewOptions::default()
        },
        cameras: [None, None],
        sites: Vec::new(),
    };
    let image = render_image(&view, &reports, &request)?;
    let title = prepared
        .scenario()
        .name
        .clone()
        .unwrap_or_else(|| prepared.body.name.clone());
    let chunks = png_summary(&title, &view, reports.len(), t_s);
    out.write(|w| write_png(w, &image, &chunks))?;
    note(&format!(
        "wrote {}x{} image to {}",
        image.width,
        image.height,
        out.describe()
    ));
    Ok(run_exit_code(&reports))
}
