//! The user's session: body settings and launch sites, as plain data the panels edit.
//!
//! Converted to the dynamics crate's types in one place ([`BodyParams::build_body`],
//! [`SiteEntry::site`]) and to and from the scenario file format (see `scenario_io`).

use std::path::PathBuf;
use std::sync::Arc;

use nalgebra::Point3;
use serde::{Deserialize, Serialize};
use spinfall_dynamics::launch::FanQuantity;
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::{Body, Spin, SpinAxis};
use spinfall_gravity::{G_SI, LengthUnit, MassSpec, ShapeModel};

/// Which mass figure the user typed (the others are derived).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum MassInput {
    /// Bulk density, kg/m^3.
    #[default]
    Density,
    /// Total mass, kg.
    Mass,
    /// Gravitational parameter GM, m^3/s^2.
    Gm,
}

/// Which spin axis.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum AxisChoice {
    /// Principal axis of maximum moment of inertia.
    #[default]
    MaxMoment,
    /// Body +z.
    PlusZ,
    /// A typed body-frame vector.
    Custom,
}

/// Mass and spin as the user set them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct BodyParams {
    /// Which figure is typed.
    pub mass_input: MassInput,
    /// Bulk density, kg/m^3.
    pub density_kg_m3: f64,
    /// Mass, kg.
    pub mass_kg: f64,
    /// GM, m^3/s^2.
    pub gm_m3_s2: f64,
    /// Spin period, hours.
    pub period_h: f64,
    /// Spin axis choice.
    pub axis: AxisChoice,
    /// Custom axis, body frame.
    pub custom_axis: [f64; 3],
    /// Rotation angle at t = 0, degrees.
    pub phase_deg: f64,
}

impl Default for BodyParams {
    fn default() -> Self {
        Self {
            mass_input: MassInput::Density,
            density_kg_m3: spinfall_gravity::demo::DENSITY_KG_M3,
            mass_kg: 0.0,
            gm_m3_s2: 0.0,
            period_h: spinfall_gravity::demo::PERIOD_H,
            axis: AxisChoice::MaxMoment,
            custom_axis: [0.0, 0.0, 1.0],
            phase_deg: 0.0,
        }
    }
}

impl BodyParams {
    /// The typed mass figure.
    pub fn mass_spec(&self) -> MassSpec {
        match self.mass_input {
            MassInput::Density => MassSpec::DensityKgM3(self.density_kg_m3),
            MassInput::Mass => MassSpec::MassKg(self.mass_kg),
            MassInput::Gm => MassSpec::GmM3S2(self.gm_m3_s2),
        }
    }

    /// The spin axis choice in the dynamics crate's terms.
    pub fn spin_axis(&self) -> SpinAxis {
        match self.axis {
            AxisChoice::MaxMoment => SpinAxis::MaxMoment,
            AxisChoice::PlusZ => SpinAxis::PlusZ,
            AxisChoice::Custom => SpinAxis::Vector(self.custom_axis),
        }
    }

    /// Fill the two untyped mass figures from the typed one for a body of `volume_m3`.
    pub fn sync_derived(&mut self, volume_m3: f64) {
        if volume_m3.is_nan() || volume_m3 <= 0.0 {
            return;
        }
        let mass_kg = match self.mass_input {
            MassInput::Density => self.density_kg_m3 * volume_m3,
            MassInput::Mass => self.mass_kg,
            MassInput::Gm => self.gm_m3_s2 / G_SI,
        };
        if mass_kg.is_finite() {
            self.mass_kg = mass_kg;
            self.density_kg_m3 = mass_kg / volume_m3;
            self.gm_m3_s2 = mass_kg * G_SI;
        }
    }

    /// The body with these settings.
    pub fn build_body(&self, name: &str, shape: Arc<ShapeModel>) -> Result<Body, String> {
        let axis = self
            .spin_axis()
            .resolve(&shape)
            .map_err(|e| e.to_string())?;
        let spin = Spin::from_hours(self.period_h, axis, self.phase_deg.to_radians())
            .map_err(|e| e.to_string())?;
        Body::new(name, shape, self.mass_spec(), spin).map_err(|e| e.to_string())
    }
}

