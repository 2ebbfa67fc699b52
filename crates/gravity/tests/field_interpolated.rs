//! The interpolated field against the direct one (the bound, everywhere that matters), against
//! the published closed forms the direct field is tested with, and its storage.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod field_support;

use std::sync::atomic::AtomicBool;

use field_support::*;
use nalgebra::{Point3, Vector3};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use spinfall_gravity::{
    GravityError, InterpolatedGravity, InterpolationSettings, MassSpec, Mesh, build_interpolated,
    cache_key, generate,
};

fn build(mesh: &Mesh, rho: f64, bound: f64) -> InterpolatedGravity {
    let settings = InterpolationSettings {
        max_rel_error: bound,
        leaf_near_faces: 120,
        ..Default::default()
    };
    build_interpolated(
        mesh,
        MassSpec::DensityKgM3(rho),
        settings,
        &|_| {},
        &AtomicBool::new(false),
    )
    .unwrap()
}

/// Points that stress the field: on and just off faces, edges and vertices (from 1 mm to a
/// facet size above), and in the volume out past the switch radius.
fn stress_points(
    mesh: &Mesh,
    field: &InterpolatedGravity,
    n: usize,
    seed: u64,
) -> Vec<Point3<f64>> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let exact = field.exact();
    let mut pts = Vec::with_capacity(n);
    let nf = mesh.faces.len();
    while pts.len() < n {
        let k = pts.len();
        if k % 3 == 2 {
            let dir = Vector3::new(
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
            )
            .normalize();
            let r = exact.brillouin_radius_m()
                * rng.random_range(0.3..1.5)
                * (field.switch_radius_m() / exact.brillouin_radius_m());
            let p = exact.center_of_mass_m() + dir * r;
            if !exact.is_inside(&p) {
                pts.push(p);
            }
            continue;
        }
        let f = rng.random_range(0..nf);
        let [a, b, c] = mesh.triangle(f);
        let normal = (b - a).cross(&(c - a)).normalize();
        let size = (b - a).norm();
        let (u, v): (f64, f64) = (rng.random(), rng.random());
        let (u, v) = if u + v > 1.0 {
            (1.0 - u, 1.0 - v)
        } else {
            (u, v)
        };
        let on = match k % 4 {
            0 => a + (b - a) * u + (c - a) * v,
            1 => a + (b - a) * u,
            2 => a,
            _ => a + (b - a) * 0.5,
        };
        let alt = [0.0, 1e-3, 0.05 * size, size][(k / 4) % 4];
        pts.push(on + normal * alt);
    }
    pts
}

#[test]
fn interpolated_field_meets_its_bound_everywhere_outside_the_body() {
    // The claim of the method: relative acceleration error below the bound at points it never
    // saw, right on the surface (faces, edges, vertices), just above it, in the volume, and
    // across the switch to the exterior expansion; the potential to a similar level.
    let mesh = generate::demo_body(2);
    for bound in [1e-6, 1e-8] {
        let field = build(&mesh, 2100.0, bound);
        let pts = stress_points(&mesh, &field, 1500, 11);
        let want = field.exact().potential_acceleration_batch(&pts);
        let mut worst = 0.0f64;
        let mut worst_u = 0.0f64;
        for (p, w) in pts.iter().zip(&want) {
            let (u, a) = field.potential_acceleration(p);
            let e = (a - w.1).norm() / w.1.norm();
            assert!(e <= bound, "bound {bound:e}: {e:e} at {p}");
            worst = worst.max(e);
            worst_u = worst_u.max((u - w.0).abs() / w.0.abs());
        }
        assert!(worst_u < 10.0 * bound, "potential {worst_u:e}");
        eprintln!(
            "bound {bound:e}: worst acceleration error {worst:e}, potential {worst_u:e}, {:?}",
            field.stats()
        );
    }
}

