//! The statistics of one group of launches: outcome counts, rest and first-contact spreads,
//! the fraction within a radius of a target, the faces hit.

use std::collections::HashMap;

use nalgebra::{Point3, Vector3};
use serde::{Deserialize, Serialize};

use super::groups::{GroupKind, LaunchGroup};
use super::spread::{SpreadResult, SurfacePoint, radial_surface_point, spread_of};
use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::flight::{FlightReport, Outcome};
use crate::site::{direction_from_lat_lon, lat_lon_deg};

/// A target on the surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Target {
    /// Planetocentric latitude and longitude, deg: the outermost surface point on that radial
    /// line.
    LatLon {
        /// Latitude, deg, in [-90, 90].
        lat_deg: f64,
        /// Longitude, deg east.
        lon_deg: f64,
    },
    /// A body-frame point, m: snapped to the nearest surface point.
    PointM([f64; 3]),
}

/// What to compute besides the spreads.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct StatisticsOptions {
    /// The target of [`Self::radius_m`] (`None`: each group's mean rest point).
    pub target: Option<Target>,
    /// Radius around the target for the fraction of landed members within it, m (`None`: not
    /// computed).
    pub radius_m: Option<f64>,
}

impl StatisticsOptions {
    /// Checks the numbers: a finite radius > 0, a latitude in [-90, 90], finite coordinates.
    pub fn validate(&self) -> Result<()> {
        if let Some(r) = self.radius_m
            && !(r.is_finite() && r > 0.0)
        {
            return Err(DynamicsError::param(
                "radius_m",
                format!("must be a finite number > 0, got {r}"),
            ));
        }
        match self.target {
            Some(Target::LatLon { lat_deg, lon_deg }) => {
                if !(lat_deg.is_finite() && (-90.0..=90.0).contains(&lat_deg)) {
                    return Err(DynamicsError::param(
                        "target lat_deg",
                        format!("must be in [-90, 90], got {lat_deg}"),
                    ));
                }
                if !lon_deg.is_finite() {
                    return Err(DynamicsError::param(
                        "target lon_deg",
                        format!("must be finite, got {lon_deg}"),
                    ));
                }
            }
            Some(Target::PointM(p)) if !p.iter().all(|v| v.is_finite()) => {
                return Err(DynamicsError::param(
                    "target point_m",
                    format!("must be finite, got {p:?}"),
                ));
            }
            _ => {}
        }
        Ok(())
    }
}

/// The surface point of a target on `body`.
///
/// # Errors
/// A latitude/longitude whose radial line meets no surface, or bad numbers.
pub fn resolve_target(body: &Body, target: &Target) -> Result<SurfacePoint> {
    StatisticsOptions {
        target: Some(*target),
        radius_m: None,
    }
    .validate()?;
    match *target {
        Target::LatLon { lat_deg, lon_deg } => {
            radial_surface_point(body, &direction_from_lat_lon(body, lat_deg, lon_deg)).ok_or_else(
                || {
                    DynamicsError::param(
                        "target",
                        format!(
                            "no surface on the radial line at latitude {lat_deg} deg, longitude \
                             {lon_deg} deg"
                        ),
                    )
                },
            )
        }
        Target::PointM(p) => {
            let hit = body.shape.nearest_surface_point(&Point3::from(p));
            let (lat_deg, lon_deg) = lat_lon_deg(body, &hit.point_m);
            Ok(SurfacePoint {
                pos_body_m: hit.point_m.coords.into(),
                lat_deg,
                lon_deg,
                face: hit.face,
            })
        }
    }
}

/// How a group's members ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub struct MemberCounts {
    /// Members the group names.
    pub members: usize,
    /// Came to rest: the only members in the spreads and the density.
    pub landed: usize,
    /// Escaped (excluded).
    pub escaped: usize,
    /// Still flying at the time limit (excluded).
    pub still_flying: usize,
    /// Failed (excluded).
    pub failed: usize,
    /// Named by the group but absent from the reports (e.g. a cancelled run; excluded).
    pub missing: usize,
}

/// The fraction of landed members within a radius of a target.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WithinRadius {
    /// The radius, m.
    pub radius_m: f64,
    /// The target's surface point.
    pub target: SurfacePoint,
    /// Where the target comes from: `lat_lon`, `point` (snapped to the nearest surface point)
    /// or `mean_rest_point`.
    pub target_from: String,
    /// Landed members whose rest point is within the radius (straight-line distance in the
    /// body frame).
    pub inside: usize,
    /// Landed members.
    pub landed: usize,
    /// `inside / landed` (`None` when nothing landed).
    pub fraction: Option<f64>,
}

/// The rest spread against the first-contact spread.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RestVsFirstContact {
    /// Distance between the two mean points, m.
    pub mean_shift_m: f64,
    /// RMS distance of the rest points over that of the first contacts (how much bouncing
    /// widens the spread; `None` when the first contacts coincide).
    pub rms_ratio: Option<f64>,
    /// Area of the 90 % rest ellipse over that of the first contacts (`None` when the latter is
    /// 0).
    pub area90_ratio: Option<f64>,
}

/// The statistics of one group.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupStatistics {
    /// The group id.
    pub id: String,
    /// What the group is made of.
    pub kind: GroupKind,
    /// How its members ended.
    pub counts: MemberCounts,
    /// Spread of the rest points of the landed members.
    pub rest: SpreadResult,
    /// Spread of the first-contact points of the same landed members.
    pub first_contact: SpreadResult,
    /// The two compared, when both were computed.
    pub rest_vs_first_contact: Option<RestVsFirstContact>,
    /// The fraction within a radius, when a radius was asked for.
    pub within_radius: Option<WithinRadius>,
    /// Faces with at least one rest point.
    pub faces_hit: usize,
}

