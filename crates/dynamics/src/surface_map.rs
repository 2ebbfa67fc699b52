//! Per-face surface quantities at face centroids: slope, geopotential, effective gravity,
//! escape speeds and the sign of the radial effective acceleration.
//!
//! Conventions (all in the rotating body frame, at the face centroid `r`, spin `w`, outward
//! face normal `n`, polyhedron potential `U > 0`):
//! - effective acceleration `g_eff = grad U + w^2 r_perp` (gravity plus centrifugal);
//! - slope = angle between the inward normal `-n` and `g_eff`, deg (0 = level, > 90 = overhang
//!   where material would slide off even a flat floor);
//! - geopotential `Phi = -(U + |w x r|^2 / 2)`, m^2/s^2: an energy per unit mass, so material
//!   moves "downhill" toward lower `Phi` and `g_eff = -grad Phi`;
//! - escape speeds use the criterion "zero two-body energy with the polyhedron potential": a
//!   particle leaving the surface with velocity `v` relative to the surface has inertial speed
//!   `|v + w x r|` and escapes if `|v + w x r|^2 / 2 - U(r) >= 0`. This is the usual approximation
//!   (it neglects later exchange of energy with the rotating non-spherical field). Along the normal
//!   the speed solves `v^2 + 2 v (n . w x r) + |w x r|^2 - 2U = 0`; over all directions the
//!   minimum is `sqrt(2U) - |w x r|` (launch along `w x r`). Both are clamped at 0;
//! - radial sign: +1 where `g_eff . n > 0` (loose material lifts off), -1 otherwise.
//!
//! With a Sun, [`sunlight_map`] adds a layer for one grain ([`Particle`]) at one epoch (spin
//! angle): whether each face is lit (it faces the Sun, `n . s > 0`, and the ray from its
//! centroid toward the Sun meets no other part of the body), the ratio of the grain's
//! radiation-pressure acceleration to the effective gravity `|a_rp| / |g_eff|`, and the part of
//! the radiation-pressure acceleration along the face (`|a_rp - (a_rp . n) n|`, m/s²: on a lit
//! face the normal part presses the grain into the ground, the tangential part pushes it along
//! the surface, away from the Sun). Both are 0 on faces that are not lit. The tide is left out
//! of the map.

use std::sync::atomic::{AtomicBool, Ordering};

use nalgebra::{Point3, Unit, Vector3};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::sunlight::{Particle, Sun, sunlit};

/// Escape speeds (along `normal`, minimum over directions) at `p_body_m`, m/s; see module docs.
pub fn escape_speeds(
    body: &Body,
    p_body_m: &Point3<f64>,
    normal: &Unit<Vector3<f64>>,
) -> (f64, f64) {
    let (u, _) = body.gravity.potential_acceleration(p_body_m);
    escape_speeds_from(body, u, p_body_m, normal)
}

/// [`escape_speeds`] with the potential `u_m2_s2` at `p_body_m` already known.
fn escape_speeds_from(
    body: &Body,
    u: f64,
    p_body_m: &Point3<f64>,
    normal: &Unit<Vector3<f64>>,
) -> (f64, f64) {
    let wxr = body.omega_body_rad_s().cross(&p_body_m.coords);
    let b = normal.dot(&wxr);
    let disc = b * b - wxr.norm_squared() + 2.0 * u;
    let v_normal = if disc >= 0.0 {
        (-b + disc.sqrt()).max(0.0)
    } else {
        0.0
    };
    let v_min = ((2.0 * u).sqrt() - wxr.norm()).max(0.0);
    (v_normal, v_min)
}

/// A quantity of the surface map, for colouring.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum SurfaceField {
    /// Slope, deg.
    Slope,
    /// Geopotential `-(U + |w x r|^2/2)`, m^2/s^2.
    Geopotential,
    /// Magnitude of the effective acceleration, m/s^2.
    EffectiveGravity,
    /// Escape speed along the surface normal, m/s.
    EscapeSpeedNormal,
    /// Minimum escape speed over all directions, m/s.
    EscapeSpeedMin,
    /// Sign of the outward effective acceleration (+1 lift-off, -1 held down).
    RadialSign,
    /// 1 where the face is in sunlight, 0 where it faces away or lies in the body's shadow
    /// (only in maps with a sunlight layer, see [`SurfaceField::SUNLIGHT`]).
    Sunlit,
    /// Radiation-pressure acceleration of the map's grain over the effective gravity (0 where
    /// not lit; sunlight layer only).
    RadiationPressureRatio,
    /// Radiation-pressure acceleration along the surface, m/s² (0 where not lit; sunlight
    /// layer only).
    RadiationPressureAlongSurface,
    /// Landings per square metre of each face over the flights shown (only in maps given a
    /// landing layer, see [`SurfaceMap::landing_density_per_m2`]).
    LandingDensity,
}

