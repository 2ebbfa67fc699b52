//! Geometry of rendered images checked against closed forms: orthographic scale, depth order,
//! Lambert's cosine law, box-filter coverage, ray-triangle intersection, PNG round trips.

#![allow(clippy::unwrap_used, reason = "tests may unwrap (house rules)")]

use std::sync::Arc;

use nalgebra::{Point3, Vector3};
use spinfall_render::*;

const BG: Color = Color::rgb(0, 0, 0);

fn scene_with(meshes: Vec<SceneMesh>) -> Scene {
    Scene {
        meshes,
        background: BG,
        ..Scene::default()
    }
}

fn mesh(data: testing::MeshData, color: Color) -> SceneMesh {
    SceneMesh::new(Arc::new(data.0), Arc::new(data.1), color)
}

/// Orthographic camera looking down -z from +z, x to the right, y up, `px_per_m` pixels per metre.
fn top_camera(w: u32, h: u32, px_per_m: f64) -> Camera {
    Camera::orthographic(
        w,
        h,
        Point3::new(0.0, 0.0, 10.0),
        Point3::origin(),
        Vector3::y(),
        h as f64 / px_per_m,
    )
}

fn covered(img: &Image, bg: Color) -> Vec<(u32, u32)> {
    let mut v = Vec::new();
    for y in 0..img.height {
        for x in 0..img.width {
            if img.get(x, y) != Some(bg) {
                v.push((x, y));
            }
        }
    }
    v
}

#[test]
fn unit_cube_covers_expected_pixel_rectangle_orthographic() {
    // Orthographic projection: a length L at any depth spans L * (image height / view height)
    // pixels. A unit cube at the origin seen along z at 100 px/m covers x, y in [50, 150) px of a
    // 200 x 200 image: pixel centres 50.5 .. 149.5, so exactly columns and rows 50..=149.
    let scene = scene_with(vec![mesh(testing::cube(1.0), Color::WHITE)]);
    let img = render(
        &scene,
        &top_camera(200, 200, 100.0),
        &RenderOptions::new(200, 200),
    );
    let px = covered(&img, BG);
    let xs: Vec<u32> = px.iter().map(|p| p.0).collect();
    let ys: Vec<u32> = px.iter().map(|p| p.1).collect();
    let (x0, x1) = (*xs.iter().min().unwrap(), *xs.iter().max().unwrap());
    let (y0, y1) = (*ys.iter().min().unwrap(), *ys.iter().max().unwrap());
    assert!(
        (x0 as i32 - 50).abs() <= 1 && (x1 as i32 - 149).abs() <= 1,
        "x {x0}..{x1}"
    );
    assert!(
        (y0 as i32 - 50).abs() <= 1 && (y1 as i32 - 149).abs() <= 1,
        "y {y0}..{y1}"
    );
    // Filled: no holes along the shared diagonal of the two triangles of the face.
    assert_eq!(px.len() as u32, (x1 - x0 + 1) * (y1 - y0 + 1));
}

#[test]
fn cube_rectangle_is_stable_when_the_camera_is_offset_by_whole_pixels() {
    // Panning by a whole number of pixels shifts the rectangle by exactly that many pixels.
    let scene = scene_with(vec![mesh(testing::cube(1.0), Color::WHITE)]);
    let mut cam = top_camera(200, 200, 100.0);
    cam.pan(-20.0, 10.0); // scene follows the drag: moves left 20 px and down 10 px
    let img = render(&scene, &cam, &RenderOptions::new(200, 200));
    let px = covered(&img, BG);
    let x0 = px.iter().map(|p| p.0).min().unwrap();
    let y0 = px.iter().map(|p| p.1).min().unwrap();
    assert!((x0 as i32 - 30).abs() <= 1, "x0 {x0}");
    assert!((y0 as i32 - 60).abs() <= 1, "y0 {y0}");
}

fn tri(z: f32, color: Color) -> SceneMesh {
    // A large counter-clockwise (seen from +z) triangle in the plane z.
    let pos = vec![[-1.0, -1.0, z], [1.0, -1.0, z], [0.0, 1.0, z]];
    let mut m = SceneMesh::new(Arc::new(pos), Arc::new(vec![[0, 1, 2]]), color);
    m.cull_back_faces = false;
    m
}

#[test]
fn triangle_behind_another_is_hidden_in_either_order() {
    let cam = top_camera(100, 100, 40.0);
    let near = Color::rgb(255, 0, 0);
    let far = Color::rgb(0, 0, 255);
    let light_scene = |meshes| {
        let mut s = scene_with(meshes);
        // Light along the view so both faces get the same full brightness.
        s.light = Light::Sun {
            direction: [0.0, 0.0, 1.0],
        };
        s
    };
    for meshes in [
        vec![tri(0.5, near), tri(-0.5, far)],
        vec![tri(-0.5, far), tri(0.5, near)],
    ] {
        let img = render(&light_scene(meshes), &cam, &RenderOptions::new(100, 100));
        assert_eq!(img.get(50, 50), Some(near));
    }
    // Perspective camera too (depth interpolated as 1/w).
    let cam = Camera::perspective(
        100,
        100,
        Point3::new(0.0, 0.0, 6.0),
        Point3::origin(),
        Vector3::y(),
        40.0,
    );
    let img = render(
        &light_scene(vec![tri(-0.5, far), tri(0.5, near)]),
        &cam,
        &RenderOptions::new(100, 100),
    );
    assert_eq!(img.get(50, 50), Some(near));
}

