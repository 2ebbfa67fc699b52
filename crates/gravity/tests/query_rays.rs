//! Ray and segment first hits against analytic geometry.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod shape_support;

use nalgebra::{Point3, Vector3};
use shape_support::model;
use spinfall_gravity::generate;

#[test]
fn ray_hits_a_box_face_at_the_analytic_point() {
    let shape = model(generate::box_mesh_subdivided(2.0, 1.2, 0.8, 3));
    let origin = Point3::new(5.0, 0.13, -0.21);
    let hit = shape
        .ray_first_hit(&origin, &Vector3::new(-2.0, 0.0, 0.0), 100.0)
        .unwrap();
    // The x = +1 face: t = (5 - 1) / 2 in units of the direction.
    assert!((hit.t - 2.0).abs() < 1e-12, "{hit:?}");
    assert!((hit.point_m - Point3::new(1.0, 0.13, -0.21)).norm() < 1e-12);
    assert!(hit.front_face);
    assert!(shape.face_normal(hit.face).x > 0.999);
    // Too short a ray misses; a ray pointing away misses.
    assert!(
        shape
            .ray_first_hit(&origin, &Vector3::new(-2.0, 0.0, 0.0), 1.9)
            .is_none()
    );
    assert!(
        shape
            .ray_first_hit(&origin, &Vector3::new(1.0, 0.0, 0.0), 100.0)
            .is_none()
    );
    // From inside the hit is a back face.
    let inside = shape
        .ray_first_hit(&Point3::origin(), &Vector3::new(0.0, 0.0, 1.0), 10.0)
        .unwrap();
    assert!(!inside.front_face && (inside.point_m.z - 0.4).abs() < 1e-12);
}

#[test]
fn segment_through_a_sphere_hits_the_near_side() {
    let r = 1000.0;
    let shape = model(generate::icosphere(r, 4));
    let a = Point3::new(-3000.0, 10.0, -20.0);
    let b = Point3::new(3000.0, 10.0, -20.0);
    let hit = shape.segment_first_hit(&a, &b).unwrap();
    assert!(hit.front_face);
    assert!(hit.point_m.x < 0.0);
    // Analytic sphere: x = -sqrt(r^2 - y^2 - z^2); the polyhedron lies inside the sphere, within
    // the chord sagitta (a few metres for 5120 faces).
    let x_sphere = -(r * r - 10.0f64.powi(2) - 20.0f64.powi(2)).sqrt();
    assert!((hit.point_m.x - x_sphere).abs() < 5.0, "{hit:?}");
    assert!((hit.t - (hit.point_m.x - a.x) / 6000.0).abs() < 1e-12);
    // A segment that stops short misses.
    assert!(
        shape
            .segment_first_hit(&a, &Point3::new(-1100.0, 10.0, -20.0))
            .is_none()
    );
}

#[test]
fn rays_through_edges_and_vertices_still_hit() {
    let shape = model(generate::box_mesh(2.0, 2.0, 2.0));
    // Exactly through the diagonal edge that splits the top face into two triangles, through a
    // box edge, and through a corner.
    let targets = [
        Point3::new(0.0, 0.0, 1.0),
        Point3::new(1.0, 0.0, 1.0),
        Point3::new(1.0, 1.0, 1.0),
    ];
    for target in targets {
        let origin = Point3::new(0.3, -0.2, 5.0);
        let dir = target - origin;
        let hit = shape
            .ray_first_hit(&origin, &dir, 2.0)
            .unwrap_or_else(|| panic!("missed {target}"));
        assert!((hit.t - 1.0).abs() < 1e-9, "{hit:?}");
    }
    // Every vertex of an icosphere, approached from outside along its radius.
    let sphere = model(generate::icosphere(10.0, 2));
    for p in &sphere.mesh().vertices_m {
        let origin = Point3::from(p.coords * 3.0);
        let hit = sphere.ray_first_hit(&origin, &(-p.coords), 10.0).unwrap();
        assert!((hit.t - 2.0).abs() < 1e-9);
    }
}

#[test]
fn bad_rays_return_none() {
    let shape = model(generate::box_mesh(2.0, 2.0, 2.0));
    let o = Point3::new(0.0, 0.0, 5.0);
    assert!(shape.ray_first_hit(&o, &Vector3::zeros(), 10.0).is_none());
    assert!(
        shape
            .ray_first_hit(&o, &Vector3::new(f64::NAN, 0.0, -1.0), 10.0)
            .is_none()
    );
    assert!(
        shape
            .ray_first_hit(&o, &Vector3::new(0.0, 0.0, -1.0), -1.0)
            .is_none()
    );
    assert!(
        shape
            .ray_first_hit(&o, &Vector3::new(0.0, 0.0, -1.0), f64::NAN)
            .is_none()
    );
    assert!(
        shape
            .ray_first_hit(&o, &Vector3::new(0.0, 0.0, -1.0), f64::INFINITY)
            .is_some()
    );
}

#[test]
fn random_rays_agree_with_brute_force() {
    use rand::{Rng, SeedableRng};
    let shape = model(generate::demo_body(3));
    let mesh = shape.mesh();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    for _ in 0..200 {
        let o = Point3::new(
            rng.random_range(-4e3..4e3),
            rng.random_range(-4e3..4e3),
            rng.random_range(-4e3..4e3),
        );
        let d = Vector3::new(
            rng.random_range(-1.0..1.0),
            rng.random_range(-1.0..1.0),
            rng.random_range(-1.0..1.0),
        );
        let fast = shape.ray_first_hit(&o, &d, 1e4).map(|h| h.t);
        // Brute force over every face with the plane/inside test (no BVH).
        let mut best: Option<f64> = None;
        for f in 0..mesh.faces.len() {
            let [a, b, c] = mesh.triangle(f);
            let n = (b - a).cross(&(c - a));
            let den = n.dot(&d);
            if den == 0.0 {
                continue;
            }
            let t = n.dot(&(a - o)) / den;
            if !(0.0..=1e4).contains(&t) {
                continue;
            }
            let p = o + d * t;
            let inside = (b - a).cross(&(p - a)).dot(&n) >= 0.0
                && (c - b).cross(&(p - b)).dot(&n) >= 0.0
                && (a - c).cross(&(p - c)).dot(&n) >= 0.0;
            if inside && best.is_none_or(|bt| t < bt) {
                best = Some(t);
            }
        }
        match (fast, best) {
            (Some(x), Some(y)) => assert!((x - y).abs() < 1e-9 * y.max(1.0)),
            (None, None) => {}
            other => panic!("mismatch {other:?}"),
        }
    }
}
