//! Landing dispersion statistics: statistics.json and landing_density.csv.

use std::io::Write;

use spinfall_dynamics::Body;
use spinfall_dynamics::site::lat_lon_deg;

use super::{csv_error, csv_writer, json_error};
use crate::error::{Result, WorkflowError};
use crate::statistics::{LandingDensity, RunStatistics};

/// Writes the statistics document as pretty JSON (SI units in the keys).
pub fn write_statistics_json(w: &mut dyn Write, stats: &RunStatistics) -> Result<()> {
    serde_json::to_writer_pretty(&mut *w, stats).map_err(json_error)?;
    w.write_all(b"\n").map_err(crate::output::io_error)?;
    Ok(())
}

/// Writes one row per face of `body` (so it joins the surface map CSV on `face`): the face,
/// its centroid's latitude and longitude, its area, then the landings over every group's
/// launches (`landed_all`, each launch once) and per m² (`per_m2_all`), then a pair of columns
/// per group, `landed[GROUP]` and `per_m2[GROUP]`.
pub fn write_landing_density_csv(
    w: &mut dyn Write,
    body: &Body,
    density: &LandingDensity,
) -> Result<()> {
    let faces = body.shape.face_count();
    if density.total.len() != faces || density.counts.iter().any(|c| c.len() != faces) {
        return Err(WorkflowError::Invalid(format!(
            "the landing density does not have one value per face of the shape ({faces} faces)"
        )));
    }
    let mut csv = csv_writer(w);
    let mut header: Vec<String> = [
        "face",
        "lat_deg",
        "lon_deg",
        "area_m2",
        "landed_all",
        "per_m2_all",
    ]
    .map(String::from)
    .to_vec();
    for g in &density.group_ids {
        header.push(format!("landed[{g}]"));
        header.push(format!("per_m2[{g}]"));
    }
    csv.write_record(&header).map_err(csv_error)?;
    let mut row: Vec<String> = Vec::with_capacity(header.len());
    for f in 0..faces {
        row.clear();
        let area = body.shape.face_area_m2(f);
        let per = |n: u32| if area > 0.0 { f64::from(n) / area } else { 0.0 };
        let (lat, lon) = lat_lon_deg(body, &body.shape.face_centroid(f));
        row.push(f.to_string());
        row.push(lat.to_string());
        row.push(lon.to_string());
        row.push(area.to_string());
        row.push(density.total[f].to_string());
        row.push(per(density.total[f]).to_string());
        for c in &density.counts {
            row.push(c[f].to_string());
            row.push(per(c[f]).to_string());
        }
        csv.write_record(&row).map_err(csv_error)?;
    }
    csv.flush().map_err(crate::output::io_error)?;
    Ok(())
}
