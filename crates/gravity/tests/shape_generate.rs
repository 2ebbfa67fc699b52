//! Generators: face counts, closed outward meshes, the demo body's size and asymmetry.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod shape_support;

use shape_support::{extent_m, model};
use spinfall_gravity::generate;

#[test]
fn icosphere_face_counts_follow_20_times_4_to_the_n() {
    // Subdividing each triangle into 4 (geodesic-sphere construction, common practice).
    for n in 0..=4 {
        let mesh = generate::icosphere(1.0, n);
        assert_eq!(mesh.faces.len(), 20 * 4usize.pow(n));
        // Euler's polyhedron formula for a sphere: V - E + F = 2 with E = 3F/2.
        assert_eq!(
            mesh.vertices_m.len() as i64 - (3 * mesh.faces.len() / 2) as i64
                + mesh.faces.len() as i64,
            2
        );
    }
}

#[test]
fn geodesic_spheres_have_20_f_squared_faces_and_close_up() {
    // Frequency-f geodesic sphere (each icosahedron face cut by a triangular grid, common
    // practice): 20 f^2 faces; Euler's formula V - E + F = 2 with E = 3F/2 checks that grid
    // points on shared icosahedron edges are shared, not duplicated.
    for f in [1u32, 2, 3, 5, 7] {
        let mesh = generate::geodesic_sphere(1.0, f);
        let nf = mesh.faces.len();
        assert_eq!(nf, 20 * (f * f) as usize);
        assert_eq!(
            mesh.vertices_m.len() as i64 - (3 * nf / 2) as i64 + nf as i64,
            2
        );
        // Closed and outward: the validator repairs nothing; volume below the sphere's.
        let shape = model(mesh);
        let v = shape.mass_properties().volume_m3;
        assert!(
            v > 0.0 && v < 4.0 / 3.0 * std::f64::consts::PI,
            "f = {f}: volume {v}"
        );
    }
    // Frequency 2 is the icosphere with one subdivision (same vertex set).
    let (g, i) = (
        generate::geodesic_sphere(1.0, 2),
        generate::icosphere(1.0, 1),
    );
    assert_eq!(g.vertices_m.len(), i.vertices_m.len());
    assert_eq!(
        model(generate::demo_body_geodesic(4)).face_count(),
        20 * 16,
        "the demo body takes any frequency"
    );
}

#[test]
fn generated_meshes_are_valid_and_outward() {
    for mesh in [
        generate::icosphere(1000.0, 2),
        generate::ellipsoid(3000.0, 2000.0, 1500.0, 2),
        generate::box_mesh(2.0, 1.2, 0.8),
        generate::box_mesh_subdivided(2.0, 1.2, 0.8, 3),
        generate::demo_body(2),
    ] {
        // No warnings means nothing was flipped, merged or dropped.
        let shape = model(mesh);
        assert!(shape.mass_properties().volume_m3 > 0.0);
    }
}

#[test]
fn subdivided_box_has_12_n_squared_faces_and_box_volume() {
    let shape = model(generate::box_mesh_subdivided(2.0, 1.2, 0.8, 4));
    assert_eq!(shape.face_count(), 12 * 16);
    // V = lx ly lz.
    assert!((shape.mass_properties().volume_m3 - 2.0 * 1.2 * 0.8).abs() < 1e-12);
}

#[test]
fn icosphere_vertices_lie_on_the_sphere() {
    let mesh = generate::icosphere(1234.5, 3);
    for p in &mesh.vertices_m {
        assert!((p.coords.norm() - 1234.5).abs() < 1e-9);
    }
}

#[test]
fn demo_body_has_the_stated_size_and_is_not_centred() {
    let mesh = generate::demo_body(4);
    let [x, y, z] = extent_m(&mesh);
    // Stated in the brief: about 5.6 x 3.4 x 2.9 km.
    assert!((x - 5600.0).abs() < 150.0, "x extent {x}");
    assert!((y - 3400.0).abs() < 150.0, "y extent {y}");
    assert!((z - 2900.0).abs() < 150.0, "z extent {z}");
    let shape = model(mesh);
    let com = shape.mass_properties().center_of_mass_m;
    let d = com.coords.norm();
    assert!(d > 1.0 && d < 600.0, "centre of mass {com}");
    // Bilobed: the waist (yz section near x = 0) is narrower than the lobes. Measure the
    // half-height along z through the body at three x stations with ray casts.
    let height = |x: f64| {
        let up = shape
            .ray_first_hit(
                &nalgebra::Point3::new(x, 0.0, 5000.0),
                &-nalgebra::Vector3::z(),
                1e4,
            )
            .unwrap();
        let down = shape
            .ray_first_hit(
                &nalgebra::Point3::new(x, 0.0, -5000.0),
                &nalgebra::Vector3::z(),
                1e4,
            )
            .unwrap();
        up.point_m.z - down.point_m.z
    };
    let (lobe_a, waist, lobe_b) = (height(1300.0), height(-100.0), height(-1400.0));
    assert!(
        waist < 0.9 * lobe_a && waist < 0.9 * lobe_b,
        "{lobe_a} {waist} {lobe_b}"
    );
}

#[test]
fn generators_are_deterministic() {
    assert_eq!(generate::demo_body(3), generate::demo_body(3));
    assert_eq!(generate::icosphere(2.0, 3), generate::icosphere(2.0, 3));
}