#[test]
fn back_faces_are_culled_only_when_asked() {
    let cam = top_camera(100, 100, 40.0);
    // Clockwise seen from +z: a back face.
    let pos = vec![[-1.0, -1.0, 0.0], [0.0, 1.0, 0.0], [1.0, -1.0, 0.0]];
    let mut m = SceneMesh::new(Arc::new(pos), Arc::new(vec![[0, 1, 2]]), Color::WHITE);
    let img = render(
        &scene_with(vec![m.clone()]),
        &cam,
        &RenderOptions::new(100, 100),
    );
    assert!(covered(&img, BG).is_empty());
    m.cull_back_faces = false;
    let img = render(&scene_with(vec![m]), &cam, &RenderOptions::new(100, 100));
    assert!(!covered(&img, BG).is_empty());
}

#[test]
fn flat_shading_follows_lamberts_cosine_law() {
    // Lambert: brightness = ambient + (1 - ambient) * max(0, cos angle). A face tilted 60 degrees
    // from the sun gets ambient + (1 - ambient) / 2; one facing it gets full brightness.
    let cam = top_camera(100, 100, 40.0);
    for (dir, expected_cos) in [
        ([0.0, 0.0, 1.0], 1.0f64),
        ([3f64.sqrt() / 2.0, 0.0, 0.5], 0.5),
        ([0.0, 0.0, -1.0], 0.0),
    ] {
        let mut s = scene_with(vec![tri(0.0, Color::rgb(200, 200, 200))]);
        s.light = Light::Sun { direction: dir };
        let amb = s.light.ambient() as f64;
        let img = render(&s, &cam, &RenderOptions::new(100, 100));
        let got = img.get(50, 50).unwrap().r as f64;
        let want = 200.0 * (amb + (1.0 - amb) * expected_cos);
        assert!((got - want).abs() <= 1.0, "dir {dir:?}: {got} vs {want}");
    }
}

fn line(z: f64, color: Color, occluded: Occluded) -> Polyline {
    Polyline {
        points: vec![[-2.0, 0.0, z], [2.0, 0.0, z]],
        color: LineColor::Uniform(color),
        width_px: 3.0,
        dash: None,
        occluded,
    }
}

#[test]
fn trace_behind_body_is_hidden_or_faint_and_in_front_is_drawn() {
    let cam = top_camera(200, 200, 40.0); // cube spans 40 px: columns 80..120
    let body = Color::rgb(100, 100, 100);
    let red = Color::rgb(255, 0, 0);
    let mut s = scene_with(vec![mesh(testing::cube(1.0), body)]);
    s.light = Light::Sun {
        direction: [0.0, 0.0, 1.0],
    };
    let opts = RenderOptions::new(200, 200);
    let base = render(&s, &cam, &opts);
    let body_px = base.get(100, 100).unwrap();
    // Behind, hidden: the body pixel is untouched; beside the body the line shows.
    s.polylines = vec![line(-2.0, red, Occluded::Hidden)];
    let img = render(&s, &cam, &opts);
    assert_eq!(img.get(100, 100).unwrap(), body_px);
    assert_eq!(img.get(20, 100).unwrap(), red);
    // Behind, faint at 0.25: a quarter of the way from the body colour to red.
    s.polylines = vec![line(-2.0, red, Occluded::Faint(0.25))];
    let img = render(&s, &cam, &opts);
    let c = img.get(100, 100).unwrap();
    let want_r = body_px.r as f64 + 0.25 * (255.0 - body_px.r as f64);
    assert!((c.r as f64 - want_r).abs() <= 2.0, "{c:?}");
    // In front: drawn over the body.
    s.polylines = vec![line(2.0, red, Occluded::Hidden)];
    let img = render(&s, &cam, &opts);
    assert_eq!(img.get(100, 100).unwrap(), red);
    // On the surface (z = 0.5, the cube's top face): drawn (depth tolerance), with or without
    // supersampling; 0.2 m behind the face (8 px at this scale): hidden in both.
    s.polylines = vec![line(0.5, red, Occluded::Hidden)];
    for ss in [1, 2, 3] {
        let img = render(&s, &cam, &opts.with_supersample(ss));
        assert_eq!(img.get(100, 100).unwrap(), red, "supersample {ss}");
    }
    s.polylines = vec![line(0.3, red, Occluded::Hidden)];
    for ss in [1, 2, 3] {
        let img = render(&s, &cam, &opts.with_supersample(ss));
        assert_eq!(img.get(100, 100).unwrap(), body_px, "supersample {ss}");
    }
}

#[test]
fn trace_segments_in_perspective_are_hidden_behind_body_and_clipped_at_the_eye() {
    let cam = Camera::perspective(
        160,
        120,
        Point3::new(0.0, 0.0, 5.0),
        Point3::origin(),
        Vector3::y(),
        50.0,
    );
    let body = Color::rgb(90, 90, 90);
    let red = Color::rgb(255, 0, 0);
    let mut s = scene_with(vec![mesh(testing::cube(1.0), body)]);
    let base = render(&s, &cam, &RenderOptions::new(160, 120));
    s.polylines = vec![
        line(-3.0, red, Occluded::Hidden),
        // Passes through the eye plane: must not panic or smear across the image.
        Polyline {
            points: vec![[0.0, 0.3, 10.0], [0.0, 0.3, -10.0]],
            color: LineColor::Uniform(Color::GREEN),
            width_px: 1.0,
            dash: None,
            occluded: Occluded::Hidden,
        },
    ];
    let img = render(&s, &cam, &RenderOptions::new(160, 120));
    assert_eq!(img.get(80, 60), base.get(80, 60));
}

