//! Nearest surface point and inside test against analytic geometry.

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
