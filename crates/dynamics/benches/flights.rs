//! Flight throughput: launches to rest or escape over the ~80k-facet demo body, both cores.
//!
//! Slow by nature: 10 samples of 10 launches each. For the 1000-launch figure run
//! `cargo run --release -p spinfall-dynamics --example flights_timing`.

use std::hint::black_box;
use std::sync::atomic::AtomicBool;

use criterion::{Criterion, criterion_group, criterion_main};

include!("support/launches.rs");

fn flights(c: &mut Criterion) {
    let body = bench_body(6);
    let launches = bench_launches(&body, 10);
    let settings = bench_settings();
    let mut group = c.benchmark_group("flights");
    group.sample_size(10);
    group.bench_function("10 launches, demo body 81920 faces, rel_tol 1e-10", |b| {
        b.iter(|| {
            let reports = spinfall_dynamics::fly_all(
                &body,
                black_box(&launches),
                &settings,
                &|_, _| {},
                &AtomicBool::new(false),
            );
            black_box(reports)
        })
    });
    group.finish();
}

criterion_group!(benches, flights);
criterion_main!(benches);