impl SurfaceField {
    /// The fields of every map, in display order (the sunlight layer's are in
    /// [`SurfaceField::SUNLIGHT`]).
    pub const ALL: [SurfaceField; 6] = [
        SurfaceField::Slope,
        SurfaceField::Geopotential,
        SurfaceField::EffectiveGravity,
        SurfaceField::EscapeSpeedNormal,
        SurfaceField::EscapeSpeedMin,
        SurfaceField::RadialSign,
    ];
    /// The fields of the sunlight layer, present only in maps of scenarios with a Sun
    /// ([`SurfaceMap::sunlight`]); [`SurfaceMap::values`] gives an empty slice without it.
    pub const SUNLIGHT: [SurfaceField; 3] = [
        SurfaceField::Sunlit,
        SurfaceField::RadiationPressureRatio,
        SurfaceField::RadiationPressureAlongSurface,
    ];
    /// The field of the landing layer ([`SurfaceMap::landing_density_per_m2`]), present only
    /// in maps given one from flights; [`SurfaceMap::values`] gives an empty slice without it.
    pub const LANDINGS: [SurfaceField; 1] = [SurfaceField::LandingDensity];
    /// Human-readable name.
    pub fn name(self) -> &'static str {
        match self {
            SurfaceField::Slope => "Slope",
            SurfaceField::Geopotential => "Geopotential",
            SurfaceField::EffectiveGravity => "Effective gravity",
            SurfaceField::EscapeSpeedNormal => "Escape speed (normal)",
            SurfaceField::EscapeSpeedMin => "Escape speed (minimum)",
            SurfaceField::RadialSign => "Lift-off sign",
            SurfaceField::Sunlit => "Sunlit",
            SurfaceField::RadiationPressureRatio => "Radiation pressure / effective gravity",
            SurfaceField::RadiationPressureAlongSurface => "Radiation pressure along surface",
            SurfaceField::LandingDensity => "Landing density",
        }
    }
    /// Unit string.
    pub fn unit(self) -> &'static str {
        match self {
            SurfaceField::Slope => "deg",
            SurfaceField::Geopotential => "m^2/s^2",
            SurfaceField::EffectiveGravity => "m/s^2",
            SurfaceField::EscapeSpeedNormal | SurfaceField::EscapeSpeedMin => "m/s",
            SurfaceField::RadialSign => "1",
            SurfaceField::Sunlit | SurfaceField::RadiationPressureRatio => "1",
            SurfaceField::RadiationPressureAlongSurface => "m/s^2",
            SurfaceField::LandingDensity => "1/m^2",
        }
    }
    /// Column name with unit for CSV headers.
    pub fn column(self) -> &'static str {
        match self {
            SurfaceField::Slope => "slope_deg",
            SurfaceField::Geopotential => "geopotential_m2_s2",
            SurfaceField::EffectiveGravity => "effective_gravity_m_s2",
            SurfaceField::EscapeSpeedNormal => "escape_speed_normal_m_s",
            SurfaceField::EscapeSpeedMin => "escape_speed_min_m_s",
            SurfaceField::RadialSign => "radial_sign",
            SurfaceField::Sunlit => "sunlit",
            SurfaceField::RadiationPressureRatio => "radiation_pressure_to_gravity",
            SurfaceField::RadiationPressureAlongSurface => "radiation_pressure_tangential_m_s2",
            SurfaceField::LandingDensity => "landing_density_per_m2",
        }
    }
}

/// Per-face surface quantities (structure of arrays, one entry per face).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct SurfaceMap {
    /// Effective acceleration (gravity + centrifugal) at each centroid, body frame, m/s^2.
    pub effective_acceleration_m_s2: Vec<[f64; 3]>,
    /// Slope, deg.
    pub slope_deg: Vec<f64>,
    /// Geopotential, m^2/s^2.
    pub geopotential_m2_s2: Vec<f64>,
    /// |effective acceleration|, m/s^2.
    pub effective_gravity_m_s2: Vec<f64>,
    /// Escape speed along the normal, m/s.
    pub escape_speed_normal_m_s: Vec<f64>,
    /// Minimum escape speed, m/s.
    pub escape_speed_min_m_s: Vec<f64>,
    /// +1 where the effective acceleration points outward, else -1.
    pub radial_sign: Vec<f64>,
    /// The sunlight layer, for maps of scenarios with a Sun (see [`sunlight_map`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sunlight: Option<SunlightMap>,
    /// Landings per m² of each face over a set of flights (rest points; a face's count over its
    /// area), given by the front ends from their results; never stored with the map.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub landing_density_per_m2: Option<Vec<f64>>,
}

