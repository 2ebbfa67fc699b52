//! Points on the surface, the Laplacian and inside test, and bad input.

mod field_support;

use std::f64::consts::PI;

use field_support::*;
use nalgebra::{Point3, Vector3};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use spinfall_gravity::{GravityError, MassSpec, PolyhedronGravity, generate};

fn cube_field(n: u32) -> PolyhedronGravity {
    PolyhedronGravity::from_mesh(
        &generate::box_mesh_subdivided(1000.0, 1000.0, 1000.0, n),
        MassSpec::DensityKgM3(2500.0),
    )
    .expect("cube")
}

/// Checks that the field at `p` is finite, that its Laplacian is `-G rho * solid_fraction * 4
/// pi`, and that potential and acceleration equal the limits from nearby points.
fn check_surface_point(field: &PolyhedronGravity, p: Point3<f64>, solid_angle_sr: f64) {
    let g_rho = G * field.density_kg_m3();
    let s = field.evaluate(&p);
    assert!(s.potential_m2_s2.is_finite(), "{p}");
    assert!(s.acceleration_m_s2.iter().all(|v| v.is_finite()), "{p}");
    assert!(s.gradient_s2.iter().all(|v| v.is_finite()), "{p}");
    assert!(s.laplacian_s2.is_finite(), "{p}");
    assert!(!s.inside, "{p} on the surface counts as outside");
    // The Laplacian is -G rho times the solid angle the body fills as seen from p: 2 pi on a
    // face, pi on a cube edge, pi/2 at a cube corner (geometry of the cube).
    assert!(
        (s.laplacian_s2 + g_rho * solid_angle_sr).abs() < 1e-12 * g_rho,
        "{p}: laplacian {} vs {}",
        s.laplacian_s2,
        -g_rho * solid_angle_sr
    );
    let (u, a) = field.potential_acceleration(&p);
    // evaluate() uses the scalar kernel, potential_acceleration() the vector one.
    assert!((u - s.potential_m2_s2).abs() < 1e-13 * u);
    assert!((a - s.acceleration_m_s2).norm() < 1e-13 * a.norm());
    let dirs = [
        Vector3::new(1.0, 0.0, 0.0),
        Vector3::new(-1.0, 0.2, 0.1),
        Vector3::new(0.3, -1.0, 0.4),
        Vector3::new(0.2, 0.5, -1.0),
        Vector3::new(1.0, 1.0, 1.0),
        Vector3::new(-1.0, -1.0, -1.0),
    ];
    let a_scale = g_rho * 1000.0;
    for d in dirs {
        for h in [1e-3, 1e-6] {
            let q = p + d.normalize() * h;
            let (uq, aq) = field.potential_acceleration(&q);
            // U is C^1 and a is continuous with a modulus ~ h ln h: compare to that order.
            let tol_u = 1e-9 * u + 10.0 * a.norm() * h;
            let tol_a = 1e-9 * a_scale + 20.0 * g_rho * h * (1000.0 / h).ln();
            assert!((uq - u).abs() < tol_u, "U near {p} at {h}: {uq} vs {u}");
            assert!((aq - a).norm() < tol_a, "a near {p} at {h}: {aq} vs {a}");
        }
    }
}

#[test]
fn cube_face_edge_and_vertex_points_are_finite_and_continuous() {
    for n in [1, 2] {
        let field = cube_field(n);
        // Faces (centre: on a triangle diagonal for n = 1, a mesh vertex for n = 2; off centre).
        check_surface_point(&field, Point3::new(500.0, 0.0, 0.0), 2.0 * PI);
        check_surface_point(&field, Point3::new(123.0, -500.0, 77.0), 2.0 * PI);
        check_surface_point(&field, Point3::new(-210.0, 130.0, 500.0), 2.0 * PI);
        // Edges of the cube.
        check_surface_point(&field, Point3::new(500.0, 500.0, 20.0), PI);
        check_surface_point(&field, Point3::new(-500.0, 0.0, -500.0), PI);
        // Vertices of the cube.
        check_surface_point(&field, Point3::new(500.0, 500.0, 500.0), PI / 2.0);
        check_surface_point(&field, Point3::new(-500.0, 500.0, -500.0), PI / 2.0);
    }
}

