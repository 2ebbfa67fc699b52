//! Figure back ends against each other and against a real SVG renderer (resvg): every kind of
//! item drawn by the rasterizer and by resvg from the SVG must agree; vector views put lines
//! where the raster render puts them; cameras keep what they showed when the aspect changes.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

#[path = "support/resvg_render.rs"]
mod resvg_render;

use std::sync::Arc;

use nalgebra::{Point3, Vector3};
use resvg_render::render_svg;
use spinfall_render::*;

/// Mean absolute difference per channel inside `r`.
fn diff_in(a: &Image, b: &Image, r: Rect) -> f64 {
    let mut s = 0u64;
    let mut n = 0u64;
    for y in r.y_px as u32..(r.y_px + r.height_px) as u32 {
        for x in r.x_px as u32..(r.x_px + r.width_px) as u32 {
            let (p, q) = (a.get(x, y).unwrap(), b.get(x, y).unwrap());
            s += (p.r as i64 - q.r as i64).unsigned_abs()
                + (p.g as i64 - q.g as i64).unsigned_abs()
                + (p.b as i64 - q.b as i64).unsigned_abs();
            n += 3;
        }
    }
    s as f64 / n as f64
}

/// The smallest [`diff_in`] over shifts of `b` by up to one pixel each way: text positions
/// are rounded to whole pixels in the raster and kept exact in SVG.
fn diff_within_a_pixel(a: &Image, b: &Image, r: Rect) -> f64 {
    let mut best = f64::INFINITY;
    for dy in -1..=1 {
        for dx in -1..=1 {
            best = best.min(diff_in(a, &shifted(b, dx, dy), r));
        }
    }
    best
}

/// `b` moved by `(-dx, -dy)` pixels.
fn shifted(b: &Image, dx: i64, dy: i64) -> Image {
    let mut out = b.clone();
    for y in 0..b.height as i64 {
        for x in 0..b.width as i64 {
            let (sx, sy) = (x + dx, y + dy);
            if sx >= 0 && sy >= 0 && sx < b.width as i64 && sy < b.height as i64 {
                out.set(x as u32, y as u32, b.get(sx as u32, sy as u32).unwrap());
            }
        }
    }
    out
}

#[test]
fn every_item_kind_looks_the_same_in_the_raster_and_in_resvg() {
    let mut f = Figure::new(400, 200, Color::WHITE);
    let mut raster = Image::new(40, 30, Color::rgb(30, 120, 200));
    raster.set(5, 5, Color::rgb(255, 0, 0));
    let cases: Vec<(&str, Rect, Item)> = vec![
        (
            "raster",
            Rect::new(10.0, 10.0, 40.0, 30.0),
            Item::Raster {
                x_px: 10.0,
                y_px: 10.0,
                image: Arc::new(raster),
            },
        ),
        (
            "rect",
            Rect::new(60.0, 10.0, 30.0, 30.0),
            Item::Rect {
                rect: Rect::new(62.0, 12.0, 26.0, 26.0),
                fill: Color::rgba(200, 30, 30, 160),
            },
        ),
        (
            "dashed line",
            Rect::new(100.0, 5.0, 90.0, 45.0),
            Item::Line {
                points: vec![[105.0, 10.0], [185.0, 45.0]],
                color: Color::rgb(0, 114, 178),
                width_px: 3.0,
                dash: Some((8.0, 5.0)),
                dash_offset_px: 2.0,
            },
        ),
        (
            "polygon",
            Rect::new(200.0, 5.0, 50.0, 45.0),
            Item::Polygon {
                points: vec![[205.0, 45.0], [225.0, 8.0], [245.0, 45.0]],
                fill: Color::rgb(0, 158, 115),
            },
        ),
        (
            "gradient",
            Rect::new(260.0, 5.0, 20.0, 90.0),
            Item::Gradient {
                rect: Rect::new(262.0, 8.0, 14.0, 84.0),
                colormap: Colormap::Viridis,
                vertical: true,
            },
        ),
        (
            "vertical text",
            Rect::new(290.0, 5.0, 30.0, 120.0),
            Item::Text {
                text: "altitude (m)".into(),
                x_px: 295.0,
                y_px: 65.0,
                size_px: 14.0,
                color: Color::BLACK,
                anchor: Anchor::TopCenter,
                vertical: true,
            },
        ),
        (
            "text",
            Rect::new(10.0, 150.0, 200.0, 40.0),
            Item::Text {
                text: "Slope (deg) 35".into(),
                x_px: 110.0,
                y_px: 170.0,
                size_px: 16.0,
                color: Color::rgb(20, 20, 20),
                anchor: Anchor::Center,
                vertical: false,
            },
        ),
    ];
    let shapes = [
        MarkerShape::Dot,
        MarkerShape::Ring,
        MarkerShape::Cross,
        MarkerShape::Square,
        MarkerShape::Diamond,
    ];
    let mut all = cases;
    for (i, shape) in shapes.iter().enumerate() {
        let x = 30.0 + 40.0 * i as f32;
        all.push((
            "marker",
            Rect::new(x - 15.0, 85.0, 30.0, 30.0),
            Item::Marker {
                x_px: x,
                y_px: 100.0,
                shape: *shape,
                size_px: 18.0,
                stroke_px: 2.5,
                color: Color::rgb(213, 94, 0),
            },
        ));
    }
    for (_, _, item) in &all {
        f.items.push(item.clone());
    }
    let drawn = f.to_image();
    let svg = svg_string(&f).unwrap();
    let by_resvg = render_svg(&svg);
    if std::env::var_os("SPINFALL_SAVE_FIGURES").is_some() {
        for (name, img) in [("items_raster", &drawn), ("items_resvg", &by_resvg)] {
            let file = std::fs::File::create(format!("/tmp/v/{name}.png")).unwrap();
            encode_png(img, &[], file).unwrap();
        }
    }
    for (name, region, _) in &all {
        // Anti-aliasing differs at edges; shapes in the wrong place or missing give tens.
        let (d, limit) = if name.contains("text") {
            // Glyph rasterizers differ (fontdue here, resvg's own there); misplaced text (4 px
            // off) gives far more than this limit, as checked just below.
            let misplaced = diff_in(&drawn, &shifted(&by_resvg, 4, 4), *region);
            assert!(
                misplaced > 9.0,
                "{name}: the check cannot tell ({misplaced:.2})"
            );
            (diff_within_a_pixel(&drawn, &by_resvg, *region), 7.0)
        } else {
            (diff_in(&drawn, &by_resvg, *region), 6.0)
        };
        assert!(
            d < limit,
            "{name}: raster and resvg differ by {d:.2} on average"
        );
        // And the item drew something.
        let ink = diff_in(&drawn, &Image::new(400, 200, Color::WHITE), *region);
        assert!(ink > 1.0, "{name}: nothing drawn");
    }
}

