//! Sunlight and the solar tide: the optional forces of the Sun on a grain near the body.
//!
//! **Radiation pressure.** A sphere of radius `r` and density `rho_p` at `d` astronomical units
//! from the Sun is pushed away from it with
//! `a = C_R (S0 / c) (1 AU / d)^2 (A / m)`, `A / m = 3 / (4 r rho_p)`,
//! with the nominal total solar irradiance `S0` = 1361 W/m² (IAU 2015 Resolution B3), the speed
//! of light `c` = 299 792 458 m/s and `1 AU` = 149 597 870 700 m (IAU 2012 Resolution B2).
//! `C_R` is 1 for a perfect absorber, 2 for a perfect mirror facing the Sun (a flat-plate
//! convention kept for spheres; common practice).
//!
//! **Shadow.** No radiation pressure while the body blocks the Sun: a ray from the grain toward
//! the Sun is tested against the shape used for contacts. The Sun is a point (no penumbra). A
//! flight holds the lit state fixed over each integration step; a step that would cross a change
//! is located by bisection on the step's dense output and redone so that it ends exactly at the
//! change (see `flight`), so no step ever spans the jump in the force.
//!
//! **Solar tide** (Hill approximation): the Sun's attraction on the grain minus its attraction
//! on the body's centre of mass, to first order in `r / d`:
//! `a = (GM_sun / d^3) (3 (s . r) s - r)` with `r` from the centre of mass and `s` the unit
//! direction to the Sun; `GM_sun` = 1.3271244e20 m³/s² (IAU 2015 Resolution B3). It is the
//! gradient of `(GM_sun / (2 d^3)) (3 (s . r)^2 - r^2)`.
//!
//! **Frames.** The direction to the Sun is fixed in the inertial frame during a flight; in the
//! body frame it turns with the spin: `s_body(t) = R(t)^T s_inertial`, with
//! `R = Body::inertial_from_body`.
//!
//! **What the model leaves out:** eclipses by other bodies (moons, planets); the Sun's motion
//! (and the body's heliocentric orbit) during a flight, so the direction and distance stay
//! constant; the finite size of the Sun's disc (penumbra); light reflected or emitted by the
//! body; thermal effects on the grain (Yarkovsky-type forces, sublimation); Poynting–Robertson
//! drag; electrostatic charging and the plasma environment; the grain's shape and spin. Grains
//! at rest on the surface stay at rest (the contact model does not lift them). Spinfall is a
//! research and planning tool, not flight-certified.

use nalgebra::{Point3, Unit, Vector3};
use serde::{Deserialize, Serialize};
use spinfall_gravity::ShapeModel;

use crate::body::Body;
use crate::error::{DynamicsError, Result};

/// Nominal total solar irradiance at 1 AU, W/m² (IAU 2015 Resolution B3).
pub const SOLAR_IRRADIANCE_W_M2: f64 = 1361.0;
/// Speed of light in vacuum, m/s (exact, SI).
pub const SPEED_OF_LIGHT_M_S: f64 = 299_792_458.0;
/// The astronomical unit, m (exact, IAU 2012 Resolution B2).
pub const ASTRONOMICAL_UNIT_M: f64 = 149_597_870_700.0;
/// Nominal solar mass parameter, m³/s² (IAU 2015 Resolution B3).
pub const GM_SUN_M3_S2: f64 = 1.3271244e20;
/// Radiation-pressure coefficient of a particle that does not give one (a perfect absorber).
pub const DEFAULT_RADIATION_PRESSURE_COEFFICIENT: f64 = 1.0;

fn yes() -> bool {
    true
}

fn default_cr() -> f64 {
    DEFAULT_RADIATION_PRESSURE_COEFFICIENT
}

/// The Sun as seen from the body: where it is and which of its forces act.
///
/// Also the scenario's `environment.sun` section (see `SCENARIO.md`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sun {
    /// Direction from the body to the Sun in the inertial frame (need not be a unit vector;
    /// fixed during a flight).
    pub direction_inertial: [f64; 3],
    /// Distance from the body to the Sun, astronomical units.
    pub distance_au: f64,
    /// Radiation pressure on grains that have a [`Particle`] (default on).
    #[serde(default = "yes")]
    pub radiation_pressure: bool,
    /// No radiation pressure while the body blocks the Sun (default on).
    #[serde(default = "yes")]
    pub shadow: bool,
    /// The solar tide, Hill approximation (default on).
    #[serde(default = "yes")]
    pub tide: bool,
}

