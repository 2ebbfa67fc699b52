//! Sunlight and the solar tide against closed forms and physical laws: constant-acceleration
//! motion, the tide as the gradient of a harmonic potential and as the difference of two exact
//! point-mass attractions, grains blown off the body, shadow entry and exit, the work of the
//! forces, the surface map's sunlight layer, and the scenario keys with their bad values.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod common;

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use nalgebra::{Point3, Unit, Vector3};
use spinfall_dynamics::launch::LaunchState;
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::sunlight::{Particle, Sun, tidal_acceleration, tidal_potential};
use spinfall_dynamics::surface_map::{SurfaceField, sunlight_map, surface_map};
use spinfall_dynamics::{
    Body, BounceModel, FlightReport, FlightSettings, IntegratorSettings, Outcome, Spin, fly,
    fly_all,
};
use spinfall_gravity::{MassSpec, generate};

use common::*;

// Constants written out here, from their sources, so that a wrong constant in the library fails
// the tests: nominal total solar irradiance and solar mass parameter (IAU 2015 Resolution B3),
// the astronomical unit (IAU 2012 Resolution B2), the speed of light (SI, exact).
const S0_W_M2: f64 = 1361.0;
const C_M_S: f64 = 299_792_458.0;
const AU_M: f64 = 149_597_870_700.0;
const GM_SUN: f64 = 1.3271244e20;

/// Radiation-pressure acceleration of a sphere, `C_R (S0/c) (1 AU/d)^2 * 3/(4 r rho)` (the
/// cannonball model; e.g. Montenbruck & Gill, "Satellite Orbits", 2000, sec. 3.4).
fn expected_srp(p: &Particle, distance_au: f64) -> f64 {
    p.radiation_pressure_coefficient * (S0_W_M2 / C_M_S) / (distance_au * distance_au) * 3.0
        / (4.0 * p.radius_m * p.density_kg_m3)
}

/// A grain of density 1000 kg/m^3, C_R = 1, whose radiation-pressure acceleration at 1 AU is
/// `a_m_s2`.
fn grain_with(a_m_s2: f64) -> Particle {
    let rho = 1000.0;
    Particle {
        radius_m: (S0_W_M2 / C_M_S) * 3.0 / (4.0 * rho * a_m_s2),
        density_kg_m3: rho,
        radiation_pressure_coefficient: 1.0,
    }
}

fn sun_x(radiation_pressure: bool, shadow: bool, tide: bool, distance_au: f64) -> Sun {
    Sun {
        direction_inertial: [1.0, 0.0, 0.0],
        distance_au,
        radiation_pressure,
        shadow,
        tide,
    }
}

fn settings(max_time_s: f64, sun: Option<Sun>) -> FlightSettings {
    FlightSettings {
        integrator: IntegratorSettings {
            rel_tol: 1e-12,
            abs_tol_m: 1e-9,
            abs_tol_m_s: Some(1e-12),
            max_time_s,
            ..IntegratorSettings::default()
        },
        bounce: BounceModel {
            normal_restitution: 0.0,
            tangential_restitution: 0.0,
            max_bounces: 0,
            rest_speed_m_s: 0.0,
        },
        sun,
        ..FlightSettings::default()
    }
}

/// A 2 km cube with no gravity and no spin: straight lines unless the Sun pushes.
fn big_gravity_free_box() -> Body {
    Body::with_gravity(
        "box",
        shape(generate::box_mesh(2000.0, 2000.0, 2000.0)),
        Arc::new(NoGravity),
        no_spin(),
    )
    .unwrap()
}

fn state(id: &str, p: [f64; 3], v: [f64; 3], particle: Option<Particle>) -> LaunchState {
    LaunchState::from_state(id, Point3::from(p), Vector3::from(v))
        .unwrap()
        .with_particle(particle)
}

fn go(body: &Body, launch: &LaunchState, s: &FlightSettings) -> FlightReport {
    fly(body, launch, s, &AtomicBool::new(false))
}

