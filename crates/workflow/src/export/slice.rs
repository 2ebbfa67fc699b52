//! The geopotential on a plane grid as CSV, for contouring zero-velocity surfaces elsewhere.

use std::io::Write;

use spinfall_dynamics::zero_velocity::PlaneSlice;

use super::{csv_error, csv_writer};
use crate::error::{Result, WorkflowError};

/// Writes one row per grid cell, row by row along the plane's second in-plane axis: the cell
/// centre in the body frame (`x_m, y_m, z_m`), the geopotential in the surface map's convention
/// (`geopotential_m2_s2`, `-(U + |w x r|^2/2)`), `inside` (1 inside the body, else 0), the grid
/// indices `i, j`, the effective gravity `|grad Phi|`, and with a Jacobi constant `jacobi_m2_s2`
/// a last column `forbidden` (1 where `Phi > C`: a particle of that constant cannot be there).
pub fn write_slice_csv(
    w: &mut dyn Write,
    slice: &PlaneSlice,
    jacobi_m2_s2: Option<f64>,
) -> Result<()> {
    let n = slice.spec.cells;
    if slice.points_m.len() != n * n
        || slice.geopotential_m2_s2.len() != n * n
        || slice.inside.len() != n * n
        || slice.effective_gravity_m_s2.len() != n * n
    {
        return Err(WorkflowError::Invalid(format!(
            "the slice holds {} points for a grid of {n} x {n}",
            slice.points_m.len()
        )));
    }
    let mut csv = csv_writer(w);
    let mut header = vec![
        "x_m",
        "y_m",
        "z_m",
        "geopotential_m2_s2",
        "inside",
        "i",
        "j",
        "effective_gravity_m_s2",
    ];
    if jacobi_m2_s2.is_some() {
        header.push("forbidden");
    }
    csv.write_record(&header).map_err(csv_error)?;
    for k in 0..n * n {
        let p = slice.points_m[k];
        let phi = slice.geopotential_m2_s2[k];
        let inside = u8::from(slice.inside[k]);
        let row = (p[0], p[1], p[2], phi, inside, k % n, k / n);
        let g = slice.effective_gravity_m_s2[k];
        match jacobi_m2_s2 {
            Some(c) => csv.serialize((row, g, u8::from(phi > c))),
            None => csv.serialize((row, g)),
        }
        .map_err(csv_error)?;
    }
    csv.flush().map_err(crate::output::io_error)?;
    Ok(())
}
