//! Scene checks against outside references: the frame transformation r_inertial = R(t) r_body
//! (the overlay of the other frame's trace must land on this frame's own trace), and the
//! composite's halves.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use nalgebra::Point3;
use spinfall_render::{Color, Image, Scene};
use spinfall_scene::{
    CompositeOptions, FigureOptions, Frame, ViewOptions, build_figure, composite, default_camera,
    trace,
};

use common::demo_run;

fn background() -> Color {
    Scene::default().background
}

/// The rectangle of layout region `name`.
fn region(fig: &spinfall_render::Figure, name: &str) -> spinfall_render::Rect {
    fig.regions
        .iter()
        .find(|r| r.name == name)
        .map(|r| r.rect)
        .unwrap_or_else(|| panic!("no region {name}"))
}

/// Fraction of pixels of `img` inside `r` that differ from `bg`.
fn coverage_in(img: &Image, r: spinfall_render::Rect, bg: Color) -> f64 {
    let (x0, y0) = (r.x_px as u32, r.y_px as u32);
    let (x1, y1) = (x0 + r.width_px as u32, y0 + r.height_px as u32);
    let hit = (y0..y1)
        .flat_map(|y| (x0..x1).map(move |x| (x, y)))
        .filter(|&(x, y)| img.get(x, y) != Some(bg))
        .count();
    hit as f64 / ((x1 - x0) * (y1 - y0)) as f64
}

#[test]
fn composite_views_are_drawn_and_only_the_inertial_body_turns() {
    let (view, reports) = demo_run();
    let opts = ViewOptions {
        trail_to_time: false,
        ..ViewOptions::default()
    };
    let fig_opts = FigureOptions {
        size: spinfall_render::FigureSize::Pixels {
            width_px: 644,
            height_px: 300,
        },
        supersample: 1,
        ..FigureOptions::default()
    };
    let fig = build_figure(&view, &reports, 1200.0, &opts, &fig_opts).unwrap();
    let img = fig.to_image();
    assert_eq!((img.width, img.height), (644, 300));
    let (left, right) = (region(&fig, "view 1"), region(&fig, "view 2"));
    assert!(left.x_px + left.width_px <= right.x_px, "views overlap");
    assert!(
        coverage_in(&img, left, background()) > 0.05,
        "body-fixed view is blank"
    );
    assert!(
        coverage_in(&img, right, background()) > 0.05,
        "inertial view is blank"
    );

    // Without flights nothing but the body's spin depends on time: the body-fixed view is the
    // same at t = 0 and t > 0 and the inertial view is not.
    let render_at = |t: f64| {
        build_figure(&view, &[], t, &opts, &fig_opts)
            .unwrap()
            .to_image()
    };
    let (t0, t1) = (render_at(0.0), render_at(1500.0));
    let in_rect = |r: spinfall_render::Rect| {
        let (x0, y0) = (r.x_px as u32, r.y_px as u32);
        (y0..y0 + r.height_px as u32)
            .any(|y| (x0..x0 + r.width_px as u32).any(|x| t0.get(x, y) != t1.get(x, y)))
    };
    assert!(!in_rect(left), "body-fixed view changed with t");
    assert!(in_rect(right), "inertial body did not turn");
    // The composite helper draws the same figure.
    let c = composite(
        &view,
        &reports,
        1200.0,
        &opts,
        &CompositeOptions {
            width_px: 644,
            height_px: 300,
            supersample: 1,
            ..CompositeOptions::default()
        },
    )
    .unwrap();
    assert_eq!(c, img);
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
    assert!(err.to_string().contains("20x10"), "{err}");
    let _ = Frame::BodyFixed.title();
}

