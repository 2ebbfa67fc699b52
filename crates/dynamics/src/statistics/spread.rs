//! The spread of a set of surface points: mean point, east/north covariance, error ellipses.

use nalgebra::{Point3, Unit, Vector3};
use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::site::{LocalFrame, lat_lon_deg};

/// Probabilities of the error ellipses reported for every spread: 50 %, 90 % and 99 %.
pub const ELLIPSE_PROBABILITIES: [f64; 3] = [0.5, 0.9, 0.99];

/// Fewest points that give a spread; fewer give [`SpreadResult::TooFew`].
pub const MIN_POINTS: usize = 3;

/// Scale `k` of the ellipse `x^T C^-1 x = k^2` that holds probability `p` of a 2-D Gaussian:
/// `k = sqrt(-2 ln(1 - p))` (the squared Mahalanobis distance of a 2-D Gaussian is chi-square
/// with 2 degrees of freedom, whose distribution function is `1 - exp(-k^2 / 2)`).
///
/// So the 1-, 2- and 3-sigma ellipses (k = 1, 2, 3) hold 39.3 %, 86.5 % and 98.9 %, not the
/// 68.3/95.4/99.7 % of one dimension. `p` must be in [0, 1).
pub fn probability_scale(p: f64) -> f64 {
    (-2.0 * (1.0 - p).ln()).sqrt()
}

/// Probability held by the ellipse of scale `k` (the inverse of [`probability_scale`]):
/// `1 - exp(-k^2 / 2)`.
pub fn scale_probability(k: f64) -> f64 {
    1.0 - (-0.5 * k * k).exp()
}

/// A point on the surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SurfacePoint {
    /// Body-frame position, m.
    pub pos_body_m: [f64; 3],
    /// Planetocentric latitude, deg.
    pub lat_deg: f64,
    /// Planetocentric longitude, deg east.
    pub lon_deg: f64,
    /// Face it lies on.
    pub face: usize,
}

/// The outermost surface point on the radial line from the body-frame origin through
/// direction `dir` (the point met first coming in from outside), or `None` without one.
pub(crate) fn radial_surface_point(body: &Body, dir: &Vector3<f64>) -> Option<SurfacePoint> {
    let d = Unit::try_new(*dir, 1e-300)?;
    let far = 2.0 * body.brillouin_radius_m() + 1.0;
    let origin = Point3::from(d.into_inner() * far);
    let hit = body.shape.ray_first_hit(&origin, &(-d.into_inner()), far)?;
    let (lat_deg, lon_deg) = lat_lon_deg(body, &hit.point_m);
    Some(SurfacePoint {
        pos_body_m: hit.point_m.coords.into(),
        lat_deg,
        lon_deg,
        face: hit.face,
    })
}

/// The local tangent frame at a mean point (unit vectors in the body frame).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TangentFrame {
    /// Local east.
    pub east: [f64; 3],
    /// Local north (the spin axis projected on the tangent plane).
    pub north: [f64; 3],
    /// Local up: the radial direction from the body-frame origin.
    pub up: [f64; 3],
    /// True at a pole, where north is body +x projected instead (see [`crate::site`]).
    pub pole_fallback: bool,
}

/// An error ellipse of a spread, centred on the mean point in its tangent plane.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Ellipse {
    /// Probability it holds for a 2-D Gaussian.
    pub probability: f64,
    /// Its scale in standard deviations, `sqrt(-2 ln(1 - p))`.
    pub scale_k: f64,
    /// Semi-major axis, m.
    pub semi_major_m: f64,
    /// Semi-minor axis, m.
    pub semi_minor_m: f64,
    /// Azimuth of the major axis from north toward east, deg, in [0, 180).
    pub major_azimuth_deg: f64,
    /// Points inside or on it (squared Mahalanobis distance <= k^2).
    pub points_inside: usize,
    /// `points_inside` over the points of the spread.
    pub fraction_inside: f64,
}

