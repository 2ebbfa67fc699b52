//! Times 1000 launches (to rest or escape) over the ~80k-facet demo body once, on all cores.
//!
//! `cargo run --release -p spinfall-dynamics --example flights_timing [launches] [subdivisions]`

use std::sync::atomic::AtomicBool;
use std::time::Instant;

include!("../benches/support/launches.rs");

fn main() {
    let mut args = std::env::args().skip(1);
    let n: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(1000);
    let subdiv: u32 = args.next().and_then(|a| a.parse().ok()).unwrap_or(6);
    let t0 = Instant::now();
    let body = bench_body(subdiv);
    println!(
        "body: {} faces, built in {:.2} s; {} threads",
        body.shape.face_count(),
        t0.elapsed().as_secs_f64(),
        rayon::current_num_threads()
    );
    let launches = bench_launches(&body, n);
    let settings = bench_settings();
    let t1 = Instant::now();
    let reports = spinfall_dynamics::fly_all(
        &body,
        &launches,
        &settings,
        &|_, _| {},
        &AtomicBool::new(false),
    );
    let wall = t1.elapsed().as_secs_f64();
    let evals: u64 = reports.iter().map(|r| r.gravity_evaluations).sum();
    let steps: u64 = reports.iter().map(|r| r.steps).sum();
    let rejected: u64 = reports.iter().map(|r| r.rejected_steps).sum();
    let contacts: usize = reports.iter().map(|r| r.contacts.len()).sum();
    let count = |f: fn(&spinfall_dynamics::Outcome) -> bool| {
        reports.iter().filter(|r| f(&r.outcome)).count()
    };
    let worst_agree = reports
        .iter()
        .map(|r| r.frame_agreement_m)
        .fold(0.0, f64::max);
    let worst_jacobi = reports
        .iter()
        .filter_map(|r| r.jacobi_rel_drift)
        .fold(0.0, f64::max);
    println!(
        "{n} launches in {wall:.2} s wall ({:.1} ms per launch per core-pair)",
        1000.0 * wall / n as f64
    );
    println!(
        "gravity evaluations per launch: {:.0} (both frames); steps per launch: {:.0}",
        evals as f64 / n as f64,
        steps as f64 / n as f64
    );
    println!(
        "rejected steps per launch: {:.1}; contacts per launch: {:.2}",
        rejected as f64 / n as f64,
        contacts as f64 / n as f64
    );
    println!(
        "outcomes: landed {}, escaped {}, still flying {}, failed {}",
        count(|o| matches!(o, spinfall_dynamics::Outcome::Landed)),
        count(|o| matches!(o, spinfall_dynamics::Outcome::Escaped)),
        count(|o| matches!(o, spinfall_dynamics::Outcome::StillFlying)),
        count(|o| matches!(o, spinfall_dynamics::Outcome::Failed { .. })),
    );
    println!("worst frame agreement {worst_agree:.3e} m, worst Jacobi drift {worst_jacobi:.3e}");
}
