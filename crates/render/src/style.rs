//! Figure sizing: every text size, line width, marker size and margin of a figure follows from
//! its size, so a 4K export looks like the 720p export scaled up.
//!
//! Sizes are written in typographic points (1/72 in). A figure given in pixels uses
//! [`REFERENCE_PX_PER_PT`] pixels per point at a shorter side of [`REFERENCE_SIDE_PX`] and
//! scales with its shorter side; a figure given in millimetres or inches uses its print
//! resolution (`dpi / 72` pixels per point), so text has its true size in points on paper.

use crate::error::{RenderError, Result};
use crate::theme::Theme;

/// Shorter side of the reference figure, pixels.
pub const REFERENCE_SIDE_PX: f32 = 720.0;
/// Pixels per point at the reference size (8 pt labels are 13 px tall on a 720 px figure).
pub const REFERENCE_PX_PER_PT: f32 = 1.625;
/// Millimetres per inch.
pub const MM_PER_IN: f64 = 25.4;
/// Points per inch.
pub const PT_PER_IN: f64 = 72.0;
/// Largest figure side, pixels (a 16k image is 1 GiB of RGBA; larger is refused).
pub const MAX_FIGURE_SIDE_PX: u32 = 16_384;
/// Smallest figure side, pixels.
pub const MIN_FIGURE_SIDE_PX: u32 = 32;
/// Accepted print resolutions, dots per inch.
pub const DPI_RANGE: std::ops::RangeInclusive<f64> = 36.0..=2400.0;

/// Named sizes of a figure's decorations, in points.
pub mod pt {
    /// Body text: tick labels, legend, time stamp.
    pub const TEXT: f32 = 8.0;
    /// Panel titles.
    pub const TITLE: f32 = 10.5;
    /// Axis and colour bar titles.
    pub const LABEL: f32 = 8.5;
    /// Space around blocks and between the figure's edge and its content.
    pub const MARGIN: f32 = 7.0;
    /// Gap between two panels.
    pub const GAP: f32 = 5.0;
    /// Thin rules: frames, ticks, grid.
    pub const RULE: f32 = 0.6;
    /// Lines of plotted data.
    pub const DATA_LINE: f32 = 1.1;
    /// Length of a tick mark.
    pub const TICK: f32 = 3.0;
    /// Width of a colour bar.
    pub const COLOR_BAR: f32 = 9.0;
}

/// How many pixels a point is in one figure.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sizing {
    px_per_pt: f32,
}

impl Default for Sizing {
    fn default() -> Sizing {
        Sizing::screen()
    }
}

impl Sizing {
    /// The reference scale (a 720 px tall figure, and the app's views).
    pub const fn screen() -> Sizing {
        Sizing {
            px_per_pt: REFERENCE_PX_PER_PT,
        }
    }

    /// The scale of a figure of `width_px x height_px`: proportional to its shorter side.
    pub fn for_pixels(width_px: u32, height_px: u32) -> Sizing {
        let side = width_px.min(height_px).max(1) as f32;
        Sizing {
            px_per_pt: REFERENCE_PX_PER_PT * side / REFERENCE_SIDE_PX,
        }
    }

    /// The scale of a figure printed at `dpi` dots per inch (true point sizes on paper).
    pub fn for_dpi(dpi: f64) -> Sizing {
        let dpi = if dpi.is_finite() {
            dpi.clamp(*DPI_RANGE.start(), *DPI_RANGE.end())
        } else {
            300.0
        };
        Sizing {
            px_per_pt: (dpi / PT_PER_IN) as f32,
        }
    }

    /// Pixels per point.
    pub fn px_per_pt(self) -> f32 {
        self.px_per_pt
    }

    /// A length in points as pixels.
    pub fn px(self, pt: f32) -> f32 {
        pt * self.px_per_pt
    }

    /// A size given for the reference figure in pixels, scaled to this figure.
    pub fn scale_px(self, reference_px: f32) -> f32 {
        reference_px * self.px_per_pt / REFERENCE_PX_PER_PT
    }
}