#[test]
fn acceleration_is_the_gradient_of_the_interpolated_potential() {
    // The interpolant is a potential: its acceleration must be its gradient (central
    // differences, well inside a cell), so the Jacobi integral keeps its meaning in flights.
    let mesh = generate::demo_body(2);
    let field = build(&mesh, 2100.0, 1e-8);
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    for _ in 0..40 {
        let dir = Vector3::new(
            rng.random_range(-1.0..1.0),
            rng.random_range(-1.0..1.0),
            rng.random_range(-1.0..1.0),
        )
        .normalize();
        let p = field.exact().center_of_mass_m() + dir * (field.exact().brillouin_radius_m() * 1.4);
        let (_, a) = field.potential_acceleration(&p);
        let h = 1e-3;
        for k in 0..3 {
            let mut d = Vector3::zeros();
            d[k] = h;
            let fd = (field.potential_acceleration(&(p + d)).0
                - field.potential_acceleration(&(p - d)).0)
                / (2.0 * h);
            // Rounding of U (~1e-16 U / h) bounds the agreement.
            assert!((fd - a[k]).abs() < 1e-7 * a.norm(), "{p}: {fd} vs {}", a[k]);
        }
    }
}

#[test]
fn prism_closed_form_through_the_interpolated_field() {
    // Nagy, Papp & Benedek (2000), J. Geodesy 74:552-560 (closed form in field_support),
    // outside, on a face, an edge and a vertex: the interpolated field within its bound.
    let (lx, ly, lz) = (600.0, 400.0, 200.0);
    let rho = 2000.0;
    let mesh = generate::box_mesh_subdivided(lx, ly, lz, 4);
    let bound = 1e-8;
    let field = build(&mesh, rho, bound);
    let lo = [-lx / 2.0, -ly / 2.0, -lz / 2.0];
    let hi = [lx / 2.0, ly / 2.0, lz / 2.0];
    for p in [
        Point3::new(900.0, 120.0, -50.0),
        Point3::new(-1500.0, 800.0, 1200.0),
        Point3::new(300.0, 10.0, 20.0),
        Point3::new(300.0, 200.0, 20.0),
        Point3::new(300.0, 200.0, 100.0),
        Point3::new(301.0, -150.0, 60.0),
    ] {
        let (u_ref, a_ref) = prism_field(lo, hi, rho, &p);
        let (u, a) = field.potential_acceleration(&p);
        assert!(
            (a - a_ref).norm() <= bound * a_ref.norm(),
            "{p}: {a} vs {a_ref}"
        );
        assert!(
            rel(u, u_ref, u_ref.abs()) < 10.0 * bound,
            "{p}: {u} vs {u_ref}"
        );
    }
}

#[test]
fn homogeneous_ellipsoid_through_the_interpolated_field() {
    // The classical exterior potential of the homogeneous ellipsoid (MacMillan 1930; Carlson
    // 1995 for R_F, R_D; see field_support::ellipsoid_field) against the interpolated field of
    // the inscribed polyhedron: the same agreement as the direct field's (the mesh's own
    // error), to within the bound.
    let abc = [1200.0, 800.0, 500.0];
    let rho = 1800.0;
    let mesh = generate::ellipsoid(abc[0], abc[1], abc[2], 3);
    let field = build(&mesh, rho, 1e-8);
    for p in [
        Point3::new(2000.0, 900.0, 400.0),
        Point3::new(-400.0, 300.0, 1500.0),
        Point3::new(1300.0, 0.0, 0.0),
    ] {
        let (_, a_ref) = ellipsoid_field(abc, rho, &p);
        let (_, a_direct) = field.exact().potential_acceleration(&p);
        let (_, a) = field.potential_acceleration(&p);
        let e_direct = (a_direct - a_ref).norm() / a_ref.norm();
        let e_interp = (a - a_ref).norm() / a_ref.norm();
        assert!(
            (e_interp - e_direct).abs() <= 1e-8,
            "{p}: {e_interp:e} vs {e_direct:e}"
        );
        // The mesh's own error (4 subdivisions short of the smooth surface), largest just
        // off the long axis' tip.
        assert!(e_direct < 2e-2, "{p}: {e_direct:e}");
    }
}

