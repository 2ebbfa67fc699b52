//! Flights, sites and surface maps on polyhedron bodies.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::launch::{LaunchSpec, LaunchState};
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::surface_map::{SurfaceField, surface_map};
use spinfall_dynamics::{
    Body, BounceModel, FlightSettings, IntegratorSettings, Outcome, Spin, SpinAxis, fly,
};
use spinfall_gravity::{G_SI, MassSpec, Mesh, ShapeModel, generate};

fn demo(subdiv: u32) -> Body {
    let shape = ShapeModel::new(generate::demo_body(subdiv))
        .unwrap()
        .0
        .recentered();
    let axis = SpinAxis::MaxMoment.resolve(&shape).unwrap();
    let spin = Spin::from_hours(spinfall_gravity::demo::PERIOD_H, axis, 0.0).unwrap();
    Body::new(
        "Quillon",
        Arc::new(shape),
        MassSpec::DensityKgM3(spinfall_gravity::demo::DENSITY_KG_M3),
        spin,
    )
    .unwrap()
}

fn tight(max_bounces: u32) -> FlightSettings {
    FlightSettings {
        integrator: IntegratorSettings {
            rel_tol: 1e-12,
            abs_tol_m: 1e-9,
            max_time_s: 2e5,
            ..IntegratorSettings::default()
        },
        bounce: BounceModel {
            normal_restitution: 0.4,
            tangential_restitution: 0.7,
            max_bounces,
            rest_speed_m_s: 0.02,
        },
        ..FlightSettings::default()
    }
}

fn launch(body: &Body, lat: f64, lon: f64, speed_frac: f64, az: f64, el: f64) -> LaunchState {
    let site = Site::from_lat_lon(body, lat, lon, NormalMode::Face).unwrap();
    let speed = speed_frac * site.escape_speed_min_m_s.max(0.1);
    LaunchSpec {
        id: format!("{lat},{lon}"),
        site,
        speed_m_s: speed,
        azimuth_deg: az,
        elevation_deg: el,
        start_altitude_m: 0.05,
    }
    .state()
    .unwrap()
}

#[test]
fn body_and_inertial_frames_agree_and_jacobi_is_conserved_on_demo_body() {
    // Same physics in two frames: the landing points must coincide (to well under a metre on
    // this ~5 km body), and in the rotating frame of a uniformly spinning body the Jacobi
    // integral is conserved (Scheeres, "Orbital Motion in Strongly Perturbed Environments",
    // 2012, ch. 3; a standard result of the restricted problem).
    let body = demo(3);
    for (lat, lon, frac, az, el) in [
        (10.0, 30.0, 0.6, 45.0, 60.0),
        (-35.0, 200.0, 0.8, 270.0, 40.0),
    ] {
        let l = launch(&body, lat, lon, frac, az, el);
        let rep = fly(&body, &l, &tight(3), &AtomicBool::new(false));
        assert!(
            matches!(rep.outcome, Outcome::Landed | Outcome::Escaped),
            "{:?}",
            rep.outcome
        );
        assert!(
            rep.frame_agreement_m < 0.01,
            "frame agreement {} m",
            rep.frame_agreement_m
        );
        assert!(
            rep.jacobi_rel_drift.is_some_and(|d| d < 1e-9),
            "Jacobi drift {:?}",
            rep.jacobi_rel_drift
        );
        assert!(rep.max_altitude_m > 0.0);
        assert!(!rep.trajectory_body.is_empty() && !rep.trajectory_inertial.is_empty());
    }
}

#[test]
fn local_frame_is_right_handed_with_north_toward_the_pole() {
    let body = demo(2);
    let axis = body.spin.axis_body.into_inner();
    for (lat, lon) in [
        (0.0, 0.0),
        (45.0, 90.0),
        (-60.0, -120.0),
        (89.99, 10.0),
        (90.0, 0.0),
        (-90.0, 0.0),
    ] {
        let site = Site::from_lat_lon(&body, lat, lon, NormalMode::Smoothed).unwrap();
        let f = site.frame;
        let (e, n, u) = (f.east.into_inner(), f.north.into_inner(), f.up.into_inner());
        assert!(e.dot(&n).abs() < 1e-12 && e.dot(&u).abs() < 1e-12 && n.dot(&u).abs() < 1e-12);
        assert!(
            (e.cross(&n) - u).norm() < 1e-12,
            "not right-handed at {lat},{lon}"
        );
        if !site.pole_fallback && lat.abs() < 80.0 {
            // North is the spin axis projected on the horizontal: it points toward the pole.
            let proj = axis - u * axis.dot(&u);
            assert!(n.dot(&proj) > 0.0 && (n - proj.normalize()).norm() < 1e-9);
            // East is the direction of rotation: w x r has a positive east component.
            let wxr = body.omega_body_rad_s().cross(&site.point_body_m.coords);
            assert!(wxr.dot(&e) > 0.0, "east against rotation at {lat},{lon}");
        }
    }
}