impl Sun {
    /// Checks the numbers: a finite non-zero direction and a finite distance > 0.
    ///
    /// # Errors
    /// [`DynamicsError::InvalidParameter`] naming the value.
    pub fn check(&self) -> Result<()> {
        if self.unit_direction_inertial().is_none() {
            return Err(DynamicsError::param(
                "sun direction_inertial",
                format!(
                    "must be a finite non-zero vector, got {:?}",
                    self.direction_inertial
                ),
            ));
        }
        if !(self.distance_au.is_finite() && self.distance_au > 0.0) {
            return Err(DynamicsError::param(
                "sun distance_au",
                format!("must be a finite number > 0, got {}", self.distance_au),
            ));
        }
        Ok(())
    }

    /// The unit direction to the Sun, inertial frame; `None` for a zero or non-finite vector.
    pub fn unit_direction_inertial(&self) -> Option<Unit<Vector3<f64>>> {
        let v = Vector3::from(self.direction_inertial);
        let n = v.norm();
        (n.is_finite() && n > 1e-300).then(|| Unit::new_unchecked(v / n))
    }

    /// Distance to the Sun, m.
    pub fn distance_m(&self) -> f64 {
        self.distance_au * ASTRONOMICAL_UNIT_M
    }

    /// `GM_sun / d^3`, 1/s² (the scale of the tidal acceleration per metre).
    pub fn tide_rate_s2(&self) -> f64 {
        GM_SUN_M3_S2 / self.distance_m().powi(3)
    }

    /// True if at least one force is on (shadow alone changes nothing without radiation
    /// pressure, and counts as off here).
    pub fn any_force(&self) -> bool {
        self.radiation_pressure || self.tide
    }
}

/// A grain: a homogeneous sphere.
///
/// Also the scenario's `particle` sections (see `SCENARIO.md`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Particle {
    /// Radius, m (> 0).
    pub radius_m: f64,
    /// Density, kg/m³ (> 0).
    pub density_kg_m3: f64,
    /// Radiation-pressure coefficient `C_R` in [0, 2] (default
    /// [`DEFAULT_RADIATION_PRESSURE_COEFFICIENT`]).
    #[serde(default = "default_cr")]
    pub radiation_pressure_coefficient: f64,
}

impl Particle {
    /// Checks the numbers: radius and density finite and > 0, `C_R` in [0, 2].
    ///
    /// # Errors
    /// [`DynamicsError::InvalidParameter`] naming the value.
    pub fn check(&self) -> Result<()> {
        for (name, v) in [
            ("particle radius_m", self.radius_m),
            ("particle density_kg_m3", self.density_kg_m3),
        ] {
            if !(v.is_finite() && v > 0.0) {
                return Err(DynamicsError::param(
                    name,
                    format!("must be a finite number > 0, got {v}"),
                ));
            }
        }
        let cr = self.radiation_pressure_coefficient;
        if !(cr.is_finite() && (0.0..=2.0).contains(&cr)) {
            return Err(DynamicsError::param(
                "particle radiation_pressure_coefficient",
                format!("must be a finite number in [0, 2], got {cr}"),
            ));
        }
        Ok(())
    }

    /// Cross-section over mass of the sphere, `3 / (4 r rho)`, m²/kg.
    pub fn area_to_mass_m2_kg(&self) -> f64 {
        3.0 / (4.0 * self.radius_m * self.density_kg_m3)
    }

    /// Magnitude of the radiation-pressure acceleration at `distance_au` from the Sun, m/s².
    pub fn radiation_pressure_m_s2(&self, distance_au: f64) -> f64 {
        radiation_pressure_m_s2(
            self.radiation_pressure_coefficient,
            self.area_to_mass_m2_kg(),
            distance_au,
        )
    }
}

/// `C_R (S0 / c) (1 AU / d)^2 (A / m)`, m/s²: the radiation-pressure acceleration of a body of
/// cross-section over mass `area_to_mass_m2_kg` at `distance_au`.
pub fn radiation_pressure_m_s2(cr: f64, area_to_mass_m2_kg: f64, distance_au: f64) -> f64 {
    cr * (SOLAR_IRRADIANCE_W_M2 / SPEED_OF_LIGHT_M_S) * area_to_mass_m2_kg
        / (distance_au * distance_au)
}

