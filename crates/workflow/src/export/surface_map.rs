//! The per-face surface map as CSV.

use std::io::Write;

use spinfall_dynamics::Body;
use spinfall_dynamics::site::lat_lon_deg;
use spinfall_dynamics::surface_map::{SurfaceField, SurfaceMap};

use super::{csv_error, csv_writer};
use crate::error::{Result, WorkflowError};

/// Writes one row per face of `body`'s shape: index, centroid, planetocentric lat/lon (about the
/// spin axis, which is why it takes the body rather than only the shape), the effective
/// acceleration vector and every map quantity, with units in the header. A map with a sunlight
/// layer adds its columns ([`SurfaceField::SUNLIGHT`]: `sunlit`, `radiation_pressure_to_gravity`,
/// `radiation_pressure_tangential_m_s2`); radiation-pressure cells are empty when the map has no
/// grain.
pub fn write_surface_map_csv(w: &mut dyn Write, body: &Body, map: &SurfaceMap) -> Result<()> {
    let shape = body.shape.as_ref();
    if map.len() != shape.face_count() {
        return Err(WorkflowError::Invalid(format!(
            "the surface map has {} faces but the shape has {}",
            map.len(),
            shape.face_count()
        )));
    }
    let mut csv = csv_writer(w);
    let mut header: Vec<String> = [
        "face",
        "centroid_x_m",
        "centroid_y_m",
        "centroid_z_m",
        "lat_deg",
        "lon_deg",
        "eff_acc_x_m_s2",
        "eff_acc_y_m_s2",
        "eff_acc_z_m_s2",
    ]
    .map(String::from)
    .to_vec();
    header.extend(SurfaceField::ALL.iter().map(|f| f.column().to_string()));
    let sun_fields: &[SurfaceField] = if map.sunlight.is_some() {
        &SurfaceField::SUNLIGHT
    } else {
        &[]
    };
    if let Some(layer) = &map.sunlight
        && layer.sunlit.len() != shape.face_count()
    {
        return Err(WorkflowError::Invalid(format!(
            "the sunlight layer has {} faces but the shape has {}",
            layer.sunlit.len(),
            shape.face_count()
        )));
    }
    header.extend(sun_fields.iter().map(|f| f.column().to_string()));
    let mut sun_row: Vec<Option<f64>> = Vec::with_capacity(sun_fields.len());
    csv.write_record(&header).map_err(csv_error)?;
    let mut row: Vec<f64> = Vec::with_capacity(header.len() - 1);
    for face in 0..shape.face_count() {
        let c = shape.face_centroid(face);
        let (lat, lon) = lat_lon_deg(body, &c);
        let a = map.effective_acceleration_m_s2[face];
        row.clear();
        row.extend([c.x, c.y, c.z, lat, lon, a[0], a[1], a[2]]);
        row.extend(SurfaceField::ALL.iter().map(|f| map.values(*f)[face]));
        sun_row.clear();
        sun_row.extend(sun_fields.iter().map(|f| {
            let v = map.values(*f)[face];
            (!v.is_nan()).then_some(v)
        }));
        csv.serialize((face, &row, &sun_row)).map_err(csv_error)?;
    }
    csv.flush().map_err(crate::output::io_error)?;
    Ok(())
}
