//! `spinfall render`: fly a scenario and draw the body-fixed and/or inertial view as a figure,
//! PNG or SVG by the output's extension. Also the figure options shared with `animate` and
//! `plot`.

use std::path::Path;
use std::process::ExitCode;
use std::sync::Arc;

use spinfall_dynamics::FlightReport;
use spinfall_dynamics::equilibria::EquilibriumSearch;
use spinfall_dynamics::surface_map::SurfaceField;
use spinfall_dynamics::zero_velocity::{SlicePlane, SliceSpec, jacobi_constant};
use spinfall_render::{Figure, FigureSize, write_svg};
use spinfall_scene::{
    BodyView, FigureOptions, Guides, Output, ViewOptions, Views, build_figure, end_time_s,
};
use spinfall_workflow::WorkflowError;
use spinfall_workflow::equilibria::compute_equilibria;
use spinfall_workflow::images::write_png;
use spinfall_workflow::output::{CheckedFile, OutputTarget, check_file};
use spinfall_workflow::prepare::{PrepareOptions, PreparedRun, Purpose, prepare_with_hooks};
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};
use spinfall_workflow::statistics::{
    StatisticsRequest, compute_statistics, landing_density_layer, landing_ellipse_guides,
};
use spinfall_workflow::surface::compute_surface_map;
use spinfall_workflow::zero_velocity::{
    CurveParts, compute_slice, compute_vertex_geopotential, equilibrium_marks, find_launch,
    zero_velocity_curves,
};

use super::{
    announce, announce_field, field_hooks, fly_with_progress, gravity_options, limits,
    run_exit_code,
};
use crate::cli::{FieldArgs, FigureArgs, LimitArgs, MapArg, RenderArgs, ViewArg};
use crate::exit::{CliError, CmdResult, note};

/// File formats of a still figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum StillFormat {
    Png,
    Svg,
}

/// The format for `path`'s extension (`-`, standard output, is PNG), or a clear error.
pub(super) fn still_format(path: &Path) -> CmdResult<StillFormat> {
    if path == Path::new("-") {
        return Ok(StillFormat::Png);
    }
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    match ext.as_str() {
        "png" => Ok(StillFormat::Png),
        "svg" => Ok(StillFormat::Svg),
        "pdf" => Err(CliError::input(format!(
            "--out {}: PDF is not written (no PDF crate met the bar for embedded images and \
             text); write .svg and convert it, e.g. with Inkscape or rsvg-convert",
            path.display()
        ))),
        _ => Err(CliError::input(format!(
            "--out {}: the extension must be .png or .svg (or - for a PNG on standard output)",
            path.display()
        ))),
    }
}

/// Smallest figure that holds the views with their titles, colour bar and legend, pixels: a
/// size below is refused before any work (the layout itself, after the flights, refuses what
/// still does not fit).
const MIN_FIGURE_PX: (u32, u32) = (160, 90);

/// The figure size from `--size` and `--dpi`, checked against [`MIN_FIGURE_PX`].
pub(super) fn figure_size(args: &FigureArgs) -> CmdResult<FigureSize> {
    let size =
        FigureSize::parse(&args.size, args.dpi).map_err(|e| CliError::input(e.to_string()))?;
    let (w, h, _) = size.resolve().map_err(|e| CliError::input(e.to_string()))?;
    if w < MIN_FIGURE_PX.0 || h < MIN_FIGURE_PX.1 {
        return Err(CliError::input(format!(
            "--size {}: a {w}x{h} px figure is too small for the views with their titles, colour bar and legend (at least {}x{} px)",
            args.size, MIN_FIGURE_PX.0, MIN_FIGURE_PX.1
        )));
    }
    Ok(size)
}

