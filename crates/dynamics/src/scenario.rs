//! The versioned JSON scenario document: everything needed to reproduce a run.
//!
//! Parsed from `&str` ([`Scenario::from_json_str`]) or bytes ([`Scenario::from_json_bytes`], which
//! names a UTF-16 file as such); unknown keys and wrong types are errors naming the field path
//! (found by `serde_path_to_error`), line and column, quoting at most about 80 characters of the
//! offending text; semantic checks follow ([`Scenario::validate`]). A scenario may have no
//! launches (a surface map needs none); flying one needs at least one.
//! The shape file is *returned* ([`Scenario::shape_source`]) for the caller to open, relative to
//! the scenario file. Every key is documented in `crates/dynamics/SCENARIO.md`.

use std::sync::Arc;

use nalgebra::{Point3, Vector3};
use serde::{Deserialize, Serialize};
use spinfall_gravity::text::{InvalidBytes, decode_utf8, excerpt, shorten_quotes};
use spinfall_gravity::{LengthUnit, MassSpec, ShapeModel, Warning};

use crate::body::{Body, Spin, SpinAxis};
use crate::error::{DynamicsError, Result};
use crate::flight::{BounceModel, FlightSettings, IntegratorSettings, SamplingSettings};
use crate::launch::{
    DEFAULT_START_ALTITUDE_M, Dispersion, Fan, FanQuantity, LaunchSpec, LaunchState, SpeedSigma,
    dispersion_member_id, fan_member_id,
};
use crate::site::{NormalMode, Site};
use crate::sunlight::{Particle, Sun};
use crate::targeting::{
    DEFAULT_MAX_FLIGHTS, DEFAULT_MISS_TOLERANCE_M, Target, TargetMode, TargetPoint, TargetRequest,
    TargetingReport, solve_target,
};

/// Value of the `format` key.
pub const SCENARIO_FORMAT: &str = "spinfall-scenario";
/// The scenario version this build reads and writes.
pub const SCENARIO_VERSION: u32 = 1;
/// `shape` value of the built-in demo body.
pub const BUILTIN_QUILLON: &str = "builtin:quillon";

/// A complete scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// Always `"spinfall-scenario"`.
    pub format: String,
    /// Always 1 for this build.
    pub version: u32,
    /// Optional title.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Optional free text.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub notes: Option<String>,
    /// Seed of the dispersion generator (default 0).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub seed: Option<u64>,
    /// The body.
    pub body: BodySpec,
    /// The launches (none for a scenario that only describes a body; flying needs one).
    #[serde(default)]
    pub launches: Vec<LaunchEntry>,
    /// Integrator settings.
    #[serde(default)]
    pub integrator: IntegratorSpec,
    /// Contact model.
    #[serde(default)]
    pub bounce: BounceSpec,
    /// Limits on the size of a run.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limits: Option<LimitsSpec>,
    /// How the gravity field is evaluated (default: the direct sums).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub field: Option<FieldSpec>,
    /// The Sun and the default grain (default: none, gravity and spin only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub environment: Option<EnvironmentSpec>,
}

/// The `environment` section: the Sun's forces and the grain they act on.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EnvironmentSpec {
    /// The Sun: direction (inertial frame, fixed during a flight), distance and which forces act.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sun: Option<Sun>,
    /// The grain of launches that give none, and of the surface map.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub particle: Option<Particle>,
}

/// The `field` section: how the polyhedron's gravity is evaluated.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FieldSpec {
    /// `"direct"` (the exact Werner–Scheeres sums, the default) or `"interpolated"` (built once
    /// per body to a relative error bound, then much faster).
    #[serde(default)]
    pub method: FieldMethodSpec,
    /// Largest relative acceleration error of the interpolated field, as a fraction of the local
    /// gravity, in [1e-12, 1e-3] (default [`DEFAULT_MAX_REL_ERROR`]; ignored by `direct`).
    #[serde(default = "default_max_rel_error")]
    pub max_rel_error: f64,
    /// Most memory the interpolated field and its build may take, MB (default 4096).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_memory_mb: Option<u64>,
}

/// How the field is evaluated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FieldMethodSpec {
    /// The exact face and edge sums.
    #[default]
    Direct,
    /// The interpolated field with an error bound.
    Interpolated,
}

/// Default bound of the interpolated field's relative acceleration error.
pub const DEFAULT_MAX_REL_ERROR: f64 = 1e-9;

fn default_max_rel_error() -> f64 {
    DEFAULT_MAX_REL_ERROR
}

impl Default for FieldSpec {
    fn default() -> Self {
        FieldSpec {
            method: FieldMethodSpec::Direct,
            max_rel_error: DEFAULT_MAX_REL_ERROR,
            max_memory_mb: None,
        }
    }
}

/// The `limits` section: refuse runs larger than this before any work starts.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LimitsSpec {
    /// Most launches (after fans and dispersion sets are expanded) a run may have
    /// (default [`DEFAULT_MAX_LAUNCHES`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_launches: Option<u64>,
}

/// Most launches a run may have unless the scenario or the caller says otherwise.
pub const DEFAULT_MAX_LAUNCHES: u64 = 100_000;

/// The body of a scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BodySpec {
    /// OBJ path relative to the scenario file, or `"builtin:quillon"`.
    pub shape: String,
    /// Length unit of the OBJ file (`"km"` default, or `"m"`).
    #[serde(default)]
    pub unit: LengthUnit,
    /// Display name (default: the demo name or the file stem).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Bulk density, kg/m^3 (exactly one of the three mass keys).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub density_kg_m3: Option<f64>,
    /// Total mass, kg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mass_kg: Option<f64>,
    /// Gravitational parameter, m^3/s^2.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gm_m3_s2: Option<f64>,
    /// Move the shape so its centre of mass is at the origin (default true).
    #[serde(default = "yes")]
    pub recenter: bool,
    /// A separate contact shape (impacts, bounces, sites, shadows, pictures); `shape` still
    /// gives the gravity. See [`crate::contact`].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub contact_shape: Option<ContactShapeSpec>,
    /// The spin.
    pub spin: SpinSpec,
}

/// The `body.contact_shape` entry of a scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ContactShapeSpec {
    /// Shape file (OBJ, PLY or STL) relative to the scenario file, or `"builtin:quillon"`.
    pub path: String,
    /// Length unit of the file (default: the unit of `body.unit`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unit: Option<LengthUnit>,
    /// `"global"` (default: a closed model of the whole body) or `"patch"` (an open terrain
    /// patch used within its footprint).
    #[serde(default)]
    pub kind: ContactKind,
}

/// How a contact shape is used.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ContactKind {
    /// A closed model of the whole body, for all geometry.
    #[default]
    Global,
    /// An open terrain patch, for contacts within its footprint.
    Patch,
}

fn yes() -> bool {
    true
}

