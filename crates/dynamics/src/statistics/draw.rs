//! What a view needs to draw the statistics: the ellipses as polylines draped on the surface.

use nalgebra::Vector3;
use serde::{Deserialize, Serialize};

use super::spread::{Spread, radial_surface_point};
use super::summary::GroupStatistics;
use crate::body::Body;

/// Which spread of a group an ellipse belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SpreadKind {
    /// The rest points.
    Rest,
    /// The first-contact points.
    FirstContact,
}

/// One error ellipse as a closed polyline on the surface.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EllipsePolyline {
    /// The group id.
    pub group: String,
    /// Rest or first contact.
    pub spread: SpreadKind,
    /// The probability it holds.
    pub probability: f64,
    /// Body-frame points, m; the last equals the first.
    pub points_body_m: Vec<[f64; 3]>,
}

/// The ellipse of scale `k` of `spread` traced in its tangent plane with `segments` segments
/// and carried along radial lines from the body-frame origin to the outermost surface, then
/// raised by `lift_m` along the radial line (so that it is not hidden in the surface). Points
/// whose radial line meets no surface are left out.
pub fn drape_ellipse(
    body: &Body,
    spread: &Spread,
    k: f64,
    segments: usize,
    lift_m: f64,
) -> Vec<[f64; 3]> {
    let segments = segments.max(8);
    let cov = &spread.covariance_en_m2;
    let (major, minor, az) = super::spread::principal_axes(cov);
    let a = az.to_radians();
    let e = Vector3::from(spread.frame.east);
    let n = Vector3::from(spread.frame.north);
    let u_major = n * a.cos() + e * a.sin();
    let u_minor = e * a.cos() - n * a.sin();
    let m = Vector3::from(spread.mean.pos_body_m);
    let (sa, sb) = (k * major.sqrt(), k * minor.sqrt());
    let mut out: Vec<[f64; 3]> = (0..=segments)
        .filter_map(|i| {
            let t = std::f64::consts::TAU * i as f64 / segments as f64;
            let p = m + u_major * (sa * t.cos()) + u_minor * (sb * t.sin());
            let s = radial_surface_point(body, &p)?;
            let q = Vector3::from(s.pos_body_m);
            let lifted = q + q.normalize() * lift_m;
            Some(lifted.into())
        })
        .collect();
    if let (Some(first), Some(last)) = (out.first().copied(), out.last().copied())
        && first != last
    {
        out.push(first);
    }
    out
}

/// Every ellipse of `stats` (the rest spread, and the first-contact spread when
/// `first_contact`) as surface polylines of `segments` segments, raised by `lift_m`.
pub fn ellipse_polylines(
    body: &Body,
    stats: &[GroupStatistics],
    first_contact: bool,
    segments: usize,
    lift_m: f64,
) -> Vec<EllipsePolyline> {
    let mut out = Vec::new();
    for g in stats {
        let mut spreads = vec![(SpreadKind::Rest, &g.rest)];
        if first_contact {
            spreads.push((SpreadKind::FirstContact, &g.first_contact));
        }
        for (kind, result) in spreads {
            let Some(s) = result.spread() else { continue };
            for e in &s.ellipses {
                out.push(EllipsePolyline {
                    group: g.id.clone(),
                    spread: kind,
                    probability: e.probability,
                    points_body_m: drape_ellipse(body, s, e.scale_k, segments, lift_m),
                });
            }
        }
    }
    out
}
