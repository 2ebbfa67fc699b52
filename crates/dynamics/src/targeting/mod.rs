//! Targeting (hop planning): the launch from a surface site whose **first contact** with the
//! surface is a chosen target point.
//!
//! **Method.** A shooting method on the full dynamics: every trial is flown by [`crate::fly_all`]
//! with the run's own integrator settings, gravity model, spin and Sun, with two changes that do
//! not alter the arc up to the first contact: contacts stop the flight (`max_bounces = 0`) and no
//! trajectory samples are kept. The flight time of the trials is bounded by
//! `max(10 t_guess, 2 T_orbit)` (at most the run's `max_time_s`), where `t_guess` is the guess's
//! time of flight and `T_orbit` the period of a circular orbit of the launch radius.
//!
//! 1. *Starting guess* ([`guess`]): free flight over a sphere through the launch point and the
//!    target, in the field of a point mass whose gravity along the radius is the local
//!    effective gravity (gravity plus the spin's centrifugal term). The azimuth is that of the
//!    great circle toward the target. This is the free-flight range equation of Bate, Mueller &
//!    White (1971, *Fundamentals of Astrodynamics*, ch. 6), generalised to launch and target at
//!    different radii.
//! 2. *Newton iterations* on two unknowns, the azimuth and either the speed (fixed elevation) or
//!    the elevation (fixed speed). The residual is the miss vector (first contact minus target)
//!    in the target's tangent plane (downrange, crossrange). The Jacobian comes from forward
//!    finite differences (0.05° in angles, 0.1 % in speed) and is then kept up to date by
//!    Broyden's update; a step that does not reduce the miss is halved (up to 5 times), after
//!    which the Jacobian is differenced afresh. The speed never exceeds the escape speed in the
//!    launch direction (zero two-body energy in the body's potential); elevations stay in
//!    [0.5°, 89.5°].
//! 3. *Minimum speed*: the least speed over elevations of the fixed-elevation solutions,
//!    found by successive parabolas through the three best elevations, starting from the guess's
//!    minimum-energy elevation; it stops when those three span less than 0.5° or the speeds
//!    agree to 1e-5.
//! 4. *Fixed speed*: the low arc has the landing point moving downrange as the elevation rises,
//!    the high arc the opposite; a solution on the other arc is started again once from the
//!    right side.
//!
//! **Miss distance** is the straight-line distance between the first contact point and the
//! target point (not along the surface); a solution has it within `miss_tolerance_m`.
//!
//! **Sensitivities** ([`Sensitivity`]) are the distance the first contact point moves for a
//! launch error of 1 cm/s in speed, 1° in azimuth or 1° in elevation, by central differences
//! about the solution (±0.1 % in speed, ±0.05° in angle; 6 more flights). They are linear
//! estimates: multiply by the expected error for a small error; a dispersion set tests large
//! ones.
//!
//! **Limits.** Only the first contact counts (bounces are not targeted). A target is
//! *unreachable* ([`TargetingStatus::Unreachable`], with a reason) when every speed below the
//! local escape speed falls short, when no trial comes near it (terrain in the way, or a first
//! contact elsewhere), when no trial touches the surface again, or when the flight budget
//! ([`TargetRequest::max_flights`]) is used up. Work ends after at most that many flights; it
//! never hangs. The guess ignores the Coriolis force and the shape, so on fast spinners and very
//! irregular bodies more iterations are needed. Spinfall is for research and planning, **not
//! flight-certified**.

mod guess;
mod shoot;

use nalgebra::{Point3, Vector3};
use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::launch::LaunchSpec;
use crate::site::{Site, lat_lon_deg};
use crate::sunlight::Particle;

pub use shoot::solve_target;

/// Default largest miss distance of a solution, m.
pub const DEFAULT_MISS_TOLERANCE_M: f64 = 0.5;
/// Default most flights one targeting problem may use.
pub const DEFAULT_MAX_FLIGHTS: usize = 200;
/// What the miss distance measures.
pub const MISS_MEASURE: &str = "straight-line distance from the first contact point to the target";

