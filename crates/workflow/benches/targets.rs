//! The speed targets of Spinfall's gravity paths, measured end to end (a `--bench` binary, not
//! criterion: each case runs once or a few times and prints wall time).
//!
//! `cargo bench -p spinfall-workflow --bench targets -- CASE...` with CASE among
//! `points`, `map`, `map-direct` (the direct map alone), `flights`, `agreement`, `big` (1M
//! facets: the interpolated field's cold build, its surface map and 100 launches), `field`
//! (default: `points map flights`).
//! `SPINFALL_BENCH_BOUND` sets the interpolated field's bound (default 1e-9);
//! `SPINFALL_BENCH_LAUNCHES` the size of the dispersion set (default 1000). The interpolated
//! field's store goes to a temporary folder (cold), then is read back (warm).

use std::sync::Arc;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

use nalgebra::{Point3, Vector3};
use spinfall_dynamics::launch::{Dispersion, LaunchSpec, LaunchState, SpeedSigma};
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::surface_map::surface_map;
use spinfall_dynamics::{Body, FlightReport, FlightSettings, GravityModel, Spin, fly_all};
use spinfall_gravity::{InterpolationSettings, MassSpec, PolyhedronGravity, ShapeModel, generate};
use spinfall_workflow::field_cache::{BuildHooks, load_or_build};

const DENSITY: f64 = 2100.0;

fn bound() -> f64 {
    std::env::var("SPINFALL_BENCH_BOUND")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1e-9)
}

