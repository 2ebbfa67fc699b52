//! Geometry-query speed: ShapeModel build (validation + mass properties + BVH), ray first hit,
//! short-segment first hit (impact detection), nearest point and inside test, on icospheres of
//! 81 920 and 327 680 faces.
//!
//! Run: `cargo bench -p spinfall-gravity --bench queries`.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use nalgebra::{Point3, Vector3};
use rand::{Rng, SeedableRng};
use spinfall_gravity::{ShapeModel, generate};

const RADIUS_M: f64 = 1000.0;

/// Rays from a shell at 3 radii aimed at random points inside the sphere (all hit).
fn rays(n: usize) -> Vec<(Point3<f64>, Vector3<f64>)> {
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
    (0..n)
        .map(|_| {
            let dir_out = Vector3::new(
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
            )
            .normalize();
            let origin = Point3::from(dir_out * 3.0 * RADIUS_M);
            let target = Point3::new(
                rng.random_range(-0.5..0.5),
                rng.random_range(-0.5..0.5),
                rng.random_range(-0.5..0.5),
            ) * RADIUS_M;
            (origin, target - origin)
        })
        .collect()
}

/// Short segments (one integration step) ending 2 m below the surface from 20 m above it.
fn segments(n: usize) -> Vec<(Point3<f64>, Point3<f64>)> {
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(2);
    (0..n)
        .map(|_| {
            let u = Vector3::new(
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
            )
            .normalize();
            let tangent = u.cross(&Vector3::new(0.3, 0.5, 0.8)).normalize() * 5.0;
            (
                Point3::from(u * (RADIUS_M + 20.0)),
                Point3::from(u * (RADIUS_M - 2.0) + tangent),
            )
        })
        .collect()
}

fn queries(c: &mut Criterion) {
    let rays = rays(4096);
    let segments = segments(4096);
    for subdivisions in [6u32, 7] {
        let mesh = generate::icosphere(RADIUS_M, subdivisions);
        let faces = mesh.faces.len();
        let mut group = c.benchmark_group(format!("queries_{faces}_faces"));
        group.sample_size(10);
        group.bench_function("shape_model_new", |b| {
            b.iter(|| ShapeModel::new(black_box(mesh.clone())))
        });
        group.sample_size(50);
        let (shape, _) = ShapeModel::new(mesh.clone()).expect("valid icosphere");
        let mut i = 0;
        group.bench_function("ray_first_hit", |b| {
            b.iter(|| {
                i = (i + 1) % rays.len();
                let (o, d) = &rays[i];
                shape.ray_first_hit(black_box(o), black_box(d), 10.0)
            })
        });
        group.bench_function("segment_first_hit_short", |b| {
            b.iter(|| {
                i = (i + 1) % segments.len();
                let (a, e) = &segments[i];
                shape.segment_first_hit(black_box(a), black_box(e))
            })
        });
        group.bench_function("nearest_surface_point", |b| {
            b.iter(|| {
                i = (i + 1) % segments.len();
                shape.nearest_surface_point(black_box(&segments[i].0))
            })
        });
        group.bench_function("contains", |b| {
            b.iter(|| {
                i = (i + 1) % segments.len();
                shape.contains(black_box(&segments[i].1))
            })
        });
        group.finish();
    }
}

criterion_group!(benches, queries);
criterion_main!(benches);
