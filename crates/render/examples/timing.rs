//! Ad-hoc timing of the benchmark scene (set TIMING=1 for per-phase figures).

use std::sync::Arc;

use nalgebra::{Point3, Vector3};
use spinfall_render::*;

fn main() {
    let (positions, triangles) = testing::icosphere(1000.0, 7, 0.06);
    let values: Vec<f64> = (0..triangles.len()).map(|i| (i % 977) as f64).collect();
    let colors = face_colors(&values, 0.0, 977.0, Colormap::Viridis);
    let mut mesh = SceneMesh::new(Arc::new(positions), Arc::new(triangles), Color::GREY);
    mesh.colors = FaceColors::PerFace(Arc::new(colors));
    let mut s = Scene { meshes: vec![mesh], ..Scene::default() };
    let lines = std::env::args().nth(1).map(|a| a == "lines").unwrap_or(true);
    if lines {
        for k in 0..100 {
            s.polylines.push(Polyline {
                points: testing::spiral(1000, 1150.0 + 8.0 * k as f64, 2.0, -1200.0, 1200.0, 0.37 * k as f64),
                color: LineColor::Uniform(Color::ORANGE),
                width_px: 1.5,
                dash: None,
                occluded: Occluded::Faint(0.3),
            });
        }
    }
    let cam = Camera::perspective(1280, 720, Point3::new(3200.0, 2000.0, 1500.0), Point3::origin(), Vector3::z(), 40.0);
    let mut r = Renderer::new();
    for _ in 0..20 {
        let t = std::time::Instant::now();
        let img = r.render(&s, &cam, &RenderOptions::new(1280, 720));
        std::hint::black_box(img.pixels.len());
        eprintln!("total {:?}", t.elapsed());
    }
}