#[test]
fn the_library_constants_give_the_published_radiation_pressure() {
    // The closed form with the constants of IAU 2015 B3 / IAU 2012 B2 written above.
    let p = Particle {
        radius_m: 5e-5,
        density_kg_m3: 2500.0,
        radiation_pressure_coefficient: 1.3,
    };
    for d in [0.5, 1.0, 2.7] {
        let a = p.radiation_pressure_m_s2(d);
        let want = expected_srp(&p, d);
        assert!((a - want).abs() <= 1e-14 * want, "{a} vs {want} at {d} AU");
    }
    assert_eq!(p.area_to_mass_m2_kg(), 3.0 / (4.0 * 5e-5 * 2500.0));
    let sun = sun_x(true, true, true, 1.5);
    let rate = GM_SUN / (1.5 * AU_M).powi(3);
    assert!((sun.tide_rate_s2() - rate).abs() <= 1e-14 * rate);
}

#[test]
fn radiation_pressure_alone_gives_constant_acceleration_motion() {
    // Far from a body with no gravity, always in sunlight: x = x0 + v0 t + a t^2 / 2 with
    // a = -a_rp s (Newton's second law with a constant force).
    let body = big_gravity_free_box();
    let grain = grain_with(1e-4);
    let a_rp = expected_srp(&grain, 1.0);
    let (x0, v0) = ([20_000.0, 3000.0, -500.0], [-1.0, 0.2, 0.1]);
    let t = 600.0;
    let s = settings(t, Some(sun_x(true, true, false, 1.0)));
    let rep = go(&body, &state("far", x0, v0, Some(grain)), &s);
    assert_eq!(rep.outcome, Outcome::StillFlying, "{:?}", rep.outcome);
    assert!(rep.shadow_events.is_empty(), "{:?}", rep.shadow_events);
    let a = [-a_rp, 0.0, 0.0];
    for k in 0..3 {
        let want = x0[k] + v0[k] * t + 0.5 * a[k] * t * t;
        let got = rep.final_pos_inertial_m[k];
        assert!((got - want).abs() < 1e-6, "axis {k}: {got} vs {want}");
        let got_body = rep.final_pos_body_m[k];
        assert!((got_body - want).abs() < 1e-6, "body axis {k}: {got_body}");
        let v_want = v0[k] + a[k] * t;
        assert!((rep.final_vel_inertial_m_s[k] - v_want).abs() < 1e-9);
    }
    // The displacement the Sun caused is far above the tolerance: the check can fail.
    assert!(0.5 * a_rp * t * t > 10.0);
    // Without the Sun the same launch goes straight.
    let plain = go(
        &body,
        &state("far", x0, v0, Some(grain)),
        &settings(t, None),
    );
    assert!((plain.final_pos_inertial_m[0] - (x0[0] + v0[0] * t)).abs() < 1e-6);
}

/// Central-difference gradient of `f` at `r` with step `h`.
fn gradient(f: impl Fn(&Vector3<f64>) -> f64, r: &Vector3<f64>, h: f64) -> Vector3<f64> {
    let mut g = Vector3::zeros();
    for k in 0..3 {
        let mut e = Vector3::zeros();
        e[k] = h;
        g[k] = (f(&(r + e)) - f(&(r - e))) / (2.0 * h);
    }
    g
}

