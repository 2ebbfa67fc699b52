//! Zero-velocity surfaces against closed forms and the Jacobi integral.
//!
//! The closed forms are those of a point mass seen from a frame rotating uniformly about z:
//! `Phi = -(GM/r + w^2 rho^2 / 2)`, with `rho` the distance from the axis. On the equatorial plane
//! the level set `Phi = C` is a pair of circles whose radii solve the cubic
//! `w^2 rho^3 / 2 + C rho + GM = 0` (the Hill regions of the rotating two-body problem;
//! Scheeres 2012, *Orbital Motion in Strongly Perturbed Environments*, sec. on zero-velocity
//! surfaces). The cubic is solved here by the trigonometric form of Cardano's formula (Viète),
//! independent of the code under test.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::f64::consts::PI;
use std::sync::atomic::AtomicBool;

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::launch::LaunchSpec;
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::zero_velocity::{
    Axis, SlicePlane, SliceSpec, geopotential, jacobi_constant, plane_slice, surface_contour,
    vertex_geopotential,
};
use spinfall_dynamics::{Body, FlightSettings, fly};
use spinfall_gravity::{MassSpec, generate};

const GM: f64 = 5.0; // m^3/s^2: a body of ~1 km with density ~1200 kg/m^3
const R_M: f64 = 1000.0;
const PERIOD_S: f64 = 4.0 * 3600.0;

fn w() -> f64 {
    2.0 * PI / PERIOD_S
}

fn sphere() -> Body {
    common::point_mass_sphere(R_M, 5, GM, common::spin_z(PERIOD_S))
}

/// Closed-form `Phi` of the rotating point mass.
fn phi_exact(p: &Point3<f64>) -> f64 {
    let rho2 = p.x * p.x + p.y * p.y;
    -(GM / p.coords.norm() + 0.5 * w() * w() * rho2)
}

/// The positive roots of `a rho^3 + c rho + d = 0` (a > 0, c < 0, three real roots), by Viète's
/// trigonometric solution of the depressed cubic.
fn positive_roots(a: f64, c: f64, d: f64) -> Vec<f64> {
    let (p, q) = (c / a, d / a);
    let m = 2.0 * (-p / 3.0).sqrt();
    let theta = (3.0 * q / (p * m)).acos() / 3.0;
    let mut roots: Vec<f64> = (0..3)
        .map(|k| m * (theta - 2.0 * PI * k as f64 / 3.0).cos())
        .filter(|r| *r > 0.0)
        .collect();
    roots.sort_by(f64::total_cmp);
    roots
}

#[test]
fn equatorial_curves_are_the_circles_of_the_closed_form() {
    let body = sphere();
    let rho_sync = (GM / (w() * w())).cbrt();
    // A level just below the synchronous maximum of Phi on the plane: two circles around it.
    let phi_sync = -1.5 * GM / rho_sync;
    let c = phi_sync - 0.05 * phi_sync.abs();
    let roots = positive_roots(0.5 * w() * w(), c, GM);
    assert_eq!(roots.len(), 2, "{roots:?}");
    let spec = SliceSpec {
        plane: SlicePlane {
            axis: Axis::Z,
            offset_m: 0.0,
        },
        extent_m: 2.2 * roots[1],
        cells: 400,
    };
    let slice = plane_slice(&body, &spec, &|_, _| {}, &AtomicBool::new(false)).unwrap();
    // The grid values are the model's Phi (a point mass here: exact).
    for (p, phi) in slice
        .points_m
        .iter()
        .zip(&slice.geopotential_m2_s2)
        .step_by(997)
    {
        let exact = phi_exact(&Point3::from(*p));
        assert!(
            (phi - exact).abs() <= 1e-12 * exact.abs(),
            "{phi} vs {exact}"
        );
    }
    let curves = slice.contour(c);
    let h = spec.spacing_m();
    let mut near = [0usize; 2];
    for curve in &curves {
        for p in curve {
            assert!(p.z.abs() < 1e-9);
            let rho = p.coords.norm();
            let k = if (rho - roots[0]).abs() < (rho - roots[1]).abs() {
                0
            } else {
                1
            };
            // Linear interpolation between nodes a spacing h apart: error well below h.
            assert!(
                (rho - roots[k]).abs() < 0.05 * h,
                "contour point at {rho} m, closed form {} m (h = {h} m)",
                roots[k]
            );
            near[k] += 1;
        }
    }
    assert!(near[0] > 100 && near[1] > 100, "{near:?}");
    // Two closed curves, each a whole circle.
    assert_eq!(curves.len(), 2);
    for curve in &curves {
        assert_eq!(curve.first(), curve.last());
    }
    // The hatch covers exactly the forbidden annulus roots[0] < rho < roots[1].
    let hatch = slice.hatch(c, 10);
    assert!(!hatch.is_empty());
    for [a, b] in &hatch {
        let mid = Point3::from((a.coords + b.coords) / 2.0);
        assert!(phi_exact(&mid) > c);
        for end in [a, b] {
            let rho = end.coords.norm();
            assert!(roots.iter().any(|r| (rho - r).abs() < 0.05 * h), "{rho}");
        }
    }
}

