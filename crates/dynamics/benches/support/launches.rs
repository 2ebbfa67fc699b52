// Shared launch set of the flight benchmark and the timing example (included with `include!`).

/// `n` launches from seeded pseudo-random sites of `body`: speeds 30–90 % of the local minimum
/// escape speed, azimuths all round, elevations 30–75 deg.
fn bench_launches(
    body: &spinfall_dynamics::Body,
    n: usize,
) -> Vec<spinfall_dynamics::launch::LaunchState> {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(2026);
    (0..n)
        .map(|k| {
            let lat = (2.0 * rng.random::<f64>() - 1.0).asin().to_degrees();
            let lon = 360.0 * rng.random::<f64>() - 180.0;
            let site = spinfall_dynamics::site::Site::from_lat_lon(
                body,
                lat,
                lon,
                spinfall_dynamics::site::NormalMode::Face,
            )
            .expect("site on the demo body");
            let speed = (0.3 + 0.6 * rng.random::<f64>()) * site.escape_speed_min_m_s.max(0.05);
            spinfall_dynamics::launch::LaunchSpec {
                id: format!("b{k}"),
                site,
                speed_m_s: speed,
                azimuth_deg: 360.0 * rng.random::<f64>(),
                elevation_deg: 30.0 + 45.0 * rng.random::<f64>(),
                start_altitude_m: 0.05,
            }
            .state()
            .expect("valid launch")
        })
        .collect()
}

/// The demo body at `subdiv` (subdivision 6 has 81,920 faces), recentred, with its suggested
/// density and period, spinning about its maximum-moment axis.
fn bench_body(subdiv: u32) -> spinfall_dynamics::Body {
    let shape = spinfall_gravity::ShapeModel::new(spinfall_gravity::generate::demo_body(subdiv))
        .expect("demo mesh")
        .0
        .recentered();
    let axis = spinfall_dynamics::SpinAxis::MaxMoment
        .resolve(&shape)
        .expect("axis");
    let spin = spinfall_dynamics::Spin::from_hours(spinfall_gravity::demo::PERIOD_H, axis, 0.0)
        .expect("spin");
    spinfall_dynamics::Body::new(
        spinfall_gravity::demo::NAME,
        std::sync::Arc::new(shape),
        spinfall_gravity::MassSpec::DensityKgM3(spinfall_gravity::demo::DENSITY_KG_M3),
        spin,
    )
    .expect("body")
}

/// Settings of the benchmark: rel_tol 1e-10, a few bounces.
fn bench_settings() -> spinfall_dynamics::FlightSettings {
    let mut s = spinfall_dynamics::FlightSettings::default();
    s.integrator.rel_tol = 1e-10;
    s.integrator.abs_tol_m = 1e-6;
    s.integrator.max_time_s = 2e5;
    s.bounce = spinfall_dynamics::BounceModel {
        normal_restitution: 0.3,
        tangential_restitution: 0.6,
        max_bounces: 5,
        rest_speed_m_s: 0.02,
    };
    s
}