#[test]
fn the_tide_is_the_gradient_of_a_harmonic_potential() {
    // Hill's tidal potential (GM_sun / (2 d^3)) (3 (s.r)^2 - r^2), e.g. Scheeres 2012, "Orbital
    // Motion in Strongly Perturbed Environments", ch. 2 (the Hill problem), written out here.
    let s = Unit::new_normalize(Vector3::new(0.3, -0.8, 0.5));
    let d_m = 1.7 * AU_M;
    let rate = GM_SUN / d_m.powi(3);
    let phi = |r: &Vector3<f64>| 0.5 * rate * (3.0 * s.dot(r).powi(2) - r.norm_squared());
    for r in [
        Vector3::new(1200.0, -300.0, 450.0),
        Vector3::new(-5.0e4, 2.0e4, 7.0e3),
        Vector3::new(0.0, 0.0, 900.0),
    ] {
        let a = tidal_acceleration(&s, rate, &r);
        let g = gradient(phi, &r, 1e-3 * r.norm());
        assert!((a - g).norm() <= 1e-9 * a.norm(), "{a} vs {g}");
        assert!((tidal_potential(&s, rate, &r) - phi(&r)).abs() <= 1e-14 * phi(&r).abs());
        // The tensor of second derivatives (the Jacobian of the acceleration): symmetric and
        // traceless, since the potential solves Laplace's equation outside the Sun.
        let h = 1e-3 * r.norm();
        let mut t = nalgebra::Matrix3::zeros();
        for j in 0..3 {
            let mut e = Vector3::zeros();
            e[j] = h;
            let col = (tidal_acceleration(&s, rate, &(r + e))
                - tidal_acceleration(&s, rate, &(r - e)))
                / (2.0 * h);
            t.set_column(j, &col);
        }
        assert!(t.trace().abs() <= 1e-9 * rate, "trace {}", t.trace());
        assert!((t - t.transpose()).norm() <= 1e-9 * rate);
        // And it is not zero: 3 s s^T - I has eigenvalues 2, -1, -1 times the rate.
        assert!((t * s.into_inner() - s.into_inner() * (2.0 * rate)).norm() <= 1e-9 * rate);
    }
}

#[test]
fn the_tide_matches_the_difference_of_exact_solar_attractions_to_second_order() {
    // The exact relative acceleration of a grain at r from the body's centre, with the Sun at
    // D = d s: GM (D - r)/|D - r|^3 - GM D/|D|^3 (Newton). Hill's term is its first-order
    // expansion in r/d, so the remainder is O((GM/d^2) (r/d)^2): it shrinks 4 times when r halves.
    let s = Unit::new_normalize(Vector3::new(-0.2, 0.6, 0.77));
    let d_m = 0.9 * AU_M;
    let sun_at = s.into_inner() * d_m;
    let exact = |r: &Vector3<f64>| {
        let to_sun = sun_at - r;
        to_sun * (GM_SUN / to_sun.norm().powi(3)) - sun_at * (GM_SUN / d_m.powi(3))
    };
    let rate = GM_SUN / d_m.powi(3);
    let dir = Vector3::new(0.48, 0.36, -0.8).normalize();
    let mut last: Option<f64> = None;
    for r_m in [4e7, 2e7, 1e7] {
        let r = dir * r_m;
        let err = (exact(&r) - tidal_acceleration(&s, rate, &r)).norm();
        let scale = GM_SUN / (d_m * d_m) * (r_m / d_m).powi(2);
        assert!(err <= 3.0 * scale, "remainder {err} vs {scale}");
        // The Hill term itself is first order: far larger than the remainder.
        assert!(tidal_acceleration(&s, rate, &r).norm() > 1e3 * err);
        if let Some(prev) = last {
            let ratio = prev / err;
            assert!(
                (3.8..4.2).contains(&ratio),
                "halving r divided the remainder by {ratio}"
            );
        }
        last = Some(err);
    }
}

/// A 100 m polyhedral sphere (320 faces) of density 2000 kg/m^3, slow spin about +z, phase 0
/// (the body frame is the inertial frame at t = 0).
fn pebble(period_h: f64) -> Body {
    let spin = Spin::from_hours(period_h, Vector3::z_axis(), 0.0).unwrap();
    Body::new(
        "pebble",
        shape(generate::icosphere(100.0, 2)),
        MassSpec::DensityKgM3(2000.0),
        spin,
    )
    .unwrap()
}