/// The solar tide (Hill approximation) at `r_m` from the centre of mass, m/s²:
/// `rate (3 (s . r) s - r)` with `rate = GM_sun / d^3` and `s` the unit direction to the Sun.
pub fn tidal_acceleration(
    dir_to_sun: &Unit<Vector3<f64>>,
    tide_rate_s2: f64,
    r_m: &Vector3<f64>,
) -> Vector3<f64> {
    let s = dir_to_sun.as_ref();
    (s * (3.0 * s.dot(r_m)) - r_m) * tide_rate_s2
}

/// The potential of the solar tide, m²/s² (positive convention, acceleration = gradient):
/// `(rate / 2) (3 (s . r)^2 - r^2)`.
pub fn tidal_potential(
    dir_to_sun: &Unit<Vector3<f64>>,
    tide_rate_s2: f64,
    r_m: &Vector3<f64>,
) -> f64 {
    let sr = dir_to_sun.dot(r_m);
    0.5 * tide_rate_s2 * (3.0 * sr * sr - r_m.norm_squared())
}

/// Whether the point `p_body_m` (body frame) sees the Sun in the direction `dir_to_sun_body`
/// (body frame, need not be unit): true unless the ray toward the Sun meets the shape.
///
/// A point on the surface whose face looks toward the Sun is lit: a hit on the face the ray
/// leaves from (met from behind within 1 mm of the start) is skipped.
pub fn sunlit(shape: &ShapeModel, p_body_m: &Point3<f64>, dir_to_sun_body: &Vector3<f64>) -> bool {
    let n = dir_to_sun_body.norm();
    if !(n > 0.0 && n.is_finite() && p_body_m.coords.iter().all(|c| c.is_finite())) {
        return true;
    }
    let d = dir_to_sun_body / n;
    // Beyond this distance along the ray there is no more of the body.
    let reach = p_body_m.coords.norm() + shape.bounding_radius_m() + 1.0;
    match shape.ray_first_hit(p_body_m, &d, reach) {
        None => true,
        Some(hit) if !hit.front_face && hit.t < 1e-3 => {
            let start = p_body_m + d * 1e-3;
            shape.ray_first_hit(&start, &d, reach).is_none()
        }
        Some(_) => false,
    }
}

/// The Sun's forces on one grain, resolved from a [`Sun`] and the grain's [`Particle`]: what a
/// flight adds to gravity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SunForces {
    /// Unit direction to the Sun, inertial frame.
    pub dir_inertial: Unit<Vector3<f64>>,
    /// Magnitude of the radiation-pressure acceleration, m/s² (0 when off or without a grain).
    pub radiation_pressure_m_s2: f64,
    /// Whether the body's shadow switches the radiation pressure off.
    pub shadow: bool,
    /// `GM_sun / d^3`, 1/s² (0 when the tide is off).
    pub tide_rate_s2: f64,
    /// The body's centre of mass, body frame, m (the tide is measured from it).
    pub com_body_m: Vector3<f64>,
}

impl SunForces {
    /// The forces of `sun` on a grain `particle` (none: no radiation pressure) near `body`;
    /// `None` when no force acts (every force off, or only radiation pressure on and no grain).
    /// The sun and particle are assumed checked ([`Sun::check`], [`Particle::check`]); a bad
    /// direction gives `None`.
    pub fn new(sun: &Sun, particle: Option<&Particle>, body: &Body) -> Option<SunForces> {
        let dir_inertial = sun.unit_direction_inertial()?;
        let radiation_pressure_m_s2 = match particle {
            Some(p) if sun.radiation_pressure => p.radiation_pressure_m_s2(sun.distance_au),
            _ => 0.0,
        };
        let tide_rate_s2 = if sun.tide { sun.tide_rate_s2() } else { 0.0 };
        if radiation_pressure_m_s2 == 0.0 && tide_rate_s2 == 0.0 {
            return None;
        }
        Some(SunForces {
            dir_inertial,
            radiation_pressure_m_s2,
            shadow: sun.shadow && radiation_pressure_m_s2 > 0.0,
            tide_rate_s2,
            com_body_m: body.shape.mass_properties().center_of_mass_m.coords,
        })
    }

