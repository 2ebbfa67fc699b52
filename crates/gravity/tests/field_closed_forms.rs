//! The polyhedron field against closed forms: prism, sphere, triaxial ellipsoid, and the
//! reference formulas themselves against known values.

mod field_support;

use field_support::*;
use nalgebra::{Point3, Vector3};
use spinfall_gravity::{MassSpec, PolyhedronGravity, generate};

#[test]
fn carlson_integrals_match_known_values() {
    // Special cases: R_F(x,x,x) = x^-1/2, R_D(x,x,x) = x^-3/2 (Carlson 1995, from the
    // definitions); R_F(0,1,2) = 1.3110287771461 and R_D(0,2,1) = 1.7972103521034 are the test
    // values printed in Carlson 1995, section 3 (quoted from memory).
    assert!((carlson_rf(4.0, 4.0, 4.0) - 0.5).abs() < 1e-15);
    assert!((carlson_rd(4.0, 4.0, 4.0) - 0.125).abs() < 1e-15);
    assert!((carlson_rf(0.0, 1.0, 2.0) - 1.311_028_777_146_1).abs() < 1e-12);
    assert!((carlson_rd(0.0, 2.0, 1.0) - 1.797_210_352_103_4).abs() < 1e-12);
}

#[test]
fn prism_reference_is_self_consistent() {
    // The closed-form acceleration must be the gradient of the closed-form potential
    // (central differences), and point towards the box from outside.
    let (lo, hi) = ([-300.0, -200.0, -100.0], [300.0, 200.0, 100.0]);
    for p in [
        Point3::new(700.0, 350.0, -220.0),
        Point3::new(10.0, -20.0, 30.0),
    ] {
        let (_, a) = prism_field(lo, hi, 2000.0, &p);
        let h = 1e-2;
        for k in 0..3 {
            let mut dp = Vector3::zeros();
            dp[k] = h;
            let fd = (prism_field(lo, hi, 2000.0, &(p + dp)).0
                - prism_field(lo, hi, 2000.0, &(p - dp)).0)
                / (2.0 * h);
            assert!(
                (fd - a[k]).abs() < 1e-7 * a.norm(),
                "axis {k}: {fd} vs {}",
                a[k]
            );
        }
    }
    let (_, a) = prism_field(lo, hi, 2000.0, &Point3::new(900.0, 0.0, 0.0));
    assert!(a.x < 0.0);
}

#[test]
fn box_matches_prism_closed_form_outside_on_and_inside() {
    // Nagy, Papp & Benedek (2000), J. Geodesy 74:552-560 (closed form in field_support).
    let (lx, ly, lz) = (600.0, 400.0, 200.0);
    let rho = 2000.0;
    let field =
        PolyhedronGravity::from_mesh(&generate::box_mesh(lx, ly, lz), MassSpec::DensityKgM3(rho))
            .expect("valid input");
    let lo = [-lx / 2.0, -ly / 2.0, -lz / 2.0];
    let hi = [lx / 2.0, ly / 2.0, lz / 2.0];
    let points = [
        Point3::new(900.0, 120.0, -50.0),    // outside
        Point3::new(-1500.0, 800.0, 1200.0), // farther out
        Point3::new(20.0, -30.0, 40.0),      // inside
        Point3::new(299.0, 199.0, 99.0),     // inside, near a corner
        Point3::new(300.0, 10.0, 20.0),      // on a face
        Point3::new(300.0, 200.0, 20.0),     // on an edge
        Point3::new(300.0, 200.0, 100.0),    // on a vertex
        Point3::new(300.0, 0.0, 0.0),        // on a face centre (on a triangle diagonal)
    ];
    for p in points {
        let (u_ref, a_ref) = prism_field(lo, hi, rho, &p);
        let (u, a) = field.potential_acceleration(&p);
        let eu = rel(u, u_ref, u_ref.abs());
        let ea = (a - a_ref).norm() / a_ref.norm().max(G * rho * 100.0);
        eprintln!("box {p:?} eu={eu:e} ea={ea:e}");
        assert!(eu < 1e-12, "U at {p}: {u} vs {u_ref} (rel {eu:e})");
        assert!(ea < 1e-12, "a at {p}: {a} vs {a_ref} (rel {ea:e})");
        let s = field.evaluate(&p);
        assert!(rel(s.potential_m2_s2, u_ref, u_ref.abs()) < 1e-12);
        assert!((s.acceleration_m_s2 - a_ref).norm() / a_ref.norm().max(G * rho * 100.0) < 1e-12);
    }
}