#[test]
fn laplacian_and_inside_test_agree_with_ray_crossing_on_irregular_body() {
    // Gauss's law for the Newtonian potential: Laplacian = -4 pi G rho inside, 0 outside
    // (Poisson's equation); inside/outside checked independently by ray-crossing parity.
    let mesh = generate::demo_body(2);
    let field =
        PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(2100.0)).expect("valid input");
    let g_rho = G * 2100.0;
    let (min, max) = mesh.vertices_m.iter().fold(
        (
            Vector3::repeat(f64::INFINITY),
            Vector3::repeat(f64::NEG_INFINITY),
        ),
        |(lo, hi), v| (lo.inf(&v.coords), hi.sup(&v.coords)),
    );
    let mut rng = ChaCha8Rng::seed_from_u64(20261201);
    let mut counts = [0, 0];
    let dir = Vector3::new(0.577, 0.3321, 0.7456).normalize();
    let mut points = Vec::new();
    let mut by_ray = Vec::new();
    for _ in 0..300 {
        let t = Vector3::new(rng.random::<f64>(), rng.random(), rng.random());
        let p = Point3::from(min + (max - min).component_mul(&t) * 1.2 - (max - min) * 0.1);
        let s = field.evaluate(&p);
        let inside = inside_by_ray(&mesh, &p, &dir);
        points.push(p);
        by_ray.push(inside);
        assert_eq!(s.inside, inside, "{p}");
        assert_eq!(field.is_inside(&p), inside, "{p}");
        let want = if inside { -4.0 * PI * g_rho } else { 0.0 };
        assert!(
            (s.laplacian_s2 - want).abs() < 1e-10 * g_rho,
            "{p}: {}",
            s.laplacian_s2
        );
        // The trace of the gradient tensor is the Laplacian too.
        assert!((s.gradient_s2.trace() - want).abs() < 1e-9 * g_rho, "{p}");
        counts[inside as usize] += 1;
    }
    assert!(counts[0] > 30 && counts[1] > 30, "{counts:?}");
    // The batch test (the interpolated build's) gives the same answers, including for points
    // whose neighbours in the batch are on the other side.
    assert_eq!(field.is_inside_batch(&points), by_ray);
}

#[test]
fn gradient_tensor_is_the_derivative_of_the_acceleration() {
    // Definition: gradient tensor = d a / d p (central differences, step 1e-3 m).
    let field =
        PolyhedronGravity::from_mesh(&generate::demo_body(2), MassSpec::DensityKgM3(2100.0))
            .expect("valid input");
    let r = field.brillouin_radius_m();
    for p in [
        Point3::new(0.1 * r, 0.05 * r, -0.1 * r),
        Point3::new(1.5 * r, -0.7 * r, 0.4 * r),
    ] {
        let s = field.evaluate(&p);
        let h = 1e-3;
        for k in 0..3 {
            let mut dp = Vector3::zeros();
            dp[k] = h;
            let fd = (field.potential_acceleration(&(p + dp)).1
                - field.potential_acceleration(&(p - dp)).1)
                / (2.0 * h);
            let col = s.gradient_s2.column(k);
            assert!(
                (fd - col).norm() < 1e-6 * s.gradient_s2.norm(),
                "{p} col {k}"
            );
        }
        // And the acceleration is the gradient of the potential.
        for k in 0..3 {
            let mut dp = Vector3::zeros();
            dp[k] = 1e-2;
            let fd = (field.potential_acceleration(&(p + dp)).0
                - field.potential_acceleration(&(p - dp)).0)
                / 2e-2;
            assert!((fd - s.acceleration_m_s2[k]).abs() < 1e-7 * s.acceleration_m_s2.norm());
        }
    }
}

#[test]
fn bad_mass_parameters_name_the_field() {
    let mesh = generate::box_mesh(10.0, 10.0, 10.0);
    let cases = [
        (MassSpec::DensityKgM3(-1.0), "density_kg_m3"),
        (MassSpec::DensityKgM3(0.0), "density_kg_m3"),
        (MassSpec::DensityKgM3(f64::NAN), "density_kg_m3"),
        (MassSpec::MassKg(0.0), "mass_kg"),
        (MassSpec::MassKg(f64::INFINITY), "mass_kg"),
        (MassSpec::MassKg(-3e9), "mass_kg"),
        (MassSpec::GmM3S2(f64::NAN), "gm_m3_s2"),
        (MassSpec::GmM3S2(-1.0), "gm_m3_s2"),
        (MassSpec::GmM3S2(0.0), "gm_m3_s2"),
    ];
    for (spec, want) in cases {
        match PolyhedronGravity::from_mesh(&mesh, spec) {
            Err(GravityError::InvalidParameter { name, message }) => {
                assert_eq!(name, want);
                assert!(!message.is_empty());
            }
            other => panic!("{spec:?}: expected InvalidParameter, got {other:?}"),
        }
    }
}