#[test]
fn pole_site_uses_fallback_and_stays_orthonormal() {
    let body = common::point_mass_sphere(1000.0, 2, 0.5, common::spin_z(3600.0));
    // Face whose normal is closest to the axis: the fallback must kick in only if within 0.06 deg.
    let site = Site::from_lat_lon(&body, 90.0, 0.0, NormalMode::Face).unwrap();
    let up = site.frame.up.into_inner();
    assert_eq!(site.pole_fallback, up.cross(&Vector3::z()).norm() < 1e-3);
    // A hand-made local frame exactly at the pole.
    let (frame, fallback) =
        spinfall_dynamics::site::LocalFrame::new(Vector3::z_axis(), &Vector3::z_axis());
    assert!(fallback);
    assert!((frame.north.into_inner() - Vector3::x()).norm() < 1e-12);
    assert!((frame.east.cross(&frame.north) - Vector3::z()).norm() < 1e-12);
}

#[test]
fn lat_lon_round_trips_on_a_sphere() {
    let body = common::point_mass_sphere(1000.0, 3, 0.5, common::spin_z(3600.0));
    for (lat, lon) in [(0.0, 0.0), (30.0, 45.0), (-70.0, 170.0), (5.0, -100.0)] {
        let site = Site::from_lat_lon(&body, lat, lon, NormalMode::Face).unwrap();
        assert!(
            (site.lat_deg - lat).abs() < 1e-9 && (site.lon_deg - lon).abs() < 1e-9,
            "{lat},{lon} -> {},{}",
            site.lat_deg,
            site.lon_deg
        );
    }
    // Longitude grows in the sense of rotation: lon 90 is body +y for a +z spin axis.
    let s = Site::from_lat_lon(&body, 0.0, 90.0, NormalMode::Face).unwrap();
    assert!(s.point_body_m.y > 900.0);
    assert!(Site::from_lat_lon(&body, 91.0, 0.0, NormalMode::Face).is_err());
    assert!(Site::from_face(&body, 1_000_000, NormalMode::Face).is_err());
}

/// A closed, outward mesh of the union of unit voxels (cells `[i, i+1] x [j, j+1] x [k, k+1]`
/// metres): a face wherever a filled cell meets an empty one.
fn voxel_mesh(filled: &dyn Fn(i32, i32, i32) -> bool, lo: [i32; 3], hi: [i32; 3]) -> Mesh {
    let mut mesh = Mesh::default();
    let mut index = std::collections::HashMap::new();
    let mut vertex = |p: [i32; 3], mesh: &mut Mesh| -> u32 {
        *index.entry(p).or_insert_with(|| {
            mesh.vertices_m
                .push(nalgebra::Point3::new(p[0] as f64, p[1] as f64, p[2] as f64));
            (mesh.vertices_m.len() - 1) as u32
        })
    };
    for i in lo[0]..hi[0] {
        for j in lo[1]..hi[1] {
            for k in lo[2]..hi[2] {
                if !filled(i, j, k) {
                    continue;
                }
                for axis in 0..3 {
                    for sign in [-1, 1] {
                        let mut n = [i, j, k];
                        n[axis] += sign;
                        if filled(n[0], n[1], n[2]) {
                            continue;
                        }
                        // Corner p0 of the face, then the two other axes (u x v = axis).
                        let mut p0 = [i, j, k];
                        if sign > 0 {
                            p0[axis] += 1;
                        }
                        let (u, v) = ((axis + 1) % 3, (axis + 2) % 3);
                        let mut pu = p0;
                        pu[u] += 1;
                        let mut pv = p0;
                        pv[v] += 1;
                        let mut puv = pu;
                        puv[v] += 1;
                        let mut quad = [p0, pu, puv, pv].map(|p| vertex(p, &mut mesh));
                        if sign < 0 {
                            quad.reverse();
                        }
                        mesh.faces.push([quad[0], quad[1], quad[2]]);
                        mesh.faces.push([quad[0], quad[2], quad[3]]);
                    }
                }
            }
        }
    }
    mesh
}

#[test]
fn lat_lon_site_on_non_convex_body_hits_the_outermost_surface() {
    // A "U" of 2 m cubes, one at the origin and one at x in [4, 6] m, joined by a bridge at
    // y in [1, 2] m (one closed surface): the radial line at lat 0, lon 0 crosses the inner
    // cube and the outer one; the site must be on the outer face x = 6 m.
    let filled = |i: i32, j: i32, k: i32| {
        (-1..1).contains(&k)
            && (-1..6).contains(&i)
            && ((-1..1).contains(&j) && !(1..4).contains(&i) || j == 1)
    };
    let mesh = voxel_mesh(&filled, [-2, -2, -2], [7, 3, 2]);
    let body = Body::with_gravity(
        "pair",
        Arc::new(ShapeModel::new(Mesh { ..mesh }).unwrap().0),
        Arc::new(spinfall_dynamics::PointMass { gm_m3_s2: 1e-6 }),
        common::spin_z(3600.0),
    )
    .unwrap();
    let site = Site::from_lat_lon(&body, 0.0, 0.0, NormalMode::Face).unwrap();
    assert!(
        (site.point_body_m.x - 6.0).abs() < 1e-9,
        "{:?}",
        site.point_body_m
    );
    assert!((site.frame.up.into_inner() - Vector3::x()).norm() < 1e-12);
}