#[test]
fn dashed_lines_leave_gaps() {
    let cam = top_camera(200, 100, 40.0);
    let mut s = scene_with(vec![]);
    let mut l = line(0.0, Color::WHITE, Occluded::Hidden);
    l.width_px = 1.0;
    l.dash = Some((6.0, 4.0));
    s.polylines = vec![l];
    let img = render(&s, &cam, &RenderOptions::new(200, 100));
    let row: Vec<bool> = (30..170).map(|x| img.get(x, 50) != Some(BG)).collect();
    let on = row.iter().filter(|b| **b).count() as f64 / row.len() as f64;
    // Duty cycle on / (on + off) = 0.6.
    assert!((on - 0.6).abs() < 0.08, "duty {on}");
}

#[test]
fn color_bar_maps_min_and_max_to_the_colormap_ends() {
    // Viridis end points from the published matplotlib table (van der Walt & Smith, 2015):
    // 0 -> #440154, 1 -> #fde725 (values from memory; colorous carries the same table).
    let mut s = scene_with(vec![]);
    let rect = Rect::new(20.0, 20.0, 16.0, 100.0);
    s.overlays = vec![Overlay::ColorBar {
        colormap: Colormap::Viridis,
        min: 0.0,
        max: 5.0,
        label: "slope (deg)".into(),
        rect,
    }];
    let img = render(
        &s,
        &top_camera(120, 160, 10.0),
        &RenderOptions::new(120, 160),
    );
    let close = |a: Color, b: Color| {
        (a.r as i32 - b.r as i32).abs() <= 3
            && (a.g as i32 - b.g as i32).abs() <= 3
            && (a.b as i32 - b.b as i32).abs() <= 3
    };
    let top = img.get(28, 20).unwrap();
    let bottom = img.get(28, 119).unwrap();
    assert!(close(top, Color::rgb(0xfd, 0xe7, 0x25)), "top {top:?}");
    assert!(
        close(bottom, Color::rgb(0x44, 0x01, 0x54)),
        "bottom {bottom:?}"
    );
    assert_eq!(Colormap::Viridis.map(0.0), bottom);
    assert_eq!(Colormap::Viridis.map(1.0), top);
}

#[test]
fn face_colors_clamp_and_grey_out_nan() {
    let c = face_colors(
        &[-1.0, 0.0, 10.0, 20.0, f64::NAN],
        0.0,
        10.0,
        Colormap::Magma,
    );
    assert_eq!(c[0], Colormap::Magma.map(0.0));
    assert_eq!(c[1], Colormap::Magma.map(0.0));
    assert_eq!(c[2], Colormap::Magma.map(1.0));
    assert_eq!(c[3], Colormap::Magma.map(1.0));
    assert_eq!(c[4], Color::GREY);
}

fn demo_scene() -> Scene {
    let (pos, tris) = testing::icosphere(1.0, 3, 0.05);
    let values: Vec<f64> = (0..tris.len()).map(|i| (i * 37 % 101) as f64).collect();
    let mut m = SceneMesh::new(Arc::new(pos), Arc::new(tris), Color::WHITE);
    m.colors = FaceColors::PerFace(Arc::new(face_colors(&values, 0.0, 100.0, Colormap::Plasma)));
    let mut s = scene_with(vec![m]);
    s.polylines = (0..6)
        .map(|k| Polyline {
            points: testing::hop_trace(200, 1.05, 0.3 * k as f64, k as f64, 0.7, 1.2, 0.4),
            color: LineColor::PerVertex(vec![Color::YELLOW, Color::CYAN]),
            width_px: 2.0,
            dash: (k % 2 == 0).then_some((5.0, 3.0)),
            occluded: Occluded::Faint(0.3),
        })
        .collect();
    s.markers = vec![Marker {
        position: [0.0, 0.0, 1.1],
        shape: MarkerShape::Diamond,
        size_px: 9.0,
        color: Color::RED,
        occluded: Occluded::Faint(0.5),
    }];
    s.arrows = vec![Arrow {
        from: [0.0, 0.0, -1.6],
        to: [0.0, 0.0, 1.6],
        color: Color::CYAN,
        width_px: 2.0,
    }];
    s.overlays = vec![
        Overlay::Text {
            text: "Quillon  t = 12.5 s".into(),
            x_px: 8.0,
            y_px: 8.0,
            size_px: 16.0,
            color: Color::WHITE,
            anchor: Anchor::TopLeft,
        },
        Overlay::ScaleBar {
            unit_label: String::new(),
            corner: Corner::BottomLeft,
        },
        Overlay::AxisTriad {
            corner: Corner::BottomRight,
            size_px: 24.0,
        },
        Overlay::Legend {
            entries: vec![LegendEntry::new(Color::YELLOW, "body-fixed", Swatch::Line)],
            corner: Corner::TopRight,
        },
    ];
    s
}

fn demo_camera(w: u32, h: u32) -> Camera {
    Camera::perspective(
        w,
        h,
        Point3::new(3.0, 2.0, 1.5),
        Point3::origin(),
        Vector3::z(),
        40.0,
    )
}

#[test]
fn same_scene_renders_identical_bytes_with_any_thread_count() {
    let s = demo_scene();
    let cam = demo_camera(320, 240);
    let opts = RenderOptions::new(320, 240).with_supersample(2);
    let a = render(&s, &cam, &opts);
    let b = render(&s, &cam, &opts);
    assert_eq!(a, b);
    let mut reused = Renderer::new();
    assert_eq!(reused.render(&s, &cam, &opts), &a);
    assert_eq!(reused.render(&s, &cam, &opts), &a);
    for threads in [1, 3] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        let c = pool.install(|| render(&s, &cam, &opts));
        assert_eq!(a, c, "{threads} threads");
    }
    // The scene is not empty: a render with no meshes differs.
    let mut empty = s.clone();
    empty.meshes.clear();
    assert_ne!(render(&empty, &cam, &opts), a);
}