#[test]
fn stored_fields_read_back_identically_and_damage_is_detected() {
    let mesh = generate::demo_body(1);
    let mass = MassSpec::DensityKgM3(2100.0);
    let settings = InterpolationSettings {
        max_rel_error: 1e-7,
        leaf_near_faces: 60,
        ..Default::default()
    };
    let field =
        build_interpolated(&mesh, mass, settings, &|_| {}, &AtomicBool::new(false)).unwrap();
    let key = cache_key(&mesh, mass, &settings);
    let mut bytes = Vec::new();
    field.write_to(&mut bytes, &key).unwrap();
    let back =
        InterpolatedGravity::read_from(&mut bytes.as_slice(), &mesh, mass, &settings).unwrap();
    let pts = stress_points(&mesh, &field, 200, 3);
    for p in &pts {
        assert_eq!(
            field.potential_acceleration(p),
            back.potential_acceleration(p)
        );
    }
    // Every flipped byte, every truncation: an error, never a wrong field or a panic.
    for at in [0, 9, 80, 100, bytes.len() / 2, bytes.len() - 1] {
        let mut bad = bytes.clone();
        bad[at] ^= 0x10;
        assert!(matches!(
            InterpolatedGravity::read_from(&mut bad.as_slice(), &mesh, mass, &settings),
            Err(GravityError::Stored(_))
        ));
    }
    for len in [0, 7, 72, 80, bytes.len() - 1] {
        assert!(
            InterpolatedGravity::read_from(&mut &bytes[..len], &mesh, mass, &settings).is_err()
        );
    }
    // Built for another bound or mass: stale.
    let other = InterpolationSettings {
        max_rel_error: 1e-8,
        ..settings
    };
    let err =
        InterpolatedGravity::read_from(&mut bytes.as_slice(), &mesh, mass, &other).unwrap_err();
    assert!(err.to_string().contains("stale"), "{err}");
    assert!(
        InterpolatedGravity::read_from(
            &mut bytes.as_slice(),
            &mesh,
            MassSpec::DensityKgM3(2000.0),
            &settings
        )
        .is_err()
    );
}

#[test]
fn progress_reaches_every_level_and_its_cell_count() {
    // A progress bar fed by the build must fill for each level, in order, never going back
    // within a level, including levels whose cells are all settled without a fit (the root).
    let mesh = generate::demo_body(2);
    let reports = std::sync::Mutex::new(Vec::new());
    let settings = InterpolationSettings {
        max_rel_error: 1e-6,
        leaf_near_faces: 120,
        ..Default::default()
    };
    let field = build_interpolated(
        &mesh,
        MassSpec::DensityKgM3(2000.0),
        settings,
        &|p| reports.lock().unwrap().push(*p),
        &AtomicBool::new(false),
    )
    .unwrap();
    let reports = reports.into_inner().unwrap();
    let depth = field.stats().depth;
    for level in 0..=depth {
        let of_level: Vec<_> = reports.iter().filter(|p| p.level == level).collect();
        let last = of_level
            .last()
            .unwrap_or_else(|| panic!("no report for level {level}"));
        assert!(
            of_level.iter().all(|p| p.cells_done <= p.cells_in_level),
            "level {level}"
        );
        let done = of_level.iter().map(|p| p.cells_done).max().unwrap_or(0);
        assert_eq!(done, last.cells_in_level, "level {level} never completes");
    }
    assert!(
        reports.windows(2).all(|w| w[0].level <= w[1].level),
        "levels out of order"
    );
}

#[test]
fn bad_settings_are_refused_with_the_reason() {
    let mesh = generate::demo_body(1);
    let mass = MassSpec::DensityKgM3(2100.0);
    for bound in [0.0, 1e-13, 2e-3, f64::NAN, -1e-9] {
        let s = InterpolationSettings {
            max_rel_error: bound,
            ..Default::default()
        };
        let err = build_interpolated(&mesh, mass, s, &|_| {}, &AtomicBool::new(false)).unwrap_err();
        assert!(err.to_string().contains("max_rel_error"), "{err}");
    }
    // A memory limit too small for the bound: a clear error naming both.
    let s = InterpolationSettings {
        max_rel_error: 1e-9,
        max_memory_bytes: 1 << 10,
        ..Default::default()
    };
    let err = build_interpolated(&mesh, mass, s, &|_| {}, &AtomicBool::new(false)).unwrap_err();
    assert!(matches!(err, GravityError::MemoryLimit { .. }), "{err}");
    // Cancelled: stops with the reason.
    let err = build_interpolated(
        &mesh,
        mass,
        InterpolationSettings::default(),
        &|_| {},
        &AtomicBool::new(true),
    )
    .unwrap_err();
    assert!(matches!(err, GravityError::Cancelled), "{err}");
}
