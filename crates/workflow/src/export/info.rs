//! Mass properties and validation of a shape model (`spinfall info`), with every figure checked
//! to be finite.

use std::io::Write;

use serde::Serialize;

use super::{json_error, rows};
use crate::error::{Result, WorkflowError};
use crate::shape::OpenedShape;

/// Figures that scale with the density.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DensityFigures {
    /// The density, kg/m^3.
    pub density_kg_m3: f64,
    /// Mass, kg.
    pub mass_kg: f64,
    /// Inertia tensor about the centre of mass, kg m^2 (rows).
    pub inertia_kg_m2: [[f64; 3]; 3],
    /// Principal moments, kg m^2.
    pub principal_moments_kg_m2: [f64; 3],
}

/// What `spinfall info` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ShapeInfo {
    /// The file (or built-in name).
    pub source: String,
    /// Length unit of the file.
    pub unit: String,
    /// Whether the model was recentred.
    pub recentered: bool,
    /// Vertex count.
    pub vertices: usize,
    /// Face count.
    pub faces: usize,
    /// What validation repaired.
    pub warnings: Vec<String>,
    /// Volume, m^3.
    pub volume_m3: f64,
    /// Area, m^2.
    pub area_m2: f64,
    /// Centre of mass, m.
    pub center_of_mass_m: [f64; 3],
    /// Inertia per unit density, m^5 (rows).
    pub inertia_per_unit_density_m5: [[f64; 3]; 3],
    /// Principal moments per unit density, m^5.
    pub principal_moments_per_unit_density_m5: [f64; 3],
    /// Principal axes (one row per axis).
    pub principal_axes: [[f64; 3]; 3],
    /// Radius of the sphere of equal volume, m.
    pub equivalent_radius_m: f64,
    /// Radius of the smallest origin-centred enclosing sphere, m.
    pub brillouin_radius_m: f64,
    /// With a density: mass and inertia.
    #[serde(flatten, skip_serializing_if = "Option::is_none")]
    pub density: Option<DensityFigures>,
}

/// The figures of `shape`, with mass and inertia when `density_kg_m3` is given. A figure that
/// is not finite (a density so large the mass overflows) is an error naming the input.
pub fn shape_info(shape: &OpenedShape, density_kg_m3: Option<f64>) -> Result<ShapeInfo> {
    if let Some(d) = density_kg_m3
        && !(d.is_finite() && d > 0.0)
    {
        return Err(WorkflowError::Invalid(format!(
            "--density must be a positive number of kg/m^3, got {d}"
        )));
    }
    let mp = shape.shape.mass_properties();
    let axes = mp.principal_axes;
    let density = density_kg_m3.map(|d| DensityFigures {
        density_kg_m3: d,
        mass_kg: d * mp.volume_m3,
        inertia_kg_m2: rows(&(mp.inertia_per_density_m5 * d)),
        principal_moments_kg_m2: (mp.principal_moments_per_density_m5 * d).into(),
    });
    if let Some(f) = &density {
        let all = std::iter::once(f.mass_kg)
            .chain(f.inertia_kg_m2.iter().flatten().copied())
            .chain(f.principal_moments_kg_m2);
        if let Some(bad) = all.into_iter().find(|v| !v.is_finite()) {
            return Err(WorkflowError::NonFinite(format!(
                "--density {:e} kg/m^3 gives a mass or inertia that is not a finite number \
                 ({bad}) for a volume of {:e} m^3; use a physical density",
                f.density_kg_m3, mp.volume_m3
            )));
        }
    }
    Ok(ShapeInfo {
        source: shape.request.source.describe(),
        unit: shape.unit().to_string(),
        recentered: shape.request.recenter,
        vertices: shape.shape.vertex_count(),
        faces: shape.shape.face_count(),
        warnings: shape.warnings.iter().map(ToString::to_string).collect(),
        volume_m3: mp.volume_m3,
        area_m2: mp.area_m2,
        center_of_mass_m: mp.center_of_mass_m.coords.into(),
        inertia_per_unit_density_m5: rows(&mp.inertia_per_density_m5),
        principal_moments_per_unit_density_m5: mp.principal_moments_per_density_m5.into(),
        principal_axes: [0, 1, 2].map(|i| [axes[(0, i)], axes[(1, i)], axes[(2, i)]]),
        equivalent_radius_m: mp.equivalent_radius_m,
        brillouin_radius_m: mp.brillouin_radius_m,
        density,
    })
}

/// Writes the figures as pretty JSON.
pub fn write_shape_info(w: &mut dyn Write, info: &ShapeInfo) -> Result<()> {
    serde_json::to_writer_pretty(&mut *w, info).map_err(json_error)?;
    w.write_all(b"\n").map_err(crate::output::io_error)?;
    Ok(())
}