#[test]
fn a_grain_pushed_harder_than_gravity_is_blown_away_from_the_terminator() {
    let body = pebble(50.0);
    let g_surface = body.gm_m3_s2() / 100.0_f64.powi(2);
    // Radiation pressure 50 times the surface gravity (a dust grain of ~2 um on this body).
    let grain = grain_with(50.0 * g_surface);
    assert!(grain.radiation_pressure_m_s2(1.0) > 10.0 * g_surface);
    // The terminator for a Sun along +x is the great circle through +y and +z; launch slowly
    // (0.03 m/s, well below the ~0.1 m/s escape speed) straight up from longitude 90.
    let site = Site::from_lat_lon(&body, 0.0, 90.0, NormalMode::Face).unwrap();
    let launch = spinfall_dynamics::launch::LaunchSpec {
        id: "dust".into(),
        site,
        speed_m_s: 0.03,
        azimuth_deg: 0.0,
        elevation_deg: 90.0,
        start_altitude_m: 0.05,
    }
    .state()
    .unwrap()
    .with_particle(Some(grain));
    let sunny = settings(20_000.0, Some(sun_x(true, true, true, 1.0)));
    let rep = go(&body, &launch, &sunny);
    assert_eq!(rep.outcome, Outcome::Escaped, "{:?}", rep.outcome);
    // Anti-sunward: the inertial velocity at escape points away from the Sun (+x).
    let v = Vector3::from(rep.final_vel_inertial_m_s);
    assert!(v.x / v.norm() < -0.95, "escape velocity {v}");
    assert!(
        rep.final_pos_inertial_m[0] < -100.0,
        "{:?}",
        rep.final_pos_inertial_m
    );
    assert!(rep.frame_agreement_m < 1e-4, "{}", rep.frame_agreement_m);
    // The Jacobi integral does not hold; the Sun added energy instead.
    assert_eq!(rep.jacobi_rel_drift, None);
    assert!(rep.energy_added_m2_s2.unwrap() > 0.0);

    // The same launch without sunlight falls back (Newton: slower than escape speed).
    let dark = go(&body, &launch, &settings(20_000.0, None));
    assert_eq!(dark.outcome, Outcome::Landed, "{:?}", dark.outcome);
    assert!(dark.jacobi_rel_drift.is_some_and(|d| d < 1e-8));
    assert_eq!(dark.energy_added_m2_s2, None);
}

/// Shadow geometry: the Sun along +x, a 2 km cube with no gravity, a grain moving along +y
/// behind it (x < -1000 m) at 1 m/s: it enters the square shadow at y = -1000 m and leaves it at
/// y = +1000 m. The push (-x) does not change y, so the times are exact: 2000 s and 4000 s.
#[test]
fn shadow_entry_and_exit_are_located_and_switch_the_push_off_and_on() {
    let body = big_gravity_free_box();
    let grain = grain_with(1e-5);
    let a = expected_srp(&grain, 1.0);
    let x0 = -3000.0;
    let launch = state("behind", [x0, -3000.0, 0.0], [0.0, 1.0, 0.0], Some(grain));
    let t_end = 5000.0;
    let rep = go(
        &body,
        &launch,
        &settings(t_end, Some(sun_x(true, true, false, 1.0))),
    );
    assert_eq!(rep.outcome, Outcome::StillFlying, "{:?}", rep.outcome);
    let ev = &rep.shadow_events;
    assert_eq!(ev.len(), 2, "{ev:?}");
    assert!(ev[0].enters_shadow && !ev[1].enters_shadow);
    assert!((ev[0].t_s - 2000.0).abs() < 1e-4, "entry at {}", ev[0].t_s);
    assert!((ev[1].t_s - 4000.0).abs() < 1e-4, "exit at {}", ev[1].t_s);
    assert!((ev[0].pos_body_m[1] + 1000.0).abs() < 1e-4);
    // No step spans a switch: each event time is the end of an accepted step, so the recorded
    // trajectory has a sample exactly there, in both frames.
    for e in ev {
        assert!(
            rep.trajectory_body.iter().any(|s| s.t_s == e.t_s),
            "{}",
            e.t_s
        );
        assert!(
            rep.trajectory_inertial.iter().any(|s| s.t_s == e.t_s),
            "{}",
            e.t_s
        );
    }
    // Behind the body the grain feels nothing: x follows the piecewise closed form (pushed for
    // 2000 s, coasting 2000 s, pushed 1000 s).
    let v1 = -a * 2000.0;
    let x1 = x0 - 0.5 * a * 2000.0 * 2000.0;
    let x2 = x1 + v1 * 2000.0;
    let x3 = x2 + v1 * 1000.0 - 0.5 * a * 1000.0 * 1000.0;
    let v3 = v1 - a * 1000.0;
    assert!(
        (rep.final_pos_inertial_m[0] - x3).abs() < 1e-5,
        "{} vs {x3}",
        rep.final_pos_inertial_m[0]
    );
    assert!((rep.final_vel_inertial_m_s[0] - v3).abs() < 1e-9);
    assert!((rep.final_pos_body_m[0] - x3).abs() < 1e-5);
    // Without shadow the push never stops (and the difference is far above the tolerance).
    let lit = go(
        &body,
        &launch,
        &settings(t_end, Some(sun_x(true, false, false, 1.0))),
    );
    assert!(lit.shadow_events.is_empty());
    let x_lit = x0 - 0.5 * a * t_end * t_end;
    assert!((lit.final_pos_inertial_m[0] - x_lit).abs() < 1e-5);
    assert!((x_lit - x3).abs() > 1.0);

    // The work-energy theorem: the energy added is the work of the push, here all kinetic
    // (no gravity): v_x^2 / 2 at the end.
    assert_eq!(rep.jacobi_rel_drift, None);
    let added = rep.energy_added_m2_s2.unwrap();
    assert!(
        (added - 0.5 * v3 * v3).abs() <= 1e-6 * 0.5 * v3 * v3,
        "{added}"
    );
}