/// The spin of a scenario body.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SpinSpec {
    /// Period, hours (> 0).
    pub period_h: f64,
    /// `"max-moment"` (default), `"+z"` or `[x, y, z]` in the body frame.
    #[serde(default)]
    pub axis: SpinAxis,
    /// Rotation angle at t = 0, deg.
    #[serde(default)]
    pub phase_deg: f64,
}

/// One launch entry: an explicit state, or a site with speed and direction (optionally a fan
/// and/or a dispersion set).
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LaunchEntry {
    /// Identifier (unique in the scenario).
    pub id: String,
    /// Explicit body-fixed state, used exactly as given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub state: Option<StateSpec>,
    /// Surface site.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub site: Option<SiteSpec>,
    /// Speed relative to the surface, m/s (required with `site`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub speed_m_s: Option<f64>,
    /// Azimuth from local north toward east, deg (default 0).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub azimuth_deg: Option<f64>,
    /// Elevation above the local horizontal, deg, in [0, 90] (default 90).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub elevation_deg: Option<f64>,
    /// Start height above the surface, m (default 0.05).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub altitude_m: Option<f64>,
    /// Local vertical: `"face"` (default) or `"smoothed"`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub normal: Option<NormalMode>,
    /// Sweep of one quantity.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fan: Option<FanSpec>,
    /// Random dispersion set.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dispersion: Option<DispersionSpec>,
    /// The grain, for radiation pressure (default: `environment.particle`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub particle: Option<Particle>,
    /// A targeted launch: the surface point its first contact must reach (exactly one of
    /// lat/lon, face or point; a point is snapped to the nearest surface point). Speed and
    /// direction are then solved ([`crate::targeting`]), not given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub target: Option<SiteSpec>,
    /// What a targeted launch fixes or minimises (default `"min_speed"`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mode: Option<TargetMode>,
    /// Largest miss distance of a targeted launch, m (default 0.5).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub miss_tolerance_m: Option<f64>,
}

/// Explicit body-frame state.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StateSpec {
    /// Position, body frame, m.
    pub position_m: [f64; 3],
    /// Velocity relative to the rotating body, body frame, m/s.
    pub velocity_m_s: [f64; 3],
}

/// A surface site: exactly one of lat/lon, face, or point.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SiteSpec {
    /// Planetocentric latitude, deg (with `lon_deg`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lat_deg: Option<f64>,
    /// Planetocentric longitude, deg east (with `lat_deg`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lon_deg: Option<f64>,
    /// Face index (site at its centroid).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub face: Option<usize>,
    /// A body-frame point, m: the site is the nearest surface point.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub point_m: Option<[f64; 3]>,
}

/// A fan in a scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FanSpec {
    /// `"azimuth_deg"`, `"elevation_deg"` or `"speed_m_s"`.
    pub vary: FanQuantity,
    /// Final value.
    pub to: f64,
    /// Number of members, both ends included.
    pub count: usize,
}

/// A dispersion set in a scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DispersionSpec {
    /// Number of members.
    pub count: usize,
    /// 1-sigma speed error, m/s (or use `speed_sigma_percent`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub speed_sigma_m_s: Option<f64>,
    /// 1-sigma speed error, percent of the nominal speed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub speed_sigma_percent: Option<f64>,
    /// 1-sigma direction error per axis, deg (default 0).
    #[serde(default)]
    pub direction_sigma_deg: f64,
}

/// Integrator keys of a scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct IntegratorSpec {
    /// Relative tolerance, in [1e-14, 1e-3].
    pub rel_tol: f64,
    /// Absolute position tolerance, m.
    pub abs_tol_m: f64,
    /// Absolute velocity tolerance, m/s (default derived from `abs_tol_m`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub abs_tol_m_s: Option<f64>,
    /// Flight time limit, s.
    pub max_time_s: f64,
    /// Step limit per launch.
    pub max_steps: u64,
    /// Wall-clock limit per launch, s.
    pub max_wall_s: f64,
}

impl Default for IntegratorSpec {
    fn default() -> Self {
        let d = IntegratorSettings::default();
        IntegratorSpec {
            rel_tol: d.rel_tol,
            abs_tol_m: d.abs_tol_m,
            abs_tol_m_s: d.abs_tol_m_s,
            max_time_s: d.max_time_s,
            max_steps: d.max_steps,
            max_wall_s: d.max_wall_s,
        }
    }
}

/// Contact keys of a scenario.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BounceSpec {
    /// Normal restitution in [0, 1].
    pub normal_restitution: f64,
    /// Tangential restitution in [0, 1].
    pub tangential_restitution: f64,
    /// Rebounding contacts before the particle is stopped.
    pub max_bounces: u32,
    /// Rebounds slower than this rest, m/s.
    pub rest_speed_m_s: f64,
}

impl Default for BounceSpec {
    fn default() -> Self {
        let d = BounceModel::default();
        BounceSpec {
            normal_restitution: d.normal_restitution,
            tangential_restitution: d.tangential_restitution,
            max_bounces: d.max_bounces,
            rest_speed_m_s: d.rest_speed_m_s,
        }
    }
}

/// Where the shape model comes from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ShapeSource {
    /// The built-in demo body (see [`builtin_quillon`]).
    BuiltinQuillon,
    /// An OBJ file, path as written (relative to the scenario file); the caller opens it.
    File {
        /// Path as written in the scenario.
        path: String,
        /// Length unit of its coordinates.
        unit: LengthUnit,
    },
}

/// Refuses launch states with the same id, naming the entries they come from.
fn check_unique_ids(states: &[LaunchState], entry_of: &[usize]) -> Result<()> {
    let mut first: std::collections::HashMap<&str, usize> =
        std::collections::HashMap::with_capacity(states.len());
    for (k, state) in states.iter().enumerate() {
        if let Some(&j) = first.get(state.id.as_str()) {
            let (a, b) = (entry_of[j], entry_of[k]);
            let what = if a == b {
                format!("is generated twice by launches[{a}]")
            } else {
                format!("is used by launches[{a}] and generated again by launches[{b}]")
            };
            let (lo, hi) = (a.min(b), a.max(b));
            return Err(err(
                format!("launches[{hi}].id"),
                format!(
                    "launch id {} {what}; fan members are named id/k and dispersion members \
                     id#k, so rename launches[{lo}] or launches[{hi}]",
                    excerpt(&state.id)
                ),
            ));
        }
        first.insert(state.id.as_str(), k);
    }
    Ok(())
}

impl LaunchEntry {
    /// How many launches this entry expands to (fan count times dispersion count), saturating.
    pub fn member_count(&self) -> u64 {
        let fan = self.fan.as_ref().map_or(1, |f| f.count as u64);
        let dispersion = self.dispersion.as_ref().map_or(1, |d| d.count as u64);
        fan.saturating_mul(dispersion)
    }

