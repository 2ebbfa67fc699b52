//! Builds the interpolated field of the demo body at a chosen resolution and bound, then checks
//! it against the exact field and times both.
//!
//! `cargo run --release -p spinfall-gravity --example interp_build -- FREQ [MAX_REL_ERROR
//! [LEAF_NEAR_FACES]]` (the demo body over a geodesic sphere of frequency FREQ: 20 FREQ^2
//! faces; LEAF_NEAR_FACES: the most faces a leaf sums exactly, default the library's).
//!
//! Environment: `SPINFALL_FIELD_FILE` reads the field from that file when it holds one for
//! these inputs (to time queries without building again), else builds it and writes it there;
//! `SPINFALL_QUERY_REPEAT` sets how often each test point is queried for the timings;
//! `SPINFALL_TRACE_LEVELS` has the build print each level's work and memory.

use std::sync::atomic::AtomicBool;
use std::time::Instant;

use nalgebra::{Point3, Vector3};
use spinfall_gravity::{
    Answer, InterpolatedGravity, InterpolationSettings, MassSpec, Mesh, PolyhedronGravity,
    build_interpolated, cache_key, generate,
};

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let freq: u32 = args.get(1).and_then(|v| v.parse().ok()).unwrap_or(16);
    let bound: f64 = args.get(2).and_then(|v| v.parse().ok()).unwrap_or(1e-9);
    let mesh = generate::demo_body_geodesic(freq);
    let mut settings = InterpolationSettings {
        max_rel_error: bound,
        ..Default::default()
    };
    if let Some(n) = args.get(3).and_then(|v| v.parse().ok()) {
        settings.leaf_near_faces = n;
    }
    let t0 = Instant::now();
    let cpu0 = process_cpu_s();
    // `SPINFALL_FIELD_FILE`: read the field from that file when it exists (to time queries
    // without building again), else build it and write it there.
    let stored = std::env::var("SPINFALL_FIELD_FILE").ok();
    let mass = MassSpec::DensityKgM3(2100.0);
    if let Some(path) = &stored
        && let Ok(mut file) = std::fs::File::open(path)
    {
        match InterpolatedGravity::read_from(&mut file, &mesh, mass, &settings) {
            Ok(field) => {
                println!("read {path} in {:.2} s", t0.elapsed().as_secs_f64());
                return check(&mesh, &field, bound);
            }
            Err(e) => eprintln!("{path}: {e}; building"),
        }
    }
    let field = match build_interpolated(
        &mesh,
        mass,
        settings,
        &|p| {
            if p.cells_done == p.cells_in_level {
                eprintln!(
                    "  level {}: {} cells, {} leaves so far, {:.1} s",
                    p.level, p.cells_in_level, p.leaves, p.elapsed_s
                );
            }
        },
        &AtomicBool::new(false),
    ) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("build failed: {e}");
            std::process::exit(1);
        }
    };
    let cpu_s = process_cpu_s().zip(cpu0).map(|(b, a)| b - a);
    let s = field.stats();
    println!(
        "{} faces, bound {bound:e}: {s} ({:.0} B/facet; {:.2} s wall in all, {} CPU)",
        mesh.faces.len(),
        s.memory_bytes as f64 / mesh.faces.len() as f64,
        t0.elapsed().as_secs_f64(),
        cpu_s.map_or("?".into(), |c| format!("{c:.1} s")),
    );
    if let Some(path) = &stored {
        let written = std::fs::File::create(path)
            .map_err(|e| e.to_string())
            .and_then(|mut f| {
                field
                    .write_to(&mut f, &cache_key(&mesh, mass, &settings))
                    .map_err(|e| e.to_string())
            });
        if let Err(e) = written {
            eprintln!("{path}: {e}");
        }
    }
    check(&mesh, &field, bound);
}

