//! Frame benchmarks: a ~330k-facet bumpy sphere with 100 traces of 1,000 points at 1280x720,
//! and the same scene at 3840x2160 with 2x2 supersampling.

use std::hint::black_box;
use std::sync::Arc;

use criterion::{Criterion, criterion_group, criterion_main};
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

fn scene() -> Scene {
    // Level 7 icosphere: 20 * 4^7 = 327,680 triangles.
    let (positions, triangles) = testing::icosphere(1000.0, 7, 0.06);
    let values: Vec<f64> = (0..triangles.len()).map(|i| (i % 977) as f64).collect();
    let colors = face_colors(&values, 0.0, 977.0, Colormap::Viridis);
    let mut mesh = SceneMesh::new(Arc::new(positions), Arc::new(triangles), Color::GREY);
    mesh.colors = FaceColors::PerFace(Arc::new(colors));
    let mut s = Scene {
        meshes: vec![mesh],
        ..Scene::default()
    };
    for k in 0..100 {
        s.polylines.push(Polyline {
            points: trace(k),
            color: LineColor::Uniform(Color::ORANGE),
            width_px: 1.5,
            dash: None,
            occluded: Occluded::Faint(0.3),
        });
    }
    s
}

fn camera() -> Camera {
    Camera::perspective(
        1280,
        720,
        Point3::new(3200.0, 2000.0, 1500.0),
        Point3::origin(),
        Vector3::z(),
        40.0,
    )
}

fn bench(c: &mut Criterion) {
    let scene = scene();
    let cam = camera();
    let mut renderer = Renderer::new();
    let mut g = c.benchmark_group("frame");
    g.sample_size(30);
    g.bench_function("1280x720_330k_faces_100x1000_traces", |b| {
        b.iter(|| {
            let img = renderer.render(&scene, &cam, &RenderOptions::new(1280, 720));
            black_box(img.pixels.len());
        })
    });
    g.sample_size(10);
    g.bench_function("3840x2160_ss2_330k_faces_100x1000_traces", |b| {
        b.iter(|| {
            let img = renderer.render(
                &scene,
                &cam,
                &RenderOptions::new(3840, 2160).with_supersample(2),
            );
            black_box(img.pixels.len());
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
