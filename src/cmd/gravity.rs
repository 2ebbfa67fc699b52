//! `spinfall gravity`: the polyhedron field at points, one JSON object per line or CSV.

use std::io::Write;
use std::process::ExitCode;

use anyhow::{Context, anyhow, bail};
use nalgebra::Point3;
use serde_json::json;
use spinfall_gravity::{FieldSample, MassSpec, PolyhedronGravity};

use super::rows;
use crate::cli::GravityArgs;
use crate::exit::{CliError, CmdResult, InputContext};
use crate::io::load_shape;

pub fn run(args: &GravityArgs) -> CmdResult<ExitCode> {
    let mass = match (args.density, args.mass, args.gm) {
        (Some(d), None, None) => MassSpec::DensityKgM3(d),
        (None, Some(m), None) => MassSpec::MassKg(m),
        (None, None, Some(gm)) => MassSpec::GmM3S2(gm),
        _ => {
            return Err(CliError::input(anyhow!(
                "give exactly one of --density, --mass, --gm"
            )));
        }
    };
    let points = match &args.points {
        Some(path) => {
            let text = std::fs::read_to_string(path)
                .input_context(format!("cannot read points file {}", path.display()))?;
            parse_points_csv(&text).input_context(format!("points file {}", path.display()))?
        }
        None => args
            .at
            .iter()
            .enumerate()
            .map(|(i, s)| parse_point(s).with_context(|| format!("--at #{}", i + 1)))
            .collect::<anyhow::Result<Vec<_>>>()
            .map_err(CliError::input)?,
    };
    let loaded = load_shape(
        &args.shape.shape,
        args.shape.unit.into(),
        args.shape.recenter,
    )?;
    for w in &loaded.warnings {
        eprintln!("warning: {w}");
    }
    let field = PolyhedronGravity::new(&loaded.shape, mass).input_context("mass")?;
    let samples = field.evaluate_batch(&points);
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    write_samples(&mut out, &points, &samples, args.csv).map_err(CliError::output)?;
    Ok(ExitCode::SUCCESS)
}

fn write_samples(
    out: &mut impl Write,
    points: &[Point3<f64>],
    samples: &[FieldSample],
    csv: bool,
) -> anyhow::Result<()> {
    if csv {
        writeln!(
            out,
            "x_m,y_m,z_m,potential_m2_s2,ax_m_s2,ay_m_s2,az_m_s2,\
             gxx_s2,gxy_s2,gxz_s2,gyy_s2,gyz_s2,gzz_s2,laplacian_s2,inside"
        )?;
        for (p, s) in points.iter().zip(samples) {
            let a = s.acceleration_m_s2;
            let g = s.gradient_s2;
            writeln!(
                out,
                "{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{}",
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
                s.inside
            )?;
        }
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
            writeln!(out, "{line}")?;
        }
    }
    out.flush()?;
    Ok(())
}

/// Parses `X,Y,Z` in metres.
fn parse_point(s: &str) -> anyhow::Result<Point3<f64>> {
    let parts: Vec<&str> = s.split(',').map(str::trim).collect();
    if parts.len() != 3 {
        bail!("expected X,Y,Z (three numbers in metres), got {s:?}");
    }
    let mut xyz = [0.0; 3];
    for (v, p) in xyz.iter_mut().zip(&parts) {
        *v = p
            .parse::<f64>()
            .map_err(|_| anyhow!("{p:?} is not a number in {s:?}"))?;
        if !v.is_finite() {
            bail!("coordinate {p:?} is not finite in {s:?}");
        }
    }
    Ok(Point3::new(xyz[0], xyz[1], xyz[2]))
}

/// Parses a CSV with the header `x_m,y_m,z_m`.
fn parse_points_csv(text: &str) -> anyhow::Result<Vec<Point3<f64>>> {
    let mut lines = text
        .lines()
        .enumerate()
        .filter(|(_, l)| !l.trim().is_empty());
    let (_, header) = lines
        .next()
        .context("the file is empty: expected the header x_m,y_m,z_m")?;
    let names: Vec<&str> = header.split(',').map(str::trim).collect();
    if names != ["x_m", "y_m", "z_m"] {
        bail!("line 1: expected the header x_m,y_m,z_m, got {header:?}");
    }
    let points = lines
        .map(|(i, l)| parse_point(l).with_context(|| format!("line {}", i + 1)))
        .collect::<anyhow::Result<Vec<_>>>()?;
    if points.is_empty() {
        bail!("no points after the header");
    }
    Ok(points)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn points_csv_errors_name_the_line() {
        let err = parse_points_csv("x_m,y_m,z_m\n1,2,3\n1,2\n").unwrap_err();
        assert!(format!("{err:#}").contains("line 3"), "{err:#}");
        let err = parse_points_csv("x,y,z\n1,2,3\n").unwrap_err();
        assert!(format!("{err:#}").contains("header"), "{err:#}");
        let err = parse_point("1,nan,3").unwrap_err();
        assert!(err.to_string().contains("not finite"), "{err}");
        assert_eq!(
            parse_points_csv("x_m,y_m,z_m\n1, 2 ,-3\n").unwrap().len(),
            1
        );
    }
}