/// Sizing and colours of one figure.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Style {
    /// Pixels per point.
    pub sizing: Sizing,
    /// Colours.
    pub theme: Theme,
}

impl Style {
    /// A style.
    pub const fn new(sizing: Sizing, theme: Theme) -> Style {
        Style { sizing, theme }
    }

    /// A length in points as pixels.
    pub fn px(&self, pt: f32) -> f32 {
        self.sizing.px(pt)
    }
}

/// A length unit of a physical figure size.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PhysicalUnit {
    /// Millimetres.
    Mm,
    /// Inches.
    In,
}

/// The size of a figure: pixels, or a physical size with a print resolution.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum FigureSize {
    /// Pixels; decorations scale with the shorter side.
    Pixels {
        /// Width, pixels.
        width_px: u32,
        /// Height, pixels.
        height_px: u32,
    },
    /// A printed size; text sizes are true points at `dpi`.
    Physical {
        /// Width in `unit`.
        width: f64,
        /// Height in `unit`.
        height: f64,
        /// Millimetres or inches.
        unit: PhysicalUnit,
        /// Dots per inch.
        dpi: f64,
    },
}

fn size_error(text: &str, reason: String) -> RenderError {
    RenderError::FigureSize {
        text: text.to_string(),
        reason,
    }
}

impl FigureSize {
    /// Parses `1920x1080` (pixels), `180x100mm` or `7x4in` (physical, at `dpi`, 300 when
    /// `None`). The resulting pixel size is checked ([`FigureSize::resolve`]).
    pub fn parse(text: &str, dpi: Option<f64>) -> Result<FigureSize> {
        let t = text.trim().to_ascii_lowercase();
        let (body, unit) = if let Some(b) = t.strip_suffix("mm") {
            (b, Some(PhysicalUnit::Mm))
        } else if let Some(b) = t.strip_suffix("in") {
            (b, Some(PhysicalUnit::In))
        } else if let Some(b) = t.strip_suffix("px") {
            (b, None)
        } else {
            (t.as_str(), None)
        };
        let (w, h) = body.split_once('x').ok_or_else(|| {
            size_error(
                text,
                "expected WxH in pixels (1920x1080) or a physical size (180x100mm, 7x4in)".into(),
            )
        })?;
        let size = match unit {
            None => {
                if dpi.is_some() {
                    return Err(size_error(
                        text,
                        "--dpi applies to physical sizes (mm or in) only".into(),
                    ));
                }
                let px = |v: &str| -> Result<u32> {
                    v.trim()
                        .parse::<u32>()
                        .map_err(|_| size_error(text, format!("{v:?} is not a whole pixel count")))
                };
                FigureSize::Pixels {
                    width_px: px(w)?,
                    height_px: px(h)?,
                }
            }
            Some(unit) => {
                let len = |v: &str| -> Result<f64> {
                    let x: f64 = v
                        .trim()
                        .parse()
                        .map_err(|_| size_error(text, format!("{v:?} is not a length")))?;
                    if x.is_finite() && x > 0.0 {
                        Ok(x)
                    } else {
                        Err(size_error(text, format!("{v:?} must be a positive length")))
                    }
                };
                FigureSize::Physical {
                    width: len(w)?,
                    height: len(h)?,
                    unit,
                    dpi: dpi.unwrap_or(300.0),
                }
            }
        };
        size.resolve().map(|_| size)
    }