/// Moeller & Trumbore (1997), "Fast, minimum storage ray-triangle intersection": returns the
/// barycentric (u, v) and distance t of the hit.
fn ray_triangle(o: &Point3<f64>, d: &Vector3<f64>, p: [Point3<f64>; 3]) -> Option<(f64, f64, f64)> {
    let e1 = p[1] - p[0];
    let e2 = p[2] - p[0];
    let h = d.cross(&e2);
    let a = e1.dot(&h);
    if a.abs() < 1e-12 {
        return None;
    }
    let f = 1.0 / a;
    let s = o - p[0];
    let u = f * s.dot(&h);
    let q = s.cross(&e1);
    let v = f * d.dot(&q);
    let t = f * e2.dot(&q);
    Some((u, v, t))
}

#[test]
fn picked_pixel_ray_hits_the_triangle_drawn_there() {
    let s = demo_scene();
    let cam = demo_camera(160, 120);
    let mut r = Renderer::new();
    let ids = r.render_face_ids(&s, &cam, 160, 120);
    let m = &s.meshes[0];
    let mut checked = 0;
    for y in (0..120).step_by(7) {
        for x in (0..160).step_by(5) {
            let Some(hit) = ids.get(x, y) else { continue };
            assert_eq!(hit.mesh, 0);
            let t = m.triangles[hit.face];
            let p = t.map(|i| {
                let v = m.positions[i as usize];
                Point3::new(v[0] as f64, v[1] as f64, v[2] as f64)
            });
            let (o, d) = cam.ray_at_pixel(x as f64 + 0.5, y as f64 + 0.5);
            let (u, v, dist) = ray_triangle(&o, &d, p).expect("ray parallel to face");
            // Barycentric weight times the on-screen altitude of its vertex is the distance in
            // pixels from the opposite edge; allow 0.1 px for the rasterizer's 1/16 px snapping.
            let s: Vec<(f64, f64)> = p
                .iter()
                .map(|q| {
                    let (a, b, _) = cam.project(q).unwrap();
                    (a, b)
                })
                .collect();
            let altitude = |k: usize| {
                let (a, b, c) = (s[k], s[(k + 1) % 3], s[(k + 2) % 3]);
                let area2 = ((b.0 - a.0) * (c.1 - a.1) - (b.1 - a.1) * (c.0 - a.0)).abs();
                area2 / ((c.0 - b.0).hypot(c.1 - b.1))
            };
            let w = [1.0 - u - v, u, v];
            for k in 0..3 {
                assert!(w[k] * altitude(k) > -0.1, "({x},{y}) weights {w:?}");
            }
            assert!(dist > 0.0);
            checked += 1;
        }
    }
    assert!(checked > 50, "only {checked} pixels covered");
    // Background pixel: no face.
    assert_eq!(ids.get(0, 0), None);
}

#[test]
fn project_and_ray_at_pixel_agree() {
    for cam in [
        demo_camera(300, 200),
        Camera::orthographic(
            300,
            200,
            Point3::new(2.0, -1.0, 3.0),
            Point3::new(0.1, 0.2, 0.0),
            Vector3::z(),
            4.0,
        ),
    ] {
        for (x, y) in [(0.5, 0.5), (150.0, 100.0), (299.5, 13.25), (17.0, 190.0)] {
            let (o, d) = cam.ray_at_pixel(x, y);
            assert!((d.norm() - 1.0).abs() < 1e-6);
            let p = o + d * 2.5;
            let (px, py, depth) = cam.project(&p).unwrap();
            assert!(
                (px - x).abs() < 0.02 && (py - y).abs() < 0.02,
                "{x},{y} -> {px},{py}"
            );
            assert!(depth > 0.0);
        }
        // The target projects to the image centre.
        let (cx, cy, _) = cam.project(&cam.target()).unwrap();
        assert!((cx - 150.0).abs() < 0.01 && (cy - 100.0).abs() < 0.01);
    }
    // Behind a perspective eye: no projection.
    let cam = demo_camera(300, 200);
    let behind = cam.eye() - cam.view_direction();
    assert!(cam.project(&behind).is_none());
}

#[test]
fn orbit_keeps_distance_to_target_and_up() {
    let mut cam = demo_camera(400, 300);
    let d0 = cam.distance_m();
    let t0 = cam.target();
    for (dx, dy) in [(30.0, 0.0), (0.0, -45.0), (-120.0, 80.0), (500.0, 500.0)] {
        cam.orbit(dx, dy);
        assert!((cam.distance_m() - d0).abs() < 1e-4 * d0);
        assert!((cam.target() - t0).norm() < 1e-6);
        assert!((cam.up() - Vector3::z()).norm() < 1e-6);
    }
    // It did move.
    assert!((cam.eye() - demo_camera(400, 300).eye()).norm() > 0.1);
}

