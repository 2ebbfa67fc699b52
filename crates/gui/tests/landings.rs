//! Landing statistics in the app: the example scenario's fan and dispersion groups get a table
//! row each, their ellipses are drawn on the body, and the landing density becomes a map choice.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use common::{click_label, demo_harness, labels_containing, settle};
use egui_kittest::kittest::Queryable;
use spinfall_dynamics::scenario::Scenario;
use spinfall_gui::Command;

#[test]
fn groups_get_statistics_ellipses_and_a_density_map() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("example.json");
    let text = Scenario::builtin_example().to_json_string_pretty().unwrap();
    std::fs::write(&path, text).unwrap();
    let mut harness = demo_harness();
    harness
        .state_mut()
        .push_command(Command::LoadScenario(path.clone()));
    settle(&mut harness);
    harness.state_mut().push_command(Command::Run);
    settle(&mut harness);
    assert_eq!(harness.state().reports().len(), 16);
    harness.step();
    harness.get_by_label_contains("Landing statistics");
    // One row per group of the example: the fan and the dispersion set.
    harness.get_by_label("scatter");
    let guides = harness.state().guides().unwrap();
    let groups: std::collections::BTreeSet<&str> = guides
        .landing_ellipses
        .iter()
        .map(|e| e.group.as_str())
        .collect();
    // Groups with enough landed members (here the fan) get their ellipses; a group with too
    // few landed members is listed in the table without them.
    assert!(groups.contains("fan"), "{groups:?}");
    assert!(
        groups.iter().all(|g| ["fan", "scatter"].contains(g)),
        "{groups:?}"
    );
    // Three ellipses per group drawn: 50, 90 and 99 %.
    assert_eq!(
        guides
            .landing_ellipses
            .iter()
            .filter(|e| e.group == "fan")
            .count(),
        3
    );
    click_label(&mut harness, "Draw ellipses on the body");
    assert!(
        harness
            .state()
            .guides()
            .unwrap()
            .landing_ellipses
            .is_empty()
    );

    // The map gets the landing layer: counts over face areas sum back to the landed launches.
    harness.state_mut().push_command(Command::ComputeMap);
    settle(&mut harness);
    harness.get_by_label("Colour by").click();
    harness.step();
    harness.step();
    assert!(!labels_containing(&harness, "Landing density").is_empty());
    let view = harness.state().view().unwrap();
    let map = view.map().unwrap();
    let density = map.landing_density_per_m2.as_ref().unwrap();
    let shape = &view.body().shape;
    let landed_from_map: f64 = density
        .iter()
        .enumerate()
        .map(|(f, d)| d * shape.face_area_m2(f))
        .sum();
    let landed = harness
        .state()
        .reports()
        .iter()
        .filter(|r| r.landing.is_some())
        .count();
    assert!(landed > 0);
    assert!(
        (landed_from_map - landed as f64).abs() < 1e-6,
        "{landed_from_map} vs {landed}"
    );
}
