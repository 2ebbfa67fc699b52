//! The gravity field at points (`spinfall gravity`): reading the points, evaluating them with a
//! check that every result is finite, and writing the samples as JSON lines or CSV.

use std::io::Write;

use nalgebra::Point3;
use serde_json::json;
use spinfall_gravity::FieldSample;
use spinfall_gravity::text::excerpt;

use super::{csv_error, csv_writer, rows};
use crate::error::{Result, WorkflowError};

/// Field points with the way each was given (for messages).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FieldPoints {
    /// The points, metres, in the shape's frame.
    pub points_m: Vec<Point3<f64>>,
    /// How each point is named in messages (`--at #2`, `line 7`).
    pub labels: Vec<String>,
}

impl FieldPoints {
    /// Points given as `X,Y,Z` strings (`--at`), labelled `--at #k`.
    pub fn from_args(args: &[String]) -> Result<FieldPoints> {
        let mut out = FieldPoints::default();
        for (i, s) in args.iter().enumerate() {
            let label = format!("--at #{}", i + 1);
            let fields: Vec<&str> = s.split(',').collect();
            out.points_m.push(parse_xyz(&fields, s, &label)?);
            out.labels.push(label);
        }
        Ok(out)
    }
}

/// Parses three coordinates in metres.
fn parse_xyz(fields: &[&str], whole: &str, label: &str) -> Result<Point3<f64>> {
    if fields.len() != 3 {
        return Err(WorkflowError::Invalid(format!(
            "{label}: expected X,Y,Z (three numbers in metres), got {}",
            excerpt(whole)
        )));
    }
    let mut xyz = [0.0; 3];
    for (v, f) in xyz.iter_mut().zip(fields) {
        let f = f.trim();
        *v = f.parse::<f64>().map_err(|_| {
            WorkflowError::Invalid(format!(
                "{label}: {} is not a number in {}",
                excerpt(f),
                excerpt(whole)
            ))
        })?;
        if !v.is_finite() {
            return Err(WorkflowError::Invalid(format!(
                "{label}: coordinate {} is not finite",
                excerpt(f)
            )));
        }
    }
    Ok(Point3::new(xyz[0], xyz[1], xyz[2]))
}

/// Reads a CSV file of points (see [`parse_points_csv`]); errors name the file.
pub fn read_points_file(path: &std::path::Path) -> Result<FieldPoints> {
    let bytes = std::fs::read(path).map_err(|error| WorkflowError::Read {
        path: path.to_path_buf(),
        error,
    })?;
    parse_points_csv(&bytes)
        .map_err(|e| WorkflowError::Invalid(format!("points file {}: {e}", path.display())))
}

/// Reads a CSV of points with the header `x_m,y_m,z_m`; errors name the line.
pub fn parse_points_csv(bytes: &[u8]) -> Result<FieldPoints> {
    let text =
        spinfall_gravity::text::decode_utf8(bytes, spinfall_gravity::text::InvalidBytes::Refuse)
            .map_err(|e| WorkflowError::Invalid(e.to_string()))?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .flexible(true)
        .from_reader(text.as_bytes());
    let header = reader
        .headers()
        .map_err(|e| WorkflowError::Invalid(format!("line 1: {e}")))?
        .clone();
    if header.iter().collect::<Vec<_>>() != ["x_m", "y_m", "z_m"] {
        return Err(WorkflowError::Invalid(format!(
            "line 1: expected the header x_m,y_m,z_m, got {}",
            excerpt(&header.iter().collect::<Vec<_>>().join(","))
        )));
    }
    let mut out = FieldPoints::default();
    for record in reader.records() {
        let record = record.map_err(|e| WorkflowError::Invalid(format!("points: {e}")))?;
        let line = record.position().map_or(0, |p| p.line());
        if record.iter().all(str::is_empty) {
            continue;
        }
        let label = format!("line {line}");
        let fields: Vec<&str> = record.iter().collect();
        out.points_m
            .push(parse_xyz(&fields, &fields.join(","), &label)?);
        out.labels.push(label);
    }
    if out.points_m.is_empty() {
        return Err(WorkflowError::Invalid(
            "no points after the header x_m,y_m,z_m".into(),
        ));
    }
    Ok(out)
}

