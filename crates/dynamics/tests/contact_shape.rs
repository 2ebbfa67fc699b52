//! A separate contact shape: a finer global model catches impacts on its own surface while the
//! gravity comes from the gravity shape; an open terrain patch catches impacts within its
//! footprint and the body shape catches them outside; the mismatch check; bad patches.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod common;

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::contact::{ContactShape, SAME_BODY_TOLERANCE, check_same_body};
use spinfall_dynamics::launch::LaunchState;
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::{Body, BounceModel, FlightSettings, IntegratorSettings, Outcome, fly};
use spinfall_gravity::{Mesh, ShapeModel, generate};

use common::*;

fn settings() -> FlightSettings {
    FlightSettings {
        integrator: IntegratorSettings {
            rel_tol: 1e-13,
            abs_tol_m: 1e-9,
            max_time_s: 1e6,
            ..IntegratorSettings::default()
        },
        bounce: BounceModel {
            normal_restitution: 0.0,
            tangential_restitution: 0.0,
            max_bounces: 0,
            rest_speed_m_s: 0.0,
        },
        ..FlightSettings::default()
    }
}

/// A flat square patch `side_m` wide at height `z_m`, centred on the z axis, split into
/// `n x n` squares of two triangles, listed counter-clockwise seen from +z.
fn flat_patch(side_m: f64, z_m: f64, n: u32, bump_m: f64) -> Mesh {
    let mut vertices_m = Vec::new();
    let coord = |i: u32| -side_m / 2.0 + side_m * f64::from(i) / f64::from(n);
    for j in 0..=n {
        for i in 0..=n {
            // A bump on inner vertices only (zero on the rim).
            let inner = i > 0 && i < n && j > 0 && j < n;
            let dz = if inner && (i + j) % 2 == 0 {
                bump_m
            } else {
                0.0
            };
            vertices_m.push(Point3::new(coord(i), coord(j), z_m + dz));
        }
    }
    let at = |i: u32, j: u32| j * (n + 1) + i;
    let mut faces = Vec::new();
    for j in 0..n {
        for i in 0..n {
            faces.push([at(i, j), at(i + 1, j), at(i + 1, j + 1)]);
            faces.push([at(i, j), at(i + 1, j + 1), at(i, j + 1)]);
        }
    }
    Mesh { vertices_m, faces }
}

fn patch(mesh: Mesh) -> Arc<ShapeModel> {
    Arc::new(ShapeModel::new_patch(mesh, Point3::origin()).unwrap().0)
}

/// Straight-line flight (no gravity, no spin) from `p0` with `v`; the first contact time and
/// point.
fn straight_drop(body: &Body, p0: Point3<f64>, v: Vector3<f64>) -> (f64, Point3<f64>, usize) {
    let launch = LaunchState::from_state("drop", p0, v).unwrap();
    let rep = fly(body, &launch, &settings(), &AtomicBool::new(false));
    assert_eq!(rep.outcome, Outcome::Landed, "{:?}", rep.outcome);
    let c = &rep.contacts[0];
    (
        rep.first_contact_time_s.unwrap(),
        Point3::from(rep.landing.unwrap().pos_body_m),
        c.face,
    )
}

/// Radial free fall from rest at `r0` onto a point mass reaches `r` after
/// t = sqrt(r0³ / (2 GM)) (sqrt(x (1 − x)) + acos(sqrt(x))), x = r / r0 (the degenerate Kepler
/// ellipse; Vallado, "Fundamentals of Astrodynamics and Applications", 4th ed., sec. 2.2).
fn radial_fall_time_s(r0: f64, r: f64, gm: f64) -> f64 {
    let x = r / r0;
    (r0.powi(3) / (2.0 * gm)).sqrt() * ((x * (1.0 - x)).sqrt() + x.sqrt().acos())
}