    /// True when the lit state matters (radiation pressure with shadow).
    pub fn has_shadow(&self) -> bool {
        self.shadow
    }

    /// Unit direction to the Sun in the body frame at `t_s`.
    pub fn dir_body(&self, body: &Body, t_s: f64) -> Unit<Vector3<f64>> {
        Unit::new_unchecked(body.body_from_inertial(t_s) * self.dir_inertial.into_inner())
    }

    /// Whether a grain at `p_body_m` is in sunlight at `t_s` (always, without shadow).
    pub fn lit_body(&self, body: &Body, t_s: f64, p_body_m: &Point3<f64>) -> bool {
        if !self.shadow {
            return true;
        }
        let dir = self.dir_body(body, t_s);
        sunlit(&body.shape, p_body_m, &dir)
            && body
                .patch
                .as_ref()
                .is_none_or(|patch| sunlit(patch, p_body_m, &dir))
    }

    /// Radiation pressure (when `lit`) and tide on a grain at `p_body_m` at `t_s`, body frame,
    /// m/s².
    pub fn acceleration_body(
        &self,
        body: &Body,
        t_s: f64,
        p_body_m: &Point3<f64>,
        lit: bool,
    ) -> Vector3<f64> {
        let s = self.dir_body(body, t_s);
        self.acceleration(&s, &(p_body_m.coords - self.com_body_m), lit)
    }

    /// Radiation pressure (when `lit`) and tide on a grain at `p_inertial_m` at `t_s`, inertial
    /// frame, m/s² (the centre of mass turns with the body about the common origin).
    pub fn acceleration_inertial(
        &self,
        body: &Body,
        t_s: f64,
        p_inertial_m: &Point3<f64>,
        lit: bool,
    ) -> Vector3<f64> {
        let com = body.inertial_from_body(t_s) * self.com_body_m;
        self.acceleration(&self.dir_inertial, &(p_inertial_m.coords - com), lit)
    }

    fn acceleration(
        &self,
        s: &Unit<Vector3<f64>>,
        r_from_com: &Vector3<f64>,
        lit: bool,
    ) -> Vector3<f64> {
        let mut a = Vector3::zeros();
        if lit && self.radiation_pressure_m_s2 > 0.0 {
            a -= s.as_ref() * self.radiation_pressure_m_s2;
        }
        if self.tide_rate_s2 > 0.0 {
            a += tidal_acceleration(s, self.tide_rate_s2, r_from_com);
        }
        a
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn radiation_pressure_of_a_sphere_follows_the_closed_form() {
        // 1 mm radius, 1000 kg/m^3, C_R = 1 at 1 AU: (1361 / c) * 3 / (4 * 1e-3 * 1000) =
        // 4.5398e-6 * 0.75 = 3.4049e-6 m/s^2 (the formula of the module docs, by hand).
        let p = Particle {
            radius_m: 1e-3,
            density_kg_m3: 1000.0,
            radiation_pressure_coefficient: 1.0,
        };
        let a = p.radiation_pressure_m_s2(1.0);
        assert!((a - 1361.0 / 299_792_458.0 * 0.75).abs() < 1e-18, "{a}");
        // Inverse square in the distance.
        assert!((p.radiation_pressure_m_s2(2.0) * 4.0 - a).abs() < 1e-18);
    }

    #[test]
    fn bad_suns_and_particles_are_refused_by_name() {
        let sun = Sun {
            direction_inertial: [0.0; 3],
            distance_au: 1.0,
            radiation_pressure: true,
            shadow: true,
            tide: true,
        };
        assert!(sun.check().unwrap_err().to_string().contains("direction"));
        let far = Sun {
            direction_inertial: [1.0, 0.0, 0.0],
            distance_au: -1.0,
            ..sun
        };
        assert!(far.check().unwrap_err().to_string().contains("distance_au"));
        let p = Particle {
            radius_m: 1e-3,
            density_kg_m3: 1000.0,
            radiation_pressure_coefficient: 2.5,
        };
        assert!(p.check().unwrap_err().to_string().contains("coefficient"));
    }
}
