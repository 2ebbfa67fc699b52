//! What one frame of a 3D view costs in the app: build the scene from the body and the flight
//! reports, rasterize it at 1280 x 720 and convert it to the texture egui uploads. The app must
//! hold 60 frames per second while orbiting a 720p view (16.7 ms for everything).

use std::hint::black_box;
use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use criterion::{Criterion, criterion_group, criterion_main};
use spinfall_dynamics::scenario::{Scenario, builtin_quillon};
use spinfall_dynamics::{FlightSettings, fly_all};
use spinfall_render::{RenderOptions, Renderer};
use spinfall_scene::{BodyView, Frame, ViewOptions, default_camera, frame_scene};

fn view_frame(c: &mut Criterion) {
    let scenario = Scenario::builtin_example();
    let (shape, _) = builtin_quillon().expect("demo body parses");
    let body = Arc::new(scenario.build_body(shape).expect("demo body builds"));
    let launches = scenario.build_launches(&body).expect("demo launches build");
    let mut settings = FlightSettings::default();
    settings.integrator.max_time_s = 4.0 * 3600.0;
    let reports = fly_all(
        &body,
        &launches,
        &settings,
        &|_, _| {},
        &AtomicBool::new(false),
    );
    let view = BodyView::new(body);
    let (w, h) = (1280, 720);
    let mut camera = default_camera(&view.body().shape, w, h);
    let opts = ViewOptions::default();
    let mut renderer = Renderer::new();
    let mut group = c.benchmark_group("view_frame_720p");
    for frame in [Frame::BodyFixed, Frame::Inertial] {
        group.bench_function(format!("{frame:?}"), |b| {
            let mut t_s = 0.0;
            b.iter(|| {
                // Orbit a little every frame, as while dragging.
                camera.orbit(3.0, 0.5);
                t_s += 10.0;
                let scene = frame_scene(&view, &reports, t_s, &opts, [w, h], frame);
                let image = renderer.render(&scene, &camera, &RenderOptions::new(w, h));
                let pixels: Vec<egui::Color32> = image
                    .pixels
                    .iter()
                    .map(|p| egui::Color32::from_rgba_premultiplied(p.r, p.g, p.b, p.a))
                    .collect();
                black_box(egui::ColorImage::new([w as usize, h as usize], pixels))
            })
        });
    }
    group.finish();
}

criterion_group!(benches, view_frame);
criterion_main!(benches);