/// A target as given: a planetocentric latitude/longitude, a face, or a body-frame point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Target {
    /// The outermost surface point along the radial line at this latitude and longitude, deg.
    LatLon {
        /// Planetocentric latitude, deg.
        lat_deg: f64,
        /// Longitude, deg east.
        lon_deg: f64,
    },
    /// The centroid of a face.
    Face(usize),
    /// The surface point nearest to this body-frame point, m (the point is snapped to the
    /// surface; [`TargetPoint::snap_distance_m`] says how far).
    PointM([f64; 3]),
}

/// A target placed on the surface.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TargetPoint {
    /// The target on the surface, body frame, m.
    pub point_body_m: [f64; 3],
    /// The face it lies on.
    pub face: usize,
    /// Planetocentric latitude, deg.
    pub lat_deg: f64,
    /// Longitude, deg east.
    pub lon_deg: f64,
    /// For a `point_m` target: the point as given, before it was snapped to the surface.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub snapped_from_m: Option<[f64; 3]>,
    /// For a `point_m` target: how far the given point was from the surface, m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub snap_distance_m: Option<f64>,
}

impl TargetPoint {
    /// Places `target` on the surface of `body`.
    ///
    /// # Errors
    /// A face that does not exist, a latitude outside [-90, 90], a value that is not finite, or
    /// a radial line that meets no surface; each message names the value.
    pub fn resolve(body: &Body, target: &Target) -> Result<TargetPoint> {
        let bad = |m: String| DynamicsError::param("target", m);
        let (point, face, snapped_from_m, snap_distance_m) = match *target {
            Target::LatLon { lat_deg, lon_deg } => {
                let site = Site::from_lat_lon(body, lat_deg, lon_deg, Default::default())
                    .map_err(|e| bad(strip_site(e)))?;
                (site.point_body_m, site.face, None, None)
            }
            Target::Face(face) => {
                if face >= body.shape.face_count() {
                    return Err(bad(format!(
                        "face {face} does not exist (the shape has {} faces, 0 to {})",
                        body.shape.face_count(),
                        body.shape.face_count().saturating_sub(1)
                    )));
                }
                (body.shape.face_centroid(face), face, None, None)
            }
            Target::PointM(p) => {
                if !p.iter().all(|v| v.is_finite()) {
                    return Err(bad(format!("point_m {p:?} is not finite")));
                }
                let hit = body.shape.nearest_surface_point(&Point3::from(p));
                (hit.point_m, hit.face, Some(p), Some(hit.t))
            }
        };
        let (lat_deg, lon_deg) = lat_lon_deg(body, &point);
        Ok(TargetPoint {
            point_body_m: point.coords.into(),
            face,
            lat_deg,
            lon_deg,
            snapped_from_m,
            snap_distance_m,
        })
    }
}

fn strip_site(e: DynamicsError) -> String {
    match e {
        DynamicsError::Site(m) => m,
        other => other.to_string(),
    }
}

/// Which arc a fixed-speed solution takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ArcChoice {
    /// The flatter arc (below the elevation of longest range).
    Low,
    /// The lofted arc (above it).
    High,
}

/// What is held fixed or minimised.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TargetMode {
    /// The least launch speed that reaches the target (azimuth and elevation free).
    MinSpeed,
    /// A given elevation above the local horizontal, deg in (0, 90); speed and azimuth free.
    FixedElevation {
        /// Elevation, deg.
        elevation_deg: f64,
    },
    /// A given speed, m/s; elevation (on the chosen arc) and azimuth free.
    FixedSpeed {
        /// Speed relative to the surface, m/s.
        speed_m_s: f64,
        /// Low or high arc.
        arc: ArcChoice,
    },
}

impl TargetMode {
    /// Checks the mode's number, naming it.
    pub fn check(&self) -> Result<()> {
        match *self {
            TargetMode::MinSpeed => Ok(()),
            TargetMode::FixedElevation { elevation_deg: e } => {
                if (0.5..=89.5).contains(&e) {
                    Ok(())
                } else {
                    Err(DynamicsError::param(
                        "fixed_elevation_deg",
                        format!("must be in [0.5, 89.5] deg, got {e}"),
                    ))
                }
            }
            TargetMode::FixedSpeed { speed_m_s: v, .. } => {
                if v.is_finite() && v > 0.0 {
                    Ok(())
                } else {
                    Err(DynamicsError::param(
                        "fixed_speed_m_s",
                        format!("must be a finite number > 0, got {v}"),
                    ))
                }
            }
        }
    }
}