/// How a launch is spread into several launches.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub enum Spread {
    /// One launch.
    #[default]
    Single,
    /// `count` launches sweeping `vary` from the launch's value to `to` (ends included).
    Fan {
        /// Swept quantity.
        vary: FanQuantity,
        /// Final value (deg or m/s).
        to: f64,
        /// Number of launches.
        count: u32,
    },
    /// `count` launches with Gaussian speed and direction errors (seeded by the session seed).
    Dispersion {
        /// Number of launches.
        count: u32,
        /// 1-sigma speed error, percent of the speed.
        speed_sigma_percent: f64,
        /// 1-sigma direction error per axis, degrees.
        direction_sigma_deg: f64,
    },
}

/// Launch parameters of a site.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct LaunchParams {
    /// Speed relative to the surface, m/s.
    pub speed_m_s: f64,
    /// Azimuth from local north toward east, degrees.
    pub azimuth_deg: f64,
    /// Elevation above the local horizontal, degrees.
    pub elevation_deg: f64,
    /// Fan or dispersion.
    pub spread: Spread,
}

impl Default for LaunchParams {
    fn default() -> Self {
        Self {
            speed_m_s: 0.5,
            azimuth_deg: 90.0,
            elevation_deg: 45.0,
            spread: Spread::Single,
        }
    }
}

/// Where a site is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum SiteLocation {
    /// A picked surface point on a face (body frame, metres).
    Point {
        /// Surface point, body frame, m.
        point_body_m: [f64; 3],
        /// Face index.
        face: usize,
    },
    /// Planetocentric latitude/longitude (the outermost surface along the radial line).
    LatLon {
        /// Latitude, degrees.
        lat_deg: f64,
        /// East longitude, degrees.
        lon_deg: f64,
    },
}

/// A launch site in the list.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SiteEntry {
    /// Name shown in lists and tables.
    pub name: String,
    /// Where it is.
    pub location: SiteLocation,
    /// How to launch from it.
    pub launch: LaunchParams,
}

impl SiteEntry {
    /// The dynamics site on `body`.
    pub fn site(&self, body: &Body) -> Result<Site, String> {
        match self.location {
            SiteLocation::Point { point_body_m, face } => {
                Site::from_surface_point(body, Point3::from(point_body_m), face, NormalMode::Face)
            }
            SiteLocation::LatLon { lat_deg, lon_deg } => {
                Site::from_lat_lon(body, lat_deg, lon_deg, NormalMode::Face)
            }
        }
        .map_err(|e| format!("site \"{}\": {e}", self.name))
    }

    /// Number of launches this site expands to.
    pub fn launch_count(&self) -> usize {
        match self.launch.spread {
            Spread::Single => 1,
            Spread::Fan { count, .. } | Spread::Dispersion { count, .. } => count.max(1) as usize,
        }
    }
}

/// Where the current shape model came from.
#[derive(Debug, Clone, PartialEq)]
pub enum ShapeSource {
    /// The built-in demo body.
    Demo,
    /// A file.
    File {
        /// Path of the OBJ file.
        path: PathBuf,
        /// Its length unit.
        unit: LengthUnit,
    },
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn derived_mass_figures_follow_the_typed_one() {
        // M = rho V and GM = G M (G = 6.674e-11 m^3 kg^-1 s^-2, CODATA 2018, quoted from
        // memory to four digits).
        let volume_m3 = 2.0e9;
        let mut p = BodyParams {
            mass_input: MassInput::Density,
            density_kg_m3: 1500.0,
            ..BodyParams::default()
        };
        p.sync_derived(volume_m3);
        assert!((p.mass_kg - 3.0e12).abs() < 1.0);
        assert!((p.gm_m3_s2 / (6.674e-11 * 3.0e12) - 1.0).abs() < 1e-4);
        p.mass_input = MassInput::Gm;
        p.gm_m3_s2 *= 2.0;
        p.sync_derived(volume_m3);
        assert!((p.density_kg_m3 - 3000.0).abs() < 1e-6);
        // A zero or NaN volume leaves the figures alone.
        let before = p.clone();
        p.sync_derived(f64::NAN);
        p.sync_derived(0.0);
        assert_eq!(p, before);
    }
}