#[test]
fn orbit_drag_moves_the_near_side_with_the_pointer() {
    for (dx, dy) in [(20.0, 0.0), (0.0, 20.0), (-15.0, -10.0)] {
        let mut cam = demo_camera(400, 300);
        // A point between target and eye, seen at the image centre.
        let p = cam.target() + (cam.eye() - cam.target()) * 0.3;
        let (x0, y0, _) = cam.project(&p).unwrap();
        cam.orbit(dx, dy);
        let (x1, y1, _) = cam.project(&p).unwrap();
        assert!(
            (x1 - x0) * dx >= 0.0 && (y1 - y0) * dy >= 0.0,
            "{dx},{dy}: {x0},{y0} -> {x1},{y1}"
        );
        assert!((x1 - x0).abs() + (y1 - y0).abs() > 1.0);
    }
}

#[test]
fn zoom_and_pan_behave() {
    let mut cam = demo_camera(400, 300);
    let d0 = cam.distance_m();
    let mpp0 = cam.metres_per_pixel_at_target();
    cam.zoom(2.0);
    assert!((cam.distance_m() - d0 / 2.0).abs() < 1e-4);
    assert!((cam.metres_per_pixel_at_target() - mpp0 / 2.0).abs() < 1e-6);
    // Pan by 10 px: the old target now projects 10 px to the right.
    let t0 = cam.target();
    cam.pan(10.0, 0.0);
    let (x, y, _) = cam.project(&t0).unwrap();
    assert!(
        (x - 210.0).abs() < 0.05 && (y - 150.0).abs() < 0.05,
        "{x},{y}"
    );
    let mut ortho = top_camera(200, 100, 50.0);
    ortho.zoom(4.0);
    assert!((ortho.metres_per_pixel_at_target() - 1.0 / 200.0).abs() < 1e-9);
    // Nonsense input is ignored.
    let before = cam.eye();
    cam.zoom(f64::NAN);
    cam.zoom(-1.0);
    cam.orbit(f64::INFINITY, 0.0);
    cam.pan(f64::NAN, 1.0);
    assert_eq!(cam.eye(), before);
}

#[test]
fn fit_to_bounds_puts_the_sphere_inside_the_view() {
    let center = Point3::new(10.0, -4.0, 2.0);
    let radius = 3.0;
    for mut cam in [
        demo_camera(640, 360),
        demo_camera(300, 500),
        Camera::orthographic(
            640,
            360,
            Point3::new(5.0, 5.0, 5.0),
            Point3::origin(),
            Vector3::z(),
            1.0,
        ),
    ] {
        cam.fit_to_bounds(center, radius);
        let (w, h) = (cam.width_px() as f64, cam.height_px() as f64);
        let (mut xmin, mut xmax, mut ymin, mut ymax) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
        // Points on the sphere (a Fibonacci lattice).
        let n = 2000;
        for i in 0..n {
            let z = 1.0 - 2.0 * (i as f64 + 0.5) / n as f64;
            let r = (1.0 - z * z).sqrt();
            let a = i as f64 * std::f64::consts::PI * (3.0 - 5f64.sqrt());
            let p = center + Vector3::new(r * a.cos(), r * a.sin(), z) * radius;
            let (x, y, _) = cam.project(&p).unwrap();
            xmin = xmin.min(x);
            xmax = xmax.max(x);
            ymin = ymin.min(y);
            ymax = ymax.max(y);
        }
        assert!(
            xmin >= 0.0 && ymin >= 0.0 && xmax <= w && ymax <= h,
            "{xmin} {xmax} {ymin} {ymax}"
        );
        // And fills most of the smaller side.
        let fill = ((xmax - xmin) / w).max((ymax - ymin) / h);
        assert!(fill > 0.75, "fill {fill}");
    }
}

#[test]
fn supersampling_gives_intermediate_values_at_a_half_covered_pixel() {
    // Box filter: a pixel whose left half is white and right half black averages to mid grey.
    // 100 px per metre; a quad from x = -1 m to x = -0.395 m ends at pixel x = 10.5 (image is
    // 200 px wide, x = 0 m at column 100).
    let edge = -0.895f32; // (10.5 - 100) / 100
    let pos = vec![
        [-1.5, -0.5, 0.0],
        [edge, -0.5, 0.0],
        [edge, 0.5, 0.0],
        [-1.5, 0.5, 0.0],
    ];
    let mut m = SceneMesh::new(
        Arc::new(pos),
        Arc::new(vec![[0, 1, 2], [0, 2, 3]]),
        Color::WHITE,
    );
    m.cull_back_faces = false;
    let mut s = scene_with(vec![m]);
    s.light = Light::Sun {
        direction: [0.0, 0.0, 1.0],
    };
    let cam = top_camera(200, 100, 100.0);
    let plain = render(&s, &cam, &RenderOptions::new(200, 100));
    let aa = render(&s, &cam, &RenderOptions::new(200, 100).with_supersample(2));
    assert_eq!(plain.get(9, 50).unwrap(), Color::WHITE);
    assert_eq!(aa.get(9, 50).unwrap(), Color::WHITE);
    assert_eq!(aa.get(11, 50).unwrap(), BG);
    let mid = aa.get(10, 50).unwrap();
    assert!((mid.r as i32 - 128).abs() <= 2, "{mid:?}");
    let plain_mid = plain.get(10, 50).unwrap();
    assert!(plain_mid == Color::WHITE || plain_mid == BG);
}