pub(super) fn map_field(m: MapArg) -> SurfaceField {
    match m {
        MapArg::Slope => SurfaceField::Slope,
        MapArg::Geopotential => SurfaceField::Geopotential,
        MapArg::EffectiveG => SurfaceField::EffectiveGravity,
        MapArg::EscapeSpeed => SurfaceField::EscapeSpeedNormal,
        MapArg::LandingDensity => SurfaceField::LandingDensity,
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

/// A scenario prepared through the workflow (gravity by the field options) and flown when it
/// has launches: the run and its reports.
pub(super) fn prepare_and_fly(
    scenario: &str,
    limit_args: &LimitArgs,
    field_args: &FieldArgs,
) -> CmdResult<(PreparedRun, Vec<FlightReport>)> {
    let loaded = read_scenario(&ScenarioSource::from_spec(scenario))?;
    // Without launches, only the body is drawn.
    let purpose = if loaded.scenario.launches.is_empty() {
        Purpose::BodyOnly
    } else {
        Purpose::Fly
    };
    let options = PrepareOptions {
        limits: limits(limit_args),
        gravity: gravity_options(field_args),
        ..PrepareOptions::new(purpose)
    };
    let prepared = prepare_with_hooks(loaded, &options, &field_hooks())?;
    announce_field(&prepared.field);
    let reports = if purpose == Purpose::Fly {
        announce(&prepared.estimate);
        fly_with_progress(&prepared)?.reports
    } else {
        Vec::new()
    };
    Ok((prepared, reports))
}

/// The body view with the surface map attached when a map is shown, with the landing layer of
/// `reports` (landings per m² of each face) when any launch landed.
pub(super) fn body_view(
    prepared: &PreparedRun,
    with_map: bool,
    reports: &[FlightReport],
) -> CmdResult<BodyView> {
    let mut view = BodyView::new(Arc::clone(&prepared.body));
    if with_map {
        let cancel = spinfall_dynamics::Cancel::new(false);
        let mut map = compute_surface_map(&prepared.body, &|_, _| {}, &cancel)?;
        map.landing_density_per_m2 = landing_density_layer(&prepared.body, reports);
        view.set_map(Some(Arc::new(map)));
    }
    Ok(view)
}

/// Metadata of the scenario, body, spin and gravity, for the figure's file.
pub(super) fn scenario_metadata(prepared: &PreparedRun, launches: usize) -> Vec<(String, String)> {
    let title = prepared
        .scenario()
        .name
        .clone()
        .unwrap_or_else(|| prepared.body.name.clone());
    let mut rows = vec![("Title".into(), title)];
    rows.extend(spinfall_workflow::images::body_rows(&prepared.body));
    rows.extend([
        ("Gravity".into(), prepared.field.describe_method()),
        ("Launches".into(), launches.to_string()),
    ]);
    rows
}

/// The output of a still figure, checked before any work.
pub(super) fn check_figure_output(path: &Path) -> CmdResult<(CheckedFile, StillFormat)> {
    let format = still_format(path)?;
    Ok((check_file(&OutputTarget::from_arg(path))?, format))
}

/// Writes a still figure as PNG (raster, metadata in text chunks) or SVG.
pub(super) fn write_figure(
    out: &CheckedFile,
    format: StillFormat,
    figure: &Figure,
) -> CmdResult<()> {
    match format {
        StillFormat::Png => {
            let image = figure.to_image();
            out.write(|w| write_png(w, &image, &figure.metadata))?;
        }
        StillFormat::Svg => {
            out.write(|w| {
                write_svg(figure, w).map_err(|e| WorkflowError::output_msg("", e.to_string()))
            })?;
        }
    }
    Ok(())
}

pub fn run(args: &RenderArgs) -> CmdResult<ExitCode> {
    // Everything about the output is checked before any work.
    let (out, format) = check_figure_output(&args.out)?;
    let size = figure_size(&args.figure)?;
    if let Some(t) = args.time
        && !(t.is_finite() && t >= 0.0)
    {
        return Err(CliError::input(format!(
            "--time must be a number of seconds >= 0, got {t}"
        )));
    }
    let color_range = match (args.color_min, args.color_max) {
        (None, None) => None,
        (Some(lo), Some(hi)) => {
            if args.map.is_none() {
                return Err(CliError::input(
                    "--color-min/--color-max need --map (they set the map's colour range)",
                ));
            }
            if !(lo.is_finite() && hi.is_finite() && hi > lo) {
                return Err(CliError::input(format!(
                    "--color-min {lo} must be below --color-max {hi}"
                )));
            }
            Some([lo, hi])
        }
        _ => {
            return Err(CliError::input(
                "give both --color-min and --color-max, or neither",
            ));
        }
    };
    let zero_velocity_plane: SlicePlane = args
        .zero_velocity_plane
        .parse()
        .map_err(|e| CliError::input(format!("--zero-velocity-plane: {e}")))?;
    let (prepared, reports) = prepare_and_fly(&args.scenario, &args.limits, &args.field)?;
    let mut view = body_view(&prepared, args.map.is_some(), &reports)?;
    let body = &prepared.body;
    let mut guides = Guides::default();
    // The rest ellipses of the run's fan and dispersion groups, on the body-fixed view.
    if let Some((stats, _)) = compute_statistics(
        body,
        prepared.scenario(),
        &reports,
        &StatisticsRequest::default(),
    )? {
        guides.landing_ellipses = landing_ellipse_guides(body, &stats);
    }
    let cancel = spinfall_dynamics::Cancel::new(false);
    if args.equilibria {
        let set = compute_equilibria(body, &EquilibriumSearch::default(), &|_, _| {}, &cancel)?;
        if set.equilibria.is_empty() {
            note("no equilibrium points outside the body to mark");
        }
        guides.equilibria = equilibrium_marks(&set);
    }
    if let Some(id) = &args.zero_velocity {
        let launch = find_launch(&prepared.launches, id)?;
        let c = jacobi_constant(body, launch);
        let spec = SliceSpec {
            plane: zero_velocity_plane,
            extent_m: 4.0 * body.brillouin_radius_m(),
            cells: args.zero_velocity_cells,
        };
        spec.validate()
            .map_err(|e| CliError::input(format!("--zero-velocity-cells: {e}")))?;
        let slice = compute_slice(body, &spec, &|_, _| {}, &cancel)?;
        let vertex_phi = compute_vertex_geopotential(body, &|_, _| {}, &cancel)?;
        note(&format!("launch {id:?}: Jacobi constant {c:.9e} m^2/s^2"));
        guides.zero_velocity = Some(zero_velocity_curves(
            body,
            &slice,
            &vertex_phi,
            c,
            id.clone(),
            CurveParts::ALL,
        ));
    }
    if !guides.is_empty() {
        view = view.with_guides(Arc::new(guides));
    }
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
    let mut figure = build_figure(&view, &reports, t_s, &options, &fig)
        .map_err(|e| CliError::input(e.to_string()))?;
    figure
        .metadata
        .extend(scenario_metadata(&prepared, reports.len()));
    write_figure(&out, format, &figure)?;
    note(&format!(
        "wrote {}x{} figure to {}",
        figure.width_px,
        figure.height_px,
        out.describe()
    ));
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
        assert_eq!(still_format(Path::new("-")).unwrap(), StillFormat::Png);
        for bad in ["b.pdf", "b.jpg", "b"] {
            assert!(still_format(Path::new(bad)).is_err(), "{bad}");
        }
    }
}
