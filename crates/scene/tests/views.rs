//! Scene checks against outside references: the frame transformation r_inertial = R(t) r_body
//! (the overlay of the other frame's trace must land on this frame's own trace), and the
//! composite's halves.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use nalgebra::Point3;
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::{Body, FlightReport, FlightSettings, fly_all};
use spinfall_render::{Color, Image, Scene};
use spinfall_scene::{
    BodyView, CompositeOptions, Frame, ViewOptions, composite, default_camera, trace,
};

/// The demo body with one launch from mid-latitudes, flown for at most two hours.
fn demo_run() -> (Arc<BodyView>, Vec<FlightReport>) {
    let mut scenario = Scenario::builtin_example();
    scenario.launches.truncate(1);
    scenario.launches[0].fan = None;
    scenario.launches[0].dispersion = None;
    scenario.launches[0].speed_m_s = Some(0.3);
    let (shape, _) = spinfall_dynamics::scenario::builtin_quillon().unwrap();
    let body: Body = scenario.build_body(shape).unwrap();
    let launches = scenario.build_launches(&body).unwrap();
    let mut settings = FlightSettings::default();
    settings.integrator.max_time_s = 2.0 * 3600.0;
    let body = Arc::new(body);
    let reports = fly_all(
        &body,
        &launches,
        &settings,
        &|_, _| {},
        &AtomicBool::new(false),
    );
    (Arc::new(BodyView::new(body)), reports)
}

fn background() -> Color {
    Scene::default().background
}

/// Fraction of pixels of `img` in columns `x0..x1` and rows `y0..` that differ from the
/// background.
fn coverage(img: &Image, x0: u32, x1: u32, y0: u32) -> f64 {
    let bg = background();
    let mut n = 0;
    let mut hit = 0;
    for y in y0..img.height {
        for x in x0..x1 {
            n += 1;
            if img.get(x, y) != Some(bg) {
                hit += 1;
            }
        }
    }
    hit as f64 / n as f64
}

/// Whether two images differ anywhere in columns `x0..x1`, rows `y0..`.
fn differs(a: &Image, b: &Image, x0: u32, x1: u32, y0: u32) -> bool {
    (y0..a.height).any(|y| (x0..x1).any(|x| a.get(x, y) != b.get(x, y)))
}

#[test]
fn composite_halves_are_drawn_and_only_the_inertial_body_turns() {
    let (view, reports) = demo_run();
    let opts = ViewOptions {
        trail_to_time: false,
        ..ViewOptions::default()
    };
    let settings = CompositeOptions {
        width_px: 644,
        height_px: 300,
        supersample: 1,
        gap_px: 4,
        ..CompositeOptions::default()
    };
    let (w, half) = (settings.width_px, (settings.width_px - settings.gap_px) / 2);
    let img = composite(&view, &reports, 1200.0, &opts, &settings).unwrap();
    assert_eq!((img.width, img.height), (w, 300));
    assert!(
        coverage(&img, 0, half, 0) > 0.05,
        "body-fixed half is blank"
    );
    assert!(
        coverage(&img, half + 4, w, 0) > 0.05,
        "inertial half is blank"
    );

    // Without flights nothing but the body's spin depends on time: below the title and time
    // stamp, the body-fixed half is the same at t = 0 and t > 0 and the inertial half is not.
    let t0 = composite(&view, &[], 0.0, &opts, &settings).unwrap();
    let t1 = composite(&view, &[], 1500.0, &opts, &settings).unwrap();
    let below_titles = 60;
    assert!(
        !differs(&t0, &t1, 0, half, below_titles),
        "body-fixed half changed with t"
    );
    assert!(
        differs(&t0, &t1, half + 4, w, below_titles),
        "inertial body did not turn"
    );
}

#[test]
fn other_frame_trace_lands_on_this_frames_trace() {
    let (view, reports) = demo_run();
    let r = &reports[0];
    assert!(r.trajectory_body.len() > 10 && r.trajectory_inertial.len() > 10);
    let body = view.body();
    let camera = default_camera(&body.shape, 800, 600);
    for (own, other, change) in [
        (
            &r.trajectory_body,
            &r.trajectory_inertial,
            trace::FrameChange::InertialToBody,
        ),
        (
            &r.trajectory_inertial,
            &r.trajectory_body,
            trace::FrameChange::BodyToInertial,
        ),
    ] {
        let moved = trace::change_frame(body, other, change);
        let end = own.last().unwrap().t_s.min(moved.last().unwrap().t_s);
        let mut worst_px: f64 = 0.0;
        for k in 0..=50 {
            let t = end * k as f64 / 50.0;
            let a = trace::position_at(own, t).unwrap();
            let b = trace::position_at(&moved, t).unwrap();
            let (Some((ax, ay, _)), Some((bx, by, _))) = (camera.project(&a), camera.project(&b))
            else {
                panic!("trace point behind the camera at t = {t}");
            };
            worst_px = worst_px.max(((ax - bx).powi(2) + (ay - by).powi(2)).sqrt());
        }
        assert!(
            worst_px < 1.0,
            "{change:?}: traces differ by {worst_px:.2} px"
        );
    }
}

#[test]
fn hermite_interpolation_reproduces_a_cubic() {
    // Cubic Hermite interpolation is exact for polynomials of degree <= 3 (standard result,
    // e.g. Burden & Faires, Numerical Analysis, section on Hermite interpolation).
    let x = |t: f64| 2.0 * t * t * t - t * t + 0.5 * t + 3.0;
    let v = |t: f64| 6.0 * t * t - 2.0 * t + 0.5;
    let samples: Vec<_> = [0.0, 0.7, 1.9, 3.0]
        .iter()
        .map(|&t| spinfall_dynamics::TrajectorySample {
            t_s: t,
            pos_m: [x(t), -x(t), 0.0],
            vel_m_s: [v(t), -v(t), 0.0],
        })
        .collect();
    for t in [0.0, 0.35, 1.2, 2.5, 3.0] {
        let p = trace::position_at(&samples, t).unwrap();
        assert!(
            (p.x - x(t)).abs() < 1e-9 * x(t).abs().max(1.0),
            "t = {t}: {} vs {}",
            p.x,
            x(t)
        );
        assert!((p.y + x(t)).abs() < 1e-9 * x(t).abs().max(1.0));
    }
    // Outside the samples it holds the ends.
    assert_eq!(
        trace::position_at(&samples, -1.0).unwrap(),
        Point3::new(3.0, -3.0, 0.0)
    );
    // Cut traces end exactly at the interpolated point.
    let cut = trace::points_until(&samples, Some(1.2));
    assert_eq!(cut.len(), 3);
    assert!((cut[2][0] - x(1.2)).abs() < 1e-9);
}

#[test]
fn default_camera_sees_the_whole_body() {
    let (view, _) = demo_run();
    let shape = &view.body().shape;
    let camera = default_camera(shape, 640, 480);
    for v in &shape.mesh().vertices_m {
        let (x, y, _) = camera.project(v).unwrap();
        assert!(
            (0.0..640.0).contains(&x) && (0.0..480.0).contains(&y),
            "vertex off screen"
        );
    }
}

#[test]
fn too_small_composite_is_an_error() {
    let (view, reports) = demo_run();
    let err = composite(
        &view,
        &reports,
        0.0,
        &ViewOptions::default(),
        &CompositeOptions {
            width_px: 20,
            height_px: 10,
            ..CompositeOptions::default()
        },
    )
    .unwrap_err();
    assert!(err.to_string().contains("20 x 10"), "{err}");
    let _ = Frame::BodyFixed.title();
}