    /// The ids of the launches this entry expands to, in launch order, without building them:
    /// the entry's id, fan members `id/k`, dispersion members `id#j`, both `id/k#j` (the ids
    /// [`Scenario::build_launches`] gives).
    pub fn member_ids(&self) -> Vec<String> {
        if self.state.is_some() {
            return vec![self.id.clone()];
        }
        let fan: Vec<String> = match &self.fan {
            Some(f) => (0..f.count).map(|k| fan_member_id(&self.id, k)).collect(),
            None => vec![self.id.clone()],
        };
        match &self.dispersion {
            Some(d) => fan
                .iter()
                .flat_map(|m| (0..d.count).map(move |j| dispersion_member_id(m, j)))
                .collect(),
            None => fan,
        }
    }

    /// The surface site of a launch from a site, placed on `body` (`None` for an explicit
    /// state). Errors say why the site cannot be placed.
    pub fn site(&self, body: &Body) -> Result<Option<Site>> {
        let Some(site) = &self.site else {
            return Ok(None);
        };
        let normal = self.normal.unwrap_or_default();
        let placed = if let (Some(lat), Some(lon)) = (site.lat_deg, site.lon_deg) {
            Site::from_lat_lon(body, lat, lon, normal)
        } else if let Some(face) = site.face {
            Site::from_face(body, face, normal)
        } else if let Some(pt) = site.point_m {
            let hit = body.shape.nearest_surface_point(&Point3::from(pt));
            Site::from_surface_point(body, hit.point_m, hit.face, normal)
        } else {
            return Err(err(
                "site",
                "give exactly one of {lat_deg, lon_deg}, {face} or {point_m}",
            ));
        };
        placed.map(Some)
    }
}

/// The built-in demo body's shape, parsed from the embedded OBJ (kilometres).
pub fn builtin_quillon() -> Result<(ShapeModel, Vec<Warning>)> {
    Ok(ShapeModel::from_obj(
        spinfall_gravity::demo::OBJ_KM.as_bytes(),
        LengthUnit::Kilometre,
    )?)
}

#[derive(Deserialize)]
struct Header {
    format: Option<serde_json::Value>,
    version: Option<serde_json::Value>,
}

fn err(path: impl Into<String>, message: impl Into<String>) -> DynamicsError {
    let path = path.into();
    DynamicsError::Scenario {
        path: if path.is_empty() {
            "(document)".into()
        } else {
            path
        },
        message: message.into(),
    }
}

/// A located parse error: the field path from `serde_path_to_error`, serde's message with long
/// quotes shortened, and the line and column.
fn located(e: serde_path_to_error::Error<serde_json::Error>) -> DynamicsError {
    let path = e.path().to_string();
    let inner = e.into_inner();
    let message = inner.to_string();
    err(
        // "." is the document itself; "?" is where the text ended before the value did.
        if path == "." || path == "?" {
            String::new()
        } else if path.chars().count() > 2 * spinfall_gravity::text::EXCERPT_CHARS {
            // A key of unbounded length is part of the path: keep its start.
            let head: String = path
                .chars()
                .take(spinfall_gravity::text::EXCERPT_CHARS)
                .collect();
            format!("{head}…")
        } else {
            path
        },
        shorten_quotes(&message).into_owned(),
    )
}

/// A JSON value as written, or an excerpt of it when long.
fn json_excerpt(value: &serde_json::Value) -> String {
    let text = value.to_string();
    if text.chars().count() <= spinfall_gravity::text::EXCERPT_CHARS {
        text
    } else {
        excerpt(&text)
    }
}

/// Parses `text` as `T`, errors located.
fn parse<'de, T: Deserialize<'de>>(text: &'de str) -> Result<T> {
    let mut de = serde_json::Deserializer::from_str(text);
    let value: T = serde_path_to_error::deserialize(&mut de).map_err(located)?;
    de.end()
        .map_err(|e| err("", shorten_quotes(&e.to_string()).into_owned()))?;
    Ok(value)
}

fn finite(path: &str, v: f64) -> Result<f64> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(err(path, format!("must be a finite number, got {v}")))
    }
}

fn positive(path: &str, v: f64) -> Result<f64> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(err(path, format!("must be a finite number > 0, got {v}")))
    }
}

fn in_range(path: &str, v: f64, lo: f64, hi: f64) -> Result<f64> {
    if v.is_finite() && (lo..=hi).contains(&v) {
        Ok(v)
    } else {
        let range = if hi == f64::MAX {
            format!(">= {lo:?}")
        } else {
            format!("in [{lo:?}, {hi:?}]")
        };
        Err(err(
            path,
            format!("must be a finite number {range}, got {v}"),
        ))
    }
}

/// Checks a grain, naming the key under `path`.
fn check_particle(path: &str, p: &Particle) -> Result<()> {
    positive(&format!("{path}.radius_m"), p.radius_m)?;
    positive(&format!("{path}.density_kg_m3"), p.density_kg_m3)?;
    in_range(
        &format!("{path}.radiation_pressure_coefficient"),
        p.radiation_pressure_coefficient,
        0.0,
        2.0,
    )?;
    Ok(())
}

/// Checks a targeted launch entry: no speed or direction of its own, one target form, the
/// mode's number and the tolerance.
fn validate_target(p: &str, l: &LaunchEntry, target: &SiteSpec) -> Result<()> {
    for (k, present) in [
        ("speed_m_s", l.speed_m_s.is_some()),
        ("azimuth_deg", l.azimuth_deg.is_some()),
        ("elevation_deg", l.elevation_deg.is_some()),
    ] {
        if present {
            return Err(err(
                format!("{p}.{k}"),
                "a targeted launch (with \"target\") has its speed and direction solved; \
                 remove this key (fix the speed or elevation in \"mode\")",
            ));
        }
    }
    if l.fan.is_some() {
        return Err(err(
            format!("{p}.fan"),
            "a targeted launch takes no fan (a \"dispersion\" set around the solution is \
             allowed)",
        ));
    }
    let tp = format!("{p}.target");
    let forms = [
        target.lat_deg.is_some() || target.lon_deg.is_some(),
        target.face.is_some(),
        target.point_m.is_some(),
    ];
    if forms.iter().filter(|f| **f).count() != 1 {
        return Err(err(
            tp,
            "give exactly one of {lat_deg, lon_deg}, {face} or {point_m}",
        ));
    }
    if forms[0] {
        let lat = target
            .lat_deg
            .ok_or_else(|| err(format!("{tp}.lat_deg"), "missing (lon_deg is given)"))?;
        let lon = target
            .lon_deg
            .ok_or_else(|| err(format!("{tp}.lon_deg"), "missing (lat_deg is given)"))?;
        in_range(&format!("{tp}.lat_deg"), lat, -90.0, 90.0)?;
        finite(&format!("{tp}.lon_deg"), lon)?;
    }
    if let Some(pt) = target.point_m {
        for (k, v) in pt.iter().enumerate() {
            finite(&format!("{tp}.point_m[{k}]"), *v)?;
        }
    }
    if let Some(mode) = &l.mode {
        mode.check().map_err(|e| match e {
            DynamicsError::InvalidParameter { name, message } => {
                err(format!("{p}.mode.{name}"), message)
            }
            other => err(format!("{p}.mode"), other.to_string()),
        })?;
    }
    if let Some(t) = l.miss_tolerance_m {
        positive(&format!("{p}.miss_tolerance_m"), t)?;
    }
    Ok(())
}