#[test]
fn png_round_trip_keeps_pixels_and_text_chunks() {
    let s = demo_scene();
    let img = render(&s, &demo_camera(64, 48), &RenderOptions::new(64, 48));
    let mut bytes = Vec::new();
    encode_png(
        &img,
        &[
            ("body", "Quillon"),
            ("spin", "period 4.2 h"),
            ("note", "Δv ≤ 0.1 m/s"),
        ],
        &mut bytes,
    )
    .unwrap();
    let decoder = png::Decoder::new(std::io::Cursor::new(bytes));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    assert_eq!((info.width, info.height), (64, 48));
    assert_eq!(info.color_type, png::ColorType::Rgba);
    assert_eq!(&buf[..info.buffer_size()], img.as_rgba_bytes().as_slice());
    let meta = reader.info();
    let latin: Vec<(String, String)> = meta
        .uncompressed_latin1_text
        .iter()
        .map(|c| (c.keyword.clone(), c.text.clone()))
        .collect();
    assert!(latin.contains(&("body".into(), "Quillon".into())));
    assert!(latin.contains(&("spin".into(), "period 4.2 h".into())));
    let utf8 = meta
        .utf8_text
        .iter()
        .find(|c| c.keyword == "note")
        .expect("iTXt chunk");
    assert_eq!(utf8.get_text().unwrap(), "Δv ≤ 0.1 m/s");
}

#[test]
fn png_rejects_bad_keywords_and_empty_images() {
    let img = Image::new(2, 2, Color::WHITE);
    let err = encode_png(&img, &[("", "x")], Vec::new()).unwrap_err();
    assert!(err.to_string().contains("keyword"));
    let err = encode_png(&Image::new(0, 3, Color::WHITE), &[], Vec::new()).unwrap_err();
    assert!(err.to_string().contains("0x3"));
}

#[test]
fn side_by_side_places_both_images() {
    let a = Image::new(3, 2, Color::RED);
    let b = Image::new(2, 4, Color::BLUE);
    let c = compose_side_by_side(&a, &b, 1, Color::BLACK);
    assert_eq!((c.width, c.height), (6, 4));
    assert_eq!(c.get(0, 1), Some(Color::RED)); // a is centred: rows 1..3
    assert_eq!(c.get(0, 0), Some(Color::BLACK));
    assert_eq!(c.get(3, 0), Some(Color::BLACK)); // gap
    assert_eq!(c.get(4, 0), Some(Color::BLUE));
    assert_eq!(c.get(5, 3), Some(Color::BLUE));
}

#[test]
fn markers_are_hidden_behind_the_body_and_shown_in_front() {
    let cam = top_camera(100, 100, 40.0);
    let mut s = scene_with(vec![mesh(testing::cube(1.0), Color::rgb(80, 80, 80))]);
    let base = render(&s, &cam, &RenderOptions::new(100, 100));
    let marker = |z: f64, occluded| Marker {
        position: [0.0, 0.0, z],
        shape: MarkerShape::Dot,
        size_px: 8.0,
        color: Color::RED,
        occluded,
    };
    s.markers = vec![marker(-2.0, Occluded::Hidden)];
    assert_eq!(render(&s, &cam, &RenderOptions::new(100, 100)), base);
    s.markers = vec![marker(2.0, Occluded::Hidden)];
    assert_eq!(
        render(&s, &cam, &RenderOptions::new(100, 100)).get(50, 50),
        Some(Color::RED)
    );
}

#[test]
fn wireframe_draws_edges_over_faces() {
    let cam = top_camera(200, 200, 100.0);
    let mut m = mesh(testing::cube(1.0), Color::rgb(60, 60, 60));
    m.wireframe = Some(Color::WHITE);
    let mut s = scene_with(vec![m]);
    s.light = Light::Sun {
        direction: [0.0, 0.0, 1.0],
    };
    let img = render(&s, &cam, &RenderOptions::new(200, 200));
    // The top face's border (x = 50 px) and its diagonal are white; its interior is not.
    assert_eq!(img.get(50, 100), Some(Color::WHITE));
    assert_eq!(img.get(100, 100), Some(Color::WHITE));
    assert_eq!(img.get(75, 100), Some(Color::rgb(60, 60, 60)));
}

#[test]
fn smooth_shading_varies_within_a_face_and_flat_does_not() {
    let s0 = {
        let (p, t) = testing::icosphere(1.0, 1, 0.0);
        scene_with(vec![mesh((p, t), Color::WHITE)])
    };
    let cam = Camera::perspective(
        200,
        200,
        Point3::new(0.0, 0.0, 4.0),
        Point3::origin(),
        Vector3::y(),
        40.0,
    );
    let distinct = |s: &Scene| {
        let img = render(s, &cam, &RenderOptions::new(200, 200));
        let mut v: Vec<Color> = covered(&img, s.background)
            .iter()
            .map(|&(x, y)| img.get(x, y).unwrap())
            .collect();
        v.sort_by_key(|c| c.to_array());
        v.dedup();
        v.len()
    };
    let flat = distinct(&s0);
    let mut s1 = s0.clone();
    s1.meshes[0].shading = Shading::Smooth;
    let smooth = distinct(&s1);
    // 80 faces: at most one shade each when flat; a gradient when smooth.
    assert!(flat <= 80, "{flat}");
    assert!(smooth > 2 * flat, "smooth {smooth} flat {flat}");
}

