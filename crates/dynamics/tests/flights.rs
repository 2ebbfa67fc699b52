//! Flights against closed-form solutions and physical laws.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::f64::consts::PI;
use std::sync::atomic::AtomicBool;

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::launch::LaunchState;
use spinfall_dynamics::{BounceModel, FlightSettings, IntegratorSettings, Outcome, fly};

use common::*;

fn settings(rel_tol: f64, max_time_s: f64, bounce: BounceModel) -> FlightSettings {
    FlightSettings {
        integrator: IntegratorSettings {
            rel_tol,
            abs_tol_m: 1e-9,
            max_time_s,
            ..IntegratorSettings::default()
        },
        bounce,
        ..FlightSettings::default()
    }
}

fn stick() -> BounceModel {
    BounceModel {
        normal_restitution: 0.0,
        tangential_restitution: 0.0,
        max_bounces: 0,
        rest_speed_m_s: 0.0,
    }
}

/// Time since periapsis on an ellipse at true anomaly `nu` (Kepler's equation; Vallado,
/// "Fundamentals of Astrodynamics and Applications", 4th ed., sec. 2.2–2.3).
fn time_since_periapsis(nu: f64, e: f64, a: f64, mu: f64) -> f64 {
    let ecc_anom = 2.0 * (((1.0 - e) / (1.0 + e)).sqrt() * (nu / 2.0).tan()).atan();
    let ecc_anom = if ecc_anom < 0.0 {
        ecc_anom + 2.0 * PI
    } else {
        ecc_anom
    };
    (ecc_anom - e * ecc_anom.sin()) / (mu / a.powi(3)).sqrt()
}

#[test]
fn ballistic_arc_on_non_rotating_sphere_matches_kepler() {
    let body = point_mass_sphere(1000.0, 3, 0.5, no_spin());
    kepler_arc(&body, 1e-5, 1e-7);
}

#[test]
fn ballistic_arc_in_polyhedron_field_of_refined_sphere_matches_kepler_loosely() {
    // Outside a homogeneous sphere the field is that of a point mass (Newton's shell theorem);
    // the faceted icosphere departs from it by its small faceting, hence the looser tolerance.
    let shape = common::shape(spinfall_gravity::generate::icosphere(1000.0, 3));
    let body = spinfall_dynamics::Body::new(
        "ball",
        shape,
        spinfall_gravity::MassSpec::DensityKgM3(2000.0),
        no_spin(),
    )
    .unwrap();
    kepler_arc(&body, 2e-3, 2e-3);
}

fn kepler_arc(body: &spinfall_dynamics::Body, tof_rel_tol: f64, angle_tol: f64) {
    let gm = body.gm_m3_s2();
    let body = body.clone();
    // Launch from just above a face centroid, 45 deg elevation, 60 % of the escape speed.
    let site = spinfall_dynamics::site::Site::from_face(&body, 7, Default::default()).unwrap();
    let p0 = site.point_body_m + site.frame.up.into_inner() * 0.05;
    let v_esc = (2.0 * gm / p0.coords.norm()).sqrt();
    let dir = site.frame.direction(0.3, 45f64.to_radians());
    let launch = LaunchState::from_state("k", p0, dir * 0.6 * v_esc).unwrap();
    let rep = fly(
        &body,
        &launch,
        &settings(1e-12, 1e6, stick()),
        &AtomicBool::new(false),
    );
    assert_eq!(rep.outcome, Outcome::Landed, "{:?}", rep.outcome);
    let hit = Point3::from(Vector3::from(rep.landing.as_ref().unwrap().pos_body_m));
    // Two-body conic from the launch state (Vallado sec. 2.2): angular momentum, energy,
    // eccentricity, semi-major axis; true anomalies from the orbit equation r = p / (1 + e cos nu).
    let (rv, vv) = (p0.coords, launch.vel_body_m_s);
    let hmom = rv.cross(&vv).norm();
    let energy = 0.5 * vv.norm_squared() - gm / rv.norm();
    let a = -gm / (2.0 * energy);
    let p = hmom * hmom / gm;
    let e = (1.0 - p / a).sqrt();
    let nu0 = ((p / rv.norm() - 1.0) / e).clamp(-1.0, 1.0).acos(); // ascending: r.v > 0
    let nu1 = 2.0 * PI - ((p / hit.coords.norm() - 1.0) / e).clamp(-1.0, 1.0).acos(); // descending
    let tof = time_since_periapsis(nu1, e, a, gm) - time_since_periapsis(nu0, e, a, gm);
    let t = rep.first_contact_time_s.unwrap();
    assert!(
        (t - tof).abs() < tof_rel_tol * tof,
        "time of flight {t} s vs Kepler {tof} s"
    );
    // Range: the central angle swept equals nu1 - nu0.
    let swept = rv.angle(&hit.coords);
    assert!(
        (swept - (nu1 - nu0)).abs() < angle_tol,
        "swept {swept} vs {}",
        nu1 - nu0
    );
    assert!(
        rep.frame_agreement_m < 1e-3,
        "frame agreement {}",
        rep.frame_agreement_m
    );
}