#[test]
fn the_energy_added_is_the_work_of_the_push_and_the_tidal_potential_difference() {
    // No spin, so the body frame is inertial and the tide a fixed potential: the change of the
    // Jacobi integral v^2/2 - U equals the work of the constant push, a . (x1 - x0), plus the
    // tidal potential difference Phi(x1) - Phi(x0) (work-energy theorem).
    let gm = 2.0;
    let body = point_mass_sphere(200.0, 2, gm, no_spin());
    // A grain pushed at 2e-7 m/s^2 at 0.02 AU (inverse square from its value at 1 AU).
    let grain = grain_with(2e-7 * 0.02 * 0.02);
    let a_rp = expected_srp(&grain, 0.02);
    assert!((a_rp - 2e-7).abs() < 1e-18);
    // At 0.02 AU the tide at 1 km is comparable to the push.
    let sun = Sun {
        direction_inertial: [0.6, 0.0, 0.8],
        distance_au: 0.02,
        radiation_pressure: true,
        shadow: false,
        tide: true,
    };
    let s = Unit::new_normalize(Vector3::new(0.6, 0.0, 0.8));
    let rate = GM_SUN / (0.02 * AU_M).powi(3);
    let x0 = [900.0, -400.0, 300.0];
    let rep = go(
        &body,
        &state("orbit", x0, [0.01, 0.03, -0.02], Some(grain)),
        &settings(3000.0, Some(sun)),
    );
    // It leaves (escape ends the arc) or is still flying: either way one ballistic arc.
    assert!(rep.contacts.is_empty() && !matches!(rep.outcome, Outcome::Failed { .. }));
    let r0 = Vector3::from(x0);
    let r1 = Vector3::from(rep.final_pos_body_m);
    let work_push = (-s.into_inner() * a_rp).dot(&(r1 - r0));
    let work_tide = tidal_potential(&s, rate, &r1) - tidal_potential(&s, rate, &r0);
    assert!(
        work_tide.abs() > 0.1 * work_push.abs(),
        "{work_tide} {work_push}"
    );
    let added = rep.energy_added_m2_s2.unwrap();
    let want = work_push + work_tide;
    assert!(
        (added - want).abs() <= 1e-7 * want.abs().max(1e-12),
        "{added} vs {want}"
    );
    assert!(rep.frame_agreement_m < 1e-6);
}

