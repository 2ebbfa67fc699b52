//! The user's session: the scenario document being edited (body, launches, integrator and
//! contact settings, seed, exactly as a scenario file holds them) and the draft of the body
//! panel ([`BodyParams`], which also shows the derived mass figures).
//!
//! The document is the one the command line flies: runs go through
//! `spinfall_workflow::prepare`, and saving writes the document back, so a loaded scenario
//! saves unchanged unless the user edited it.

use serde::{Deserialize, Serialize};
use spinfall_dynamics::SpinAxis;
use spinfall_dynamics::scenario::{
    BUILTIN_QUILLON, BodySpec, BounceSpec, IntegratorSpec, LaunchEntry, SCENARIO_FORMAT,
    SCENARIO_VERSION, Scenario, SpinSpec,
};
use spinfall_gravity::{G_SI, LengthUnit, MassSpec};

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

    /// Fill the two untyped mass figures from the typed one for a body of `volume_m3` (the
    /// typed figure itself is never touched, so it saves exactly as it was read).
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
            if self.mass_input != MassInput::Mass {
                self.mass_kg = mass_kg;
            }
            if self.mass_input != MassInput::Density {
                self.density_kg_m3 = mass_kg / volume_m3;
            }
            if self.mass_input != MassInput::Gm {
                self.gm_m3_s2 = mass_kg * G_SI;
            }
        }
    }

    /// The body panel's values for a scenario body.
    pub fn from_spec(b: &BodySpec) -> BodyParams {
        let mut p = BodyParams::default();
        if let Some(d) = b.density_kg_m3 {
            p.mass_input = MassInput::Density;
            p.density_kg_m3 = d;
        } else if let Some(m) = b.mass_kg {
            p.mass_input = MassInput::Mass;
            p.mass_kg = m;
        } else if let Some(g) = b.gm_m3_s2 {
            p.mass_input = MassInput::Gm;
            p.gm_m3_s2 = g;
        }
        p.period_h = b.spin.period_h;
        p.phase_deg = b.spin.phase_deg;
        match b.spin.axis {
            SpinAxis::MaxMoment => p.axis = AxisChoice::MaxMoment,
            SpinAxis::PlusZ => p.axis = AxisChoice::PlusZ,
            SpinAxis::Vector(v) => {
                p.axis = AxisChoice::Custom;
                p.custom_axis = v;
            }
        }
        p
    }

    /// Writes the typed mass figure and the spin into a scenario body (the other keys, the
    /// shape, its unit, name and `recenter`, stay as they are).
    pub fn write_into(&self, b: &mut BodySpec) {
        b.density_kg_m3 = (self.mass_input == MassInput::Density).then_some(self.density_kg_m3);
        b.mass_kg = (self.mass_input == MassInput::Mass).then_some(self.mass_kg);
        b.gm_m3_s2 = (self.mass_input == MassInput::Gm).then_some(self.gm_m3_s2);
        b.spin = SpinSpec {
            period_h: self.period_h,
            axis: self.spin_axis(),
            phase_deg: self.phase_deg,
        };
    }
}

/// A new session's document on a shape (`shape` as a scenario writes it: a path or
/// `builtin:quillon`), with the body panel's values and default settings.
pub fn new_scenario(
    shape: String,
    unit: LengthUnit,
    recenter: bool,
    params: &BodyParams,
) -> Scenario {
    let title = if shape == BUILTIN_QUILLON {
        spinfall_gravity::demo::NAME.to_string()
    } else {
        std::path::Path::new(&shape)
            .file_stem()
            .map_or_else(|| "shape".into(), |s| s.to_string_lossy().into_owned())
    };
    let mut body = BodySpec {
        shape,
        unit,
        name: None,
        density_kg_m3: None,
        mass_kg: None,
        gm_m3_s2: None,
        recenter,
        contact_shape: None,
        spin: SpinSpec {
            period_h: params.period_h,
            axis: params.spin_axis(),
            phase_deg: params.phase_deg,
        },
    };
    params.write_into(&mut body);
    Scenario {
        format: SCENARIO_FORMAT.into(),
        version: SCENARIO_VERSION,
        name: Some(format!("{title} session")),
        notes: Some(
            "Saved by the Spinfall app. Spinfall is for research and planning, not \
             flight-certified."
                .into(),
        ),
        seed: Some(1),
        body,
        launches: Vec::new(),
        integrator: IntegratorSpec::default(),
        bounce: BounceSpec::default(),
        limits: None,
        field: None,
        environment: None,
    }
}

/// A launch's editable numbers, with the defaults of the scenario format filled in.
pub fn launch_defaults(l: &LaunchEntry) -> (f64, f64, f64) {
    (
        l.speed_m_s.unwrap_or(0.0),
        l.azimuth_deg.unwrap_or(0.0),
        l.elevation_deg.unwrap_or(90.0),
    )
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
        // The typed figure is never rewritten (it saves exactly as read).
        let typed = p.gm_m3_s2;
        p.sync_derived(volume_m3 * 3.0);
        assert_eq!(p.gm_m3_s2.to_bits(), typed.to_bits());
        // A zero or NaN volume leaves the figures alone.
        let before = p.clone();
        p.sync_derived(f64::NAN);
        p.sync_derived(0.0);
        assert_eq!(p, before);
    }
}