#[test]
fn finer_global_contact_sphere_catches_the_impact_on_its_own_surface() {
    let gm = 5.0;
    let coarse = point_mass_sphere(1000.0, 1, gm, no_spin());
    let fine = shape(generate::icosphere(1000.0, 4));
    let body = coarse
        .clone()
        .with_contact(ContactShape::Global(fine.clone()));
    // Fall along the direction of a coarse face's centroid, where the coarse surface lies far
    // below the sphere (the fine one is within 0.5 % of it).
    let dir = body_dir(&coarse);
    let r0 = 3000.0;
    let (t, p, _) = {
        let launch =
            LaunchState::from_state("drop", Point3::from(dir * r0), Vector3::zeros()).unwrap();
        let rep = fly(&body, &launch, &settings(), &AtomicBool::new(false));
        assert_eq!(rep.outcome, Outcome::Landed);
        (
            rep.first_contact_time_s.unwrap(),
            Point3::from(rep.landing.unwrap().pos_body_m),
            0,
        )
    };
    // The fine surface along that ray (an exact geometric query of the fine mesh).
    let expected = fine
        .ray_first_hit(&Point3::from(dir * r0), &(-dir), r0)
        .unwrap()
        .point_m;
    assert!((p - expected).norm() < 1e-6, "{p:?} vs {expected:?}");
    let coarse_r = coarse
        .shape
        .ray_first_hit(&Point3::from(dir * r0), &(-dir), r0)
        .unwrap()
        .point_m
        .coords
        .norm();
    assert!(
        expected.coords.norm() - coarse_r > 50.0,
        "the two surfaces must be told apart"
    );
    // Gravity still comes from the gravity model (a point mass here): the fall time to the
    // fine surface matches the closed form.
    let t_exact = radial_fall_time_s(r0, expected.coords.norm(), gm);
    assert!((t - t_exact).abs() < 1e-6 * t_exact, "{t} vs {t_exact}");
}

/// The unit direction through the centroid of the coarse sphere's face 0.
fn body_dir(body: &Body) -> Vector3<f64> {
    body.shape.face_centroid(0).coords.normalize()
}

#[test]
fn patch_above_the_body_catches_impacts_in_its_footprint_and_the_body_outside() {
    // A 2 m cube without gravity and a 1 m square patch at z = 1.5 m. Straight lines at
    // 0.5 m/s: reaching z from z0 takes (z0 - z) / 0.5 s (uniform motion).
    let body =
        gravity_free_box().with_contact(ContactShape::Patch(patch(flat_patch(1.0, 1.5, 4, 0.0))));
    let down = Vector3::new(0.0, 0.0, -0.5);
    let (t, p, face) = straight_drop(&body, Point3::new(0.1, 0.2, 10.0), down);
    assert!((t - 17.0).abs() < 1e-6, "{t}");
    assert!((p.z - 1.5).abs() < 1e-9, "{p:?}");
    assert!(face >= body.shape.face_count(), "a patch face: {face}");
    // Outside the footprint (the ray from the centre through (0.8, 0.8, 1) passes z = 1.5 at
    // (1.2, 1.2), off the patch): the box's top face at z = 1.
    assert!(!body.in_patch_footprint(&Point3::new(0.8, 0.8, 1.0)));
    let (t, p, face) = straight_drop(&body, Point3::new(0.8, 0.8, 10.0), down);
    assert!((t - 18.0).abs() < 1e-6, "{t}");
    assert!((p.z - 1.0).abs() < 1e-9, "{p:?}");
    assert!(face < body.shape.face_count());
    // A site by latitude and longitude within the footprint stands on the patch.
    let site = Site::from_lat_lon(&body, 90.0, 0.0, NormalMode::Face).unwrap();
    assert!(
        (site.point_body_m.z - 1.5).abs() < 1e-9,
        "{:?}",
        site.point_body_m
    );
    assert!((site.frame.up.z - 1.0).abs() < 1e-12);
}

#[test]
fn patch_below_the_body_surface_is_the_ground_within_its_footprint() {
    // The 0.4 m patch at z = 0.5 m lies inside the cube: within its footprint (at z = 1 the
    // square |x|, |y| <= 0.4) the cube's top face is ignored and the fall goes on to the
    // patch, 0.5 m further (1 s at 0.5 m/s).
    let body =
        gravity_free_box().with_contact(ContactShape::Patch(patch(flat_patch(0.4, 0.5, 3, 0.0))));
    let down = Vector3::new(0.0, 0.0, -0.5);
    let (t, p, _) = straight_drop(&body, Point3::new(0.1, 0.2, 10.0), down);
    assert!((t - 19.0).abs() < 1e-6, "{t}");
    assert!((p.z - 0.5).abs() < 1e-9, "{p:?}");
    assert!(!body.in_patch_footprint(&Point3::new(0.9, -0.9, 1.0)));
    // Outside the footprint the cube's face catches it.
    let (t, _, _) = straight_drop(&body, Point3::new(0.9, -0.9, 10.0), down);
    assert!((t - 18.0).abs() < 1e-6, "{t}");
}

