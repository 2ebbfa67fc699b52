//! `spinfall render`: fly a scenario and draw the body-fixed and/or inertial view to a PNG.

use std::process::ExitCode;
use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use anyhow::anyhow;
use spinfall_dynamics::surface_map::{SurfaceField, surface_map};
use spinfall_render::{RenderOptions, Renderer, encode_png};
use spinfall_scene::{
    BodyView, CompositeOptions, Frame, ViewOptions, add_title, composite, default_camera,
    end_time_s, frame_scene,
};

use super::scenario::{fly_with_progress, prepare, run_exit_code};
use crate::cli::{MapArg, RenderArgs, ViewArg};
use crate::exit::{CliError, CmdResult};
use crate::io::write_atomic;

/// Largest accepted image side, pixels (16k: beyond it memory use gets silly).
const MAX_SIDE_PX: u32 = 16_384;

pub fn run(args: &RenderArgs) -> CmdResult<ExitCode> {
    let (width_px, height_px) = parse_size(&args.size).map_err(CliError::input)?;
    if let Some(t) = args.time
        && !(t.is_finite() && t >= 0.0)
    {
        return Err(CliError::input(anyhow!(
            "--time must be a number of seconds >= 0, got {t}"
        )));
    }
    let prepared = prepare(&args.scenario)?;
    let reports = fly_with_progress(&prepared);
    let mut view = BodyView::new(Arc::clone(&prepared.body));
    let field = args.map.map(|m| match m {
        MapArg::Slope => SurfaceField::Slope,
        MapArg::Geopotential => SurfaceField::Geopotential,
        MapArg::EffectiveG => SurfaceField::EffectiveGravity,
        MapArg::EscapeSpeed => SurfaceField::EscapeSpeedNormal,
    });
    if field.is_some() {
        let cancel = AtomicBool::new(false);
        let map = surface_map(&prepared.body, &|_, _| {}, &cancel).map_err(CliError::output)?;
        view.set_map(Some(Arc::new(map)));
    }
    let options = ViewOptions {
        map: field,
        ..ViewOptions::default()
    };
    let t_s = args.time.unwrap_or_else(|| end_time_s(&reports));
    let image = match args.view {
        ViewArg::Both => composite(
            &view,
            &reports,
            t_s,
            &options,
            &CompositeOptions {
                width_px,
                height_px,
                ..CompositeOptions::default()
            },
        )
        .map_err(CliError::input)?,
        ViewArg::Body | ViewArg::Inertial => {
            let frame = if args.view == ViewArg::Body {
                Frame::BodyFixed
            } else {
                Frame::Inertial
            };
            let camera = default_camera(&prepared.body.shape, width_px, height_px);
            let mut scene =
                frame_scene(&view, &reports, t_s, &options, [width_px, height_px], frame);
            add_title(
                &mut scene,
                frame,
                t_s,
                prepared.body.spin.period_s,
                [width_px, height_px],
            );
            let render_options = RenderOptions::new(width_px, height_px).with_supersample(2);
            Renderer::new()
                .render(&scene, &camera, &render_options)
                .clone()
        }
    };
    let spin = &prepared.body.spin;
    let chunks = [
        (
            "Software",
            "Spinfall (research and planning tool, not flight-certified)".to_string(),
        ),
        (
            "Title",
            prepared
                .scenario
                .name
                .clone()
                .unwrap_or_else(|| prepared.body.name.clone()),
        ),
        (
            "Body",
            format!(
                "{} ({} faces)",
                prepared.body.name,
                prepared.body.shape.face_count()
            ),
        ),
        (
            "Spin",
            format!(
                "period {:.6} h, axis [{:.6}, {:.6}, {:.6}], phase {:.3} deg",
                spin.period_s / 3600.0,
                spin.axis_body.x,
                spin.axis_body.y,
                spin.axis_body.z,
                spin.phase_rad.to_degrees()
            ),
        ),
        ("Launches", reports.len().to_string()),
        ("Time", format!("{t_s} s")),
    ];
    let chunk_refs: Vec<(&str, &str)> = chunks.iter().map(|(k, v)| (*k, v.as_str())).collect();
    write_atomic(&args.out, |w| Ok(encode_png(&image, &chunk_refs, w)?))?;
    eprintln!(
        "wrote {}x{} image to {}",
        image.width,
        image.height,
        args.out.display()
    );
    Ok(run_exit_code(&reports))
}

/// Parses `WxH`.
fn parse_size(s: &str) -> anyhow::Result<(u32, u32)> {
    let (w, h) = s
        .split_once(['x', 'X'])
        .ok_or_else(|| anyhow!("--size must look like 1920x1080, got {s:?}"))?;
    let parse = |v: &str| -> anyhow::Result<u32> {
        let n: u32 = v
            .trim()
            .parse()
            .map_err(|_| anyhow!("--size: {v:?} is not a pixel count"))?;
        if !(32..=MAX_SIDE_PX).contains(&n) {
            return Err(anyhow!("--size: {n} px is outside 32..={MAX_SIDE_PX}"));
        }
        Ok(n)
    };
    Ok((parse(w)?, parse(h)?))
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::parse_size;

    #[test]
    fn sizes_are_checked() {
        assert_eq!(parse_size("3840x2160").unwrap(), (3840, 2160));
        assert!(
            parse_size("10x10")
                .unwrap_err()
                .to_string()
                .contains("outside")
        );
        assert!(
            parse_size("wide")
                .unwrap_err()
                .to_string()
                .contains("1920x1080")
        );
        assert!(parse_size("100x-3").is_err());
    }
}