#[test]
fn launch_just_below_escape_speed_lands_and_just_above_escapes() {
    // Escape speed sqrt(2 GM / r) (energy conservation, two-body problem; Vallado sec. 1.3).
    let (r, gm): (f64, f64) = (1000.0, 0.5);
    let body = point_mass_sphere(r, 2, gm, no_spin());
    let site = spinfall_dynamics::site::Site::from_face(&body, 3, Default::default()).unwrap();
    let p0 = site.point_body_m + site.frame.up.into_inner() * 0.05;
    let v_esc = (2.0 * gm / p0.coords.norm()).sqrt();
    let radial = p0.coords.normalize();
    let s = settings(1e-11, 1e9, stick());
    let low = fly(
        &body,
        &LaunchState::from_state("lo", p0, radial * 0.98 * v_esc).unwrap(),
        &s,
        &AtomicBool::new(false),
    );
    let high = fly(
        &body,
        &LaunchState::from_state("hi", p0, radial * 1.02 * v_esc).unwrap(),
        &s,
        &AtomicBool::new(false),
    );
    assert_eq!(low.outcome, Outcome::Landed, "{:?}", low.outcome);
    assert_eq!(high.outcome, Outcome::Escaped, "{:?}", high.outcome);
}

fn circular_orbit_returns(period_spin_s: f64) {
    // Kepler's third law: a circular orbit of radius a has period 2 pi sqrt(a^3 / GM).
    let (r, gm): (f64, f64) = (1000.0, 0.5);
    let spin = spin_z(period_spin_s);
    let body = point_mass_sphere(r, 2, gm, spin);
    let a: f64 = 3000.0;
    let period = 2.0 * PI * (a.powi(3) / gm).sqrt();
    let p_body = Point3::new(a * 0.6, a * 0.8, 0.0);
    // Circular velocity in an inclined plane, inertial; then the velocity relative to the body
    // at t = 0: v_body = R^T v_inertial - w x r.
    let p_in = body.pos_inertial_from_body(0.0, &p_body);
    let plane_normal = Vector3::new(0.2, -0.1, 1.0).normalize();
    let v_in = plane_normal.cross(&p_in.coords).normalize() * (gm / a).sqrt();
    let v_body = body.vel_body_from_inertial(0.0, &p_in, &v_in);
    let launch = LaunchState::from_state("orbit", p_body, v_body).unwrap();
    let rep = fly(
        &body,
        &launch,
        &settings(1e-12, period, stick()),
        &AtomicBool::new(false),
    );
    assert_eq!(rep.outcome, Outcome::StillFlying);
    assert!((rep.end_time_s - period).abs() < 1e-6);
    // Body-frame integration, mapped to inertial, is back at its start after one period.
    let end_body = Point3::from(Vector3::from(rep.final_pos_body_m));
    let end_in = body.pos_inertial_from_body(period, &end_body);
    assert!(
        (end_in - p_in).norm() < 1e-6 * a,
        "body frame: off by {} m",
        (end_in - p_in).norm()
    );
    // The inertial integration too.
    let last = rep.trajectory_inertial.last().unwrap();
    assert!((last.t_s - period).abs() < 1e-6);
    let end_in2 = Point3::from(Vector3::from(last.pos_m));
    assert!(
        (end_in2 - p_in).norm() < 1e-6 * a,
        "inertial: off by {} m",
        (end_in2 - p_in).norm()
    );
}