#[test]
fn sphere_sheds_equator_only_above_critical_spin() {
    // A homogeneous sphere loses loose equatorial material when w^2 R > GM / R^2, i.e. for
    // periods below sqrt(3 pi / (G rho)) (the spin barrier of rubble piles: Pravec & Harris
    // 2000, Icarus 148:12-20). Margins of 10 % cover the faceting of the icosphere.
    let rho = 2000.0;
    let shape = Arc::new(ShapeModel::new(generate::icosphere(1000.0, 3)).unwrap().0);
    let p_crit = (3.0 * std::f64::consts::PI / (G_SI * rho)).sqrt();
    let make = |period_s: f64| {
        Body::new(
            "s",
            shape.clone(),
            MassSpec::DensityKgM3(rho),
            Spin {
                period_s,
                axis_body: Vector3::z_axis(),
                phase_rad: 0.0,
            },
        )
        .unwrap()
    };
    assert!((make(1e4).figures().critical_period_s - p_crit).abs() < 0.02 * p_crit);
    let no = AtomicBool::new(false);
    let fast = surface_map(&make(0.9 * p_crit), &|_, _| {}, &no).unwrap();
    let slow = surface_map(&make(1.1 * p_crit), &|_, _| {}, &no).unwrap();
    let equatorial: Vec<usize> = (0..shape.face_count())
        .filter(|&f| shape.face_centroid(f).z.abs() < 100.0)
        .collect();
    assert!(!equatorial.is_empty());
    assert!(equatorial.iter().all(|&f| fast.radial_sign[f] > 0.0));
    assert!(slow.radial_sign.iter().all(|&s| s < 0.0));
    // Slope on the slow sphere is small everywhere (gravity is radial there except for spin).
    let (_, max_slope) = slow.range(SurfaceField::Slope).unwrap();
    assert!(max_slope < 60.0);
}

#[test]
fn surface_map_escape_speeds_match_closed_forms_on_a_point_mass_sphere() {
    // For a point mass, U = GM/r: along the normal at the equator the launch with speed v gives
    // inertial speed v + w r (w x r is horizontal, so sqrt(v^2 + (w r)^2)) — zero energy when
    // v^2 + (w r)^2 = 2 GM / r; the minimum over directions is sqrt(2GM/r) - w r.
    let gm = 5.0;
    let body = common::point_mass_sphere(1000.0, 2, gm, common::spin_z(50.0 * 3600.0));
    let map = surface_map(&body, &|_, _| {}, &AtomicBool::new(false)).unwrap();
    let w = body.spin.rate_rad_s();
    for f in 0..body.shape.face_count() {
        let r = body.shape.face_centroid(f);
        let n = body.shape.face_normal(f).into_inner();
        let wxr = Vector3::new(0.0, 0.0, w).cross(&r.coords);
        let u = gm / r.coords.norm();
        let v_min = (2.0 * u).sqrt() - wxr.norm();
        assert!(
            (map.escape_speed_min_m_s[f] - v_min).abs() < 1e-12,
            "{} vs {v_min}",
            map.escape_speed_min_m_s[f]
        );
        let v = map.escape_speed_normal_m_s[f];
        assert!(((v * n + wxr).norm_squared() - 2.0 * u).abs() < 1e-12);
        // Geopotential sign convention: -(U + |w x r|^2 / 2).
        assert!((map.geopotential_m2_s2[f] + u + 0.5 * wxr.norm_squared()).abs() < 1e-12);
    }
    let cancelled = surface_map(&body, &|_, _| {}, &AtomicBool::new(true));
    assert!(cancelled.is_err());
}

#[test]
fn max_moment_axis_of_an_ellipsoid_is_its_short_axis() {
    // For a homogeneous ellipsoid the largest moment is about the shortest semi-axis.
    let shape = ShapeModel::new(generate::ellipsoid(1500.0, 1000.0, 700.0, 3))
        .unwrap()
        .0;
    let axis = SpinAxis::MaxMoment.resolve(&shape).unwrap();
    assert!(axis.z > 0.999, "{axis:?}");
    let custom = SpinAxis::Vector([0.0, 0.0, -2.0]).resolve(&shape).unwrap();
    assert!((custom.into_inner() + Vector3::z()).norm() < 1e-12);
    assert!(SpinAxis::Vector([0.0, 0.0, 0.0]).resolve(&shape).is_err());
    let _ = Point3::<f64>::origin();
}