fn line_scene() -> Scene {
    let (positions, triangles) = testing::cube(2.0);
    let mut scene = Scene::default();
    scene.meshes.push(SceneMesh::new(
        Arc::new(positions),
        Arc::new(triangles),
        Color::LIGHT_GREY,
    ));
    // A line passing in front of the cube and behind it.
    scene.polylines.push(Polyline {
        points: vec![[-3.0, -3.0, 0.0], [3.0, 3.0, 0.0]],
        color: LineColor::Uniform(Color::ORANGE),
        width_px: 3.0,
        dash: None,
        occluded: Occluded::Hidden,
    });
    scene.markers.push(Marker {
        position: [0.0, 0.0, 1.5],
        shape: MarkerShape::Dot,
        size_px: 10.0,
        color: Color::CYAN,
        occluded: Occluded::Hidden,
    });
    scene
}

#[test]
fn vector_views_put_lines_and_markers_where_the_raster_render_does() {
    let scene = line_scene();
    let camera = Camera::perspective(
        320,
        240,
        Point3::new(4.0, -3.0, 5.0),
        Point3::origin(),
        Vector3::z(),
        40.0,
    );
    let opts = RenderOptions::new(320, 240).with_supersample(2);
    let raster = render(&scene, &camera, &opts);
    let mut r = Renderer::new();
    let v = r.render_vector(&scene, &camera, &opts);
    let mut f = Figure::new(320, 240, scene.background);
    f.items.push(Item::Raster {
        x_px: 0.0,
        y_px: 0.0,
        image: Arc::new(v.raster.clone()),
    });
    f.items.extend(v.items.iter().cloned());
    let composed = f.to_image();
    let all = Rect::new(0.0, 0.0, 320.0, 240.0);
    let d = diff_in(&raster, &composed, all);
    assert!(
        d < 1.5,
        "vector view differs from the raster view by {d:.2}"
    );
    // The hidden part of the line was cut away: the line became at least two pieces or
    // stopped at the cube.
    let lines = v
        .items
        .iter()
        .filter(|i| matches!(i, Item::Line { .. }))
        .count();
    assert!(lines >= 1);
    assert!(v.items.iter().any(|i| matches!(i, Item::Marker { .. })));
    // The mesh raster has no line pixels.
    assert!(!v.raster.pixels.contains(&Color::ORANGE));
}

#[test]
fn a_narrower_viewport_keeps_everything_the_camera_showed() {
    for perspective in [true, false] {
        let mut cam = if perspective {
            Camera::perspective(
                800,
                400,
                Point3::new(0.0, -10.0, 0.0),
                Point3::origin(),
                Vector3::z(),
                30.0,
            )
        } else {
            Camera::orthographic(
                800,
                400,
                Point3::new(0.0, -10.0, 0.0),
                Point3::origin(),
                Vector3::z(),
                4.0,
            )
        };
        // The corners of the old view at the target's depth.
        let corners: Vec<Point3<f64>> = [(0.0, 0.0), (800.0, 0.0), (0.0, 400.0), (800.0, 400.0)]
            .iter()
            .map(|&(x, y)| {
                let (o, d) = cam.ray_at_pixel(x, y);
                // Intersect with the plane y = 0 (through the target, facing the camera).
                let t = -o.y / d.y;
                o + d * t
            })
            .collect();
        cam.set_viewport_containing(300, 400);
        for c in &corners {
            let (x, y, _) = cam.project(c).unwrap();
            assert!(
                (-0.6..=300.6).contains(&x) && (-0.6..=400.6).contains(&y),
                "perspective {perspective}: corner {c:?} at {x:.1}, {y:.1}"
            );
        }
        // One side touches: nothing is shown smaller than needed.
        let xs: Vec<f64> = corners.iter().map(|c| cam.project(c).unwrap().0).collect();
        assert!(xs.iter().any(|x| x.abs() < 1.0), "{xs:?}");
    }
}