#[test]
fn both_frames_agree_with_every_force_on_a_spinning_body() {
    // A spinning body turns the Sun's direction and the tide in the body frame; the inertial
    // frame keeps them fixed. The two integrations must still end in the same place.
    let body = pebble(3.0);
    let g_surface = body.gm_m3_s2() / 100.0_f64.powi(2);
    // A Sun close enough for its tide to matter (~1e-3 of the surface gravity at 100 m).
    let rate = 1e-3 * g_surface / 100.0;
    let d_au = (GM_SUN / rate).cbrt() / AU_M;
    // Pushed at 0.3 of the surface gravity at that distance.
    let grain = grain_with(0.3 * g_surface * d_au * d_au);
    assert!((expected_srp(&grain, d_au) / g_surface - 0.3).abs() < 1e-12);
    // Near the evening terminator: the spin carries the site into the night.
    let site = Site::from_lat_lon(&body, 20.0, 80.0, NormalMode::Face).unwrap();
    let launches: Vec<LaunchState> = (0..4)
        .map(|k| {
            spinfall_dynamics::launch::LaunchSpec {
                id: format!("hop{k}"),
                site: site.clone(),
                speed_m_s: 0.05 + 0.01 * k as f64,
                azimuth_deg: 90.0 * k as f64,
                elevation_deg: 50.0,
                start_altitude_m: 0.05,
            }
            .state()
            .unwrap()
            .with_particle(Some(grain))
        })
        .collect();
    let mut s = settings(40_000.0, Some(sun_x(true, true, true, d_au)));
    s.bounce = BounceModel::default();
    let cancel = AtomicBool::new(false);
    let set = fly_all(&body, &launches, &s, &|_, _| {}, &cancel);
    let mut events = 0;
    for rep in &set {
        assert!(
            !matches!(rep.outcome, Outcome::Failed { .. }),
            "{:?}",
            rep.outcome
        );
        assert!(
            rep.frame_agreement_m < 1e-4,
            "{}: {}",
            rep.id,
            rep.frame_agreement_m
        );
        events += rep.shadow_events.len();
    }
    assert!(events > 0, "no launch crossed the terminator");
    // Lockstep: a launch flown alone gives the same bytes as inside the set.
    let alone = fly(&body, &launches[2], &s, &cancel);
    assert_eq!(
        serde_json::to_string(&alone).unwrap(),
        serde_json::to_string(&set[2]).unwrap()
    );
}

#[test]
fn the_map_layer_lights_the_sunward_half_of_a_convex_body() {
    // On a convex body a face is lit exactly when it faces the Sun (n . s > 0); the push along
    // the face is |a| sin(angle(n, s)) = |a| sqrt(1 - (n.s)^2) (projection onto the plane).
    let body = pebble(50.0);
    let map = surface_map(&body, &|_, _| {}, &AtomicBool::new(false)).unwrap();
    let grain = grain_with(1e-5);
    let sun = Sun {
        direction_inertial: [0.0, 3.0, 4.0],
        ..sun_x(true, true, true, 1.0)
    };
    let layer = sunlight_map(
        &body,
        &map,
        &sun,
        Some(&grain),
        0.0,
        &AtomicBool::new(false),
    )
    .unwrap();
    let s = Vector3::new(0.0, 0.6, 0.8);
    let a = expected_srp(&grain, 1.0);
    let mut lit = 0;
    for f in 0..body.shape.face_count() {
        let n = body.shape.face_normal(f).into_inner();
        let c = n.dot(&s);
        if c > 1e-9 {
            lit += 1;
            assert_eq!(layer.sunlit[f], 1.0, "face {f}");
            let g = map.effective_gravity_m_s2[f];
            assert!((layer.radiation_pressure_to_gravity[f] - a / g).abs() <= 1e-12 * a / g);
            let t = a * (1.0 - c * c).sqrt();
            assert!((layer.radiation_pressure_tangential_m_s2[f] - t).abs() <= 1e-9 * a);
        } else if c < -1e-9 {
            assert_eq!(layer.sunlit[f], 0.0, "face {f}");
            assert_eq!(layer.radiation_pressure_to_gravity[f], 0.0);
            assert_eq!(layer.radiation_pressure_tangential_m_s2[f], 0.0);
        }
    }
    assert!(lit > 100 && lit < 220, "{lit} lit faces of 320");
    // The map hands the layer out through its fields; without a layer they are empty.
    let mut with = map.clone();
    with.sunlight = Some(layer);
    assert_eq!(
        with.values(SurfaceField::Sunlit).len(),
        body.shape.face_count()
    );
    assert!(map.values(SurfaceField::Sunlit).is_empty());
    assert_eq!(map.fields(), SurfaceField::ALL.to_vec());
    assert_eq!(
        with.fields().len(),
        SurfaceField::ALL.len() + SurfaceField::SUNLIGHT.len()
    );
}