/// The field at every point, refusing non-finite results with the point that caused them
/// (e.g. a point so far away that the gradient overflows f64).
pub fn evaluate_field(
    field: &dyn spinfall_dynamics::GravityModel,
    points: &FieldPoints,
) -> Result<Vec<FieldSample>> {
    evaluate_points(field, &points.points_m, &|k| {
        points.labels.get(k).cloned().unwrap_or_default()
    })
}

/// [`evaluate_field`] for points without stored labels: `label(k)` names point `k` in the error
/// (only called for a point that fails). The Python package evaluates numpy arrays here, so
/// both front ends share the batch kernel and the finiteness check.
pub fn evaluate_points(
    field: &dyn spinfall_dynamics::GravityModel,
    points_m: &[Point3<f64>],
    label: &dyn Fn(usize) -> String,
) -> Result<Vec<FieldSample>> {
    let samples = field.evaluate_batch(points_m).ok_or_else(|| {
        WorkflowError::Invalid("this gravity model gives no gradient tensor".into())
    })?;
    for (k, (s, p)) in samples.iter().zip(points_m).enumerate() {
        let bad = if !s.potential_m2_s2.is_finite() {
            Some("the potential")
        } else if !s.acceleration_m_s2.iter().all(|v| v.is_finite()) {
            Some("the acceleration")
        } else if !s.gradient_s2.iter().all(|v| v.is_finite()) {
            Some("the gravity gradient")
        } else if !s.laplacian_s2.is_finite() {
            Some("the Laplacian")
        } else {
            None
        };
        if let Some(what) = bad {
            return Err(WorkflowError::NonFinite(format!(
                "{what} at {} ({:e}, {:e}, {:e}) m is not a finite number: the point is \
                 beyond what f64 arithmetic can evaluate; use a nearer point",
                label(k),
                p.x,
                p.y,
                p.z
            )));
        }
    }
    Ok(samples)
}

/// Writes the samples as CSV (`as_csv`) or one JSON object per line.
pub fn write_field_samples(
    w: &mut dyn Write,
    points: &[Point3<f64>],
    samples: &[FieldSample],
    as_csv: bool,
) -> Result<()> {
    if as_csv {
        let mut csv = csv_writer(w);
        csv.write_record([
            "x_m",
            "y_m",
            "z_m",
            "potential_m2_s2",
            "ax_m_s2",
            "ay_m_s2",
            "az_m_s2",
            "gxx_s2",
            "gxy_s2",
            "gxz_s2",
            "gyy_s2",
            "gyz_s2",
            "gzz_s2",
            "laplacian_s2",
            "inside",
        ])
        .map_err(csv_error)?;
        for (p, s) in points.iter().zip(samples) {
            let a = s.acceleration_m_s2;
            let g = s.gradient_s2;
            csv.serialize((
                p.x,
                p.y,
                p.z,
                s.potential_m2_s2,
                a.x,
                a.y,
                a.z,
                g[(0, 0)],
                g[(0, 1)],
                g[(0, 2)],
                g[(1, 1)],
                g[(1, 2)],
                g[(2, 2)],
                s.laplacian_s2,
                s.inside,
            ))
            .map_err(csv_error)?;
        }
        csv.flush().map_err(crate::output::io_error)?;
    } else {
        for (p, s) in points.iter().zip(samples) {
            let a = s.acceleration_m_s2;
            let line = json!({
                "point_m": [p.x, p.y, p.z],
                "potential_m2_s2": s.potential_m2_s2,
                "acceleration_m_s2": [a.x, a.y, a.z],
                "gradient_s2": rows(&s.gradient_s2),
                "laplacian_s2": s.laplacian_s2,
                "inside": s.inside,
            });
            writeln!(w, "{line}").map_err(crate::output::io_error)?;
        }
    }
    Ok(())
}