fn launches_wanted() -> usize {
    std::env::var("SPINFALL_BENCH_LAUNCHES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1000)
}

fn shape(freq: u32) -> Arc<ShapeModel> {
    let t = Instant::now();
    let mesh = generate::demo_body_geodesic(freq);
    let shape = match ShapeModel::new(mesh) {
        Ok((s, _)) => Arc::new(s),
        Err(e) => panic!("demo body: {e}"),
    };
    eprintln!(
        "shape: demo body at frequency {freq}: {} faces, built and validated in {:.2} s",
        shape.face_count(),
        t.elapsed().as_secs_f64()
    );
    shape
}

fn spin() -> Spin {
    match Spin::from_hours(5.0, Vector3::z_axis(), 0.0) {
        Ok(s) => s,
        Err(e) => panic!("spin: {e}"),
    }
}

fn body_with(shape: &Arc<ShapeModel>, gravity: Arc<dyn GravityModel>) -> Body {
    match Body::with_gravity("Quillon", Arc::clone(shape), gravity, spin()) {
        Ok(b) => b,
        Err(e) => panic!("body: {e}"),
    }
}

fn direct(shape: &Arc<ShapeModel>) -> Body {
    let t = Instant::now();
    let field = match PolyhedronGravity::new(shape, MassSpec::DensityKgM3(DENSITY)) {
        Ok(f) => f,
        Err(e) => panic!("field: {e}"),
    };
    eprintln!("direct field tables in {:.2} s", t.elapsed().as_secs_f64());
    body_with(shape, Arc::new(field))
}

/// The interpolated body, built cold into `dir`, then read back warm; returns the warm body.
fn interpolated(shape: &Arc<ShapeModel>, dir: &std::path::Path) -> Body {
    let settings = InterpolationSettings {
        max_rel_error: bound(),
        ..Default::default()
    };
    let last = std::sync::Mutex::new(Instant::now());
    let hooks = BuildHooks {
        progress: Box::new(move |p| {
            if let Ok(mut l) = last.lock()
                && l.elapsed().as_secs_f64() > 10.0
            {
                *l = Instant::now();
                eprintln!(
                    "  building: level {}, {}/{} cells, {} leaves, {:.0} s",
                    p.level, p.cells_done, p.cells_in_level, p.leaves, p.elapsed_s
                );
            }
        }),
        ..BuildHooks::default()
    };
    let mass = MassSpec::DensityKgM3(DENSITY);
    let t = Instant::now();
    let (cold, outcome) = match load_or_build(shape.mesh(), mass, settings, Some(dir), &hooks) {
        Ok(v) => v,
        Err(e) => panic!("interpolated field: {e}"),
    };
    let cold_s = t.elapsed().as_secs_f64();
    let s = cold.stats();
    eprintln!(
        "interpolated field, bound {:e}: cold {cold_s:.1} s ({outcome:?}); {s} ({:.0} B/facet)",
        bound(),
        s.memory_bytes as f64 / shape.face_count() as f64,
    );
    drop(cold);
    let t = Instant::now();
    let (warm, outcome) = match load_or_build(shape.mesh(), mass, settings, Some(dir), &hooks) {
        Ok(v) => v,
        Err(e) => panic!("interpolated field: {e}"),
    };
    eprintln!(
        "interpolated field warm: {:.2} s ({outcome:?})",
        t.elapsed().as_secs_f64()
    );
    body_with(shape, Arc::new(warm))
}

/// Points near and away from the surface of `body`.
fn test_points(body: &Body, n: usize) -> (Vec<Point3<f64>>, Vec<Point3<f64>>) {
    let nf = body.shape.face_count();
    let near: Vec<Point3<f64>> = (0..n)
        .map(|k| {
            let f = (k * 7919) % nf;
            body.shape.face_centroid(f)
                + body.shape.face_normal(f).into_inner() * (0.5 * (k % 7) as f64)
        })
        .collect();
    let r = body.brillouin_radius_m();
    let away: Vec<Point3<f64>> = (0..n)
        .map(|k| {
            let t = (k as f64 + 0.5) / n as f64;
            let z = 1.0 - 2.0 * t;
            let phi = k as f64 * 2.399_963_229_728_653;
            let s = (1.0 - z * z).sqrt();
            Point3::from(Vector3::new(s * phi.cos(), s * phi.sin(), z) * (r * (1.2 + 0.8 * t)))
        })
        .collect();
    (near, away)
}

fn per_point_us(body: &Body, pts: &[Point3<f64>]) -> f64 {
    let mut out = vec![(0.0, Vector3::zeros()); pts.len()];
    body.gravity.potential_acceleration_batch(pts, &mut out);
    let t = Instant::now();
    let reps = 3;
    for _ in 0..reps {
        body.gravity.potential_acceleration_batch(pts, &mut out);
    }
    t.elapsed().as_secs_f64() * 1e6 / (reps * pts.len()) as f64
}

fn case_points(freq: u32) {
    let shape = shape(freq);
    let body = direct(&shape);
    let (near, away) = test_points(&body, 2000);
    let pts: Vec<Point3<f64>> = near.iter().chain(&away).copied().step_by(2).collect();
    let exact = PolyhedronGravity::new(&shape, MassSpec::DensityKgM3(DENSITY)).ok();
    if let Some(field) = exact {
        let _ = field.evaluate_batch(&pts);
        let t = Instant::now();
        let _ = field.evaluate_batch(&pts);
        let s = t.elapsed().as_secs_f64();
        println!(
            "gravity --points, full output, {} points, {} faces: {:.2} ns per facet per point (wall, {} threads)",
            pts.len(),
            shape.face_count(),
            s * 1e9 / (pts.len() * shape.face_count()) as f64,
            rayon::current_num_threads()
        );
    }
}

/// Which fields [`case_map`] maps with.
#[derive(Clone, Copy, PartialEq)]
enum Maps {
    Direct,
    Interpolated,
    Both,
}

/// Maps every face of `body` and prints the time under `label`.
fn time_map(body: &Body, label: &str) {
    let cancel = AtomicBool::new(false);
    let t = Instant::now();
    let map = surface_map(body, &|_, _| {}, &cancel);
    println!(
        "surface map, {label}, {} faces: {:.1} s ({} faces mapped)",
        body.shape.face_count(),
        t.elapsed().as_secs_f64(),
        map.map(|m| m.len()).unwrap_or(0)
    );
}

fn case_map(freq: u32, dir: &std::path::Path, maps: Maps) {
    let shape = shape(freq);
    if maps != Maps::Interpolated {
        time_map(&direct(&shape), "direct");
    }
    if maps == Maps::Direct {
        return;
    }
    let ib = interpolated(&shape, dir);
    time_map(&ib, "interpolated (field warm)");
    let (near, away) = test_points(&ib, 2000);
    println!(
        "interpolated evaluation: {:.2} us per point within 3 m of the surface, {:.2} us away \
         (batch of 2000 on {} threads)",
        per_point_us(&ib, &near),
        per_point_us(&ib, &away),
        rayon::current_num_threads()
    );
}

fn dispersion(body: &Body, n: usize) -> Vec<LaunchState> {
    let site = match Site::from_lat_lon(body, 12.0, 35.0, NormalMode::Face) {
        Ok(s) => s,
        Err(e) => panic!("site: {e}"),
    };
    let nominal = LaunchSpec {
        id: "hop".into(),
        site,
        speed_m_s: 0.35,
        azimuth_deg: 60.0,
        elevation_deg: 50.0,
        start_altitude_m: 0.05,
    };
    match nominal.disperse(&Dispersion {
        count: n,
        speed_sigma: SpeedSigma::Percent(30.0),
        direction_sigma_deg: 20.0,
        seed: 7,
    }) {
        Ok(l) => l,
        Err(e) => panic!("dispersion: {e}"),
    }
}

fn settings() -> FlightSettings {
    let mut s = FlightSettings::default();
    s.bounce.max_bounces = 5;
    s.integrator.rel_tol = 1e-10;
    s
}

fn fly(body: &Body, launches: &[LaunchState]) -> (Vec<FlightReport>, f64) {
    let cancel = AtomicBool::new(false);
    let t = Instant::now();
    let r = fly_all(body, launches, &settings(), &|_, _| {}, &cancel);
    (r, t.elapsed().as_secs_f64())
}

fn summary(reports: &[FlightReport]) -> String {
    let evals: u64 = reports.iter().map(|r| r.gravity_evaluations).sum();
    let landed = reports.iter().filter(|r| r.landed()).count();
    let worst_drift = reports
        .iter()
        .filter_map(|r| r.jacobi_rel_drift)
        .fold(0.0, f64::max);
    let worst_agree = reports
        .iter()
        .map(|r| r.frame_agreement_m)
        .fold(0.0, f64::max);
    format!(
        "{landed} landed of {}, {:.0} evaluations per launch, worst Jacobi drift {worst_drift:.1e}, worst frame agreement {worst_agree:.2e} m",
        reports.len(),
        evals as f64 / reports.len().max(1) as f64
    )
}

fn case_flights(freq: u32, dir: &std::path::Path, compare: bool, n: usize) {
    let shape = shape(freq);
    let t = Instant::now();
    let ib = interpolated(&shape, dir);
    let build_s = t.elapsed().as_secs_f64();
    let launches = dispersion(&ib, n);
    let (interp, s) = fly(&ib, &launches);
    println!(
        "{n} launches (dispersion, <= 5 bounces, rel_tol 1e-10, both frames), {} faces, interpolated: {s:.1} s warm; {:.1} s with the cold build ({})",
        shape.face_count(),
        s + build_s,
        summary(&interp)
    );
    if !compare {
        return;
    }
    let db = direct(&shape);
    let (exact, s) = fly(&db, &launches);
    println!("{n} launches, direct: {s:.1} s ({})", summary(&exact));
    // First contacts within one rotation: position and time differences.
    let period = ib.spin.period_s;
    let mut worst_m = 0.0f64;
    let mut worst_s = 0.0f64;
    let mut within = 0;
    let mut same_outcome = 0;
    let mut later: Vec<f64> = Vec::new();
    for (a, b) in interp.iter().zip(&exact) {
        if std::mem::discriminant(&a.outcome) == std::mem::discriminant(&b.outcome) {
            same_outcome += 1;
        }
        match (a.contacts.first(), b.contacts.first()) {
            (Some(ca), Some(cb)) if cb.t_s <= period => {
                within += 1;
                let d = (Vector3::from(ca.pos_body_m) - Vector3::from(cb.pos_body_m)).norm();
                worst_m = worst_m.max(d);
                worst_s = worst_s.max((ca.t_s - cb.t_s).abs());
            }
            (Some(ca), Some(cb)) => {
                later.push((Vector3::from(ca.pos_body_m) - Vector3::from(cb.pos_body_m)).norm())
            }
            _ => {}
        }
    }
    later.sort_by(f64::total_cmp);
    let median = later.get(later.len() / 2).copied().unwrap_or(0.0);
    println!(
        "first contact within one rotation ({within} launches): worst {worst_m:.2e} m, {worst_s:.2e} s apart; \
         same outcome for {same_outcome} of {n}; later first contacts ({}): median {median:.2e} m, largest {:.2e} m apart",
        later.len(),
        later.last().copied().unwrap_or(0.0)
    );
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with("--"))
        .collect();
    let cases: Vec<&str> = if args.is_empty() {
        vec!["points", "map", "flights"]
    } else {
        args.iter().map(String::as_str).collect()
    };
    let dir = match tempfile::tempdir() {
        Ok(d) => d,
        Err(e) => panic!("temporary folder: {e}"),
    };
    for case in cases {
        let sub = dir.path().join(case);
        match case {
            "points" => case_points(71),
            "map" => case_map(71, &sub, Maps::Both),
            "map-direct" => case_map(71, &sub, Maps::Direct),
            "flights" => case_flights(71, &sub, false, launches_wanted()),
            "agreement" => case_flights(71, &sub, true, launches_wanted()),
            "big" => {
                // 1M facets: the direct map (1e12 face terms, over half an hour) is left out;
                // the field is built cold by the map, and read warm by the flights.
                case_map(224, &sub, Maps::Interpolated);
                case_flights(224, &sub, false, 100);
            }
            "field" => {
                for freq in [16, 71, 224] {
                    let shape = shape(freq);
                    let ib = interpolated(&shape, &dir.path().join(format!("field{freq}")));
                    let (near, away) = test_points(&ib, 2000);
                    println!(
                        "{} faces: {:.2} us near the surface, {:.2} us away",
                        shape.face_count(),
                        per_point_us(&ib, &near),
                        per_point_us(&ib, &away)
                    );
                }
            }
            other => eprintln!("unknown case {other}"),
        }
    }
}
