//! Landing dispersion statistics of groups of launches: where a fan or a dispersion set comes
//! to rest, how widely, and how that compares with where it first touched the surface.
//!
//! **Groups** ([`scenario_groups`]): one per scenario entry with a fan or a dispersion set (the
//! launches it expands to: `E/k`, `E#j` or `E/k#j`), one more per fan member of an entry with
//! both (`E/k`, its dispersion set), and any explicit list of ids ([`LaunchGroup::explicit`]).
//!
//! **Members.** Only members that came to rest (`landed`) enter the statistics; escaped, still
//! flying, failed and missing members are counted ([`MemberCounts`]) and excluded. Fewer than
//! [`MIN_POINTS`] (3) landed members give [`SpreadResult::TooFew`], never NaN.
//!
//! **Mean point.** The arithmetic mean of the body-frame points, carried along the radial line
//! from the body-frame origin (the centre of mass when the scenario recentres the shape, the
//! default) to the outermost surface point on that line, the same rule as a site given by
//! latitude and longitude. [`Spread::mean_depth_m`] says how far below the surface the
//! arithmetic mean lies.
//!
//! **Covariance.** In the tangent plane at the mean point, perpendicular to the radial line
//! ("up"), with north the spin axis projected on it and east = north × up (the convention of
//! [`crate::site`]; on a sphere this is the surface's tangent plane). Each point is projected
//! orthographically: its east and north coordinates are the dot products of (point − mean
//! point) with east and north. Since the mean point lies on the radial line through the
//! arithmetic mean, these coordinates average to zero. The covariance divides by n (the
//! maximum-likelihood estimate).
//!
//! **Ellipses.** For a 2-D Gaussian the squared Mahalanobis distance is chi-square with 2
//! degrees of freedom, so the ellipse `x^T C^-1 x = k^2` holds `1 - exp(-k^2/2)`: the 50, 90
//! and 99 % ellipses have `k = sqrt(-2 ln(1 - p))` = 1.177, 2.146, 3.035, and the 1-, 2- and
//! 3-sigma ellipses hold only 39.3, 86.5 and 98.9 %. Semi-axes are `k sqrt(lambda)` of the
//! covariance's eigenvalues, in m, and the orientation is the azimuth of the major axis from
//! north toward east, in [0, 180) deg. Each ellipse also reports the fraction of the points
//! inside it: landings are not Gaussian (bounces, terrain), so compare.
//!
//! **Fraction within a radius** of a target (latitude/longitude: the outermost surface point on
//! the radial line; a point: the nearest surface point; none: the mean rest point), by
//! straight-line distance in the body frame.
//!
//! **Rest against first contact.** Both spreads are computed over the same landed members, and
//! [`RestVsFirstContact`] compares their means and sizes.
//!
//! **Density** ([`landing_counts`], [`density_per_m2`]): rest points counted on the face they
//! rest on, and per m² of that face. The counts sum to the landed members.
//!
//! **Drawing** ([`ellipse_polylines`]): the ellipses traced in the tangent plane and carried
//! along radial lines to the surface.
//!
//! A tangent plane describes a spread small compared with the body; for a spread over a large
//! part of a small body, read the ellipses with care. Spinfall is a research and planning tool,
//! **not flight-certified**.

mod draw;
mod groups;
mod spread;
mod summary;

pub use draw::{EllipsePolyline, SpreadKind, drape_ellipse, ellipse_polylines};
pub use groups::{GroupKind, LaunchGroup, scenario_groups};
pub use spread::{
    ELLIPSE_PROBABILITIES, Ellipse, MIN_POINTS, Spread, SpreadResult, SurfacePoint, TangentFrame,
    covariance_2d, principal_axes, probability_scale, scale_probability, spread_of,
};
pub use summary::{
    GroupStatistics, MemberCounts, RestVsFirstContact, StatisticsOptions, Target, WithinRadius,
    density_per_m2, group_statistics, landing_counts, resolve_target, run_statistics,
};