#[test]
fn shape_model_and_mesh_constructors_agree() {
    let mesh = generate::demo_body(2);
    let (shape, _warnings) = spinfall_gravity::ShapeModel::new(mesh.clone()).expect("valid input");
    let a = PolyhedronGravity::new(&shape, MassSpec::DensityKgM3(2100.0)).expect("valid input");
    let b = PolyhedronGravity::from_mesh(shape.mesh(), MassSpec::DensityKgM3(2100.0))
        .expect("valid input");
    let p = Point3::new(3000.0, -1000.0, 500.0);
    assert_eq!(a.potential_acceleration(&p), b.potential_acceleration(&p));
    // Volume and centre of mass agree with the shape's own mass properties (independent code).
    let props = shape.mass_properties();
    assert!(rel(a.volume_m3(), props.volume_m3, props.volume_m3) < 1e-12);
    assert!((a.center_of_mass_m() - props.center_of_mass_m).norm() < 1e-9 * a.brillouin_radius_m());
}

#[test]
fn mass_spec_variants_agree() {
    // M = rho V and GM = G M by definition.
    let mesh = generate::box_mesh(100.0, 200.0, 300.0);
    let by_rho =
        PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(2000.0)).expect("valid input");
    let mass = 2000.0 * 100.0 * 200.0 * 300.0;
    assert!(rel(by_rho.mass_kg(), mass, mass) < 1e-14);
    let by_mass = PolyhedronGravity::from_mesh(&mesh, MassSpec::MassKg(mass)).expect("valid input");
    assert!(rel(by_mass.density_kg_m3(), 2000.0, 2000.0) < 1e-14);
    let by_gm =
        PolyhedronGravity::from_mesh(&mesh, MassSpec::GmM3S2(G * mass)).expect("valid input");
    assert!(rel(by_gm.density_kg_m3(), 2000.0, 2000.0) < 1e-14);
    assert!(rel(by_gm.gm_m3_s2(), G * mass, G * mass) < 1e-14);
    assert_eq!(by_rho.face_count(), 12);
    assert!(by_rho.memory_bytes() > 12 * 6 * 8);
}

#[test]
fn broken_meshes_are_rejected_with_a_location() {
    let mut open = generate::box_mesh(10.0, 10.0, 10.0);
    open.faces.pop();
    let err = PolyhedronGravity::from_mesh(&open, MassSpec::DensityKgM3(1.0))
        .expect_err("must be rejected");
    assert!(
        matches!(err, GravityError::InvalidMesh(ref m) if m.contains("edge")),
        "{err}"
    );
    let mut bad_index = generate::box_mesh(10.0, 10.0, 10.0);
    bad_index.faces[3][1] = 99;
    let err = PolyhedronGravity::from_mesh(&bad_index, MassSpec::DensityKgM3(1.0))
        .expect_err("must be rejected");
    assert!(
        matches!(err, GravityError::InvalidMesh(ref m) if m.contains("face 3")),
        "{err}"
    );
    let mut inverted = generate::box_mesh(10.0, 10.0, 10.0);
    for f in &mut inverted.faces {
        f.swap(1, 2);
    }
    let err = PolyhedronGravity::from_mesh(&inverted, MassSpec::DensityKgM3(1.0))
        .expect_err("must be rejected");
    assert!(
        matches!(err, GravityError::InvalidMesh(ref m) if m.contains("volume")),
        "{err}"
    );
    let mut nan = generate::box_mesh(10.0, 10.0, 10.0);
    nan.vertices_m[2].y = f64::NAN;
    let err = PolyhedronGravity::from_mesh(&nan, MassSpec::DensityKgM3(1.0))
        .expect_err("must be rejected");
    assert!(
        matches!(err, GravityError::InvalidMesh(ref m) if m.contains("vertex 2")),
        "{err}"
    );
}
