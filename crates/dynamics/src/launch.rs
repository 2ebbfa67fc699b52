//! Launch specifications (site, speed, direction), fans, dispersion sets and the body-fixed
//! launch states they expand to.

use nalgebra::{Point3, Vector3};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};

use crate::error::{DynamicsError, Result};
use crate::site::Site;
use crate::sunlight::Particle;

/// Default start height above the surface along the local up, m.
pub const DEFAULT_START_ALTITUDE_M: f64 = 0.05;

/// A launch from a surface site, relative to the rotating surface.
#[derive(Debug, Clone, PartialEq)]
pub struct LaunchSpec {
    /// Identifier of the launch (fans and dispersion members get suffixes).
    pub id: String,
    /// Where it starts.
    pub site: Site,
    /// Speed relative to the rotating surface, m/s.
    pub speed_m_s: f64,
    /// Azimuth from local north toward east, deg.
    pub azimuth_deg: f64,
    /// Elevation above the local horizontal, deg.
    pub elevation_deg: f64,
    /// Start height above the surface along local up, m.
    pub start_altitude_m: f64,
}

/// Which launch quantity a fan sweeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum FanQuantity {
    /// Azimuth, deg.
    #[serde(rename = "azimuth_deg")]
    AzimuthDeg,
    /// Elevation, deg.
    #[serde(rename = "elevation_deg")]
    ElevationDeg,
    /// Speed, m/s.
    #[serde(rename = "speed_m_s")]
    SpeedMS,
}

/// A sweep of one quantity from its value in the [`LaunchSpec`] to `to`, `count` members
/// (both ends included; `count == 1` gives the spec itself).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fan {
    /// Swept quantity.
    pub vary: FanQuantity,
    /// Final value (deg or m/s).
    pub to: f64,
    /// Number of members (>= 1).
    pub count: usize,
}

/// Speed error of a dispersion set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SpeedSigma {
    /// 1-sigma in m/s.
    MS(f64),
    /// 1-sigma in percent of the nominal speed.
    Percent(f64),
}

/// Random launch errors: `count` members with Gaussian speed and direction errors, seeded.
///
/// The direction error is a rotation of the nominal direction by an angle whose two components
/// (about two axes perpendicular to it) are each Gaussian with `direction_sigma_deg`. A member
/// whose direction would point into the ground is mirrored about the local horizontal; a
/// negative speed is mirrored to positive.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dispersion {
    /// Number of members.
    pub count: usize,
    /// Speed error.
    pub speed_sigma: SpeedSigma,
    /// Direction error, 1-sigma per axis, deg.
    pub direction_sigma_deg: f64,
    /// Seed of the ChaCha8 generator (the same seed gives the same members).
    pub seed: u64,
}

/// A launch ready to fly: body-frame position and velocity relative to the rotating body.
#[derive(Debug, Clone, PartialEq)]
pub struct LaunchState {
    /// Identifier.
    pub id: String,
    /// Start position, body frame, m.
    pub pos_body_m: Point3<f64>,
    /// Start velocity relative to the rotating body, body frame, m/s.
    pub vel_body_m_s: Vector3<f64>,
    /// The surface site it leaves from, if any.
    pub site: Option<Site>,
    /// The grain, for radiation pressure (none: no radiation pressure on this launch).
    pub particle: Option<Particle>,
}

impl LaunchSpec {
    /// Checks the numbers (finite, speed >= 0, elevation in [-90, 90], altitude >= 0).
    pub fn validate(&self) -> Result<()> {
        let ok = |name: &str, v: f64, good: bool| {
            if v.is_finite() && good {
                Ok(())
            } else {
                Err(DynamicsError::param(
                    format!("launch {:?} {name}", self.id),
                    format!("out of range: {v}"),
                ))
            }
        };
        ok("speed_m_s", self.speed_m_s, self.speed_m_s >= 0.0)?;
        ok("azimuth_deg", self.azimuth_deg, true)?;
        ok(
            "elevation_deg",
            self.elevation_deg,
            self.elevation_deg.abs() <= 90.0,
        )?;
        ok(
            "start_altitude_m",
            self.start_altitude_m,
            self.start_altitude_m >= 0.0,
        )
    }

    /// The single launch state of this spec.
    pub fn state(&self) -> Result<LaunchState> {
        self.validate()?;
        let dir = self.site.frame.direction(
            self.azimuth_deg.to_radians(),
            self.elevation_deg.to_radians(),
        );
        Ok(LaunchState {
            id: self.id.clone(),
            pos_body_m: self.site.point_body_m
                + self.site.frame.up.into_inner() * self.start_altitude_m,
            vel_body_m_s: dir * self.speed_m_s,
            site: Some(self.site.clone()),
            particle: None,
        })
    }