    /// Pixel size and sizing, checked: each side within
    /// [`MIN_FIGURE_SIDE_PX`]..=[`MAX_FIGURE_SIDE_PX`], dpi within [`DPI_RANGE`].
    pub fn resolve(&self) -> Result<(u32, u32, Sizing)> {
        let text = self.to_string();
        let check = |v: f64, what: &str| -> Result<u32> {
            let lo = MIN_FIGURE_SIDE_PX as f64;
            let hi = MAX_FIGURE_SIDE_PX as f64;
            if v.is_finite() && (lo..=hi).contains(&v.round()) {
                Ok(v.round() as u32)
            } else {
                Err(size_error(
                    &text,
                    format!("the {what} is {v:.0} px, outside {lo}..={hi} px"),
                ))
            }
        };
        match *self {
            FigureSize::Pixels {
                width_px,
                height_px,
            } => Ok((
                check(width_px as f64, "width")?,
                check(height_px as f64, "height")?,
                Sizing::for_pixels(width_px, height_px),
            )),
            FigureSize::Physical {
                width,
                height,
                unit,
                dpi,
            } => {
                if !(dpi.is_finite() && DPI_RANGE.contains(&dpi)) {
                    return Err(size_error(
                        &text,
                        format!(
                            "{dpi} dpi is outside {}..={} dpi",
                            DPI_RANGE.start(),
                            DPI_RANGE.end()
                        ),
                    ));
                }
                let per_unit = match unit {
                    PhysicalUnit::Mm => dpi / MM_PER_IN,
                    PhysicalUnit::In => dpi,
                };
                Ok((
                    check(width * per_unit, "width")?,
                    check(height * per_unit, "height")?,
                    Sizing::for_dpi(dpi),
                ))
            }
        }
    }

    /// Dots per inch of a physical size (for the PNG `pHYs` chunk), `None` for pixel sizes.
    pub fn dpi(&self) -> Option<f64> {
        match self {
            FigureSize::Pixels { .. } => None,
            FigureSize::Physical { dpi, .. } => Some(*dpi),
        }
    }

    /// Width and height in millimetres of a physical size.
    pub fn size_mm(&self) -> Option<(f64, f64)> {
        match *self {
            FigureSize::Pixels { .. } => None,
            FigureSize::Physical {
                width,
                height,
                unit,
                ..
            } => {
                let k = match unit {
                    PhysicalUnit::Mm => 1.0,
                    PhysicalUnit::In => MM_PER_IN,
                };
                Some((width * k, height * k))
            }
        }
    }
}

impl std::fmt::Display for FigureSize {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            FigureSize::Pixels {
                width_px,
                height_px,
            } => write!(f, "{width_px}x{height_px} px"),
            FigureSize::Physical {
                width,
                height,
                unit,
                dpi,
            } => {
                let u = match unit {
                    PhysicalUnit::Mm => "mm",
                    PhysicalUnit::In => "in",
                };
                write!(f, "{width}x{height} {u} at {dpi} dpi")
            }
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn pixel_sizes_scale_with_the_shorter_side() {
        let (w, h, s) = FigureSize::parse("3840x2160", None)
            .unwrap()
            .resolve()
            .unwrap();
        assert_eq!((w, h), (3840, 2160));
        assert!((s.px(pt::TEXT) - 3.0 * Sizing::screen().px(pt::TEXT)).abs() < 1e-4);
        assert_eq!(Sizing::for_pixels(1280, 720), Sizing::screen());
    }

    #[test]
    fn physical_sizes_use_the_print_resolution() {
        // 180 mm at 300 dpi = 7.087 in = 2126 px; 8 pt text = 8/72 in = 33.3 px.
        let (w, h, s) = FigureSize::parse("180x100mm", Some(300.0))
            .unwrap()
            .resolve()
            .unwrap();
        assert_eq!((w, h), (2126, 1181));
        assert!((s.px(8.0) - 33.333).abs() < 1e-2);
        let (w, h, _) = FigureSize::parse("7x4in", Some(150.0))
            .unwrap()
            .resolve()
            .unwrap();
        assert_eq!((w, h), (1050, 600));
    }

    #[test]
    fn absurd_sizes_are_refused_with_a_reason() {
        for bad in [
            "0x0",
            "1000000000x5",
            "20x20",
            "wide",
            "10x-3",
            "1e9x5",
            "5000x5000mm",
            "nanxnanmm",
        ] {
            let err = FigureSize::parse(bad, None).unwrap_err().to_string();
            assert!(err.contains(bad) || err.contains("px"), "{bad}: {err}");
        }
        assert!(FigureSize::parse("100x80mm", Some(1e9)).is_err());
        assert!(FigureSize::parse("100x80", Some(300.0)).is_err());
    }
}