/// (speed m/s, azimuth deg, elevation deg) of the launches of a targeted entry that has no
/// solution (unreachable, or not solved by this process): placeholders, never flown.
const UNSOLVED_VELOCITY: (f64, f64, f64) = (0.0, 0.0, 90.0);

/// The launches of a scenario with its targeted entries solved
/// ([`Scenario::build_launches_targeted`]).
#[derive(Debug, Clone)]
pub struct TargetedLaunches {
    /// Every launch state, in entry order (fans and dispersion sets expanded).
    pub states: Vec<LaunchState>,
    /// One record per targeted entry.
    pub targeting: Vec<TargetedEntry>,
}

/// The solution of one targeted launch entry.
#[derive(Debug, Clone)]
pub struct TargetedEntry {
    /// Index of the entry in `launches`.
    pub entry: usize,
    /// Its id.
    pub id: String,
    /// The launch states it expanded to (indices into [`TargetedLaunches::states`]). When the
    /// target is unreachable they are placeholders that must not be flown: they end `failed`
    /// with the report's reason.
    pub launches: std::ops::Range<usize>,
    /// The solution, or why the target is unreachable.
    pub report: TargetingReport,
}

impl TargetedEntry {
    /// The failure reason of the entry's launches when the target is unreachable.
    pub fn failure_reason(&self) -> Option<String> {
        (!self.report.solved()).then(|| {
            format!(
                "target unreachable: {}",
                self.report.reason.as_deref().unwrap_or("no solution")
            )
        })
    }
}

/// The target of a targeted entry as the core takes it (`None` when the spec names no point).
pub fn target_of(spec: &SiteSpec) -> Option<Target> {
    if let (Some(lat_deg), Some(lon_deg)) = (spec.lat_deg, spec.lon_deg) {
        Some(Target::LatLon { lat_deg, lon_deg })
    } else if let Some(face) = spec.face {
        Some(Target::Face(face))
    } else {
        spec.point_m.map(Target::PointM)
    }
}

impl Scenario {
    /// Checks the `environment` section, naming the key.
    fn validate_environment(&self) -> Result<()> {
        let Some(env) = &self.environment else {
            return Ok(());
        };
        if let Some(sun) = &env.sun {
            let d = sun.direction_inertial;
            if sun.unit_direction_inertial().is_none() {
                return Err(err(
                    "environment.sun.direction_inertial",
                    format!(
                        "must be a finite non-zero vector (from the body to the Sun), got {d:?}"
                    ),
                ));
            }
            positive("environment.sun.distance_au", sun.distance_au)?;
        }
        if let Some(p) = &env.particle {
            check_particle("environment.particle", p)?;
        }
        Ok(())
    }

    /// The Sun of the `environment` section, if any.
    pub fn sun(&self) -> Option<&Sun> {
        self.environment.as_ref().and_then(|e| e.sun.as_ref())
    }

    /// The grain of launch entry `i`: its own `particle`, else `environment.particle`.
    pub fn particle_of(&self, i: usize) -> Option<Particle> {
        self.launches
            .get(i)
            .and_then(|l| l.particle)
            .or_else(|| self.default_particle())
    }

    /// The grain of the surface map and of launches that give none: `environment.particle`.
    pub fn default_particle(&self) -> Option<Particle> {
        self.environment.as_ref().and_then(|e| e.particle)
    }

    /// Warnings about a valid scenario: settings that have no effect or may surprise (a sun with
    /// every force off, a grain without a sun, launches that get no radiation pressure because
    /// they have no grain). Each names the key; front ends show them.
    pub fn warnings(&self) -> Vec<String> {
        let mut out = Vec::new();
        let sun = self.sun();
        match sun {
            Some(sun) if !sun.radiation_pressure && !sun.tide => out.push(format!(
                "environment.sun: radiation_pressure and tide are both off{}, so the Sun changes \
                 no flight (the surface map still shows which faces are lit)",
                if sun.shadow {
                    " (shadow only switches radiation pressure)"
                } else {
                    ""
                }
            )),
            Some(sun) if sun.radiation_pressure => {
                let bare: Vec<String> = self
                    .launches
                    .iter()
                    .enumerate()
                    .filter(|(i, _)| self.particle_of(*i).is_none())
                    .map(|(i, l)| format!("launches[{i}] ({})", excerpt(&l.id)))
                    .collect();
                if !bare.is_empty() {
                    let shown: Vec<&str> = bare.iter().take(5).map(String::as_str).collect();
                    out.push(format!(
                        "environment.sun.radiation_pressure: {} launch entr{} no particle and \
                         there is no environment.particle, so {} no radiation pressure: {}{}",
                        bare.len(),
                        if bare.len() == 1 { "y has" } else { "ies have" },
                        if bare.len() == 1 {
                            "it feels"
                        } else {
                            "they feel"
                        },
                        shown.join(", "),
                        if bare.len() > shown.len() {
                            ", ..."
                        } else {
                            ""
                        }
                    ));
                }
                if self.default_particle().is_none() {
                    out.push(
                        "environment.particle: missing, so the surface map has no \
                         radiation-pressure values (it still shows which faces are lit)"
                            .into(),
                    );
                }
            }
            _ => {}
        }
        if sun.is_none() {
            if self.default_particle().is_some() {
                out.push(
                    "environment.particle: there is no environment.sun, so the particle has no \
                     effect"
                        .into(),
                );
            }
            for (i, l) in self.launches.iter().enumerate() {
                if l.particle.is_some() {
                    out.push(format!(
                        "launches[{i}].particle: there is no environment.sun, so the particle \
                         has no effect"
                    ));
                }
            }
        }
        out
    }

