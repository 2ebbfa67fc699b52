//! Figure and animation costs on the built-in example (flown for two hours, slope map shown):
//! a 1280x720 and a 3840x2160 raster figure (2x2 supersampling, as exported), the SVG of a
//! 1280x720 figure, and a 12-frame 960x540 GIF.
//!
//! `cargo bench -p spinfall-scene --bench figure`

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use criterion::{Criterion, criterion_group, criterion_main};
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::surface_map::{SurfaceField, surface_map};
use spinfall_dynamics::{FlightSettings, fly_all};
use spinfall_render::{AnimationFormat, FigureSize, ThemeKind, svg_string};
use spinfall_scene::{
    AnimationSettings, BodyView, FigureOptions, Output, ViewOptions, build_figure, write_animation,
};

fn setup() -> (BodyView, Vec<spinfall_dynamics::FlightReport>) {
    let scenario = Scenario::builtin_example();
    let (shape, _) = spinfall_dynamics::scenario::builtin_quillon().expect("demo body");
    let body = Arc::new(scenario.build_body(shape).expect("body"));
    let launches = scenario.build_launches(&body).expect("launches");
    let mut settings = FlightSettings::default();
    settings.integrator.max_time_s = 7200.0;
    let cancel = AtomicBool::new(false);
    let reports = fly_all(&body, &launches, &settings, &|_, _| {}, &cancel);
    let map = surface_map(&body, &|_, _| {}, &cancel).expect("surface map");
    let mut view = BodyView::new(body);
    view.set_map(Some(Arc::new(map)));
    (view, reports)
}

fn bench(c: &mut Criterion) {
    let (view, reports) = setup();
    let opts = ViewOptions {
        map: Some(SurfaceField::Slope),
        theme: ThemeKind::Light,
        ..ViewOptions::default()
    };
    let fig = |w, h, output| FigureOptions {
        size: FigureSize::Pixels {
            width_px: w,
            height_px: h,
        },
        output,
        ..FigureOptions::default()
    };
    let mut g = c.benchmark_group("figure");
    g.sample_size(10);
    for (w, h) in [(1280, 720), (3840, 2160)] {
        let f = fig(w, h, Output::Raster);
        g.bench_function(format!("raster {w}x{h}"), |b| {
            b.iter(|| {
                build_figure(&view, &reports, 3600.0, &opts, &f)
                    .expect("figure")
                    .to_image()
            })
        });
    }
    let f = fig(1280, 720, Output::Vector);
    g.bench_function("svg 1280x720", |b| {
        b.iter(|| {
            svg_string(&build_figure(&view, &reports, 3600.0, &opts, &f).expect("figure"))
                .expect("svg")
        })
    });
    let f = fig(960, 540, Output::Raster);
    let anim = AnimationSettings {
        frames: 12,
        fps: 12.0,
        from_s: 0.0,
        to_s: 7200.0,
    };
    g.bench_function("gif 12 frames 960x540", |b| {
        b.iter(|| {
            let mut out = Vec::new();
            write_animation(
                &view,
                &reports,
                &opts,
                &f,
                &anim,
                AnimationFormat::Gif,
                &mut out,
                &|_, _| {},
                &AtomicBool::new(false),
            )
            .expect("animation");
            out.len()
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
