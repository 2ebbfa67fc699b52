//! Mass properties against closed forms and physical laws.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod shape_support;

use nalgebra::{Matrix3, Point3, Rotation3, Vector3};
use shape_support::model;
use spinfall_gravity::{Mesh, generate};

/// Relative difference.
fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn box_volume_area_and_inertia_match_the_rigid_body_closed_form() {
    let (lx, ly, lz) = (2000.0, 1200.0, 800.0);
    let shape = model(generate::box_mesh(lx, ly, lz));
    let mp = shape.mass_properties();
    // V = lx ly lz, A = 2 (lx ly + ly lz + lz lx).
    assert!(rel(mp.volume_m3, lx * ly * lz) < 1e-12);
    assert!(rel(mp.area_m2, 2.0 * (lx * ly + ly * lz + lz * lx)) < 1e-12);
    assert!(mp.center_of_mass_m.coords.norm() < 1e-9);
    // Solid cuboid about its centre (standard rigid-body closed form, e.g. any mechanics text):
    // I_xx = m (ly^2 + lz^2) / 12, products of inertia zero.
    let v = lx * ly * lz;
    let expected = Vector3::new(
        v * (ly * ly + lz * lz) / 12.0,
        v * (lx * lx + lz * lz) / 12.0,
        v * (lx * lx + ly * ly) / 12.0,
    );
    let i = mp.inertia_per_density_m5;
    for k in 0..3 {
        assert!(
            rel(i[(k, k)], expected[k]) < 1e-12,
            "I[{k}{k}] {} vs {}",
            i[(k, k)],
            expected[k]
        );
    }
    assert!(i[(0, 1)].abs() < 1e-9 * expected.max());
    assert!(i[(0, 2)].abs() < 1e-9 * expected.max());
    assert!(i[(1, 2)].abs() < 1e-9 * expected.max());
    // Principal moments ascending: the long x axis has the smallest moment.
    assert!(rel(mp.principal_moments_per_density_m5[0], expected.x) < 1e-12);
    assert!(rel(mp.principal_moments_per_density_m5[2], expected.z) < 1e-12);
    assert!(mp.principal_axes.column(0).x.abs() > 1.0 - 1e-12);
    // Right-handed rotation.
    assert!((mp.principal_axes.determinant() - 1.0).abs() < 1e-12);
    // kg m^2 = density x per-density tensor; equivalent radius from V = 4/3 pi r^3.
    assert!(rel(mp.inertia_kg_m2(2000.0)[(0, 0)], 2000.0 * expected.x) < 1e-12);
    let r_eq = (3.0 * v / (4.0 * std::f64::consts::PI)).cbrt();
    assert!(rel(mp.equivalent_radius_m, r_eq) < 1e-12);
    // Brillouin radius: the corner distance, half the space diagonal.
    let half_diag = 0.5 * (lx * lx + ly * ly + lz * lz).sqrt();
    assert!(rel(mp.brillouin_radius_m, half_diag) < 1e-12);
}

#[test]
fn refined_ellipsoid_converges_to_the_closed_form() {
    // Solid ellipsoid: V = 4/3 pi a b c, I_xx = m (b^2 + c^2) / 5 (standard closed form).
    let (a, b, c) = (3000.0, 2000.0, 1500.0);
    let v_exact = 4.0 / 3.0 * std::f64::consts::PI * a * b * c;
    let i_exact = Vector3::new(
        v_exact * (b * b + c * c) / 5.0,
        v_exact * (a * a + c * c) / 5.0,
        v_exact * (a * a + b * b) / 5.0,
    );
    let mut previous = (f64::INFINITY, f64::INFINITY);
    for n in 2..=5 {
        let shape = model(generate::ellipsoid(a, b, c, n));
        let mp = shape.mass_properties();
        let v_err = rel(mp.volume_m3, v_exact);
        let i_err = (0..3)
            .map(|k| rel(mp.inertia_per_density_m5[(k, k)], i_exact[k]))
            .fold(0.0, f64::max);
        assert!(
            v_err < previous.0 && i_err < previous.1,
            "n = {n}: {v_err} {i_err}"
        );
        // Each subdivision quarters the chord error (second order in edge length).
        if previous.0.is_finite() {
            assert!(
                v_err < 0.3 * previous.0,
                "n = {n}: {v_err} vs {}",
                previous.0
            );
        }
        previous = (v_err, i_err);
    }
    assert!(previous.0 < 1e-3 && previous.1 < 2e-3, "{previous:?}");
}

#[test]
fn moments_survive_rotation_and_translation() {
    // Physical law: principal moments are invariant under rigid motion, and the inertia tensor
    // about the centre of mass transforms as R I R^T.
    let base = model(generate::box_mesh(3.0, 2.0, 1.0));
    let rot = Rotation3::from_euler_angles(0.3, -0.7, 1.1);
    let shift = Vector3::new(1.0e4, -2.5e4, 7.0e3);
    let moved = Mesh {
        vertices_m: base
            .mesh()
            .vertices_m
            .iter()
            .map(|p| rot * p + shift)
            .collect(),
        faces: base.mesh().faces.clone(),
    };
    let moved = model(moved);
    let (m0, m1) = (base.mass_properties(), moved.mass_properties());
    assert!(rel(m1.volume_m3, m0.volume_m3) < 1e-10);
    for k in 0..3 {
        assert!(
            rel(
                m1.principal_moments_per_density_m5[k],
                m0.principal_moments_per_density_m5[k]
            ) < 1e-9
        );
    }
    assert!((m1.center_of_mass_m - Point3::from(shift)).norm() < 1e-8);
    let expected: Matrix3<f64> =
        rot.matrix() * m0.inertia_per_density_m5 * rot.matrix().transpose();
    assert!((m1.inertia_per_density_m5 - expected).norm() < 1e-9 * expected.norm());
}

#[test]
fn recentering_moves_the_centre_of_mass_to_the_origin() {
    let shape = model(generate::demo_body(3));
    let com = shape.mass_properties().center_of_mass_m;
    assert!(com.coords.norm() > 1.0);
    let centred = shape.recentered();
    assert!(centred.mass_properties().center_of_mass_m.coords.norm() < 1e-9);
    // Translation keeps the moments (physical law) and moves every vertex by -com.
    let (a, b) = (shape.mass_properties(), centred.mass_properties());
    assert!(
        (a.inertia_per_density_m5 - b.inertia_per_density_m5).norm()
            < 1e-9 * a.inertia_per_density_m5.norm()
    );
    let v0 = shape.mesh().vertices_m[7] - com.coords;
    assert!((centred.mesh().vertices_m[7] - v0).norm() < 1e-9);
    assert!((centred.bounding_radius_m() - a.brillouin_radius_m).abs() < 1e-9);
}