/// The landed members' reports of `group`, with its counts.
fn members<'a>(
    group: &LaunchGroup,
    by_id: &HashMap<&str, &'a FlightReport>,
) -> (Vec<&'a FlightReport>, MemberCounts) {
    let mut counts = MemberCounts {
        members: group.member_ids.len(),
        ..MemberCounts::default()
    };
    let mut landed = Vec::new();
    for id in &group.member_ids {
        match by_id.get(id.as_str()) {
            None => counts.missing += 1,
            Some(r) => match &r.outcome {
                Outcome::Landed if r.landing.is_some() => {
                    counts.landed += 1;
                    landed.push(*r);
                }
                Outcome::Landed | Outcome::Failed { .. } => counts.failed += 1,
                Outcome::Escaped => counts.escaped += 1,
                Outcome::StillFlying => counts.still_flying += 1,
            },
        }
    }
    (landed, counts)
}

/// Landing counts per face of the landed members of `group` (one entry per face of `body`; a
/// rest point on a face that does not exist is skipped).
pub fn landing_counts(body: &Body, group: &LaunchGroup, reports: &[FlightReport]) -> Vec<u32> {
    let by_id = index(reports);
    let (landed, _) = members(group, &by_id);
    let mut counts = vec![0u32; body.shape.face_count()];
    for r in landed {
        if let Some(l) = &r.landing
            && let Some(c) = counts.get_mut(l.face)
        {
            *c += 1;
        }
    }
    counts
}

/// Landings per m² of each face: `counts[f] / area(f)`.
pub fn density_per_m2(body: &Body, counts: &[u32]) -> Vec<f64> {
    counts
        .iter()
        .enumerate()
        .map(|(f, &c)| {
            let area = body.shape.face_area_m2(f);
            if area > 0.0 { f64::from(c) / area } else { 0.0 }
        })
        .collect()
}

fn index(reports: &[FlightReport]) -> HashMap<&str, &FlightReport> {
    reports.iter().map(|r| (r.id.as_str(), r)).collect()
}

/// The statistics of `group` from `reports` (matched by launch id) on `body`.
///
/// Only landed members enter the spreads, the fraction and the faces; escaped, still flying,
/// failed and missing members are counted and excluded. First contacts are those of the same
/// landed members, so the two spreads compare like with like.
///
/// # Errors
/// Bad options, or a target that cannot be placed.
pub fn group_statistics(
    body: &Body,
    group: &LaunchGroup,
    reports: &[FlightReport],
    options: &StatisticsOptions,
) -> Result<GroupStatistics> {
    options.validate()?;
    let by_id = index(reports);
    let (landed, counts) = members(group, &by_id);
    let rest_points: Vec<[f64; 3]> = landed
        .iter()
        .filter_map(|r| r.landing.as_ref().map(|l| l.pos_body_m))
        .collect();
    let first_points: Vec<[f64; 3]> = landed
        .iter()
        .map(|r| {
            r.contacts
                .first()
                .map_or_else(|| r.final_pos_body_m, |c| c.pos_body_m)
        })
        .collect();
    let rest = spread_of(body, &rest_points);
    let first_contact = spread_of(body, &first_points);
    let rest_vs_first_contact = match (rest.spread(), first_contact.spread()) {
        (Some(a), Some(b)) => {
            let area90 = |s: &super::Spread| {
                s.ellipses.get(1).map_or(0.0, |e| {
                    std::f64::consts::PI * e.semi_major_m * e.semi_minor_m
                })
            };
            let ratio = |x: f64, y: f64| (y > 0.0).then(|| x / y);
            Some(RestVsFirstContact {
                mean_shift_m: (Vector3::from(a.mean.pos_body_m) - Vector3::from(b.mean.pos_body_m))
                    .norm(),
                rms_ratio: ratio(a.rms_distance_m, b.rms_distance_m),
                area90_ratio: ratio(area90(a), area90(b)),
            })
        }
        _ => None,
    };
    let within_radius = match options.radius_m {
        None => None,
        Some(radius_m) => {
            let (target, target_from) = match &options.target {
                Some(t @ Target::LatLon { .. }) => (Some(resolve_target(body, t)?), "lat_lon"),
                Some(t @ Target::PointM(_)) => (Some(resolve_target(body, t)?), "point"),
                None => (rest.spread().map(|s| s.mean), "mean_rest_point"),
            };
            target.map(|target| {
                let t = Vector3::from(target.pos_body_m);
                let inside = rest_points
                    .iter()
                    .filter(|p| (Vector3::from(**p) - t).norm() <= radius_m)
                    .count();
                let n = rest_points.len();
                WithinRadius {
                    radius_m,
                    target,
                    target_from: target_from.into(),
                    inside,
                    landed: n,
                    fraction: (n > 0).then(|| inside as f64 / n as f64),
                }
            })
        }
    };
    let mut faces: Vec<usize> = landed
        .iter()
        .filter_map(|r| r.landing.as_ref().map(|l| l.face))
        .collect();
    faces.sort_unstable();
    faces.dedup();
    Ok(GroupStatistics {
        id: group.id.clone(),
        kind: group.kind,
        counts,
        rest,
        first_contact,
        rest_vs_first_contact,
        within_radius,
        faces_hit: faces.len(),
    })
}

/// The statistics of every group, in order.
///
/// # Errors
/// As [`group_statistics`].
pub fn run_statistics(
    body: &Body,
    groups: &[LaunchGroup],
    reports: &[FlightReport],
    options: &StatisticsOptions,
) -> Result<Vec<GroupStatistics>> {
    groups
        .iter()
        .map(|g| group_statistics(body, g, reports, options))
        .collect()
}