/// Checks `field` against the exact sums at test points and times its queries.
fn check(mesh: &Mesh, field: &InterpolatedGravity, bound: f64) {
    let exact: &PolyhedronGravity = field.exact();
    // Test points: on the surface (face centroids nudged out by 1 mm .. 1 facet), near edges
    // and vertices, and in the volume out to past the switch radius.
    let mut pts = Vec::new();
    let nf = mesh.faces.len();
    let mut seed = 12345u64;
    let mut rnd = || {
        seed = seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (seed >> 11) as f64 / (1u64 << 53) as f64
    };
    for k in 0..600 {
        let f = (rnd() * nf as f64) as usize % nf;
        let [a, b, c] = mesh.triangle(f);
        let n = (b - a).cross(&(c - a)).normalize();
        let size = (b - a).norm();
        let (u, v) = (rnd(), rnd());
        let (u, v) = if u + v > 1.0 {
            (1.0 - u, 1.0 - v)
        } else {
            (u, v)
        };
        let on = a + (b - a) * u + (c - a) * v;
        let on = match k % 3 {
            0 => on,
            1 => a + (b - a) * u, // on an edge
            _ => a,               // on a vertex
        };
        let alt = [1e-3, 0.1 * size, size, 5.0 * size][k % 4];
        pts.push(on + n * alt);
    }
    let com = exact.center_of_mass_m();
    let rb = exact.brillouin_radius_m();
    let volume: Vec<Point3<f64>> = (0..400)
        .map(|_| {
            let dir = Vector3::new(rnd() - 0.5, rnd() - 0.5, rnd() - 0.5).normalize();
            com + dir * (rb * (0.3 + 5.0 * rnd()))
        })
        .collect();
    let inside = exact.is_inside_batch(&volume);
    pts.extend(
        volume
            .iter()
            .zip(&inside)
            .filter(|(_, i)| !**i)
            .map(|(p, _)| *p),
    );
    let t1 = Instant::now();
    let want = exact.potential_acceleration_batch(&pts);
    let exact_s = t1.elapsed().as_secs_f64();
    let t2 = Instant::now();
    let got: Vec<_> = pts
        .iter()
        .map(|p| field.potential_acceleration(p))
        .collect();
    let interp_s = t2.elapsed().as_secs_f64();
    // A fingerprint of the field: its values at the test points, bit for bit (FNV-1a over
    // the bits), to see whether a change to the build changed the field at all.
    let fingerprint = got.iter().fold(0xcbf2_9ce4_8422_2325u64, |h, (u, a)| {
        [*u, a.x, a.y, a.z]
            .iter()
            .fold(h, |h, v| (h ^ v.to_bits()).wrapping_mul(0x0100_0000_01b3))
    });
    println!("field fingerprint at the test points: {fingerprint:016x}");
    let mut worst = 0.0f64;
    let mut worst_u = 0.0f64;
    for ((p, w), g) in pts.iter().zip(&want).zip(&got) {
        let e = (g.1 - w.1).norm() / w.1.norm();
        if e > worst {
            worst = e;
            if e > bound {
                eprintln!("  {p}: rel err {e:.2e}");
            }
        }
        worst_u = worst_u.max((g.0 - w.0).abs() / w.0.abs());
    }
    // Query time near the surface (the first 600 points) and away from it (the rest), each
    // point queried 20 times (or `SPINFALL_QUERY_REPEAT` times, for profiling).
    let repeat: usize = std::env::var("SPINFALL_QUERY_REPEAT")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(20);
    // The fastest of five rounds (other work on the machine only slows rounds down). Each
    // round queries every point once per pass (a new cell each time: its near faces come from
    // memory), or with `in_a_row` each point its share of the repeats in a row (as a flight's
    // consecutive steps query one cell, whose near faces then sit in the cache).
    let time_queries = |set: &[Point3<f64>], in_a_row: bool| {
        let rounds = repeat.div_ceil(5);
        (0..5)
            .map(|_| {
                let t = Instant::now();
                let mut acc = 0.0;
                for k in 0..rounds * set.len() {
                    let p = if in_a_row {
                        &set[k / rounds]
                    } else {
                        &set[k % set.len()]
                    };
                    acc += field.potential_acceleration(p).0;
                }
                std::hint::black_box(acc);
                t.elapsed().as_secs_f64() * 1e6 / (rounds * set.len().max(1)) as f64
            })
            .fold(f64::INFINITY, f64::min)
    };
    // (Points inside the body, a few of those nudged off concave vertices, are evaluated
    // exactly: left out of the timing.)
    let outside = |set: &[Point3<f64>]| -> Vec<Point3<f64>> {
        let inside = exact.is_inside_batch(set);
        set.iter()
            .zip(&inside)
            .filter(|(_, i)| !**i)
            .map(|(p, _)| *p)
            .collect()
    };
    // What answers the queries, and what each kind costs.
    let outside_all = outside(&pts);
    type IsKind = fn(&Answer) -> bool;
    let kinds: [(&str, IsKind); 4] = [
        ("exterior expansion", |a| matches!(a, Answer::Exterior)),
        ("fitted, no near faces", |a| {
            matches!(a, Answer::Fitted { near_faces: 0, .. })
        }),
        ("fitted with near faces", |a| {
            matches!(
                a,
                Answer::Fitted {
                    near_faces: 1..,
                    ..
                }
            )
        }),
        ("exact sums", |a| matches!(a, Answer::Exact)),
    ];
    for (name, is) in kinds {
        let set: Vec<Point3<f64>> = outside_all
            .iter()
            .copied()
            .filter(|p| is(&field.answer_at(p)))
            .collect();
        if set.is_empty() {
            continue;
        }
        let near: usize = set
            .iter()
            .map(|p| match field.answer_at(p) {
                Answer::Fitted { near_faces, .. } => near_faces,
                _ => 0,
            })
            .sum();
        println!(
            "  {name}: {} points, {:.2} us/point (mean near faces {:.0})",
            set.len(),
            time_queries(&set, false),
            near as f64 / set.len() as f64
        );
    }
    let (surface, volume) = (outside(&pts[..600]), outside(&pts[600..]));
    println!(
        "query: {:.2} us/point within 5 facets of the surface, {:.2} us/point in the volume \
         (each point once a round); {:.2} and {:.2} us/point with each point queried \
         {repeat} times in a row (a flight's steps in one cell)",
        time_queries(&surface, false),
        time_queries(&volume, false),
        time_queries(&surface, true),
        time_queries(&volume, true)
    );
    println!(
        "{} test points: worst relative acceleration error {worst:.2e} (bound {bound:e}), potential {worst_u:.2e}; \
         exact batch {:.1} us/point (2 cores), interpolated {:.2} us/point (1 core)",
        pts.len(),
        exact_s * 1e6 / pts.len() as f64,
        interp_s * 1e6 / pts.len() as f64
    );
}

/// CPU time of the whole process (all threads), s, from `/proc/self/stat` (utime + stime in
/// clock ticks, assumed 100 per second as on Linux): unlike wall time it stays meaningful on a
/// machine shared with other work. `None` elsewhere.
fn process_cpu_s() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/self/stat").ok()?;
    let rest = text.rsplit_once(')')?.1;
    let fields: Vec<&str> = rest.split_whitespace().collect();
    let ticks: u64 = fields.get(11)?.parse::<u64>().ok()? + fields.get(12)?.parse::<u64>().ok()?;
    Some(ticks as f64 / 100.0)
}