    /// Parses and validates a scenario document.
    ///
    /// Errors name the field path and, for parse errors, the line and column, e.g.
    /// `launches[2].speed_m_s: invalid type: string "fast", expected f64 at line 14 column 20`.
    pub fn from_json_str(text: &str) -> Result<Scenario> {
        // A UTF-8 byte-order mark (some editors write one) is not part of the document.
        let text = text.strip_prefix('\u{FEFF}').unwrap_or(text);
        // Format and version first, so a document of another kind or version is named as such.
        let header: Header = parse(text)?;
        match header.format {
            Some(serde_json::Value::String(s)) if s == SCENARIO_FORMAT => {}
            Some(other) => {
                return Err(err(
                    "format",
                    format!(
                        "expected \"{SCENARIO_FORMAT}\", got {}",
                        json_excerpt(&other)
                    ),
                ));
            }
            None => {
                return Err(err(
                    "format",
                    format!("missing: a scenario starts with \"format\": \"{SCENARIO_FORMAT}\""),
                ));
            }
        }
        match header.version {
            Some(serde_json::Value::Number(n)) if n.as_u64() == Some(SCENARIO_VERSION as u64) => {}
            Some(other) => {
                return Err(err(
                    "version",
                    format!(
                        "unsupported version {}: this build reads version {SCENARIO_VERSION}",
                        json_excerpt(&other)
                    ),
                ));
            }
            None => return Err(err("version", "missing")),
        }
        let scenario: Scenario = parse(text)?;
        scenario.validate()?;
        Ok(scenario)
    }

    /// [`Scenario::from_json_str`] on the bytes of a file: a UTF-16 or UTF-32 file is refused by
    /// name, a UTF-8 byte-order mark is dropped, and other bytes that are not UTF-8 are refused
    /// with their line.
    pub fn from_json_bytes(bytes: &[u8]) -> Result<Scenario> {
        let text = decode_utf8(bytes, InvalidBytes::Refuse).map_err(|e| err("", e.to_string()))?;
        Scenario::from_json_str(&text)
    }

    /// Pretty JSON that [`Scenario::from_json_str`] reads back to an equal scenario.
    pub fn to_json_string_pretty(&self) -> Result<String> {
        Ok(serde_json::to_string_pretty(self)?)
    }

    /// Semantic checks, each error naming its field.
    pub fn validate(&self) -> Result<()> {
        if self.format != SCENARIO_FORMAT {
            return Err(err("format", format!("expected \"{SCENARIO_FORMAT}\"")));
        }
        if self.version != SCENARIO_VERSION {
            return Err(err(
                "version",
                format!("unsupported version {}", self.version),
            ));
        }
        let b = &self.body;
        if b.shape.trim().is_empty() {
            return Err(err(
                "body.shape",
                "must name an OBJ file or \"builtin:quillon\"",
            ));
        }
        if b.shape.starts_with("builtin:") && b.shape != BUILTIN_QUILLON {
            return Err(err(
                "body.shape",
                format!(
                    "unknown built-in shape {}: the only one is \"{BUILTIN_QUILLON}\"",
                    excerpt(&b.shape)
                ),
            ));
        }
        if let Some(c) = &b.contact_shape {
            if c.path.trim().is_empty() {
                return Err(err(
                    "body.contact_shape.path",
                    "must name a shape file (OBJ, PLY or STL) or \"builtin:quillon\"",
                ));
            }
            if c.path.starts_with("builtin:") && c.path != BUILTIN_QUILLON {
                return Err(err(
                    "body.contact_shape.path",
                    format!(
                        "unknown built-in shape {}: the only one is \"{BUILTIN_QUILLON}\"",
                        excerpt(&c.path)
                    ),
                ));
            }
        }
        let given: Vec<&str> = [
            ("density_kg_m3", b.density_kg_m3),
            ("mass_kg", b.mass_kg),
            ("gm_m3_s2", b.gm_m3_s2),
        ]
        .iter()
        .filter(|(_, v)| v.is_some())
        .map(|(k, _)| *k)
        .collect();
        if given.len() != 1 {
            return Err(err(
                "body",
                format!(
                    "give exactly one of density_kg_m3, mass_kg, gm_m3_s2 (found {})",
                    if given.is_empty() {
                        "none".to_string()
                    } else {
                        given.join(", ")
                    }
                ),
            ));
        }
        for (k, v) in [
            ("body.density_kg_m3", b.density_kg_m3),
            ("body.mass_kg", b.mass_kg),
            ("body.gm_m3_s2", b.gm_m3_s2),
        ] {
            if let Some(v) = v {
                positive(k, v)?;
            }
        }
        positive("body.spin.period_h", b.spin.period_h)?;
        finite("body.spin.phase_deg", b.spin.phase_deg)?;
        if let SpinAxis::Vector(v) = b.spin.axis {
            let n = Vector3::from(v).norm();
            if !n.is_finite() || n < 1e-12 {
                return Err(err(
                    "body.spin.axis",
                    format!("must be a finite non-zero vector, got {v:?}"),
                ));
            }
        }
        if let Some(LimitsSpec {
            max_launches: Some(0),
        }) = self.limits
        {
            return Err(err("limits.max_launches", "must be >= 1"));
        }
        let mut ids = std::collections::HashSet::new();
        for (i, l) in self.launches.iter().enumerate() {
            let p = format!("launches[{i}]");
            if l.id.trim().is_empty() {
                return Err(err(format!("{p}.id"), "must not be empty"));
            }
            if !ids.insert(l.id.as_str()) {
                return Err(err(
                    format!("{p}.id"),
                    format!("duplicate id {}", excerpt(&l.id)),
                ));
            }
            self.validate_launch(&p, l)?;
            if let Some(particle) = &l.particle {
                check_particle(&format!("{p}.particle"), particle)?;
            }
        }
        self.validate_environment()?;
        let it = &self.integrator;
        in_range("integrator.rel_tol", it.rel_tol, 1e-14, 1e-3)?;
        positive("integrator.abs_tol_m", it.abs_tol_m)?;
        if let Some(v) = it.abs_tol_m_s {
            positive("integrator.abs_tol_m_s", v)?;
        }
        positive("integrator.max_time_s", it.max_time_s)?;
        if it.max_steps == 0 {
            return Err(err("integrator.max_steps", "must be >= 1"));
        }
        positive("integrator.max_wall_s", it.max_wall_s)?;
        let bo = &self.bounce;
        in_range("bounce.normal_restitution", bo.normal_restitution, 0.0, 1.0)?;
        in_range(
            "bounce.tangential_restitution",
            bo.tangential_restitution,
            0.0,
            1.0,
        )?;
        in_range("bounce.rest_speed_m_s", bo.rest_speed_m_s, 0.0, f64::MAX)?;
        Ok(())
    }