#[test]
fn points_behind_the_body_are_in_its_shadow() {
    // The shadow of a sphere of radius R for a Sun along +x is the half-cylinder x < 0,
    // y^2 + z^2 < R^2 (a point Sun: no penumbra); the faceted sphere's is slightly smaller.
    let body = pebble(50.0);
    let dir = Vector3::new(1.0, 0.0, 0.0);
    // From behind the sphere (x = -300 m, on the axis) the Sun is blocked; off to the side it
    // is not.
    assert!(!spinfall_dynamics::sunlight::sunlit(
        &body.shape,
        &Point3::new(-300.0, 0.0, 0.0),
        &dir
    ));
    assert!(spinfall_dynamics::sunlight::sunlit(
        &body.shape,
        &Point3::new(-300.0, 0.0, 150.0),
        &dir
    ));
    assert!(spinfall_dynamics::sunlight::sunlit(
        &body.shape,
        &Point3::new(300.0, 0.0, 0.0),
        &dir
    ));
}

// ---- scenario keys ----

fn doc(environment: &str, particle: &str) -> String {
    format!(
        r#"{{"format": "spinfall-scenario", "version": 1,
 "body": {{"shape": "builtin:quillon", "density_kg_m3": 2000, "spin": {{"period_h": 5}}}},
 "launches": [{{"id": "a", "state": {{"position_m": [9000, 0, 0], "velocity_m_s": [0, 0, 0]}}{particle}}},
              {{"id": "b", "site": {{"face": 3}}, "speed_m_s": 0.1}}]{environment}}}"#
    )
}

fn error_of(text: &str) -> String {
    Scenario::from_json_str(text).unwrap_err().to_string()
}

#[test]
fn old_scenarios_parse_unchanged_and_have_no_sun() {
    let example = Scenario::builtin_example();
    let text = example.to_json_string_pretty().unwrap();
    assert!(!text.contains("environment") && !text.contains("particle"));
    let back = Scenario::from_json_str(&text).unwrap();
    assert_eq!(back, example);
    assert!(back.sun().is_none());
    assert_eq!(back.flight_settings().sun, None);
    assert!(back.warnings().is_empty(), "{:?}", back.warnings());
    let plain = Scenario::from_json_str(&doc("", "")).unwrap();
    assert_eq!(plain.environment, None);
    assert_eq!(plain.particle_of(0), None);
}

#[test]
fn the_sun_and_particles_parse_with_their_defaults_and_reach_the_launches() {
    let env = r#", "environment": {"sun": {"direction_inertial": [0, 2, 0], "distance_au": 2.5},
        "particle": {"radius_m": 1e-4, "density_kg_m3": 1500}}"#;
    let own = r#", "particle": {"radius_m": 2e-5, "density_kg_m3": 3000, "radiation_pressure_coefficient": 1.6}"#;
    let sc = Scenario::from_json_str(&doc(env, own)).unwrap();
    let sun = sc.sun().unwrap();
    assert!(
        sun.radiation_pressure && sun.shadow && sun.tide,
        "forces default on"
    );
    assert_eq!(sc.flight_settings().sun, Some(*sun));
    let default = sc.default_particle().unwrap();
    assert_eq!(
        default.radiation_pressure_coefficient, 1.0,
        "C_R defaults to 1"
    );
    assert_eq!(
        sc.particle_of(0).unwrap().radiation_pressure_coefficient,
        1.6
    );
    assert_eq!(sc.particle_of(1), Some(default));
    assert!(sc.warnings().is_empty(), "{:?}", sc.warnings());
    // Round trip.
    let back = Scenario::from_json_str(&sc.to_json_string_pretty().unwrap()).unwrap();
    assert_eq!(back, sc);
}