#[test]
fn circular_orbit_period_in_both_frames_non_rotating() {
    circular_orbit_returns(1e15);
}

#[test]
fn circular_orbit_period_in_both_frames_of_spinning_point_mass() {
    circular_orbit_returns(3.0 * 3600.0);
}

#[test]
fn impact_time_of_radial_free_fall_within_a_microsecond() {
    // Radial fall from rest at r0 toward a point mass reaches r after
    // t = sqrt(r0^3 / (2 GM)) (sqrt(x (1 - x)) + acos(sqrt(x))), x = r / r0 (the degenerate
    // Kepler ellipse; e.g. Vallado sec. 2.2, or derived from energy conservation).
    let gm = 0.02;
    let box_body = {
        let s = common::shape(spinfall_gravity::generate::box_mesh(2.0, 2.0, 2.0));
        spinfall_dynamics::Body::with_gravity(
            "box",
            s,
            std::sync::Arc::new(spinfall_dynamics::PointMass { gm_m3_s2: gm }),
            no_spin(),
        )
        .unwrap()
    };
    let r0 = 10.0;
    let launch =
        LaunchState::from_state("drop", Point3::new(0.0, 0.0, r0), Vector3::zeros()).unwrap();
    let rep = fly(
        &box_body,
        &launch,
        &settings(1e-13, 1e6, stick()),
        &AtomicBool::new(false),
    );
    assert_eq!(rep.outcome, Outcome::Landed);
    let x: f64 = 1.0 / r0;
    let t_exact = (r0.powi(3) / (2.0 * gm)).sqrt() * ((x * (1.0 - x)).sqrt() + x.sqrt().acos());
    let t = rep.first_contact_time_s.unwrap();
    assert!(
        (t - t_exact).abs() < 1e-6,
        "impact at {t} s, exact {t_exact} s"
    );
}

#[test]
fn straight_line_impact_on_box_face_is_located_exactly() {
    // Constant velocity, no gravity: the top face z = 1 m is reached at t = (z0 - 1) / |vz|.
    let body = gravity_free_box();
    let launch = LaunchState::from_state(
        "line",
        Point3::new(-0.2, 0.1, 10.0),
        Vector3::new(0.03, 0.01, -0.5),
    )
    .unwrap();
    let rep = fly(
        &body,
        &launch,
        &settings(1e-10, 1e3, stick()),
        &AtomicBool::new(false),
    );
    assert_eq!(rep.outcome, Outcome::Landed);
    let t = rep.first_contact_time_s.unwrap();
    assert!((t - 18.0).abs() < 1e-6, "{t}");
    let p = rep.landing.unwrap().pos_body_m;
    assert!(
        (p[0] - 0.34).abs() < 1e-6 && (p[1] - 0.28).abs() < 1e-6 && (p[2] - 1.0).abs() < 1e-9,
        "{p:?}"
    );
}

