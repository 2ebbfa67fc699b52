//! Nearest surface point and inside test against analytic geometry.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod shape_support;

use nalgebra::Point3;
use rand::{Rng, SeedableRng};
use shape_support::model;
use spinfall_gravity::generate;

#[test]
fn nearest_point_on_a_box_face_edge_and_corner() {
    // Box [-1,1] x [-0.6,0.6] x [-0.4,0.4]: the closest point is the clamp of p to the box.
    let shape = model(generate::box_mesh_subdivided(2.0, 1.2, 0.8, 2));
    let cases = [
        (Point3::new(3.0, 0.1, -0.2), Point3::new(1.0, 0.1, -0.2)), // face
        (Point3::new(3.0, 2.0, 0.1), Point3::new(1.0, 0.6, 0.1)),   // edge
        (Point3::new(-3.0, -2.0, -5.0), Point3::new(-1.0, -0.6, -0.4)), // corner
    ];
    for (p, expected) in cases {
        let hit = shape.nearest_surface_point(&p);
        assert!((hit.point_m - expected).norm() < 1e-12, "{p}: {hit:?}");
        assert!((hit.t - (p - expected).norm()).abs() < 1e-12);
        assert!(hit.front_face);
    }
    // From inside: the nearest face is the closest side (z = +0.4, 0.3 away).
    let hit = shape.nearest_surface_point(&Point3::new(0.2, 0.1, 0.1));
    assert!((hit.t - 0.3).abs() < 1e-12 && !hit.front_face);
}

#[test]
fn nearest_point_on_a_sphere_is_radial() {
    let r = 500.0;
    let shape = model(generate::icosphere(r, 5));
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
    for _ in 0..100 {
        let p = Point3::new(
            rng.random_range(-2e3..2e3),
            rng.random_range(-2e3..2e3),
            rng.random_range(-2e3..2e3),
        );
        let hit = shape.nearest_surface_point(&p);
        // Sphere: distance | |p| - r |, to within the facet sagitta (~0.2 m at 20480 faces).
        assert!(
            (hit.t - (p.coords.norm() - r).abs()).abs() < 0.5,
            "{p}: {hit:?}"
        );
    }
}

#[test]
fn contains_matches_the_analytic_ellipsoid() {
    let (a, b, c) = (3000.0, 2000.0, 1500.0);
    let shape = model(generate::ellipsoid(a, b, c, 4));
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
    let mut checked = 0;
    for _ in 0..2000 {
        let p = Point3::new(
            rng.random_range(-1.2 * a..1.2 * a),
            rng.random_range(-1.2 * b..1.2 * b),
            rng.random_range(-1.2 * c..1.2 * c),
        );
        let s = (p.x / a).powi(2) + (p.y / b).powi(2) + (p.z / c).powi(2);
        // Skip the thin shell where the facets and the true ellipsoid differ (chord sagitta).
        if (s - 1.0).abs() < 0.01 {
            continue;
        }
        assert_eq!(shape.contains(&p), s < 1.0, "{p} s = {s}");
        checked += 1;
    }
    assert!(checked > 1500);
    assert!(!shape.contains(&Point3::new(f64::NAN, 0.0, 0.0)));
}

#[test]
fn contains_on_axis_aligned_grid_points_of_a_box() {
    // Points on the coordinate planes of a box make rays run along face planes of triangles:
    // the majority vote must still give the right answer.
    let shape = model(generate::box_mesh(2.0, 2.0, 2.0));
    for i in -4..=4 {
        for j in -4..=4 {
            let p = Point3::new(0.4 * f64::from(i), 0.4 * f64::from(j), 0.0);
            let inside = p.x.abs() < 1.0 && p.y.abs() < 1.0;
            if (p.x.abs() - 1.0).abs() < 1e-9 || (p.y.abs() - 1.0).abs() < 1e-9 {
                continue; // on the surface: either answer is allowed
            }
            assert_eq!(shape.contains(&p), inside, "{p}");
        }
    }
}

/// Distance from `p` to triangle `abc` by an independent route: the plane distance when the
/// projection falls inside, else the nearest of the three edge segments (textbook geometry).
fn brute_distance(p: &Point3<f64>, [a, b, c]: [Point3<f64>; 3]) -> f64 {
    let n = (b - a).cross(&(c - a)).normalize();
    let q = p - n * n.dot(&(p - a));
    let inside = (b - a).cross(&(q - a)).dot(&n) >= 0.0
        && (c - b).cross(&(q - b)).dot(&n) >= 0.0
        && (a - c).cross(&(q - c)).dot(&n) >= 0.0;
    if inside {
        return (p - q).norm();
    }
    let segment = |u: Point3<f64>, v: Point3<f64>| {
        let s = ((p - u).dot(&(v - u)) / (v - u).norm_squared()).clamp(0.0, 1.0);
        (p - (u + (v - u) * s)).norm()
    };
    segment(a, b).min(segment(b, c)).min(segment(c, a))
}

#[test]
fn nearest_point_agrees_with_brute_force_on_the_demo_body() {
    let shape = model(generate::demo_body(3));
    let mesh = shape.mesh();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
    for _ in 0..100 {
        let p = Point3::new(
            rng.random_range(-4e3..4e3),
            rng.random_range(-3e3..3e3),
            rng.random_range(-3e3..3e3),
        );
        let fast = shape.nearest_surface_point(&p);
        let brute = (0..mesh.faces.len())
            .map(|f| brute_distance(&p, mesh.triangle(f)))
            .fold(f64::INFINITY, f64::min);
        assert!((fast.t - brute).abs() < 1e-6, "{p}: {} vs {brute}", fast.t);
        assert!(((fast.point_m - p).norm() - fast.t).abs() < 1e-9);
        assert!((brute_distance(&p, mesh.triangle(fast.face)) - fast.t).abs() < 1e-6);
    }
}