    /// The members of a fan, ids `"{id}/{k}"` (k from 0).
    pub fn fan(&self, fan: &Fan) -> Result<Vec<LaunchSpec>> {
        if fan.count == 0 || !fan.to.is_finite() {
            return Err(DynamicsError::param(
                format!("launch {:?} fan", self.id),
                "count must be >= 1 and `to` finite",
            ));
        }
        let from = match fan.vary {
            FanQuantity::AzimuthDeg => self.azimuth_deg,
            FanQuantity::ElevationDeg => self.elevation_deg,
            FanQuantity::SpeedMS => self.speed_m_s,
        };
        (0..fan.count)
            .map(|k| {
                let f = if fan.count == 1 {
                    0.0
                } else {
                    k as f64 / (fan.count - 1) as f64
                };
                let v = from + (fan.to - from) * f;
                let mut s = self.clone();
                s.id = fan_member_id(&self.id, k);
                match fan.vary {
                    FanQuantity::AzimuthDeg => s.azimuth_deg = v,
                    FanQuantity::ElevationDeg => s.elevation_deg = v,
                    FanQuantity::SpeedMS => s.speed_m_s = v,
                }
                s.validate()?;
                Ok(s)
            })
            .collect()
    }

    /// The members of a dispersion set, ids `"{id}#{k}"` (k from 0).
    pub fn disperse(&self, d: &Dispersion) -> Result<Vec<LaunchState>> {
        self.validate()?;
        let sigma_ok = match d.speed_sigma {
            SpeedSigma::MS(s) | SpeedSigma::Percent(s) => s.is_finite() && s >= 0.0,
        };
        if !sigma_ok || !d.direction_sigma_deg.is_finite() || d.direction_sigma_deg < 0.0 {
            return Err(DynamicsError::param(
                format!("launch {:?} dispersion", self.id),
                "sigmas must be finite and >= 0",
            ));
        }
        let base = self.state()?;
        let up = self.site.frame.up.into_inner();
        let nominal = self.site.frame.direction(
            self.azimuth_deg.to_radians(),
            self.elevation_deg.to_radians(),
        );
        let p1 = nominal.cross(&up);
        let p1 = if p1.norm() < 1e-9 {
            self.site.frame.east.into_inner()
        } else {
            p1.normalize()
        };
        let p2 = nominal.cross(&p1);
        let sigma_speed = match d.speed_sigma {
            SpeedSigma::MS(s) => s,
            SpeedSigma::Percent(p) => p / 100.0 * self.speed_m_s,
        };
        let sigma_dir = d.direction_sigma_deg.to_radians();
        let mut rng = ChaCha8Rng::seed_from_u64(d.seed);
        let mut out = Vec::with_capacity(d.count);
        for k in 0..d.count {
            let speed = (self.speed_m_s + sigma_speed * gaussian(&mut rng)).abs();
            let (dx, dy) = (
                sigma_dir * gaussian(&mut rng),
                sigma_dir * gaussian(&mut rng),
            );
            let angle = (dx * dx + dy * dy).sqrt();
            let mut dir = if angle > 0.0 {
                nominal * angle.cos() + (p1 * dx + p2 * dy) * (angle.sin() / angle)
            } else {
                nominal
            };
            let vertical = dir.dot(&up);
            if vertical < 0.0 {
                dir -= up * (2.0 * vertical);
            }
            out.push(LaunchState {
                id: dispersion_member_id(&self.id, k),
                vel_body_m_s: dir.normalize() * speed,
                ..base.clone()
            });
        }
        Ok(out)
    }
}

/// The id of fan member `k` of the launch `id`: `"{id}/{k}"` (the one place fan ids are made).
pub fn fan_member_id(id: &str, k: usize) -> String {
    format!("{id}/{k}")
}

/// The id of dispersion member `k` of the launch `id`: `"{id}#{k}"` (the one place dispersion
/// ids are made).
pub fn dispersion_member_id(id: &str, k: usize) -> String {
    format!("{id}#{k}")
}

/// A standard normal deviate by the Box–Muller transform (Box & Muller 1958).
fn gaussian(rng: &mut ChaCha8Rng) -> f64 {
    let u1: f64 = 1.0 - rng.random::<f64>(); // (0, 1]
    let u2: f64 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

impl LaunchState {
    /// The same launch with the grain `particle` (for radiation pressure).
    pub fn with_particle(mut self, particle: Option<Particle>) -> LaunchState {
        self.particle = particle;
        self
    }

    /// A launch from an explicit body-fixed state, used exactly as given.
    pub fn from_state(
        id: impl Into<String>,
        pos_body_m: Point3<f64>,
        vel_body_m_s: Vector3<f64>,
    ) -> Result<LaunchState> {
        let id = id.into();
        if !pos_body_m
            .coords
            .iter()
            .chain(vel_body_m_s.iter())
            .all(|v| v.is_finite())
        {
            return Err(DynamicsError::param(
                format!("launch {id:?} state"),
                "position and velocity must be finite",
            ));
        }
        Ok(LaunchState {
            id,
            pos_body_m,
            vel_body_m_s,
            site: None,
            particle: None,
        })
    }
}