#[test]
fn rebound_follows_restitution_coefficients_on_flat_face() {
    // v_n' = -e_n v_n, v_t' = e_t v_t relative to the surface (the definition of the
    // coefficients of restitution, e.g. Brach, "Mechanical Impact Dynamics", 1991).
    let body = gravity_free_box();
    let bounce = BounceModel {
        normal_restitution: 0.5,
        tangential_restitution: 0.8,
        max_bounces: 1,
        rest_speed_m_s: 0.0,
    };
    let v: Vector3<f64> = Vector3::new(0.3, -0.1, -0.4);
    let launch = LaunchState::from_state("b", Point3::new(-0.5, 0.2, 2.0), v).unwrap();
    let rep = fly(
        &body,
        &launch,
        &settings(1e-10, 100.0, bounce),
        &AtomicBool::new(false),
    );
    // With no gravity the rebound leaves for good.
    assert_eq!(rep.outcome, Outcome::Escaped, "{:?}", rep.outcome);
    assert_eq!(rep.contacts.len(), 1);
    let c = &rep.contacts[0];
    let expected: Vector3<f64> = Vector3::new(0.8 * 0.3, -0.8 * 0.1, 0.5 * 0.4);
    assert!((c.rebound_speed_m_s - expected.norm()).abs() < 1e-12);
    assert!((c.impact_speed_m_s - v.norm()).abs() < 1e-12);
    let angle = (0.4 / v.norm()).asin().to_degrees();
    assert!((c.impact_angle_deg - angle).abs() < 1e-9);
    let vf = Vector3::from(rep.final_vel_body_m_s);
    assert!((vf - expected).norm() < 1e-12, "{vf:?}");
    // With max_bounces = 0 the first contact is a rest.
    let bounce2 = BounceModel {
        max_bounces: 0,
        ..bounce
    };
    let rep2 = fly(
        &body,
        &launch,
        &settings(1e-10, 100.0, bounce2),
        &AtomicBool::new(false),
    );
    assert_eq!(rep2.outcome, Outcome::Landed);
    assert!(rep2.contacts[0].rest);
}

#[test]
fn launch_inside_the_body_fails_with_a_reason() {
    let body = gravity_free_box();
    let launch = LaunchState::from_state("in", Point3::new(0.1, 0.0, 0.0), Vector3::x()).unwrap();
    let rep = fly(
        &body,
        &launch,
        &FlightSettings::default(),
        &AtomicBool::new(false),
    );
    match rep.outcome {
        Outcome::Failed { reason } => assert!(reason.contains("inside"), "{reason}"),
        o => panic!("{o:?}"),
    }
}

#[test]
fn cancel_flag_stops_a_flight() {
    let body = point_mass_sphere(1000.0, 2, 0.5, no_spin());
    let launch = LaunchState::from_state(
        "c",
        Point3::new(3000.0, 0.0, 0.0),
        Vector3::new(0.0, 0.0129, 0.0),
    )
    .unwrap();
    let rep = fly(
        &body,
        &launch,
        &FlightSettings::default(),
        &AtomicBool::new(true),
    );
    assert!(
        matches!(rep.outcome, Outcome::Failed { .. }),
        "{:?}",
        rep.outcome
    );
}

#[test]
fn step_limit_gives_failed_not_a_hang() {
    let body = point_mass_sphere(1000.0, 2, 0.5, no_spin());
    let launch = LaunchState::from_state(
        "c",
        Point3::new(3000.0, 0.0, 0.0),
        Vector3::new(0.0, 0.0129, 0.0),
    )
    .unwrap();
    let mut s = FlightSettings::default();
    s.integrator.max_steps = 2;
    let rep = fly(&body, &launch, &s, &AtomicBool::new(false));
    match rep.outcome {
        Outcome::Failed { reason } => assert!(reason.contains("step limit"), "{reason}"),
        o => panic!("{o:?}"),
    }
}

