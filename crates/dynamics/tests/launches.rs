//! Fans, dispersion sets and parallel flights (the exporters are tested in spinfall-workflow).
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::sync::Mutex;
use std::sync::atomic::AtomicBool;

use spinfall_dynamics::launch::{Dispersion, Fan, FanQuantity, LaunchSpec, SpeedSigma};
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::{FlightSettings, Outcome, fly_all};

fn spec() -> (spinfall_dynamics::Body, LaunchSpec) {
    let body = common::point_mass_sphere(1000.0, 2, 50.0, common::spin_z(50.0 * 3600.0));
    let site = Site::from_lat_lon(&body, 20.0, 30.0, NormalMode::Face).unwrap();
    let spec = LaunchSpec {
        id: "s".into(),
        site,
        speed_m_s: 0.1,
        azimuth_deg: 0.0,
        elevation_deg: 45.0,
        start_altitude_m: 0.05,
    };
    (body, spec)
}

#[test]
fn fan_spans_both_ends_evenly() {
    let (_, s) = spec();
    let fan = s
        .fan(&Fan {
            vary: FanQuantity::AzimuthDeg,
            to: 270.0,
            count: 4,
        })
        .unwrap();
    let az: Vec<f64> = fan.iter().map(|m| m.azimuth_deg).collect();
    assert_eq!(az, vec![0.0, 90.0, 180.0, 270.0]);
    assert_eq!(fan[3].id, "s/3");
    assert!(
        s.fan(&Fan {
            vary: FanQuantity::SpeedMS,
            to: -1.0,
            count: 3
        })
        .is_err()
    );
}

#[test]
fn dispersion_has_the_requested_spread_and_is_reproducible() {
    let (_, s) = spec();
    let d = Dispersion {
        count: 4000,
        speed_sigma: SpeedSigma::Percent(10.0),
        direction_sigma_deg: 2.0,
        seed: 42,
    };
    let a = s.disperse(&d).unwrap();
    assert_eq!(a, s.disperse(&d).unwrap());
    assert_ne!(a, s.disperse(&Dispersion { seed: 43, ..d }).unwrap());
    // Sample mean and standard deviation of the speeds: 1-sigma = 10 % of 0.1 m/s; with 4000
    // members the sample sigma is within a few percent of it (standard error sigma/sqrt(2n)).
    let speeds: Vec<f64> = a.iter().map(|l| l.vel_body_m_s.norm()).collect();
    let mean = speeds.iter().sum::<f64>() / speeds.len() as f64;
    let sd =
        (speeds.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (speeds.len() - 1) as f64).sqrt();
    assert!((mean - 0.1).abs() < 1e-3, "mean {mean}");
    assert!((sd - 0.01).abs() < 0.001, "sd {sd}");
    // Angular error: two Gaussian components of 2 deg -> Rayleigh with mean sigma sqrt(pi/2).
    let nominal = s.state().unwrap().vel_body_m_s.normalize();
    let mean_angle = a
        .iter()
        .map(|l| l.vel_body_m_s.angle(&nominal).to_degrees())
        .sum::<f64>()
        / a.len() as f64;
    let expected = 2.0 * (std::f64::consts::PI / 2.0).sqrt();
    assert!(
        (mean_angle - expected).abs() < 0.1,
        "mean angle {mean_angle} vs {expected}"
    );
}

#[test]
fn fly_all_reports_progress() {
    let (body, s) = spec();
    let launches: Vec<_> = s
        .fan(&Fan {
            vary: FanQuantity::AzimuthDeg,
            to: 300.0,
            count: 6,
        })
        .unwrap()
        .iter()
        .map(|m| m.state().unwrap())
        .collect();
    let seen = Mutex::new(Vec::new());
    let reports = fly_all(
        &body,
        &launches,
        &FlightSettings::default(),
        &|k, n| seen.lock().unwrap().push((k, n)),
        &AtomicBool::new(false),
    );
    assert_eq!(reports.len(), 6);
    assert!(
        reports.iter().all(|r| r.outcome == Outcome::Landed),
        "{:?}",
        reports.iter().map(|r| &r.outcome).collect::<Vec<_>>()
    );
    let mut seen = seen.into_inner().unwrap();
    seen.sort();
    assert_eq!(seen, (1..=6).map(|k| (k, 6)).collect::<Vec<_>>());
    for (r, l) in reports.iter().zip(&launches) {
        assert_eq!(r.id, l.id);
        assert!(r.downrange_m.unwrap() > 0.0);
    }
}
