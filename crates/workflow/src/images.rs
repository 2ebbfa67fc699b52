//! Pictures of a run: the body-fixed view, the inertial view, or both side by side, rendered
//! on the CPU and written as PNG with a text summary. The command line's `render` and the app's
//! image export both come here, so their pictures match.

use std::io::Write;

use spinfall_dynamics::FlightReport;
use spinfall_render::{Camera, Image, RenderOptions, Renderer, encode_png};
use spinfall_scene::{
    BodyView, CompositeOptions, Frame, SiteMarker, ViewOptions, add_site_markers, add_title,
    composite, default_camera, frame_scene,
};

use crate::error::{Result, WorkflowError};

/// Smallest accepted image side (of each view), pixels.
pub const MIN_SIDE_PX: u32 = 32;
/// Largest accepted image side, pixels (16k: beyond it memory use gets silly).
pub const MAX_SIDE_PX: u32 = 16_384;
/// Gap between the two halves of a side-by-side image, pixels.
pub const GAP_PX: u32 = 4;

/// Which view(s) an image shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ViewChoice {
    /// Body-fixed view alone.
    BodyFixed,
    /// Inertial view alone.
    Inertial,
    /// Both, side by side.
    Both,
}

/// Everything an image needs besides the body and the reports.
#[derive(Debug, Clone)]
pub struct ImageRequest {
    /// Which view(s).
    pub view: ViewChoice,
    /// Image width, pixels (both halves and the gap for [`ViewChoice::Both`]).
    pub width_px: u32,
    /// Image height, pixels.
    pub height_px: u32,
    /// Time after launch shown, s.
    pub t_s: f64,
    /// What the views draw.
    pub options: ViewOptions,
    /// Cameras of the body-fixed and inertial views (`None`: fitted to the body).
    pub cameras: [Option<Camera>; 2],
    /// Planned launch sites to mark.
    pub sites: Vec<SiteMarker>,
}

impl ImageRequest {
    /// Checks the size (each view at least [`MIN_SIDE_PX`], the image at most [`MAX_SIDE_PX`])
    /// and the time, before any work.
    pub fn check(&self) -> Result<()> {
        check_size(self.view, self.width_px, self.height_px)?;
        if !(self.t_s.is_finite() && self.t_s >= 0.0) {
            return Err(WorkflowError::Invalid(format!(
                "the time shown must be a number of seconds >= 0, got {}",
                self.t_s
            )));
        }
        Ok(())
    }
}

/// Checks an image size for `view`.
pub fn check_size(view: ViewChoice, width_px: u32, height_px: u32) -> Result<()> {
    let view_width = match view {
        ViewChoice::Both => width_px.saturating_sub(GAP_PX) / 2,
        _ => width_px,
    };
    let ok = (1..=MAX_SIDE_PX).contains(&width_px)
        && (MIN_SIDE_PX..=MAX_SIDE_PX).contains(&height_px)
        && view_width >= MIN_SIDE_PX;
    if ok {
        Ok(())
    } else {
        let least = match view {
            ViewChoice::Both => 2 * MIN_SIDE_PX + GAP_PX,
            _ => MIN_SIDE_PX,
        };
        Err(WorkflowError::Invalid(format!(
            "image size {width_px}x{height_px} px: the width must be in {least}..={MAX_SIDE_PX} \
             and the height in {MIN_SIDE_PX}..={MAX_SIDE_PX}{}",
            if view == ViewChoice::Both {
                " (two views side by side)"
            } else {
                ""
            }
        )))
    }
}

/// Parses `WxH` (pixels).
pub fn parse_size(s: &str) -> Result<(u32, u32)> {
    let bad = || {
        WorkflowError::Invalid(format!(
            "the size must look like 1920x1080 (width x height in pixels), got {}",
            spinfall_gravity::text::excerpt(s)
        ))
    };
    let (w, h) = s.split_once(['x', 'X']).ok_or_else(bad)?;
    let w: u32 = w.trim().parse().map_err(|_| bad())?;
    let h: u32 = h.trim().parse().map_err(|_| bad())?;
    Ok((w, h))
}

/// Renders the image.
pub fn render_image(
    view: &BodyView,
    reports: &[FlightReport],
    req: &ImageRequest,
) -> Result<Image> {
    req.check()?;
    let (w, h) = (req.width_px, req.height_px);
    let frame = match req.view {
        ViewChoice::Both => {
            return composite(
                view,
                reports,
                req.t_s,
                &req.options,
                &CompositeOptions {
                    width_px: w,
                    height_px: h,
                    supersample: 2,
                    body_camera: req.cameras[0].clone(),
                    inertial_camera: req.cameras[1].clone(),
                    sites: req.sites.clone(),
                },
            )
            .map_err(|e| WorkflowError::Invalid(e.to_string()));
        }
        ViewChoice::BodyFixed => Frame::BodyFixed,
        ViewChoice::Inertial => Frame::Inertial,
    };
    let slot = usize::from(frame == Frame::Inertial);
    let mut camera = req.cameras[slot]
        .clone()
        .unwrap_or_else(|| default_camera(&view.body().shape, w, h));
    camera.set_viewport(w, h);
    let mut scene = frame_scene(view, reports, req.t_s, &req.options, [w, h], frame);
    add_site_markers(&mut scene, view, &req.sites, req.t_s, frame);
    add_title(
        &mut scene,
        frame,
        req.t_s,
        view.body().spin.period_s,
        [w, h],
    );
    let options = RenderOptions::new(w, h).with_supersample(2);
    Ok(Renderer::new().render(&scene, &camera, &options).clone())
}

/// The text chunks a PNG carries: the software with its caution, the title, the body, its
/// spin, the launch count and the time shown.
pub fn png_summary(
    title: &str,
    view: &BodyView,
    launches: usize,
    t_s: f64,
) -> Vec<(String, String)> {
    let mut rows = vec![
        ("Software".into(), format!("Spinfall ({})", crate::CAUTION)),
        ("Title".into(), title.to_string()),
    ];
    rows.extend(body_rows(view.body()));
    rows.extend([
        ("Launches".into(), launches.to_string()),
        ("Time".into(), format!("{t_s} s")),
    ]);
    rows
}

/// The body's rows of a file's metadata: its name and face count, and its spin.
pub fn body_rows(body: &spinfall_dynamics::Body) -> [(String, String); 2] {
    let spin = &body.spin;
    [
        (
            "Body".into(),
            format!("{} ({} faces)", body.name, body.shape.face_count()),
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
    ]
}

/// Writes `image` as PNG with text chunks.
pub fn write_png(w: &mut dyn Write, image: &Image, chunks: &[(String, String)]) -> Result<()> {
    let refs: Vec<(&str, &str)> = chunks
        .iter()
        .map(|(k, v)| (k.as_str(), v.as_str()))
        .collect();
    encode_png(image, &refs, w).map_err(|e| WorkflowError::output_msg("", e.to_string()))
}
