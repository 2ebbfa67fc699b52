//! `spinfall info`: mass properties and validation of a shape model, as JSON.

use std::process::ExitCode;

use serde_json::json;

use super::rows;
use crate::cli::InfoArgs;
use crate::exit::{CliError, CmdResult};
use crate::io::load_shape;

pub fn run(args: &InfoArgs) -> CmdResult<ExitCode> {
    if let Some(d) = args.density
        && !(d.is_finite() && d > 0.0)
    {
        return Err(CliError::input(anyhow::anyhow!(
            "--density must be a positive number of kg/m^3, got {d}"
        )));
    }
    let loaded = load_shape(
        &args.shape.shape,
        args.shape.unit.into(),
        args.shape.recenter,
    )?;
    let shape = &loaded.shape;
    let mp = shape.mass_properties();
    let axes = mp.principal_axes;
    // One row per principal axis (the columns of the rotation matrix).
    let principal_axes = [0, 1, 2].map(|i| [axes[(0, i)], axes[(1, i)], axes[(2, i)]]);
    let mut out = json!({
        "source": loaded.source,
        "unit": spinfall_gravity::LengthUnit::from(args.shape.unit).to_string(),
        "recentered": args.shape.recenter,
        "vertices": shape.vertex_count(),
        "faces": shape.face_count(),
        "warnings": loaded.warnings.iter().map(ToString::to_string).collect::<Vec<_>>(),
        "volume_m3": mp.volume_m3,
        "area_m2": mp.area_m2,
        "center_of_mass_m": [mp.center_of_mass_m.x, mp.center_of_mass_m.y, mp.center_of_mass_m.z],
        "inertia_per_unit_density_m5": rows(&mp.inertia_per_density_m5),
        "principal_moments_per_unit_density_m5": mp.principal_moments_per_density_m5.as_slice(),
        "principal_axes": principal_axes,
        "equivalent_radius_m": mp.equivalent_radius_m,
        "brillouin_radius_m": mp.brillouin_radius_m,
    });
    if let Some(density) = args.density {
        out["density_kg_m3"] = json!(density);
        out["mass_kg"] = json!(density * mp.volume_m3);
        out["inertia_kg_m2"] = json!(rows(&(mp.inertia_per_density_m5 * density)));
        out["principal_moments_kg_m2"] =
            json!((mp.principal_moments_per_density_m5 * density).as_slice());
    }
    let text = serde_json::to_string_pretty(&out).map_err(CliError::output)?;
    println!("{text}");
    Ok(ExitCode::SUCCESS)
}
