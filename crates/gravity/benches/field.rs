//! Speed of the polyhedron gravity field: batches of points (ns per facet per point from the
//! throughput line: 1e3 / (Melem/s)), single-point latency, and memory per facet.
//!
//! Run: `cargo bench -p spinfall-gravity --bench field`. Before each mesh's criterion groups it
//! prints CPU time per facet per point of each single-point kernel and of the 256-point batch
//! (with how many cores were busy, since the machine may be shared); with
//! `SPINFALL_BENCH_QUICK=1` it prints only those and skips criterion.

use std::hint::black_box;
use std::time::{Duration, Instant};

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use nalgebra::{Point3, Vector3};
use spinfall_gravity::field::DirectKernel;
use spinfall_gravity::{MassSpec, PolyhedronGravity, generate};

/// `n` points on a spiral shell between 1.1 and 3 body radii (deterministic).
fn points_around(radius_m: f64, n: usize) -> Vec<Point3<f64>> {
    (0..n)
        .map(|i| {
            let t = (i as f64 + 0.5) / n as f64;
            let z = 1.0 - 2.0 * t;
            let phi = i as f64 * 2.399_963_229_728_653; // golden angle
            let s = (1.0 - z * z).sqrt();
            let r = radius_m * (1.1 + 1.9 * ((i * 7919) % n) as f64 / n as f64);
            Point3::from(Vector3::new(s * phi.cos(), s * phi.sin(), z) * r)
        })
        .collect()
}

/// CPU time this thread has run, ns (Linux `/proc/thread-self/schedstat`), so figures stay
/// meaningful on a machine shared with other work; `None` elsewhere.
fn thread_cpu_ns() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    text.split_whitespace().next()?.parse().ok()
}

/// Prints CPU ns per facet per point of each kernel for one point, single thread (a one-thread
/// pool, so big meshes do not share the point out over threads).
fn cpu_time_per_facet(field: &PolyhedronGravity, p: &Point3<f64>) {
    let pool = match rayon::ThreadPoolBuilder::new().num_threads(1).build() {
        Ok(pool) => pool,
        Err(e) => panic!("one-thread pool: {e}"),
    };
    pool.install(|| cpu_time_per_facet_here(field, p));
}

fn cpu_time_per_facet_here(field: &PolyhedronGravity, p: &Point3<f64>) {
    let faces = field.face_count() as f64;
    let reps = (20_000_000.0 / faces).ceil() as usize;
    for kernel in DirectKernel::all_available() {
        let Some(t0) = thread_cpu_ns() else { return };
        for _ in 0..reps {
            black_box(field.potential_acceleration_with_kernel(black_box(p), kernel));
        }
        let Some(t1) = thread_cpu_ns() else { return };
        eprintln!(
            "  {kernel:?}: {:.2} ns CPU per facet per point (single thread)",
            (t1 - t0) as f64 / (reps as f64 * faces)
        );
    }
}

/// CPU time of the whole process (all threads), ns, from `/proc/self/stat` (utime + stime in
/// clock ticks, assumed 100 per second as on Linux); `None` elsewhere.
fn process_cpu_ns() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/self/stat").ok()?;
    let rest = text.rsplit_once(')')?.1;
    let fields: Vec<&str> = rest.split_whitespace().collect();
    let ticks: u64 = fields.get(11)?.parse::<u64>().ok()? + fields.get(12)?.parse::<u64>().ok()?;
    Some(ticks * 10_000_000)
}

/// Prints wall and CPU ns per facet per point of a batch (`what` names it), and how many
/// cores were busy.
fn batch_figures(field: &PolyhedronGravity, points: &[Point3<f64>], what: &str, run: impl Fn()) {
    let work = (field.face_count() * points.len()) as f64;
    let reps = (2.0e9 / work).ceil().max(2.0) as usize;
    run();
    let cpu0 = process_cpu_ns();
    let start = Instant::now();
    for _ in 0..reps {
        run();
    }
    let wall = start.elapsed().as_nanos() as f64;
    let per = |ns: f64| ns / (reps as f64 * work);
    match (cpu0, process_cpu_ns()) {
        (Some(c0), Some(c1)) => eprintln!(
            "  {what}, batch of {}: {:.2} ns wall, {:.2} ns CPU per facet per point ({:.2} cores busy)",
            points.len(),
            per(wall),
            per((c1 - c0) as f64),
            (c1 - c0) as f64 / wall
        ),
        _ => eprintln!(
            "  {what}, batch of {}: {:.2} ns wall per facet per point",
            points.len(),
            per(wall)
        ),
    }
}

