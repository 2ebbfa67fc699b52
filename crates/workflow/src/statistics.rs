//! Landing dispersion statistics of a run (`dynamics::statistics`) for both front ends: which
//! groups, the statistics document that `fly` and `spinfall stats` write as statistics.json,
//! and the per-face landing density written as landing_density.csv.

use serde::Serialize;
use spinfall_dynamics::statistics::{
    GroupStatistics, LaunchGroup, StatisticsOptions, landing_counts, run_statistics,
    scenario_groups,
};
use spinfall_dynamics::{Body, FlightReport};
use spinfall_gravity::text::excerpt;

use crate::error::{Result, WorkflowError};
use spinfall_dynamics::scenario::Scenario;

/// What to compute.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct StatisticsRequest {
    /// Only this group (`None`: every group of the scenario).
    pub group: Option<String>,
    /// Target and radius.
    pub options: StatisticsOptions,
}

/// How the statistics are defined, written into statistics.json so the file explains itself.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Definitions {
    /// Which members count.
    pub members: &'static str,
    /// The mean point.
    pub mean_point: &'static str,
    /// The plane and the covariance.
    pub covariance: &'static str,
    /// The ellipses.
    pub ellipses: &'static str,
    /// The fraction within a radius.
    pub within_radius: &'static str,
}

/// The definitions of [`Definitions`].
pub const DEFINITIONS: Definitions = Definitions {
    members: "only members that came to rest (landed) enter the statistics; escaped, still \
              flying, failed and missing members are counted and excluded; fewer than 3 landed \
              members give status too_few",
    mean_point: "arithmetic mean of the body-frame points, carried along the radial line from \
                 the body-frame origin (the centre of mass when recentred) to the outermost \
                 surface point on it",
    covariance: "east/north coordinates by orthographic projection onto the plane through the \
                 mean point perpendicular to the radial line (north = spin axis projected, east \
                 = north x up); covariance divided by n",
    ellipses: "x^T C^-1 x = k^2 with k = sqrt(-2 ln(1 - p)) holds p of a 2-D Gaussian (so the \
               1/2/3-sigma ellipses hold 39.3/86.5/98.9 %); semi-axes in m, orientation as the \
               azimuth of the major axis from north toward east; fraction_inside is the share of \
               the points actually inside",
    within_radius: "straight-line body-frame distance from each rest point to the target's \
                    surface point (lat/lon: outermost surface point on the radial line; a point: \
                    the nearest surface point; none: the mean rest point)",
};

/// The statistics document (statistics.json).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunStatistics {
    /// Always `"spinfall-statistics"`.
    pub format: &'static str,
    /// Always 1.
    pub version: u32,
    /// The caution that goes with every result.
    pub note: &'static str,
    /// The body's name.
    pub body: String,
    /// The target and radius asked for.
    pub options: StatisticsOptions,
    /// How each value is defined.
    pub definitions: Definitions,
    /// One entry per group.
    pub groups: Vec<GroupStatistics>,
}

/// Landings per face, per group (landing_density.csv).
#[derive(Debug, Clone, PartialEq)]
pub struct LandingDensity {
    /// Group ids, in column order.
    pub group_ids: Vec<String>,
    /// Counts per face, one vector per group.
    pub counts: Vec<Vec<u32>>,
    /// Counts per face over every launch of any group, each launch once.
    pub total: Vec<u32>,
}

/// The groups asked for: every group of `scenario`, or the one named.
///
/// # Errors
/// A named group that the scenario does not have (the message names those it has).
pub fn chosen_groups(scenario: &Scenario, group: Option<&str>) -> Result<Vec<LaunchGroup>> {
    let all = scenario_groups(scenario);
    let Some(name) = group else {
        return Ok(all);
    };
    match all.iter().find(|g| g.id == name) {
        Some(g) => Ok(vec![g.clone()]),
        None => {
            let known: Vec<&str> = all.iter().map(|g| g.id.as_str()).take(12).collect();
            Err(WorkflowError::Invalid(format!(
                "--group {}: the scenario has no such fan or dispersion group ({})",
                excerpt(name),
                if known.is_empty() {
                    "it has none".to_string()
                } else {
                    format!("it has {}", known.join(", "))
                }
            )))
        }
    }
}

/// The statistics and the landing density of `reports` for the groups asked for, or `None`
/// when the scenario has no fan or dispersion group.
///
/// # Errors
/// A group not in the scenario; bad options (radius, target).
pub fn compute_statistics(
    body: &Body,
    scenario: &Scenario,
    reports: &[FlightReport],
    request: &StatisticsRequest,
) -> Result<Option<(RunStatistics, LandingDensity)>> {
    let groups = chosen_groups(scenario, request.group.as_deref())?;
    if groups.is_empty() {
        return Ok(None);
    }
    let invalid = |e: spinfall_dynamics::DynamicsError| WorkflowError::Invalid(e.to_string());
    let stats = run_statistics(body, &groups, reports, &request.options).map_err(invalid)?;
    let counts: Vec<Vec<u32>> = groups
        .iter()
        .map(|g| landing_counts(body, g, reports))
        .collect();
    let mut union: Vec<String> = groups.iter().flat_map(|g| g.member_ids.clone()).collect();
    union.sort_unstable();
    union.dedup();
    let total = landing_counts(body, &LaunchGroup::explicit("all", union), reports);
    Ok(Some((
        RunStatistics {
            format: "spinfall-statistics",
            version: 1,
            note: crate::CAUTION,
            body: body.name.clone(),
            options: request.options,
            definitions: DEFINITIONS,
            groups: stats,
        },
        LandingDensity {
            group_ids: groups.iter().map(|g| g.id.clone()).collect(),
            counts,
            total,
        },
    )))
}

/// The rest ellipses of every group of `stats` as guides for the body-fixed view: traced with
/// 96 segments and raised by 0.2 % of the body's equivalent radius so the surface does not hide
/// them.
pub fn landing_ellipse_guides(
    body: &Body,
    stats: &RunStatistics,
) -> Vec<spinfall_scene::LandingEllipse> {
    let lift_m = 2e-3 * body.shape.mass_properties().equivalent_radius_m;
    spinfall_dynamics::statistics::ellipse_polylines(body, &stats.groups, false, 96, lift_m)
        .into_iter()
        .map(|e| spinfall_scene::LandingEllipse {
            group: e.group,
            probability: e.probability,
            points_body_m: e.points_body_m,
        })
        .collect()
}

/// Landings per m² of each face over every landed launch of `reports` (rest points), for the
/// surface map's landing layer ([`SurfaceField::LandingDensity`]); `None` when no launch landed.
///
/// [`SurfaceField::LandingDensity`]: spinfall_dynamics::surface_map::SurfaceField::LandingDensity
pub fn landing_density_layer(body: &Body, reports: &[FlightReport]) -> Option<Vec<f64>> {
    let all = spinfall_dynamics::statistics::LaunchGroup::explicit(
        "all",
        reports.iter().map(|r| r.id.clone()).collect(),
    );
    let counts = spinfall_dynamics::statistics::landing_counts(body, &all, reports);
    if counts.iter().all(|&c| c == 0) {
        return None;
    }
    Some(spinfall_dynamics::statistics::density_per_m2(body, &counts))
}