/// The spread of at least [`MIN_POINTS`] surface points.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Spread {
    /// Points it is computed from.
    pub points: usize,
    /// The mean point: the arithmetic mean of the body-frame points, carried along the radial
    /// line from the body-frame origin to the outermost surface point on that line.
    pub mean: SurfacePoint,
    /// How far the arithmetic mean lies below that surface point, m (large when the points are
    /// spread over a large part of the body, and the tangent plane describes them poorly).
    pub mean_depth_m: f64,
    /// The tangent frame at the mean point.
    pub frame: TangentFrame,
    /// Covariance of the east/north coordinates, `[[ee, en], [en, nn]]`, m² (divided by the
    /// number of points: the maximum-likelihood estimate; times `n / (n - 1)` for the unbiased
    /// one).
    pub covariance_en_m2: [[f64; 2]; 2],
    /// Standard deviation east, m.
    pub sigma_east_m: f64,
    /// Standard deviation north, m.
    pub sigma_north_m: f64,
    /// Correlation of east and north (0 when either deviation is 0).
    pub correlation: f64,
    /// Root-mean-square distance of the points from the mean point in the tangent plane, m.
    pub rms_distance_m: f64,
    /// Largest such distance, m.
    pub max_distance_m: f64,
    /// Ellipses holding 50 %, 90 % and 99 % ([`ELLIPSE_PROBABILITIES`]).
    pub ellipses: Vec<Ellipse>,
    /// Tangent-plane east/north coordinates of each point, m (order of the input).
    #[serde(skip)]
    pub coords_en_m: Vec<[f64; 2]>,
}

/// A spread, or why there is none.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum SpreadResult {
    /// Computed.
    Ok(Box<Spread>),
    /// Fewer than [`MIN_POINTS`] points.
    TooFew {
        /// Points given.
        points: usize,
        /// Points needed.
        needed: usize,
    },
    /// The mean point is undefined.
    Undefined {
        /// Points given.
        points: usize,
        /// Why.
        reason: String,
    },
}

impl SpreadResult {
    /// The spread when computed.
    pub fn spread(&self) -> Option<&Spread> {
        match self {
            SpreadResult::Ok(s) => Some(s),
            _ => None,
        }
    }
}

/// Principal variances (major, minor; m²) and the azimuth of the major axis (from north toward
/// east, deg in [0, 180)) of the 2x2 covariance `[[ee, en], [en, nn]]`, in closed form:
/// `lambda = (ee + nn)/2 ± sqrt(((ee - nn)/2)^2 + en^2)`, major axis at the angle
/// `0.5 atan2(2 en, ee - nn)` from east.
pub fn principal_axes(cov: &[[f64; 2]; 2]) -> (f64, f64, f64) {
    let (ee, en, nn) = (cov[0][0], cov[0][1], cov[1][1]);
    let mid = 0.5 * (ee + nn);
    let half = (0.25 * (ee - nn).powi(2) + en * en).sqrt();
    let major = mid + half;
    let minor = (mid - half).max(0.0);
    let from_east_deg = 0.5 * (2.0 * en).atan2(ee - nn).to_degrees();
    let azimuth = (90.0 - from_east_deg).rem_euclid(180.0);
    (major, minor, azimuth)
}

/// Covariance (1/n) of 2-D coordinates about their mean, with the mean.
pub fn covariance_2d(coords: &[[f64; 2]]) -> ([f64; 2], [[f64; 2]; 2]) {
    let n = coords.len().max(1) as f64;
    let mean = [
        coords.iter().map(|c| c[0]).sum::<f64>() / n,
        coords.iter().map(|c| c[1]).sum::<f64>() / n,
    ];
    let (mut ee, mut en, mut nn) = (0.0, 0.0, 0.0);
    for c in coords {
        let (x, y) = (c[0] - mean[0], c[1] - mean[1]);
        ee += x * x;
        en += x * y;
        nn += y * y;
    }
    (mean, [[ee / n, en / n], [en / n, nn / n]])
}

/// Squared Mahalanobis distance of `d` for the covariance `cov`; on a degenerate axis (zero
/// variance) a point off the line is infinitely far and a point on it is at distance 0 there.
fn mahalanobis2(cov: &[[f64; 2]; 2], d: [f64; 2]) -> f64 {
    let (major, minor, az) = principal_axes(cov);
    let a = az.to_radians();
    // Major-axis unit vector in (east, north): azimuth from north toward east.
    let u = [a.sin(), a.cos()];
    let along = d[0] * u[0] + d[1] * u[1];
    let across = -d[0] * u[1] + d[1] * u[0];
    let scale = major.max(minor).max(f64::MIN_POSITIVE);
    let tol = 1e-12 * scale;
    let term = |x: f64, var: f64| {
        if var > tol {
            x * x / var
        } else if x.abs() <= 1e-9 * scale.sqrt() {
            0.0
        } else {
            f64::INFINITY
        }
    };
    term(along, major) + term(across, minor)
}