fn bench_field(c: &mut Criterion) {
    // SPINFALL_BENCH_QUICK=1: print the figures above, skip criterion's statistics.
    let quick = std::env::var("SPINFALL_BENCH_QUICK").is_ok_and(|v| v == "1");
    let radius_m = 1000.0;
    let meshes = [
        (
            "icosphere, 4 subdivisions",
            generate::icosphere(radius_m, 4),
        ),
        (
            "geodesic sphere, frequency 71",
            generate::geodesic_sphere(radius_m, 71),
        ),
        (
            "icosphere, 7 subdivisions",
            generate::icosphere(radius_m, 7),
        ),
    ];
    for (name, mesh) in meshes {
        let start = Instant::now();
        let field = match PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(2000.0)) {
            Ok(f) => f,
            Err(e) => panic!("{name}: {e}"),
        };
        let faces = field.face_count();
        eprintln!(
            "{name}: {faces} faces, built in {:.3} s, {:.1} bytes/facet",
            start.elapsed().as_secs_f64(),
            field.memory_bytes() as f64 / faces as f64
        );
        let start = Instant::now();
        let degree = field.exterior().degree();
        eprintln!(
            "  exterior expansion (degree {degree}) integrated in {:.3} s on first use",
            start.elapsed().as_secs_f64()
        );
        let points = points_around(radius_m, 256);
        cpu_time_per_facet(&field, &points[17]);
        batch_figures(&field, &points, "potential + acceleration", || {
            black_box(field.potential_acceleration_batch(black_box(&points)));
        });
        // The full output of `spinfall gravity --points` (gradient tensor, Laplacian, inside).
        let points_2000 = points_around(radius_m, 2000);
        batch_figures(&field, &points_2000, "full output (evaluate_batch)", || {
            black_box(field.evaluate_batch(black_box(&points_2000)));
        });
        if quick {
            continue;
        }
        let big = faces > 100_000;
        let mut group = c.benchmark_group(format!("field_{faces}_faces"));
        group.sample_size(10);
        group.warm_up_time(Duration::from_millis(if big { 500 } else { 1000 }));
        group.measurement_time(Duration::from_secs(if big { 4 } else { 3 }));
        group.throughput(Throughput::Elements((points.len() * faces) as u64));
        group.bench_function("batch_256_potential_acceleration", |b| {
            b.iter(|| black_box(field.potential_acceleration_batch(black_box(&points))))
        });
        group.throughput(Throughput::Elements(faces as u64));
        let p = points[17];
        if faces >= spinfall_gravity::field::SPLIT_FACE_COUNT {
            group.bench_function("single_point_unsplit_one_thread", |b| {
                b.iter(|| black_box(field.potential_acceleration_direct(black_box(&p))))
            });
        }
        group.bench_function("single_point_potential_acceleration", |b| {
            b.iter(|| black_box(field.potential_acceleration(black_box(&p))))
        });
        if !big {
            for kernel in DirectKernel::all_available() {
                group.bench_function(format!("single_point_kernel_{kernel:?}"), |b| {
                    b.iter(|| {
                        black_box(field.potential_acceleration_with_kernel(black_box(&p), kernel))
                    })
                });
            }
            group.bench_function("single_point_evaluate_with_gradient", |b| {
                b.iter(|| black_box(field.evaluate(black_box(&p))))
            });
        }
        group.finish();
        let mut group = c.benchmark_group(format!("exterior_{faces}_faces"));
        group.sample_size(10);
        group.measurement_time(Duration::from_secs(1));
        let far = Point3::new(40.0 * radius_m, 3.0 * radius_m, -5.0 * radius_m);
        group.bench_function("single_far_point_degree_8_expansion", |b| {
            b.iter(|| black_box(field.potential_acceleration(black_box(&far))))
        });
        group.finish();
    }
}

criterion_group!(benches, bench_field);
criterion_main!(benches);
