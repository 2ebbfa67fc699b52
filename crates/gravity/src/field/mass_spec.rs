//! How the caller gives the mass of the body, and its conversion to a bulk density.

use serde::{Deserialize, Serialize};

use super::G_SI;
use crate::error::{GravityError, Result};

/// The mass of the homogeneous body, given one of three equivalent ways.
///
/// Whichever is given is turned into a bulk density with the polyhedron's volume
/// ([`MassSpec::density_kg_m3`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum MassSpec {
    /// Bulk density, kg/m^3.
    DensityKgM3(f64),
    /// Total mass, kg.
    MassKg(f64),
    /// Gravitational parameter G*M, m^3/s^2 (converted with [`G_SI`]).
    GmM3S2(f64),
}

impl MassSpec {
    /// Name of the given quantity with its unit, as used in error messages.
    pub fn parameter_name(&self) -> &'static str {
        match self {
            MassSpec::DensityKgM3(_) => "density_kg_m3",
            MassSpec::MassKg(_) => "mass_kg",
            MassSpec::GmM3S2(_) => "gm_m3_s2",
        }
    }

    fn value(&self) -> f64 {
        match *self {
            MassSpec::DensityKgM3(v) | MassSpec::MassKg(v) | MassSpec::GmM3S2(v) => v,
        }
    }

    /// The bulk density for a body of volume `volume_m3`.
    ///
    /// Errors with [`GravityError::InvalidParameter`] naming the field when the value is not a
    /// finite positive number, and when the volume is not.
    pub fn density_kg_m3(&self, volume_m3: f64) -> Result<f64> {
        let name = self.parameter_name();
        let value = self.value();
        if !value.is_finite() {
            return Err(GravityError::InvalidParameter {
                name,
                message: format!("must be a finite number, got {value}"),
            });
        }
        if value <= 0.0 {
            return Err(GravityError::InvalidParameter {
                name,
                message: format!("must be positive, got {value}"),
            });
        }
        if !(volume_m3.is_finite() && volume_m3 > 0.0) {
            return Err(GravityError::InvalidParameter {
                name: "volume_m3",
                message: format!("the shape's volume must be positive, got {volume_m3}"),
            });
        }
        let density = match *self {
            MassSpec::DensityKgM3(rho) => rho,
            MassSpec::MassKg(m) => m / volume_m3,
            MassSpec::GmM3S2(gm) => gm / (G_SI * volume_m3),
        };
        if !(density.is_finite() && density > 0.0) {
            return Err(GravityError::InvalidParameter {
                name,
                message: format!(
                    "gives a density of {density} kg/m^3 for a volume of {volume_m3} m^3, \
                     which is not a usable positive number"
                ),
            });
        }
        Ok(density)
    }
}