/// Guides (equilibria, zero-velocity curves) are fixed in the rotating frame: they are drawn in
/// the body-fixed view only, where they stay put whatever the time, and named in the legend.
#[test]
fn guides_are_drawn_in_the_body_fixed_view_only() {
    use spinfall_scene::{
        EquilibriumMark, Guides, ZeroVelocityCurves, body_fixed_scene, guide_legend_entries,
        inertial_scene,
    };
    use std::sync::Arc;
    let (view, _) = demo_run();
    let r = view.brillouin_radius_m() * 1.5;
    let guides = Guides {
        equilibria: vec![
            EquilibriumMark {
                pos_body_m: [r, 0.0, 0.0],
                linearly_stable: false,
            },
            EquilibriumMark {
                pos_body_m: [0.0, r, 0.0],
                linearly_stable: true,
            },
        ],
        zero_velocity: Some(ZeroVelocityCurves {
            label: "hop".into(),
            plane_curves: vec![vec![[r, 0.0, 0.0], [0.0, r, 0.0], [-r, 0.0, 0.0]]],
            surface_curves: vec![],
            forbidden_hatch: vec![[[r, r, 0.0], [2.0 * r, r, 0.0]]],
        }),
        ..Guides::default()
    };
    let bare = view;
    let with = bare.with_guides(Arc::new(guides.clone()));
    assert_eq!(with.guides().as_ref(), &guides);
    let opts = ViewOptions::default();
    for t_s in [0.0, 5000.0] {
        let plain = body_fixed_scene(&bare, &[], t_s, &opts, [400, 300]);
        let guided = body_fixed_scene(&with, &[], t_s, &opts, [400, 300]);
        assert_eq!(guided.markers.len(), plain.markers.len() + 2);
        assert_eq!(guided.polylines.len(), plain.polylines.len() + 2);
        // Fixed in the body frame: the same positions at every time.
        assert!(guided.markers.iter().any(|m| m.position == [r, 0.0, 0.0]));
        let inertial = inertial_scene(&with, &[], t_s, &opts, [400, 300]);
        let inertial_plain = inertial_scene(&bare, &[], t_s, &opts, [400, 300]);
        assert_eq!(inertial.markers.len(), inertial_plain.markers.len());
        assert_eq!(inertial.polylines.len(), inertial_plain.polylines.len());
    }
    let legend: Vec<String> = guide_legend_entries(&with, &opts)
        .into_iter()
        .map(|e| e.text)
        .collect();
    assert_eq!(
        legend,
        [
            "equilibrium, stable",
            "equilibrium, unstable",
            "zero-velocity curve (hop)"
        ]
    );
    assert!(guide_legend_entries(&bare, &opts).is_empty());
}

/// A terrain patch used for contacts is drawn over the body in both views (the picture shows the
/// ground the flights land on), in its own mesh, turning with the body in the inertial view.
#[test]
fn a_contact_patch_is_drawn_in_both_views() {
    use spinfall_dynamics::contact::ContactShape;
    use spinfall_gravity::{Mesh, ShapeModel};
    use spinfall_scene::{BodyView, body_fixed_scene, inertial_scene};
    use std::sync::Arc;
    let (view, _) = demo_run();
    let body = view.body().as_ref().clone();
    // A small square (two triangles) a little above the body's top, facing away from the centre.
    let z = view.brillouin_radius_m() * 1.05;
    let mesh = Mesh {
        vertices_m: vec![
            Point3::new(-100.0, -100.0, z),
            Point3::new(100.0, -100.0, z),
            Point3::new(100.0, 100.0, z),
            Point3::new(-100.0, 100.0, z),
        ],
        faces: vec![[0, 1, 2], [0, 2, 3]],
    };
    let patch = Arc::new(ShapeModel::new_patch(mesh, Point3::origin()).unwrap().0);
    let with_patch = BodyView::new(Arc::new(body.with_contact(ContactShape::Patch(patch))));
    let opts = ViewOptions::default();
    let plain = body_fixed_scene(&view, &[], 0.0, &opts, [320, 240]);
    let scene = body_fixed_scene(&with_patch, &[], 0.0, &opts, [320, 240]);
    assert_eq!(scene.meshes.len(), plain.meshes.len() + 1);
    let drawn = scene.meshes.last().unwrap();
    assert_eq!(drawn.triangles.len(), 2);
    let t_s = 3000.0;
    let inertial = inertial_scene(&with_patch, &[], t_s, &opts, [320, 240]);
    let turned = inertial.meshes.last().unwrap();
    let expected = with_patch.body().inertial_from_body(t_s).to_homogeneous();
    assert_eq!(turned.model, expected);
}