#[test]
fn bad_input_gives_no_panic() {
    let nan = f32::NAN;
    let pos = vec![
        [0.0, 0.0, 0.0],
        [nan, 1.0, 0.0],
        [1.0, 0.0, 0.0],
        [1e30, -1e30, 5.0],
    ];
    let tris = vec![[0, 1, 2], [0, 2, 99], [0, 2, 3], [3, 3, 3]];
    let mut m = SceneMesh::new(Arc::new(pos), Arc::new(tris), Color::WHITE);
    m.colors = FaceColors::PerFace(Arc::new(vec![Color::RED])); // too short
    m.shading = Shading::Smooth;
    let mut s = scene_with(vec![m]);
    s.polylines = vec![
        Polyline {
            points: vec![[f64::NAN, 0.0, 0.0], [1.0, 1.0, 1.0], [1e300, 0.0, 0.0]],
            color: LineColor::PerVertex(vec![]),
            width_px: f32::NAN,
            dash: Some((f32::NAN, -1.0)),
            occluded: Occluded::Faint(f32::NAN),
        },
        Polyline {
            points: vec![],
            color: LineColor::Uniform(Color::RED),
            width_px: 1.0,
            dash: None,
            occluded: Occluded::Hidden,
        },
    ];
    s.markers = vec![Marker {
        position: [f64::NAN, 0.0, 0.0],
        shape: MarkerShape::Ring,
        size_px: f32::INFINITY,
        color: Color::RED,
        occluded: Occluded::Hidden,
    }];
    s.overlays = vec![Overlay::Text {
        text: "\u{0}\u{ffff}".into(),
        x_px: f32::NAN,
        y_px: 1.0,
        size_px: -3.0,
        color: Color::WHITE,
        anchor: Anchor::Center,
    }];
    let cam = Camera::perspective(
        0,
        0,
        Point3::new(f64::NAN, 0.0, 0.0),
        Point3::origin(),
        Vector3::zeros(),
        f64::NAN,
    );
    for opts in [
        RenderOptions::new(0, 0),
        RenderOptions::new(7, 5).with_supersample(99),
    ] {
        let img = render(&s, &cam, &opts);
        assert_eq!(img.pixels.len(), (img.width * img.height) as usize);
    }
}

#[test]
fn scale_bar_lengths_are_round() {
    // 1-2-5 series (common practice for scale bars).
    assert_eq!(round_length_m(130.0), 100.0);
    assert_eq!(round_length_m(0.031), 0.02);
    assert_eq!(round_length_m(7400.0), 5000.0);
    assert_eq!(format_value(2500.0), "2500");
    assert_eq!(format_value(0.125), "0.125");
    assert_eq!(format_value(-3.0), "-3");
}

fn ink_bbox(img: &Image, bg: Color) -> Option<(u32, u32, u32, u32)> {
    let px = covered(img, bg);
    if px.is_empty() {
        return None;
    }
    let x0 = px.iter().map(|p| p.0).min()?;
    let x1 = px.iter().map(|p| p.0).max()?;
    let y0 = px.iter().map(|p| p.1).min()?;
    let y1 = px.iter().map(|p| p.1).max()?;
    Some((x0, x1, y0, y1))
}

#[test]
fn text_is_placed_by_its_anchor_and_scales_with_size() {
    let text_at = |anchor, size| {
        let mut s = scene_with(vec![]);
        s.overlays = vec![Overlay::Text {
            text: "Quillon 42".into(),
            x_px: 150.0,
            y_px: 50.0,
            size_px: size,
            color: Color::WHITE,
            anchor,
        }];
        let img = render(
            &s,
            &top_camera(300, 100, 10.0),
            &RenderOptions::new(300, 100),
        );
        ink_bbox(&img, BG).unwrap()
    };
    let tl = text_at(Anchor::TopLeft, 16.0);
    assert!(
        tl.0 >= 150 && tl.0 <= 153 && tl.2 >= 50 && tl.2 <= 56,
        "{tl:?}"
    );
    let br = text_at(Anchor::BottomRight, 16.0);
    assert!(
        br.1 <= 150 && br.1 >= 146 && br.3 <= 50 && br.3 >= 42,
        "{br:?}"
    );
    let c = text_at(Anchor::Center, 16.0);
    let (cx, cy) = ((c.0 + c.1) as f64 / 2.0, (c.2 + c.3) as f64 / 2.0);
    assert!(
        (cx - 150.0).abs() <= 2.0 && (cy - 50.0).abs() <= 4.0,
        "{c:?}"
    );
    // Twice the size: about twice as wide (glyph outlines scale linearly with the em size).
    let big = text_at(Anchor::TopLeft, 32.0);
    let ratio = (big.1 - big.0) as f64 / (tl.1 - tl.0) as f64;
    assert!((ratio - 2.0).abs() < 0.15, "ratio {ratio}");
}

#[test]
fn per_vertex_line_colours_blend_along_the_line() {
    let mut s = scene_with(vec![]);
    s.polylines = vec![Polyline {
        points: vec![[-2.0, 0.0, 0.0], [2.0, 0.0, 0.0]],
        color: LineColor::PerVertex(vec![Color::rgb(255, 0, 0), Color::rgb(0, 0, 255)]),
        width_px: 3.0,
        dash: None,
        occluded: Occluded::Hidden,
    }];
    // 40 px per metre: the line runs from x = 20 to x = 180 px.
    let img = render(
        &s,
        &top_camera(200, 100, 40.0),
        &RenderOptions::new(200, 100),
    );
    let a = img.get(22, 50).unwrap();
    let m = img.get(100, 50).unwrap();
    let b = img.get(178, 50).unwrap();
    assert!(a.r > 240 && a.b < 15, "{a:?}");
    assert!(b.b > 240 && b.r < 15, "{b:?}");
    assert!(
        (m.r as i32 - 128).abs() <= 3 && (m.b as i32 - 128).abs() <= 3,
        "{m:?}"
    );
}

