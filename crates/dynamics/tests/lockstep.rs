//! Flights advanced together share their gravity evaluations, never their results: a launch
//! flown alone and inside a large set must give the same report, byte for byte.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

mod common;

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use spinfall_dynamics::launch::{Dispersion, LaunchSpec, SpeedSigma};
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::{Body, FlightSettings, fly, fly_all};
use spinfall_gravity::{MassSpec, generate};

fn demo(subdivisions: u32) -> Body {
    let shape = common::shape(generate::demo_body(subdivisions));
    Body::new(
        "Quillon",
        Arc::clone(&shape),
        MassSpec::DensityKgM3(2100.0),
        common::spin_z(5.0 * 3600.0),
    )
    .unwrap()
}

fn bytes(r: &spinfall_dynamics::FlightReport) -> String {
    serde_json::to_string(r).unwrap()
}

/// A dispersion set of `n` hops (some bounce several times, some reach far) from one site.
fn hops(body: &Body, n: usize) -> Vec<spinfall_dynamics::launch::LaunchState> {
    let site = Site::from_lat_lon(body, 12.0, 35.0, NormalMode::Face).unwrap();
    let nominal = LaunchSpec {
        id: "hop".into(),
        site,
        speed_m_s: 0.35,
        azimuth_deg: 60.0,
        elevation_deg: 50.0,
        start_altitude_m: 0.05,
    };
    nominal
        .disperse(&Dispersion {
            count: n,
            speed_sigma: SpeedSigma::Percent(30.0),
            direction_sigma_deg: 20.0,
            seed: 42,
        })
        .unwrap()
}

#[test]
fn a_launch_alone_and_in_a_set_of_1000_gives_identical_bytes() {
    let body = demo(2);
    let launches = hops(&body, 1000);
    let mut settings = FlightSettings::default();
    settings.bounce.max_bounces = 5;
    settings.integrator.max_time_s = 40_000.0;
    let cancel = AtomicBool::new(false);
    let set = fly_all(&body, &launches, &settings, &|_, _| {}, &cancel);
    assert_eq!(set.len(), 1000);
    // The set really is mixed: landings after bounces, and more than one outcome or contact
    // count, so the launches leave the batch at different rounds.
    let contacts: std::collections::BTreeSet<usize> =
        set.iter().map(|r| r.contacts.len()).collect();
    assert!(contacts.len() >= 3, "contact counts {contacts:?}");
    for k in [0, 1, 7, 499, 998, 999] {
        let alone = fly(&body, &launches[k], &settings, &cancel);
        assert_eq!(bytes(&alone), bytes(&set[k]), "launch {k}");
    }
    // On one thread the same set gives the same bytes again.
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let few = &launches[..40];
    let serial = pool.install(|| fly_all(&body, few, &settings, &|_, _| {}, &cancel));
    for (a, b) in serial.iter().zip(&set) {
        assert_eq!(bytes(a), bytes(b));
    }
}

#[test]
fn progress_counts_every_launch_once() {
    let body = demo(1);
    let launches = hops(&body, 37);
    let seen = std::sync::Mutex::new(Vec::new());
    let reports = fly_all(
        &body,
        &launches,
        &FlightSettings::default(),
        &|done, total| seen.lock().unwrap().push((done, total)),
        &AtomicBool::new(false),
    );
    assert_eq!(reports.len(), 37);
    let seen = seen.into_inner().unwrap();
    assert_eq!(seen, (1..=37).map(|k| (k, 37)).collect::<Vec<_>>());
    // Reports come back in launch order.
    for (r, l) in reports.iter().zip(&launches) {
        assert_eq!(r.id, l.id);
    }
}
