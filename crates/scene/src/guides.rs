//! Guides of the dynamical environment drawn in the body-fixed view: equilibrium points and
//! zero-velocity curves (on a plane through the body and on the surface), with a hatch over the
//! region a launch can never reach.
//!
//! Also the error ellipses of landing dispersion groups (`spinfall_dynamics::statistics`),
//! draped on the surface.
//!
//! All are fixed in the rotating body frame, which is where they mean something, so they are
//! drawn in the body-fixed view only. The data come from `spinfall_dynamics::equilibria` and
//! `spinfall_dynamics::zero_velocity`; this module only draws them.

use spinfall_render::{
    Color, LegendEntry, LineColor, Marker, MarkerShape, Occluded, Polyline, Scene, Sizing, Swatch,
};

use crate::palette::Palette;

/// An equilibrium point to mark.
#[derive(Debug, Clone, PartialEq)]
pub struct EquilibriumMark {
    /// Position, body frame, m.
    pub pos_body_m: [f64; 3],
    /// Linearly stable (every eigenvalue of the linearised motion imaginary).
    pub linearly_stable: bool,
}

/// The zero-velocity curves of one Jacobi constant.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ZeroVelocityCurves {
    /// What the constant belongs to (e.g. a launch id), for the legend.
    pub label: String,
    /// Level curves on the chosen plane, body frame, m.
    pub plane_curves: Vec<Vec<[f64; 3]>>,
    /// Where the zero-velocity surface meets the body surface, body frame, m.
    pub surface_curves: Vec<Vec<[f64; 3]>>,
    /// Segments over the forbidden part of the plane, body frame, m.
    pub forbidden_hatch: Vec<[[f64; 3]; 2]>,
}

/// One landing error ellipse of a group, as a closed polyline on the surface.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LandingEllipse {
    /// The group id.
    pub group: String,
    /// The probability it holds (0.5, 0.9, 0.99).
    pub probability: f64,
    /// Body-frame points, m (closed: the last equals the first).
    pub points_body_m: Vec<[f64; 3]>,
}

/// Everything drawn by this module.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Guides {
    /// Equilibrium points.
    pub equilibria: Vec<EquilibriumMark>,
    /// Zero-velocity curves, if any.
    pub zero_velocity: Option<ZeroVelocityCurves>,
    /// Landing error ellipses of the rest points (50 % thick, 90 % thin, 99 % dashed).
    pub landing_ellipses: Vec<LandingEllipse>,
}

impl Guides {
    /// Nothing to draw.
    pub fn is_empty(&self) -> bool {
        self.equilibria.is_empty()
            && self.zero_velocity.is_none()
            && self.landing_ellipses.is_empty()
    }
}

/// Line width (reference px) and dash of a landing ellipse of probability `p`.
fn ellipse_style(p: f64) -> (f32, bool) {
    if p <= 0.5 {
        (2.6, false)
    } else if p <= 0.9 {
        (1.6, false)
    } else {
        (1.6, true)
    }
}

/// Colours of the guides in a palette: (stable equilibrium, unstable equilibrium,
/// zero-velocity curve).
fn colors(pal: &Palette) -> (Color, Color, Color) {
    (
        pal.equilibrium_stable,
        pal.equilibrium_unstable,
        pal.zero_velocity,
    )
}

/// Adds the guides to a body-fixed scene, lines and markers sized by `sizing`.
pub(crate) fn add_guides(scene: &mut Scene, guides: &Guides, pal: &Palette, sizing: Sizing) {
    let px = |reference_px: f32| sizing.scale_px(reference_px);
    let (stable, unstable, zvs) = colors(pal);
    if let Some(z) = &guides.zero_velocity {
        let hatch = zvs.with_alpha(zvs.a / 2);
        for [a, b] in &z.forbidden_hatch {
            scene.polylines.push(Polyline {
                points: vec![*a, *b],
                color: LineColor::Uniform(hatch),
                width_px: px(1.0),
                dash: None,
                occluded: Occluded::Hidden,
            });
        }
        for curve in &z.plane_curves {
            scene.polylines.push(Polyline {
                points: curve.clone(),
                color: LineColor::Uniform(zvs),
                width_px: px(2.2),
                dash: None,
                occluded: Occluded::Faint(0.3),
            });
        }
        for curve in &z.surface_curves {
            scene.polylines.push(Polyline {
                points: curve.clone(),
                color: LineColor::Uniform(zvs),
                width_px: px(2.2),
                dash: Some((px(5.0), px(3.0))),
                occluded: Occluded::Hidden,
            });
        }
    }
    for e in &guides.landing_ellipses {
        let (width, dashed) = ellipse_style(e.probability);
        scene.polylines.push(Polyline {
            points: e.points_body_m.clone(),
            color: LineColor::Uniform(pal.rest),
            width_px: px(width),
            dash: dashed.then(|| (px(5.0), px(3.0))),
            occluded: Occluded::Hidden,
        });
    }
    for e in &guides.equilibria {
        scene.markers.push(Marker {
            position: e.pos_body_m,
            shape: MarkerShape::Dot,
            size_px: px(10.0),
            color: if e.linearly_stable { stable } else { unstable },
            occluded: Occluded::Faint(0.35),
        });
    }
}

/// Legend entries for what `guides` holds.
pub(crate) fn guide_legend_entries(guides: &Guides, pal: &Palette) -> Vec<LegendEntry> {
    let (stable, unstable, zvs) = colors(pal);
    let mut entries = Vec::new();
    let dot = Swatch::Marker(MarkerShape::Dot);
    if guides.equilibria.iter().any(|e| e.linearly_stable) {
        entries.push(LegendEntry::new(stable, "equilibrium, stable", dot));
    }
    if guides.equilibria.iter().any(|e| !e.linearly_stable) {
        entries.push(LegendEntry::new(unstable, "equilibrium, unstable", dot));
    }
    if let Some(z) = &guides.zero_velocity {
        let of = if z.label.is_empty() {
            String::new()
        } else {
            format!(" ({})", z.label)
        };
        if !z.plane_curves.is_empty() || !z.forbidden_hatch.is_empty() {
            entries.push(LegendEntry::new(
                zvs,
                format!("zero-velocity curve{of}"),
                Swatch::Line,
            ));
        }
        if !z.surface_curves.is_empty() {
            entries.push(LegendEntry::new(
                zvs,
                format!("zero velocity on the surface{of}"),
                Swatch::Dashed,
            ));
        }
    }
    if !guides.landing_ellipses.is_empty() {
        entries.push(LegendEntry::new(
            pal.rest,
            "landing ellipses 50/90 % (99 % dashed)",
            Swatch::Line,
        ));
    }
    entries
}