    fn validate_launch(&self, p: &str, l: &LaunchEntry) -> Result<()> {
        match (&l.state, &l.site) {
            (Some(_), Some(_)) => {
                return Err(err(
                    p.to_string(),
                    "give either \"state\" or \"site\", not both",
                ));
            }
            (None, None) => return Err(err(p.to_string(), "needs a \"state\" or a \"site\"")),
            (Some(s), None) => {
                for (k, v) in s.position_m.iter().enumerate() {
                    finite(&format!("{p}.state.position_m[{k}]"), *v)?;
                }
                for (k, v) in s.velocity_m_s.iter().enumerate() {
                    finite(&format!("{p}.state.velocity_m_s[{k}]"), *v)?;
                }
                for (k, present) in [
                    ("speed_m_s", l.speed_m_s.is_some()),
                    ("azimuth_deg", l.azimuth_deg.is_some()),
                    ("elevation_deg", l.elevation_deg.is_some()),
                    ("altitude_m", l.altitude_m.is_some()),
                    ("normal", l.normal.is_some()),
                    ("fan", l.fan.is_some()),
                    ("dispersion", l.dispersion.is_some()),
                    ("target", l.target.is_some()),
                    ("mode", l.mode.is_some()),
                    ("miss_tolerance_m", l.miss_tolerance_m.is_some()),
                ] {
                    if present {
                        return Err(err(
                            format!("{p}.{k}"),
                            "only applies to launches from a \"site\", not to an explicit \"state\"",
                        ));
                    }
                }
            }
            (None, Some(site)) => {
                let sp = format!("{p}.site");
                let forms = [
                    site.lat_deg.is_some() || site.lon_deg.is_some(),
                    site.face.is_some(),
                    site.point_m.is_some(),
                ];
                if forms.iter().filter(|f| **f).count() != 1 {
                    return Err(err(
                        sp,
                        "give exactly one of {lat_deg, lon_deg}, {face} or {point_m}",
                    ));
                }
                if forms[0] {
                    let lat = site.lat_deg.ok_or_else(|| {
                        err(format!("{sp}.lat_deg"), "missing (lon_deg is given)")
                    })?;
                    let lon = site.lon_deg.ok_or_else(|| {
                        err(format!("{sp}.lon_deg"), "missing (lat_deg is given)")
                    })?;
                    in_range(&format!("{sp}.lat_deg"), lat, -90.0, 90.0)?;
                    finite(&format!("{sp}.lon_deg"), lon)?;
                }
                if let Some(pt) = site.point_m {
                    for (k, v) in pt.iter().enumerate() {
                        finite(&format!("{sp}.point_m[{k}]"), *v)?;
                    }
                }
                if let Some(target) = &l.target {
                    validate_target(p, l, target)?;
                } else {
                    for (k, present) in [
                        ("mode", l.mode.is_some()),
                        ("miss_tolerance_m", l.miss_tolerance_m.is_some()),
                    ] {
                        if present {
                            return Err(err(
                                format!("{p}.{k}"),
                                "only applies to a targeted launch (one with \"target\")",
                            ));
                        }
                    }
                    let speed = l.speed_m_s.ok_or_else(|| {
                        err(
                            format!("{p}.speed_m_s"),
                            "missing: a launch from a site needs a speed (or a \"target\")",
                        )
                    })?;
                    in_range(&format!("{p}.speed_m_s"), speed, 0.0, f64::MAX)?;
                }
                if let Some(a) = l.azimuth_deg {
                    finite(&format!("{p}.azimuth_deg"), a)?;
                }
                if let Some(e) = l.elevation_deg {
                    in_range(&format!("{p}.elevation_deg"), e, 0.0, 90.0)?;
                }
                if let Some(h) = l.altitude_m {
                    in_range(&format!("{p}.altitude_m"), h, 0.0, f64::MAX)?;
                }
                if let Some(f) = &l.fan {
                    if f.count == 0 || f.count > 100_000 {
                        return Err(err(
                            format!("{p}.fan.count"),
                            format!("must be in [1, 100000], got {}", f.count),
                        ));
                    }
                    match f.vary {
                        FanQuantity::AzimuthDeg => finite(&format!("{p}.fan.to"), f.to)?,
                        FanQuantity::ElevationDeg => {
                            in_range(&format!("{p}.fan.to"), f.to, 0.0, 90.0)?
                        }
                        FanQuantity::SpeedMS => {
                            in_range(&format!("{p}.fan.to"), f.to, 0.0, f64::MAX)?
                        }
                    };
                }
                if let Some(d) = &l.dispersion {
                    if d.count == 0 || d.count > 1_000_000 {
                        return Err(err(
                            format!("{p}.dispersion.count"),
                            format!("must be in [1, 1000000], got {}", d.count),
                        ));
                    }
                    if d.speed_sigma_m_s.is_some() && d.speed_sigma_percent.is_some() {
                        return Err(err(
                            format!("{p}.dispersion"),
                            "give speed_sigma_m_s or speed_sigma_percent, not both",
                        ));
                    }
                    for (k, v) in [
                        ("speed_sigma_m_s", d.speed_sigma_m_s),
                        ("speed_sigma_percent", d.speed_sigma_percent),
                        ("direction_sigma_deg", Some(d.direction_sigma_deg)),
                    ] {
                        if let Some(v) = v {
                            in_range(&format!("{p}.dispersion.{k}"), v, 0.0, f64::MAX)?;
                        }
                    }
                }
            }
        }
        Ok(())
    }

    /// Where to get the shape model.
    pub fn shape_source(&self) -> ShapeSource {
        if self.body.shape == BUILTIN_QUILLON {
            ShapeSource::BuiltinQuillon
        } else {
            ShapeSource::File {
                path: self.body.shape.clone(),
                unit: self.body.unit,
            }
        }
    }

    /// The mass specification given.
    pub fn mass_spec(&self) -> Result<MassSpec> {
        let b = &self.body;
        match (b.density_kg_m3, b.mass_kg, b.gm_m3_s2) {
            (Some(d), None, None) => Ok(MassSpec::DensityKgM3(d)),
            (None, Some(m), None) => Ok(MassSpec::MassKg(m)),
            (None, None, Some(g)) => Ok(MassSpec::GmM3S2(g)),
            _ => Err(err(
                "body",
                "give exactly one of density_kg_m3, mass_kg, gm_m3_s2",
            )),
        }
    }

    /// Builds the body from the loaded shape (recentred on its centre of mass unless
    /// `recenter` is false) with the exact polyhedron gravity.
    pub fn build_body(&self, shape: ShapeModel) -> Result<Body> {
        let shape = if self.body.recenter {
            shape.recentered()
        } else {
            shape
        };
        Body::new(
            self.body_name(),
            Arc::new(shape.clone()),
            self.mass_spec()?,
            self.spin_on(&shape)?,
        )
        .map_err(|e| err("body", e.to_string()))
    }

    /// The spin of the body on `shape` (placed as the body frame: recentred or not), with the
    /// `"max-moment"` axis resolved on it.
    pub fn spin_on(&self, shape: &ShapeModel) -> Result<Spin> {
        let axis = self
            .body
            .spin
            .axis
            .resolve(shape)
            .map_err(|e| err("body.spin.axis", e.to_string()))?;
        Spin::from_hours(
            self.body.spin.period_h,
            axis,
            self.body.spin.phase_deg.to_radians(),
        )
        .map_err(|e| err("body.spin", e.to_string()))
    }