#[test]
fn icosphere_approaches_homogeneous_sphere() {
    // Newton's shell theorem: outside U = GM/r, a = -GM/r^2; inside
    // U = 2/3 pi G rho (3 R^2 - r^2), a = -4/3 pi G rho r. The icosphere is scaled so its volume
    // equals the sphere's; the error must shrink with refinement.
    let r_sphere = 1000.0;
    let rho = 1500.0;
    let mut last = [f64::INFINITY; 2];
    for n in [2, 3, 4] {
        let unit = generate::icosphere(1.0, n);
        let (vol_unit, _, _) = mass_properties(&unit);
        let scale = (4.0 / 3.0 * std::f64::consts::PI / vol_unit).cbrt() * r_sphere;
        let mesh = generate::icosphere(scale, n);
        let field =
            PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(rho)).expect("valid input");
        let gm = G * rho * 4.0 / 3.0 * std::f64::consts::PI * r_sphere.powi(3);
        let mut err = [0.0f64; 2];
        for dir in [Vector3::new(1.0, 0.3, -0.2), Vector3::new(-0.4, 0.9, 0.6)] {
            let d = dir.normalize();
            let out = Point3::from(d * 2.5 * r_sphere);
            let (u, a) = field.potential_acceleration(&out);
            let r = 2.5 * r_sphere;
            err[0] = err[0].max(rel(u, gm / r, gm / r));
            err[0] = err[0].max((a + d * gm / (r * r)).norm() / (gm / (r * r)));
            let inn = Point3::from(d * 0.4 * r_sphere);
            let r = 0.4 * r_sphere;
            let u_in =
                2.0 / 3.0 * std::f64::consts::PI * G * rho * (3.0 * r_sphere.powi(2) - r * r);
            let a_in = -4.0 / 3.0 * std::f64::consts::PI * G * rho * r;
            let (u, a) = field.potential_acceleration(&inn);
            err[1] = err[1].max(rel(u, u_in, u_in));
            err[1] = err[1].max((a - d * a_in).norm() / a_in.abs());
        }
        assert!(
            err[0] < 0.6 * last[0] && err[1] < 0.6 * last[1],
            "n={n}: {err:?} vs {last:?}"
        );
        last = err;
    }
    assert!(last[0] < 1e-4 && last[1] < 2e-3, "{last:?}");
}

#[test]
fn ellipsoid_mesh_approaches_homogeneous_ellipsoid() {
    // Classical interior and exterior potential of the homogeneous ellipsoid (MacMillan 1930;
    // Carlson 1995 for R_F, R_D), see field_support::ellipsoid_field. Error shrinks with
    // refinement; the mesh is inscribed, so compare at fixed density.
    let abc = [1200.0, 800.0, 500.0];
    let rho = 1800.0;
    let points = [
        Point3::new(300.0, -200.0, 100.0),  // inside
        Point3::new(-100.0, 350.0, -200.0), // inside
        Point3::new(2000.0, 900.0, 400.0),  // outside
        Point3::new(-400.0, 300.0, 1500.0), // outside
    ];
    let mut last = f64::INFINITY;
    for n in [3, 4, 5] {
        let mesh = generate::ellipsoid(abc[0], abc[1], abc[2], n);
        let field =
            PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(rho)).expect("valid input");
        let mut err = 0.0f64;
        for p in &points {
            let (u_ref, a_ref) = ellipsoid_field(abc, rho, p);
            let (u, a) = field.potential_acceleration(p);
            err = err
                .max(rel(u, u_ref, u_ref))
                .max((a - a_ref).norm() / a_ref.norm());
        }
        eprintln!("ell n={n} err={err:e}");
        assert!(err < 0.5 * last, "n={n}: {err:e} vs {last:e}");
        last = err;
    }
    assert!(last < 2e-3, "{last:e}");
}

#[test]
fn ellipsoid_reference_reduces_to_sphere() {
    // Sanity of the reference: a = b = c gives the shell-theorem values.
    let r: f64 = 700.0;
    let rho = 1000.0;
    let gm = G * rho * 4.0 / 3.0 * std::f64::consts::PI * r.powi(3);
    let (u, a) = ellipsoid_field([r, r, r], rho, &Point3::new(0.0, 1400.0, 0.0));
    assert!(rel(u, gm / 1400.0, gm / 1400.0) < 1e-13);
    assert!(rel(a.y, -gm / 1400.0f64.powi(2), gm / 1400.0f64.powi(2)) < 1e-13);
    let (u, _) = ellipsoid_field([r, r, r], rho, &Point3::new(0.0, 0.0, 300.0));
    let want = 2.0 / 3.0 * std::f64::consts::PI * G * rho * (3.0 * r * r - 300.0 * 300.0);
    assert!(rel(u, want, want) < 1e-13);
}