#[test]
fn model_matrix_places_and_scales_the_mesh() {
    // Orthographic, 40 px/m: a unit cube covers 40 x 40 px; scaled by 2 (a non-rigid model
    // matrix) 80 x 80 px; rotated 45 degrees about z, its top face becomes a diamond with the
    // same area (rotations preserve area) but a bounding box sqrt(2) times wider.
    let cam = top_camera(200, 200, 40.0);
    let count = |model: nalgebra::Matrix4<f64>| {
        let mut m = mesh(testing::cube(1.0), Color::WHITE);
        m.model = model;
        let img = render(&scene_with(vec![m]), &cam, &RenderOptions::new(200, 200));
        (covered(&img, BG).len() as f64, ink_bbox(&img, BG).unwrap())
    };
    let (a1, _) = count(nalgebra::Matrix4::identity());
    let (a2, _) = count(nalgebra::Matrix4::new_scaling(2.0));
    let rot = nalgebra::Rotation3::from_axis_angle(&Vector3::z_axis(), std::f64::consts::FRAC_PI_4);
    let (a3, bb3) = count(rot.to_homogeneous());
    let shift = nalgebra::Matrix4::new_translation(&Vector3::new(1.0, 0.5, 0.0));
    let (_, bb4) = count(shift);
    assert!((a1 - 1600.0).abs() <= 80.0, "{a1}");
    assert!((a2 / a1 - 4.0).abs() < 0.05, "{a2} / {a1}");
    assert!((a3 / a1 - 1.0).abs() < 0.05, "{a3} / {a1}");
    let w3 = (bb3.1 - bb3.0 + 1) as f64;
    assert!((w3 / 40.0 - 2f64.sqrt()).abs() < 0.05, "{w3}");
    // Translation by (1, 0.5) m: 40 px right and 20 px up (y up in the world, down on screen).
    assert_eq!((bb4.0, bb4.2), (120, 60));
}

#[test]
fn a_reused_renderer_matches_fresh_renders_across_sizes() {
    let s = demo_scene();
    let mut r = Renderer::new();
    for (w, h, ss) in [(120, 90, 1), (64, 64, 2), (120, 90, 1), (33, 17, 3)] {
        let opts = RenderOptions::new(w, h).with_supersample(ss);
        let cam = demo_camera(w, h);
        let reused = r.render(&s, &cam, &opts).clone();
        assert_eq!(reused, render(&s, &cam, &opts), "{w}x{h} ss {ss}");
    }
}

#[test]
fn random_scenes_and_cameras_never_panic() {
    // A small linear congruential generator (Knuth, MMIX constants) keeps the test reproducible.
    let mut state = 0x2545_f491_4f6c_dd1du64;
    let mut next = move || {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let specials = [0.0, -0.0, 1e-30, 1e30, f64::NAN, f64::INFINITY, -1.0];
    for round in 0..300 {
        let mut v = |scale: f64| {
            let r = next();
            if r < 0.05 {
                specials[(next() * specials.len() as f64) as usize % specials.len()]
            } else {
                (r - 0.5) * 2.0 * scale
            }
        };
        let n = 3 + (round % 7) * 5;
        let pos: Vec<[f32; 3]> = (0..n)
            .map(|_| [v(2.0) as f32, v(2.0) as f32, v(2.0) as f32])
            .collect();
        let tris: Vec<[u32; 3]> = (0..n)
            .map(|_| {
                [
                    (v(1.0).abs() * n as f64) as u32,
                    1,
                    (v(1.0).abs() * 1.2 * n as f64) as u32,
                ]
            })
            .collect();
        let mut m = SceneMesh::new(Arc::new(pos), Arc::new(tris), Color::WHITE);
        m.shading = if round % 2 == 0 {
            Shading::Smooth
        } else {
            Shading::Flat
        };
        m.wireframe = (round % 3 == 0).then_some(Color::RED);
        m.cull_back_faces = round % 4 != 0;
        m.model = nalgebra::Matrix4::new_scaling(v(3.0));
        let mut s = scene_with(vec![m]);
        s.polylines = vec![Polyline {
            points: (0..20).map(|_| [v(3.0), v(3.0), v(3.0)]).collect(),
            color: LineColor::Uniform(Color::YELLOW),
            width_px: v(6.0) as f32,
            dash: Some((v(5.0) as f32, v(5.0) as f32)),
            occluded: Occluded::Faint(v(1.0) as f32),
        }];
        s.arrows = vec![Arrow {
            from: [v(2.0), v(2.0), v(2.0)],
            to: [v(2.0), v(2.0), v(2.0)],
            color: Color::CYAN,
            width_px: v(5.0) as f32,
        }];
        s.overlays = vec![
            Overlay::ColorBar {
                colormap: Colormap::RedBlue,
                min: v(10.0),
                max: v(10.0),
                label: "x".into(),
                rect: Rect::new(
                    v(100.0) as f32,
                    v(100.0) as f32,
                    v(50.0) as f32,
                    v(50.0) as f32,
                ),
            },
            Overlay::ScaleBar {
                unit_label: String::new(),
                corner: Corner::TopRight,
            },
        ];
        let eye = Point3::new(v(10.0), v(10.0), v(10.0));
        let cam = if round % 2 == 0 {
            Camera::perspective(64, 48, eye, Point3::origin(), Vector3::z(), v(200.0))
        } else {
            Camera::orthographic(64, 48, eye, Point3::origin(), Vector3::z(), v(5.0))
        };
        let img = render(
            &s,
            &cam,
            &RenderOptions::new(64, 48).with_supersample(1 + round as u32 % 3),
        );
        assert_eq!(img.pixels.len(), 64 * 48);
        let mut r = Renderer::new();
        let _ = r.render_face_ids(&s, &cam, 64, 48);
    }
}