#[test]
fn bad_sun_and_particle_values_are_refused_by_key() {
    let sun = |body: &str| format!(r#", "environment": {{"sun": {{{body}}}}}"#);
    let cases: [(String, &str); 9] = [
        (
            doc(
                &sun(r#""direction_inertial": [0, 0, 0], "distance_au": 1"#),
                "",
            ),
            "environment.sun.direction_inertial: must be a finite non-zero vector",
        ),
        (
            doc(
                &sun(r#""direction_inertial": [1, 0], "distance_au": 1"#),
                "",
            ),
            "environment.sun.direction_inertial",
        ),
        (
            doc(
                &sun(r#""direction_inertial": [1, 0, 0], "distance_au": 0"#),
                "",
            ),
            "environment.sun.distance_au: must be a finite number > 0, got 0",
        ),
        (
            doc(
                &sun(r#""direction_inertial": [1, 0, 0], "distance_au": -2"#),
                "",
            ),
            "environment.sun.distance_au",
        ),
        (
            doc(&sun(r#""direction_inertial": [1, 0, 0]"#), ""),
            "missing field `distance_au`",
        ),
        (
            doc(
                &sun(r#""direction_inertial": [1, 0, 0], "distance_au": 1, "glare": true"#),
                "",
            ),
            "environment.sun.glare: unknown field",
        ),
        (
            doc(
                "",
                r#", "particle": {"radius_m": 0, "density_kg_m3": 1000}"#,
            ),
            "launches[0].particle.radius_m: must be a finite number > 0, got 0",
        ),
        (
            doc(
                "",
                r#", "particle": {"radius_m": 1e-3, "density_kg_m3": -5}"#,
            ),
            "launches[0].particle.density_kg_m3: must be a finite number > 0, got -5",
        ),
        (
            doc(
                r#", "environment": {"particle": {"radius_m": 1e-3, "density_kg_m3": 900, "radiation_pressure_coefficient": 2.5}}"#,
                "",
            ),
            "environment.particle.radiation_pressure_coefficient: must be a finite number in [0.0, 2.0], got 2.5",
        ),
    ];
    for (text, needle) in &cases {
        let e = error_of(text);
        assert!(e.contains(needle), "expected {needle:?} in {e:?}");
    }
    // NaN cannot be written in JSON; a huge exponent is refused by the parser, not taken as
    // infinity.
    let e = error_of(&doc(
        &sun(r#""direction_inertial": [1e999, 0, 0], "distance_au": 1"#),
        "",
    ));
    assert!(e.contains("environment.sun.direction_inertial"), "{e}");
    // In the flight API, a NaN direction ends the flight with a reason instead of a panic.
    let body = big_gravity_free_box();
    let mut bad = sun_x(true, true, true, 1.0);
    bad.direction_inertial = [f64::NAN, 0.0, 0.0];
    let rep = go(
        &body,
        &state("x", [5000.0, 0.0, 0.0], [0.0; 3], None),
        &settings(10.0, Some(bad)),
    );
    assert!(
        matches!(&rep.outcome, Outcome::Failed { reason } if reason.contains("direction")),
        "{:?}",
        rep.outcome
    );
}

#[test]
fn settings_without_effect_are_warned_about_by_key() {
    let all_off = r#", "environment": {"sun": {"direction_inertial": [1, 0, 0], "distance_au": 1,
        "radiation_pressure": false, "shadow": false, "tide": false}}"#;
    let w = Scenario::from_json_str(&doc(all_off, ""))
        .unwrap()
        .warnings();
    assert!(
        w.iter()
            .any(|w| w.starts_with("environment.sun: radiation_pressure and tide are both off")),
        "{w:?}"
    );
    let no_sun = r#", "particle": {"radius_m": 1e-3, "density_kg_m3": 1000}"#;
    let w = Scenario::from_json_str(&doc("", no_sun))
        .unwrap()
        .warnings();
    assert!(
        w.iter()
            .any(|w| w.starts_with("launches[0].particle: there is no environment.sun")),
        "{w:?}"
    );
    let bare = r#", "environment": {"sun": {"direction_inertial": [1, 0, 0], "distance_au": 1}}"#;
    let w = Scenario::from_json_str(&doc(bare, no_sun))
        .unwrap()
        .warnings();
    assert!(
        w.iter()
            .any(|w| w.contains("1 launch entry has no particle") && w.contains("launches[1]")),
        "{w:?}"
    );
    assert!(
        w.iter()
            .any(|w| w.starts_with("environment.particle: missing")),
        "{w:?}"
    );
}