#[test]
fn a_failed_launch_reports_the_state_it_reached_in_both_frames() {
    // Regression (issue 9, fault 6): a launch stopped by the step limit used to report its
    // launch state as its final state, a frame agreement of 0 and an end time it never reached.
    // Now: the last state reached, the time it was reached, and both frames compared there.
    let body = point_mass_sphere(1000.0, 2, 0.5, common::spin_z(6.0 * 3600.0));
    let start = Point3::new(3000.0, 0.0, 0.0);
    // A bound, inclined orbit: about the circular speed sqrt(GM / r) in the inertial frame,
    // minus the frame's rotation w x r.
    let v_inertial = Vector3::new(0.0, 0.0125, 0.002);
    let v_body = v_inertial - body.omega_body_rad_s().cross(&start.coords);
    let launch = LaunchState::from_state("c", start, v_body).unwrap();
    let mut s = FlightSettings::default();
    s.integrator.max_steps = 3;
    let rep = fly(&body, &launch, &s, &AtomicBool::new(false));
    assert!(
        matches!(rep.outcome, Outcome::Failed { .. }),
        "{:?}",
        rep.outcome
    );
    // It moved, over a time it really flew (3 steps, each at most period / 8).
    let end = Point3::from(Vector3::from(rep.final_pos_body_m));
    assert!(
        (end - start).norm() > 1.0,
        "final state is the launch state"
    );
    assert!(rep.end_time_s > 0.0 && rep.end_time_s <= 3.0 * body.spin.period_s / 8.0 + 1e-9);
    assert_eq!(rep.end_time_s, rep.trajectory_body.last().unwrap().t_s);
    // The inertial frame was integrated to the same time: its end maps onto the body-frame
    // end within the integrator's tolerance (an independent check of both), and the reported
    // agreement is that distance, not a placeholder.
    let inertial_end = body.pos_body_from_inertial(
        rep.end_time_s,
        &Point3::from(Vector3::from(rep.final_pos_inertial_m)),
    );
    let d = (inertial_end - end).norm();
    assert!(d < 1e-3, "frames disagree by {d} m");
    assert_eq!(rep.frame_agreement_m, d);
    assert!(rep.frame_agreement_m > 0.0);
}

#[test]
fn launch_from_exactly_on_the_surface_is_not_an_impact() {
    let body = point_mass_sphere(1000.0, 2, 50.0, common::spin_z(50.0 * 3600.0));
    let site = spinfall_dynamics::site::Site::from_face(&body, 11, Default::default()).unwrap();
    let launch = spinfall_dynamics::launch::LaunchSpec {
        id: "flat".into(),
        site,
        speed_m_s: 0.1,
        azimuth_deg: 30.0,
        elevation_deg: 50.0,
        start_altitude_m: 0.0,
    }
    .state()
    .unwrap();
    let rep = fly(
        &body,
        &launch,
        &FlightSettings::default(),
        &AtomicBool::new(false),
    );
    assert_eq!(rep.outcome, Outcome::Landed, "{:?}", rep.outcome);
    // Time of flight of a hop: about 2 v sin(el) / g = 2 * 0.077 / 5e-5 ~ 3000 s, far from 0.
    assert!(
        rep.first_contact_time_s.unwrap() > 100.0,
        "{:?}",
        rep.first_contact_time_s
    );
}

#[test]
fn particle_at_rest_on_the_synchronous_orbit_stays_put_in_the_body_frame() {
    // On the equator at r = (GM / w^2)^(1/3) gravity balances the centrifugal acceleration:
    // an equilibrium of the rotating frame (the stationary orbit; e.g. Scheeres 2012, ch. 3).
    let gm = 50.0;
    let body = point_mass_sphere(1000.0, 2, gm, common::spin_z(20.0 * 3600.0));
    let r_sync = body.figures().synchronous_radius_m;
    let w = body.spin.rate_rad_s();
    assert!((gm / (r_sync * r_sync) - w * w * r_sync).abs() < 1e-12 * gm / (r_sync * r_sync));
    let start = Point3::new(r_sync * 0.6, -r_sync * 0.8, 0.0);
    let launch = LaunchState::from_state("sync", start, Vector3::zeros()).unwrap();
    let period = body.spin.period_s;
    let rep = fly(
        &body,
        &launch,
        &settings(1e-12, period, stick()),
        &AtomicBool::new(false),
    );
    assert_eq!(rep.outcome, Outcome::StillFlying);
    let end = Point3::from(Vector3::from(rep.final_pos_body_m));
    // The equilibrium is unstable, so allow a little growth of round-off over one period.
    assert!(
        (end - start).norm() < 1e-3,
        "drifted {} m",
        (end - start).norm()
    );
}