/// The spread of body-frame surface points `points_m` on `body`; see [`Spread`] for the
/// definitions. Fewer than [`MIN_POINTS`] give [`SpreadResult::TooFew`]; points whose mean is at
/// the origin (spread all round the body) give [`SpreadResult::Undefined`].
pub fn spread_of(body: &Body, points_m: &[[f64; 3]]) -> SpreadResult {
    let n = points_m.len();
    if n < MIN_POINTS {
        return SpreadResult::TooFew {
            points: n,
            needed: MIN_POINTS,
        };
    }
    let mean3 = points_m
        .iter()
        .fold(Vector3::zeros(), |acc, p| acc + Vector3::from(*p))
        / n as f64;
    let reach = points_m
        .iter()
        .map(|p| Vector3::from(*p).norm())
        .fold(0.0, f64::max);
    if mean3.norm().is_nan() || mean3.norm() <= 1e-9 * reach {
        return SpreadResult::Undefined {
            points: n,
            reason: "the points surround the body's centre: their mean lies at the origin, so \
                     no direction gives a mean point"
                .into(),
        };
    }
    let Some(mean) = radial_surface_point(body, &mean3) else {
        return SpreadResult::Undefined {
            points: n,
            reason: "no surface on the radial line through the mean of the points".into(),
        };
    };
    let m = Vector3::from(mean.pos_body_m);
    let up = Unit::new_normalize(mean3);
    let (frame, pole_fallback) = LocalFrame::new(up, &body.spin.axis_body);
    let (e, nth) = (frame.east.into_inner(), frame.north.into_inner());
    let coords: Vec<[f64; 2]> = points_m
        .iter()
        .map(|p| {
            let d = Vector3::from(*p) - m;
            [d.dot(&e), d.dot(&nth)]
        })
        .collect();
    let (cmean, cov) = covariance_2d(&coords);
    let (sigma_east_m, sigma_north_m) = (cov[0][0].sqrt(), cov[1][1].sqrt());
    let correlation = if sigma_east_m > 0.0 && sigma_north_m > 0.0 {
        (cov[0][1] / (sigma_east_m * sigma_north_m)).clamp(-1.0, 1.0)
    } else {
        0.0
    };
    let dist: Vec<f64> = coords.iter().map(|c| c[0].hypot(c[1])).collect();
    let rms_distance_m = (dist.iter().map(|d| d * d).sum::<f64>() / n as f64).sqrt();
    let max_distance_m = dist.iter().copied().fold(0.0, f64::max);
    let (major, minor, major_azimuth_deg) = principal_axes(&cov);
    let m2: Vec<f64> = coords
        .iter()
        .map(|c| mahalanobis2(&cov, [c[0] - cmean[0], c[1] - cmean[1]]))
        .collect();
    let ellipses = ELLIPSE_PROBABILITIES
        .iter()
        .map(|&probability| {
            let k = probability_scale(probability);
            // A relative margin so that points exactly on the ellipse count as inside.
            let inside = m2.iter().filter(|&&d2| d2 <= k * k * (1.0 + 1e-9)).count();
            Ellipse {
                probability,
                scale_k: k,
                semi_major_m: k * major.sqrt(),
                semi_minor_m: k * minor.sqrt(),
                major_azimuth_deg,
                points_inside: inside,
                fraction_inside: inside as f64 / n as f64,
            }
        })
        .collect();
    SpreadResult::Ok(Box::new(Spread {
        points: n,
        mean,
        mean_depth_m: (m - mean3).norm(),
        frame: TangentFrame {
            east: e.into(),
            north: nth.into(),
            up: up.into_inner().into(),
            pole_fallback,
        },
        covariance_en_m2: cov,
        sigma_east_m,
        sigma_north_m,
        correlation,
        rms_distance_m,
        max_distance_m,
        ellipses,
        coords_en_m: coords,
    }))
}