#[test]
fn surface_curve_sits_at_the_latitude_of_the_closed_form() {
    let body = sphere();
    let phi = vertex_geopotential(&body, &|_, _| {}, &AtomicBool::new(false)).unwrap();
    // On the sphere Phi = -(GM/R + w^2 R^2 cos^2(lat) / 2): pick the level at latitude 35 deg.
    let lat0 = 35f64.to_radians();
    let level = -(GM / R_M + 0.5 * w() * w() * R_M * R_M * lat0.cos().powi(2));
    let curves = surface_contour(&body, &phi, level);
    // One curve in each hemisphere.
    assert_eq!(curves.len(), 2);
    let mut worst = 0f64;
    for p in curves.iter().flatten() {
        let lat = (p.z / p.coords.norm()).asin().abs();
        worst = worst.max((lat - lat0).abs().to_degrees());
    }
    // Icosphere of 5 subdivisions: edges of ~1.9 deg; interpolation along an edge errs by a
    // fraction of that.
    assert!(worst < 0.5, "worst latitude error {worst} deg");
    // A level above every vertex value meets nothing.
    let top = phi.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    assert!(surface_contour(&body, &phi, top + 1.0).is_empty());
    // Values that do not match the mesh give nothing rather than a panic.
    assert!(surface_contour(&body, &phi[1..], level).is_empty());
}

/// The Jacobi integral is a law of the rotating-frame motion: along any flight (no extra
/// forces; bounces only lose energy) every sample lies where `Phi <= C`.
#[test]
fn flights_stay_out_of_the_forbidden_region() {
    let shape = common::shape(generate::ellipsoid(1400.0, 900.0, 700.0, 3));
    let body = Body::new(
        "Ovoid",
        shape,
        MassSpec::DensityKgM3(2100.0),
        common::spin_z(5.0 * 3600.0),
    )
    .unwrap();
    let site = Site::from_lat_lon(&body, 10.0, 20.0, NormalMode::Face).unwrap();
    for (k, speed) in [0.25, 0.45].into_iter().enumerate() {
        let launch = LaunchSpec {
            id: format!("hop{k}"),
            site: site.clone(),
            speed_m_s: speed,
            azimuth_deg: 80.0,
            elevation_deg: 50.0,
            start_altitude_m: 0.05,
        }
        .state()
        .unwrap();
        let c = jacobi_constant(&body, &launch);
        let expected =
            0.5 * launch.vel_body_m_s.norm_squared() + geopotential(&body, &launch.pos_body_m);
        assert_eq!(c, expected);
        let report = fly(
            &body,
            &launch,
            &FlightSettings::default(),
            &AtomicBool::new(false),
        );
        assert!(report.trajectory_body.len() > 10);
        // The integrator conserves C to its tolerance at its steps (the report's drift), and the
        // display samples are thinned and interpolated: allow 1e-6 of |C|, still some 10^4 times
        // less than the kinetic energy at launch.
        let drift = report
            .jacobi_rel_drift
            .expect("no extra forces: C is conserved");
        assert!(drift < 1e-8, "{drift}");
        let tol = 1e-6 * c.abs();
        for s in &report.trajectory_body {
            let p = Point3::from(s.pos_m);
            let v = Vector3::from(s.vel_m_s);
            let phi = geopotential(&body, &p);
            // Phi = C - |v|^2/2 while C is conserved; bounces only lower the energy.
            assert!(phi <= c + tol, "Phi {phi} above C {c}");
            let e = phi + 0.5 * v.norm_squared();
            assert!(e <= c + tol, "t {} s: C {c}, energy {e}", s.t_s);
        }
    }
}

#[test]
fn bad_grids_are_refused_by_name() {
    let body = sphere();
    let plane = SlicePlane {
        axis: Axis::X,
        offset_m: 0.0,
    };
    for (extent_m, cells, word) in [
        (0.0, 10, "extent_m"),
        (f64::NAN, 10, "extent_m"),
        (1000.0, 1, "cells"),
        (1000.0, 100_000, "cells"),
    ] {
        let spec = SliceSpec {
            plane,
            extent_m,
            cells,
        };
        let err = plane_slice(&body, &spec, &|_, _| {}, &AtomicBool::new(false))
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(err.contains(word), "{err}");
    }
    let cancel = AtomicBool::new(true);
    let spec = SliceSpec {
        plane,
        extent_m: 5000.0,
        cells: 10,
    };
    assert!(plane_slice(&body, &spec, &|_, _| {}, &cancel).is_err());
}