/// One targeting problem: from `site` to `target` in `mode`.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetRequest {
    /// The launch site.
    pub site: Site,
    /// The target on the surface.
    pub target: TargetPoint,
    /// What is fixed or minimised.
    pub mode: TargetMode,
    /// Largest miss distance of a solution, m (> 0).
    pub miss_tolerance_m: f64,
    /// Start height above the site along its up, m (as the launch will fly).
    pub start_altitude_m: f64,
    /// The grain, for radiation pressure when the settings have a Sun.
    pub particle: Option<Particle>,
    /// Most flights to use (>= 10).
    pub max_flights: usize,
}

impl TargetRequest {
    /// A request with the default tolerance, start altitude and flight budget.
    pub fn new(site: Site, target: TargetPoint, mode: TargetMode) -> TargetRequest {
        TargetRequest {
            site,
            target,
            mode,
            miss_tolerance_m: DEFAULT_MISS_TOLERANCE_M,
            start_altitude_m: crate::launch::DEFAULT_START_ALTITUDE_M,
            particle: None,
            max_flights: DEFAULT_MAX_FLIGHTS,
        }
    }
}

/// Whether a target was reached.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TargetingStatus {
    /// A launch whose first contact is within the tolerance of the target.
    Solved,
    /// No such launch (the report's `reason` says why).
    Unreachable,
}

/// A launch velocity relative to the rotating surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct LaunchVelocity {
    /// Speed, m/s.
    pub speed_m_s: f64,
    /// Azimuth from local north toward east, deg in [0, 360).
    pub azimuth_deg: f64,
    /// Elevation above the local horizontal, deg.
    pub elevation_deg: f64,
    /// The velocity in the site's east/north/up frame, m/s.
    pub enu_m_s: [f64; 3],
    /// The velocity in the body frame, m/s.
    pub body_m_s: [f64; 3],
}

/// How far the first contact point moves per launch error (linearised, central differences).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Sensitivity {
    /// Metres per cm/s of speed error (`None` if a differenced flight touched nothing).
    pub m_per_cm_s: Option<f64>,
    /// Metres per degree of azimuth error.
    pub m_per_deg_azimuth: Option<f64>,
    /// Metres per degree of elevation error.
    pub m_per_deg_elevation: Option<f64>,
    /// Flight-time change per cm/s of speed error, s.
    pub flight_time_s_per_cm_s: Option<f64>,
    /// Half-step of the speed differences, m/s.
    pub speed_step_m_s: f64,
    /// Half-step of the angle differences, deg.
    pub angle_step_deg: f64,
}

/// The starting guess (sphere model, see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Guess {
    /// Speed, m/s (`None` where the sphere model has no conic for the mode).
    pub speed_m_s: Option<f64>,
    /// Azimuth of the great circle toward the target, deg.
    pub azimuth_deg: f64,
    /// Elevation, deg.
    pub elevation_deg: Option<f64>,
    /// Angle between launch point and target seen from the centre of mass, deg.
    pub range_angle_deg: f64,
    /// Gravitational parameter of the sphere model (local effective gravity times r²), m³/s².
    pub effective_gm_m3_s2: f64,
}

/// The answer to a targeting problem; serialised under `targeting` in results.json.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TargetingReport {
    /// Solved or unreachable.
    pub status: TargetingStatus,
    /// Why the target is unreachable.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reason: Option<String>,
    /// The mode, as in the scenario.
    pub mode: TargetMode,
    /// The target on the surface.
    pub target: TargetPoint,
    /// Largest miss distance asked for, m.
    pub miss_tolerance_m: f64,
    /// What the miss distance measures.
    pub miss_measure: String,
    /// The solution (solved) or the launch that came closest (unreachable).
    pub launch: Option<LaunchVelocity>,
    /// Time from launch to the first contact of `launch`, s.
    pub flight_time_s: Option<f64>,
    /// Miss distance of `launch`, m.
    pub miss_m: Option<f64>,
    /// First contact point of `launch`, body frame, m.
    pub first_contact_body_m: Option<[f64; 3]>,
    /// Sensitivity of the first contact point to launch errors (solved only).
    pub sensitivity: Option<Sensitivity>,
    /// The starting guess.
    pub guess: Guess,
    /// Flights used, the sensitivity flights included.
    pub flights: usize,
    /// The caution that goes with every result.
    pub note: String,
}

