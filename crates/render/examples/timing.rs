//! Ad-hoc timing of the benchmark scene (set TIMING=1 for per-phase figures).

use std::sync::Arc;

use nalgebra::{Point3, Vector3};
use spinfall_render::*;

/// Trace `k` of 100: a hop over the body (radius 1000 m, relief 6 %) from a spread of sites.
fn trace(k: usize) -> Vec<[f64; 3]> {
    let k = k as f64;
    testing::hop_trace(
        1000,
        1070.0,
        (0.61 * k).sin() * 1.2,
        0.37 * k,
        1.3 * k,
        0.4 + 0.9 * ((0.23 * k).cos() * 0.5 + 0.5),
        150.0 + 500.0 * ((0.71 * k).sin() * 0.5 + 0.5),
    )
}

fn main() -> std::result::Result<(), Box<dyn std::error::Error>> {
    let (positions, triangles) = testing::icosphere(1000.0, 7, 0.06);
    let values: Vec<f64> = (0..triangles.len()).map(|i| (i % 977) as f64).collect();
    let colors = face_colors(&values, 0.0, 977.0, Colormap::Viridis);
    let mut mesh = SceneMesh::new(Arc::new(positions), Arc::new(triangles), Color::GREY);
    mesh.colors = FaceColors::PerFace(Arc::new(colors));
    let mut s = Scene {
        meshes: vec![mesh],
        ..Scene::default()
    };
    let lines = std::env::args()
        .nth(1)
        .map(|a| a == "lines")
        .unwrap_or(true);
    if lines {
        for k in 0..100 {
            s.polylines.push(Polyline {
                points: trace(k),
                color: LineColor::Uniform(Color::ORANGE),
                width_px: 1.5,
                dash: None,
                occluded: Occluded::Faint(0.3),
            });
        }
    }
    let cam = Camera::perspective(
        1280,
        720,
        Point3::new(3200.0, 2000.0, 1500.0),
        Point3::origin(),
        Vector3::z(),
        40.0,
    );
    let mut r = Renderer::new();
    // OPTS="3840 2160 2" renders at another size with supersampling.
    let nums: Vec<u32> = std::env::var("OPTS")
        .unwrap_or_default()
        .split_whitespace()
        .filter_map(|v| v.parse().ok())
        .collect();
    let opts = match nums[..] {
        [w, h, ss] => RenderOptions::new(w, h).with_supersample(ss),
        _ => RenderOptions::new(1280, 720),
    };
    let mut best = std::time::Duration::MAX;
    let frames: usize = std::env::var("FRAMES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(40);
    for _ in 0..frames {
        let t = std::time::Instant::now();
        let img = r.render(&s, &cam, &opts);
        std::hint::black_box(img.pixels.len());
        best = best.min(t.elapsed());
    }
    eprintln!("best total {best:?}");
    if let Ok(path) = std::env::var("PNG") {
        let img = r.render(&s, &cam, &RenderOptions::new(1280, 720));
        let bg = s.background;
        let n = img.pixels.iter().filter(|p| **p != bg).count();
        eprintln!("non-background pixels {n}");
        let f = std::fs::File::create(path)?;
        encode_png(img, &[], f)?;
    }
    Ok(())
}