/// The sunlight layer of a surface map: one grain, one Sun direction, one epoch.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct SunlightMap {
    /// Time of the map, s (the spin angle is the scenario's phase plus the spin over `t_s`).
    pub t_s: f64,
    /// Unit direction to the Sun in the body frame at `t_s`.
    pub dir_to_sun_body: [f64; 3],
    /// The grain (`None`: the radiation-pressure values are NaN, there is no grain to push).
    pub particle: Option<Particle>,
    /// Radiation-pressure acceleration of the grain, m/s² (NaN without a grain).
    pub radiation_pressure_m_s2: f64,
    /// 1 where lit, 0 elsewhere.
    pub sunlit: Vec<f64>,
    /// `|a_rp| / |g_eff|` where lit, 0 elsewhere (NaN without a grain).
    pub radiation_pressure_to_gravity: Vec<f64>,
    /// Tangential part of the radiation-pressure acceleration where lit, 0 elsewhere, m/s² (NaN
    /// without a grain).
    pub radiation_pressure_tangential_m_s2: Vec<f64>,
}

impl SurfaceMap {
    /// Values of one field.
    pub fn values(&self, field: SurfaceField) -> &[f64] {
        match field {
            SurfaceField::Slope => &self.slope_deg,
            SurfaceField::Geopotential => &self.geopotential_m2_s2,
            SurfaceField::EffectiveGravity => &self.effective_gravity_m_s2,
            SurfaceField::EscapeSpeedNormal => &self.escape_speed_normal_m_s,
            SurfaceField::EscapeSpeedMin => &self.escape_speed_min_m_s,
            SurfaceField::RadialSign => &self.radial_sign,
            SurfaceField::Sunlit => self.sunlight.as_ref().map_or(&[], |s| &s.sunlit),
            SurfaceField::RadiationPressureRatio => self
                .sunlight
                .as_ref()
                .map_or(&[], |s| &s.radiation_pressure_to_gravity),
            SurfaceField::RadiationPressureAlongSurface => self
                .sunlight
                .as_ref()
                .map_or(&[], |s| &s.radiation_pressure_tangential_m_s2),
            SurfaceField::LandingDensity => self.landing_density_per_m2.as_deref().unwrap_or(&[]),
        }
    }

    /// The fields this map has: [`SurfaceField::ALL`], then [`SurfaceField::SUNLIGHT`] when it
    /// has a sunlight layer, then [`SurfaceField::LANDINGS`] when it has a landing layer.
    pub fn fields(&self) -> Vec<SurfaceField> {
        let mut out = SurfaceField::ALL.to_vec();
        if self.sunlight.is_some() {
            out.extend(SurfaceField::SUNLIGHT);
        }
        if self.landing_density_per_m2.is_some() {
            out.extend(SurfaceField::LANDINGS);
        }
        out
    }

    /// (min, max) of one field, `None` for an empty map or a field it does not have.
    pub fn range(&self, field: SurfaceField) -> Option<(f64, f64)> {
        let v = self.values(field);
        if v.is_empty() {
            return None;
        }
        Some(
            v.iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
                    (lo.min(x), hi.max(x))
                }),
        )
    }

    /// Number of faces.
    pub fn len(&self) -> usize {
        self.slope_deg.len()
    }

    /// True for a map of no faces.
    pub fn is_empty(&self) -> bool {
        self.slope_deg.is_empty()
    }
}

struct FaceValues {
    acc: [f64; 3],
    slope: f64,
    geo: f64,
    g: f64,
    esc_n: f64,
    esc_min: f64,
    sign: f64,
}

/// Faces evaluated per batch of the field (progress and cancel are checked between batches).
const MAP_CHUNK_FACES: usize = 4096;

/// Computes the map over every face, the field at the centroids in batches (the vector kernel
/// in parallel over points). `progress(done, total)` is called after each batch; setting
/// `cancel` stops the work with [`DynamicsError::Cancelled`].
pub fn surface_map(
    body: &Body,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &AtomicBool,
) -> Result<SurfaceMap> {
    let n = body.shape.face_count();
    let w = body.omega_body_rad_s();
    let mut map = SurfaceMap::default();
    let mut centroids = Vec::with_capacity(MAP_CHUNK_FACES);
    let mut field = vec![(0.0, Vector3::zeros()); MAP_CHUNK_FACES];
    for start in (0..n).step_by(MAP_CHUNK_FACES) {
        if cancel.load(Ordering::Relaxed) {
            return Err(DynamicsError::Cancelled);
        }
        let faces = start..(start + MAP_CHUNK_FACES).min(n);
        centroids.clear();
        centroids.extend(faces.clone().map(|f| body.shape.face_centroid(f)));
        let out = &mut field[..centroids.len()];
        body.gravity.potential_acceleration_batch(&centroids, out);
        let values: Vec<FaceValues> = faces
            .into_par_iter()
            .zip(centroids.par_iter().zip(out.par_iter()))
            .map(|(f, (r, &(u, grav)))| face_values(body, &w, f, r, u, &grav))
            .collect();
        for v in values {
            map.effective_acceleration_m_s2.push(v.acc);
            map.slope_deg.push(v.slope);
            map.geopotential_m2_s2.push(v.geo);
            map.effective_gravity_m_s2.push(v.g);
            map.escape_speed_normal_m_s.push(v.esc_n);
            map.escape_speed_min_m_s.push(v.esc_min);
            map.radial_sign.push(v.sign);
        }
        progress(map.len(), n);
    }
    Ok(map)
}