impl TargetingReport {
    /// True when a launch reaching the target was found.
    pub fn solved(&self) -> bool {
        self.status == TargetingStatus::Solved
    }

    /// The solved launch as a [`LaunchSpec`] from `site` (`None` unless solved).
    pub fn launch_spec(
        &self,
        id: impl Into<String>,
        site: &Site,
        start_altitude_m: f64,
    ) -> Option<LaunchSpec> {
        let l = self.launch.filter(|_| self.solved())?;
        Some(LaunchSpec {
            id: id.into(),
            site: site.clone(),
            speed_m_s: l.speed_m_s,
            azimuth_deg: l.azimuth_deg,
            elevation_deg: l.elevation_deg,
            start_altitude_m,
        })
    }
}

/// The caution recorded with every targeting report.
pub const TARGETING_NOTE: &str = "Linearised sensitivities and a shooting solution on the model \
     dynamics; Spinfall is for research and planning, not flight-certified.";

impl Serialize for TargetMode {
    fn serialize<S: serde::Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        match *self {
            TargetMode::MinSpeed => s.serialize_str("min_speed"),
            TargetMode::FixedElevation { elevation_deg } => {
                let mut m = s.serialize_map(Some(1))?;
                m.serialize_entry("fixed_elevation_deg", &elevation_deg)?;
                m.end()
            }
            TargetMode::FixedSpeed { speed_m_s, arc } => {
                let mut m = s.serialize_map(Some(2))?;
                m.serialize_entry("fixed_speed_m_s", &speed_m_s)?;
                m.serialize_entry("arc", &arc)?;
                m.end()
            }
        }
    }
}

const MODE_EXPECTED: &str = "\"min_speed\", {\"fixed_elevation_deg\": e} or \
     {\"fixed_speed_m_s\": v, \"arc\": \"low\" | \"high\"}";

impl<'de> Deserialize<'de> for TargetMode {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        struct ModeVisitor;
        impl<'de> serde::de::Visitor<'de> for ModeVisitor {
            type Value = TargetMode;
            fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str(MODE_EXPECTED)
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> std::result::Result<TargetMode, E> {
                match v {
                    "min_speed" => Ok(TargetMode::MinSpeed),
                    _ => Err(E::invalid_value(serde::de::Unexpected::Str(v), &self)),
                }
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(
                self,
                mut map: A,
            ) -> std::result::Result<TargetMode, A::Error> {
                use serde::de::Error;
                let (mut elevation, mut speed, mut arc) = (None, None, None);
                while let Some(key) = map.next_key::<String>()? {
                    match key.as_str() {
                        "fixed_elevation_deg" => elevation = Some(map.next_value::<f64>()?),
                        "fixed_speed_m_s" => speed = Some(map.next_value::<f64>()?),
                        "arc" => arc = Some(map.next_value::<ArcChoice>()?),
                        other => {
                            return Err(A::Error::unknown_field(
                                other,
                                &["fixed_elevation_deg", "fixed_speed_m_s", "arc"],
                            ));
                        }
                    }
                }
                match (elevation, speed, arc) {
                    (Some(elevation_deg), None, None) => {
                        Ok(TargetMode::FixedElevation { elevation_deg })
                    }
                    (None, Some(speed_m_s), Some(arc)) => {
                        Ok(TargetMode::FixedSpeed { speed_m_s, arc })
                    }
                    (None, Some(_), None) => Err(A::Error::custom(
                        "fixed_speed_m_s needs \"arc\": \"low\" or \"high\"",
                    )),
                    _ => Err(A::Error::custom(format!("expected {MODE_EXPECTED}"))),
                }
            }
        }
        d.deserialize_any(ModeVisitor)
    }
}

/// Unit vector, or `None` for a (near) zero vector.
pub(crate) fn unit(v: Vector3<f64>) -> Option<Vector3<f64>> {
    let n = v.norm();
    (n.is_finite() && n > 1e-300).then(|| v / n)
}