    /// The body's display name: `body.name`, or the demo name, or the shape file's stem.
    pub fn body_name(&self) -> String {
        self.body
            .name
            .clone()
            .unwrap_or_else(|| match self.shape_source() {
                ShapeSource::BuiltinQuillon => spinfall_gravity::demo::NAME.to_string(),
                ShapeSource::File { path, .. } => std::path::Path::new(&path)
                    .file_stem()
                    .map(|s| s.to_string_lossy().into_owned())
                    .unwrap_or(path),
            })
    }

    /// The most launches a run of this scenario may have: `limits.max_launches` or
    /// [`DEFAULT_MAX_LAUNCHES`].
    pub fn max_launches(&self) -> u64 {
        self.limits
            .as_ref()
            .and_then(|l| l.max_launches)
            .unwrap_or(DEFAULT_MAX_LAUNCHES)
    }

    /// How many launches the entries expand to (fans times dispersion sets), counted without
    /// building them; saturates instead of overflowing.
    pub fn launch_count(&self) -> u64 {
        self.launches
            .iter()
            .map(LaunchEntry::member_count)
            .fold(0u64, u64::saturating_add)
    }

    /// The ids of every launch, in launch order, without building the launches (see
    /// [`LaunchEntry::member_ids`]). Check [`Scenario::launch_count`] against a limit first.
    pub fn launch_ids(&self) -> Vec<String> {
        self.launches
            .iter()
            .flat_map(LaunchEntry::member_ids)
            .collect()
    }

    /// Flight settings from the `integrator` and `bounce` sections.
    pub fn flight_settings(&self) -> FlightSettings {
        let i = &self.integrator;
        let b = &self.bounce;
        FlightSettings {
            integrator: IntegratorSettings {
                rel_tol: i.rel_tol,
                abs_tol_m: i.abs_tol_m,
                abs_tol_m_s: i.abs_tol_m_s,
                max_time_s: i.max_time_s,
                max_steps: i.max_steps,
                max_wall_s: i.max_wall_s,
            },
            bounce: BounceModel {
                normal_restitution: b.normal_restitution,
                tangential_restitution: b.tangential_restitution,
                max_bounces: b.max_bounces,
                rest_speed_m_s: b.rest_speed_m_s,
            },
            sampling: SamplingSettings::default(),
            sun: self.sun().copied(),
        }
    }

    /// Expands every launch entry (fans, dispersion sets) into launch states on `body`.
    ///
    /// Expand only after checking [`Scenario::launch_count`] against a limit: the states are
    /// all built in memory. Generated ids (`id/k` for fan members, `id#k` for dispersion
    /// members) that collide with another launch's id are an error naming both entries.
    ///
    /// A targeted entry (with `target`) needs flights to resolve: it is refused here, naming
    /// it; use [`Scenario::build_launches_targeted`].
    pub fn build_launches(&self, body: &Body) -> Result<Vec<LaunchState>> {
        let (states, _) = self.expand(body, &mut |i, _, _| {
            Err(err(
                format!("launches[{i}].target"),
                "a targeted launch is solved by flights: expand it with \
                 Scenario::build_launches_targeted",
            ))
        })?;
        Ok(states)
    }

    /// As [`Scenario::build_launches`], solving each targeted entry first (see
    /// [`crate::targeting`]) with the scenario's flight settings: the entry then flies the
    /// solution (and its dispersion set around it).
    ///
    /// `progress(id, flights, max_flights)` is called after each batch of trial flights of the
    /// entry `id`. At most [`DEFAULT_MAX_FLIGHTS`] flights per targeted entry.
    ///
    /// # Errors
    /// As [`Scenario::build_launches`], a bad target (naming `launches[i].target`), and
    /// [`DynamicsError::Cancelled`]. An unreachable target is not an error: its entry's
    /// launches are placeholders listed in [`TargetedEntry`] with the reason.
    pub fn build_launches_targeted(
        &self,
        body: &Body,
        progress: &(dyn Fn(&str, usize, usize) + Sync),
        cancel: &crate::Cancel,
    ) -> Result<TargetedLaunches> {
        self.build_launches_targeted_for(body, &|_| true, progress, cancel)
    }

    /// As [`Scenario::build_launches_targeted`], solving only the targeted entries `solve(i)`
    /// accepts (`i` indexes [`Scenario::launches`]): a share of the launches flown by one
    /// process of a sharded run needs only the entries it flies. The target of every other
    /// targeted entry is still resolved (a bad target is refused all the same), but its launch
    /// states are unsolved placeholders that must not be flown, and it has no
    /// [`TargetedEntry`]. A solved entry's solution does not depend on which others are solved.
    ///
    /// # Errors
    /// As [`Scenario::build_launches_targeted`].
    pub fn build_launches_targeted_for(
        &self,
        body: &Body,
        solve: &(dyn Fn(usize) -> bool + Sync),
        progress: &(dyn Fn(&str, usize, usize) + Sync),
        cancel: &crate::Cancel,
    ) -> Result<TargetedLaunches> {
        let settings = self.flight_settings();
        let mut reports: Vec<(usize, TargetingReport)> = Vec::new();
        let (states, entry_of) = self.expand(body, &mut |i, l, site| {
            let p = format!("launches[{i}]");
            let spec = l
                .target
                .as_ref()
                .and_then(target_of)
                .ok_or_else(|| err(format!("{p}.target"), "missing"))?;
            let target = TargetPoint::resolve(body, &spec).map_err(|e| match e {
                DynamicsError::InvalidParameter { message, .. } => {
                    err(format!("{p}.target"), message)
                }
                other => err(format!("{p}.target"), other.to_string()),
            })?;
            if !solve(i) {
                // The placeholder velocity of an unreachable target: never flown.
                return Ok(UNSOLVED_VELOCITY);
            }
            let request = TargetRequest {
                site: site.clone(),
                target,
                mode: l.mode.unwrap_or(TargetMode::MinSpeed),
                miss_tolerance_m: l.miss_tolerance_m.unwrap_or(DEFAULT_MISS_TOLERANCE_M),
                start_altitude_m: l.altitude_m.unwrap_or(DEFAULT_START_ALTITUDE_M),
                particle: self.particle_of(i),
                max_flights: DEFAULT_MAX_FLIGHTS,
            };
            let report = solve_target(
                body,
                &request,
                &settings,
                &|done, max| progress(&l.id, done, max),
                cancel,
            )
            .map_err(|e| match e {
                DynamicsError::Cancelled => DynamicsError::Cancelled,
                other => err(format!("{p}.target"), other.to_string()),
            })?;
            let velocity = report
                .launch
                .filter(|_| report.solved())
                .map_or(UNSOLVED_VELOCITY, |v| {
                    (v.speed_m_s, v.azimuth_deg, v.elevation_deg)
                });
            reports.push((i, report));
            Ok(velocity)
        })?;
        let targeting = reports
            .into_iter()
            .map(|(i, report)| {
                let first = entry_of
                    .iter()
                    .position(|&e| e == i)
                    .unwrap_or(states.len());
                let count = entry_of.iter().filter(|&&e| e == i).count();
                TargetedEntry {
                    entry: i,
                    id: self.launches[i].id.clone(),
                    launches: first..first + count,
                    report,
                }
            })
            .collect();
        Ok(TargetedLaunches { states, targeting })
    }