/// The map's values at face `f` (centroid `r`) from the field there.
fn face_values(
    body: &Body,
    w: &Vector3<f64>,
    f: usize,
    r: &Point3<f64>,
    u: f64,
    grav: &Vector3<f64>,
) -> FaceValues {
    let nrm = body.shape.face_normal(f);
    let wxr = w.cross(&r.coords);
    let centrifugal = -w.cross(&wxr);
    let acc = grav + centrifugal;
    let g = acc.norm();
    let slope = if g > 0.0 {
        (-nrm.dot(&acc) / g).clamp(-1.0, 1.0).acos().to_degrees()
    } else {
        0.0
    };
    let (esc_n, esc_min) = escape_speeds_from(body, u, r, &nrm);
    FaceValues {
        acc: [acc.x, acc.y, acc.z],
        slope,
        geo: -(u + 0.5 * wxr.norm_squared()),
        g,
        esc_n,
        esc_min,
        sign: if acc.dot(&nrm) > 0.0 { 1.0 } else { -1.0 },
    }
}

/// The sunlight layer of `map` (computed for `body`): for the grain `particle` (none: the
/// radiation-pressure values are NaN) and `sun`, at time `t_s` after the scenario's epoch (the
/// spin turns the Sun's direction in the body frame). One ray test per face, in parallel; no
/// gravity evaluations. `cancel` stops it with [`DynamicsError::Cancelled`].
///
/// The values do not depend on the sun's force switches: the layer shows what sunlight would do
/// to the grain.
pub fn sunlight_map(
    body: &Body,
    map: &SurfaceMap,
    sun: &Sun,
    particle: Option<&Particle>,
    t_s: f64,
    cancel: &AtomicBool,
) -> Result<SunlightMap> {
    sun.check()?;
    if let Some(p) = particle {
        p.check()?;
    }
    let n = body.shape.face_count();
    if map.effective_acceleration_m_s2.len() != n {
        return Err(DynamicsError::param(
            "surface map",
            format!(
                "has {} faces but the body has {n}",
                map.effective_acceleration_m_s2.len()
            ),
        ));
    }
    let dir_inertial = sun
        .unit_direction_inertial()
        .ok_or_else(|| DynamicsError::param("sun direction_inertial", "must be non-zero"))?;
    let s = body.body_from_inertial(t_s) * dir_inertial.into_inner();
    let a_rp = particle.map_or(f64::NAN, |p| p.radiation_pressure_m_s2(sun.distance_au));
    let mut layer = SunlightMap {
        t_s,
        dir_to_sun_body: [s.x, s.y, s.z],
        particle: particle.copied(),
        radiation_pressure_m_s2: a_rp,
        sunlit: Vec::with_capacity(n),
        radiation_pressure_to_gravity: Vec::with_capacity(n),
        radiation_pressure_tangential_m_s2: Vec::with_capacity(n),
    };
    for start in (0..n).step_by(MAP_CHUNK_FACES) {
        if cancel.load(Ordering::Relaxed) {
            return Err(DynamicsError::Cancelled);
        }
        let faces = start..(start + MAP_CHUNK_FACES).min(n);
        let values: Vec<[f64; 3]> = faces
            .into_par_iter()
            .map(|f| {
                let nrm = body.shape.face_normal(f).into_inner();
                let lit =
                    nrm.dot(&s) > 0.0 && sunlit(&body.shape, &body.shape.face_centroid(f), &s);
                if !lit {
                    // Nothing pushes here; without a grain there is no value at all.
                    let none = if a_rp.is_nan() { f64::NAN } else { 0.0 };
                    return [0.0, none, none];
                }
                let g_eff = Vector3::from(map.effective_acceleration_m_s2[f]).norm();
                let a = -s * a_rp;
                let tangential = (a - nrm * a.dot(&nrm)).norm();
                [1.0, a_rp / g_eff, tangential]
            })
            .collect();
        for [lit, ratio, tangential] in values {
            layer.sunlit.push(lit);
            layer.radiation_pressure_to_gravity.push(ratio);
            layer.radiation_pressure_tangential_m_s2.push(tangential);
        }
    }
    Ok(layer)
}