#[test]
fn bumpy_patch_impact_lies_on_the_patch_face_it_names() {
    let body =
        gravity_free_box().with_contact(ContactShape::Patch(patch(flat_patch(1.0, 1.5, 6, 0.05))));
    let p0 = Point3::new(0.07, -0.11, 10.0);
    let (_, p, face) = straight_drop(&body, p0, Vector3::new(0.0, 0.0, -0.5));
    // The point lies in the plane of the face it names (|n . (p - c)| ~ 0), between the flat
    // and the bumped heights.
    let n = body.contact_face_normal(face);
    let c = body.contact_face_centroid(face);
    assert!(n.dot(&(p - c)).abs() < 1e-9);
    assert!(p.z >= 1.5 - 1e-9 && p.z <= 1.55 + 1e-9, "{p:?}");
    assert!((p.x - 0.07).abs() < 1e-9 && (p.y + 0.11).abs() < 1e-9);
}

#[test]
fn mismatch_check_uses_volume_and_centre_of_mass() {
    let base = shape(generate::icosphere(1000.0, 3));
    let same = base.mass_properties();
    assert!(check_same_body(same, same).is_none());
    // Scaled by 1.05: the volume grows by 1.05³ - 1 = 15.76 % (similar solids).
    let mut big = generate::icosphere(1000.0, 3);
    for p in &mut big.vertices_m {
        *p = Point3::from(p.coords * 1.05);
    }
    let big = shape(big);
    let w = check_same_body(same, big.mass_properties()).unwrap();
    assert!(w.contains("+15.76 %"), "{w}");
    // Moved by 2 % of the equivalent radius: the centre of mass moves with it.
    let r = same.equivalent_radius_m;
    let moved = base.translated(&Vector3::new(2.0 * SAME_BODY_TOLERANCE * r, 0.0, 0.0));
    let w = check_same_body(same, moved.mass_properties()).unwrap();
    assert!(w.contains("2.00 % of the equivalent radius"), "{w}");
    // Half the tolerance passes.
    let near = base.translated(&Vector3::new(0.5 * SAME_BODY_TOLERANCE * r, 0.0, 0.0));
    assert!(check_same_body(same, near.mass_properties()).is_none());
}

#[test]
fn bad_patches_are_refused_naming_the_problem() {
    let refused = |mesh: Mesh, expected: &str| {
        let e = ShapeModel::new_patch(mesh, Point3::origin())
            .map(|_| ())
            .unwrap_err()
            .to_string();
        assert!(e.contains(expected), "{e:?} lacks {expected:?}");
    };
    refused(generate::box_mesh(1.0, 1.0, 1.0), "no boundary edge");
    // Three faces on one edge.
    let mut fin = flat_patch(1.0, 1.5, 1, 0.0);
    fin.vertices_m.push(Point3::new(0.0, 0.0, 3.0));
    fin.faces.push([0, 3, 4]);
    refused(fin, "non-manifold edge");
    // Two separate squares.
    let mut two = flat_patch(1.0, 1.5, 1, 0.0);
    let other = flat_patch(1.0, 3.0, 1, 0.0);
    let base = two.vertices_m.len() as u32;
    two.vertices_m.extend(other.vertices_m);
    two.faces
        .extend(other.faces.iter().map(|f| f.map(|v| v + base)));
    refused(two, "several separate pieces");
    // A vertical square in a plane through the centre is seen edge-on.
    let edge_on = Mesh {
        vertices_m: vec![
            Point3::new(1.0, 0.0, 0.0),
            Point3::new(2.0, 0.0, 0.0),
            Point3::new(2.0, 0.0, 1.0),
            Point3::new(1.0, 0.0, 1.0),
        ],
        faces: vec![[0, 1, 2], [0, 2, 3]],
    };
    refused(edge_on, "edge-on");
    // A patch written facing the centre is turned outward.
    let mut inward = flat_patch(1.0, 1.5, 2, 0.0);
    for f in &mut inward.faces {
        f.swap(1, 2);
    }
    let (p, warnings) = ShapeModel::new_patch(inward, Point3::origin()).unwrap();
    assert!(p.face_normal(0).z > 0.99);
    assert!(!warnings.is_empty());
    assert!(p.is_patch() && !p.contains(&Point3::new(0.0, 0.0, 1.0)));
}
