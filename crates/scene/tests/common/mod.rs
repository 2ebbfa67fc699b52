//! Shared test fixtures: the demo body with a short run, and with its surface map.
#![allow(dead_code, reason = "each test binary uses part of the fixtures")]

use std::sync::atomic::AtomicBool;
use std::sync::{Arc, OnceLock};

use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::{Body, FlightReport, FlightSettings, fly_all};
use spinfall_scene::BodyView;

fn run(scenario: &Scenario, max_time_s: f64) -> (Arc<Body>, Vec<FlightReport>) {
    let (shape, _) = spinfall_dynamics::scenario::builtin_quillon().expect("demo body");
    let body: Body = scenario.build_body(shape).expect("body");
    let launches = scenario.build_launches(&body).expect("launches");
    let mut settings = FlightSettings::default();
    settings.integrator.max_time_s = max_time_s;
    let body = Arc::new(body);
    let reports = fly_all(
        &body,
        &launches,
        &settings,
        &|_, _| {},
        &AtomicBool::new(false),
    );
    (body, reports)
}

/// The demo body with one launch from mid-latitudes, flown for at most two hours.
pub fn demo_run() -> (Arc<BodyView>, Vec<FlightReport>) {
    let mut scenario = Scenario::builtin_example();
    scenario.launches.truncate(1);
    scenario.launches[0].fan = None;
    scenario.launches[0].dispersion = None;
    scenario.launches[0].speed_m_s = Some(0.3);
    let (body, reports) = run(&scenario, 2.0 * 3600.0);
    (Arc::new(BodyView::new(body)), reports)
}

/// The built-in example (all its launches, two hours at most) with the surface map attached,
/// computed once per test binary.
pub fn demo_map_view() -> (Arc<BodyView>, Vec<FlightReport>) {
    static CELL: OnceLock<(Arc<BodyView>, Vec<FlightReport>)> = OnceLock::new();
    CELL.get_or_init(|| {
        let (body, reports) = run(&Scenario::builtin_example(), 2.0 * 3600.0);
        let map =
            spinfall_dynamics::surface_map::surface_map(&body, &|_, _| {}, &AtomicBool::new(false))
                .expect("surface map");
        let mut view = BodyView::new(body);
        view.set_map(Some(Arc::new(map)));
        (Arc::new(view), reports)
    })
    .clone()
}