    /// Expands the entries; `solve(i, entry, site)` gives (speed m/s, azimuth deg, elevation
    /// deg) of a targeted entry. Returns the states and the entry of each.
    #[allow(
        clippy::type_complexity,
        reason = "one private callback, named by its doc"
    )]
    fn expand(
        &self,
        body: &Body,
        solve: &mut dyn FnMut(usize, &LaunchEntry, &Site) -> Result<(f64, f64, f64)>,
    ) -> Result<(Vec<LaunchState>, Vec<usize>)> {
        let mut out = Vec::new();
        let mut entry_of: Vec<usize> = Vec::new();
        for (i, l) in self.launches.iter().enumerate() {
            let p = format!("launches[{i}]");
            if let Some(s) = &l.state {
                out.push(
                    LaunchState::from_state(
                        l.id.clone(),
                        Point3::from(s.position_m),
                        Vector3::from(s.velocity_m_s),
                    )
                    .map_err(|e| err(format!("{p}.state"), e.to_string()))?,
                );
                entry_of.push(i);
                continue;
            }
            let site = l
                .site(body)
                .map_err(|e| err(format!("{p}.site"), e.to_string()))?
                .ok_or_else(|| err(p.clone(), "needs a \"state\" or a \"site\""))?;
            let (speed_m_s, azimuth_deg, elevation_deg) = if l.target.is_some() {
                solve(i, l, &site)?
            } else {
                (
                    l.speed_m_s
                        .ok_or_else(|| err(format!("{p}.speed_m_s"), "missing"))?,
                    l.azimuth_deg.unwrap_or(0.0),
                    l.elevation_deg.unwrap_or(90.0),
                )
            };
            let spec = LaunchSpec {
                id: l.id.clone(),
                site,
                speed_m_s,
                azimuth_deg,
                elevation_deg,
                start_altitude_m: l.altitude_m.unwrap_or(DEFAULT_START_ALTITUDE_M),
            };
            let members = match &l.fan {
                Some(f) => spec
                    .fan(&Fan {
                        vary: f.vary,
                        to: f.to,
                        count: f.count,
                    })
                    .map_err(|e| err(format!("{p}.fan"), e.to_string()))?,
                None => vec![spec],
            };
            for m in members {
                match &l.dispersion {
                    Some(d) => {
                        let sigma = match (d.speed_sigma_m_s, d.speed_sigma_percent) {
                            (_, Some(pct)) => SpeedSigma::Percent(pct),
                            (Some(s), None) => SpeedSigma::MS(s),
                            (None, None) => SpeedSigma::MS(0.0),
                        };
                        let disp = Dispersion {
                            count: d.count,
                            speed_sigma: sigma,
                            direction_sigma_deg: d.direction_sigma_deg,
                            seed: self.seed.unwrap_or(0)
                                ^ (i as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15),
                        };
                        let states = m
                            .disperse(&disp)
                            .map_err(|e| err(format!("{p}.dispersion"), e.to_string()))?;
                        entry_of.extend(std::iter::repeat_n(i, states.len()));
                        out.extend(states);
                    }
                    None => {
                        out.push(m.state().map_err(|e| err(p.clone(), e.to_string()))?);
                        entry_of.push(i);
                    }
                }
            }
        }
        check_unique_ids(&out, &entry_of)?;
        for (state, &i) in out.iter_mut().zip(&entry_of) {
            state.particle = self.particle_of(i);
        }
        Ok((out, entry_of))
    }

    /// A demo scenario on the built-in body Quillon: a fan of eight azimuths from a mid-latitude
    /// site, a dispersion set, a launch from a face and one from an explicit state.
    pub fn builtin_example() -> Scenario {
        Scenario {
            format: SCENARIO_FORMAT.into(),
            version: SCENARIO_VERSION,
            name: Some("Quillon hops".into()),
            notes: Some("Built-in example: hops from the demo body; for research and planning, not flight-certified.".into()),
            seed: Some(7),
            body: BodySpec {
                shape: BUILTIN_QUILLON.into(),
                unit: LengthUnit::Kilometre,
                name: None,
                density_kg_m3: Some(spinfall_gravity::demo::DENSITY_KG_M3),
                mass_kg: None,
                gm_m3_s2: None,
                recenter: true,
                contact_shape: None,
                spin: SpinSpec {
                    period_h: spinfall_gravity::demo::PERIOD_H,
                    axis: SpinAxis::MaxMoment,
                    phase_deg: 0.0,
                },
            },
            launches: vec![
                LaunchEntry {
                    id: "fan".into(),
                    site: Some(SiteSpec { lat_deg: Some(20.0), lon_deg: Some(45.0), ..SiteSpec::default() }),
                    speed_m_s: Some(0.8),
                    azimuth_deg: Some(0.0),
                    elevation_deg: Some(45.0),
                    fan: Some(FanSpec { vary: FanQuantity::AzimuthDeg, to: 315.0, count: 8 }),
                    ..LaunchEntry::default()
                },
                LaunchEntry {
                    id: "scatter".into(),
                    site: Some(SiteSpec { lat_deg: Some(-10.0), lon_deg: Some(200.0), ..SiteSpec::default() }),
                    speed_m_s: Some(1.0),
                    azimuth_deg: Some(90.0),
                    elevation_deg: Some(60.0),
                    normal: Some(NormalMode::Smoothed),
                    dispersion: Some(DispersionSpec {
                        count: 6,
                        speed_sigma_m_s: None,
                        speed_sigma_percent: Some(5.0),
                        direction_sigma_deg: 3.0,
                    }),
                    ..LaunchEntry::default()
                },
                LaunchEntry {
                    id: "face-10".into(),
                    site: Some(SiteSpec { face: Some(10), ..SiteSpec::default() }),
                    speed_m_s: Some(0.5),
                    ..LaunchEntry::default()
                },
                LaunchEntry {
                    id: "orbit".into(),
                    state: Some(StateSpec { position_m: [6000.0, 0.0, 0.0], velocity_m_s: [0.0, -0.9, 0.3] }),
                    ..LaunchEntry::default()
                },
            ],
            integrator: IntegratorSpec { max_time_s: 100_000.0, ..IntegratorSpec::default() },
            bounce: BounceSpec::default(),
            limits: None,
            field: None,
            environment: None,
        }
    }
}
