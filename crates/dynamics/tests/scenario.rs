//! Scenario documents: the minimal document, round trips, and errors that name the field.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use spinfall_dynamics::DynamicsError;
use spinfall_dynamics::scenario::{Scenario, ShapeSource};

const MINIMAL: &str = r#"{"format": "spinfall-scenario", "version": 1,
 "body": {"shape": "rock.obj", "unit": "km", "density_kg_m3": 2400,
          "spin": {"period_h": 3.7, "axis": [0,0,1], "phase_deg": 0}},
 "launches": [{"id": "a", "state": {"position_m": [1,2,3], "velocity_m_s": [0,0,1]}}],
 "integrator": {"rel_tol": 1e-12, "abs_tol_m": 1e-9, "max_time_s": 200000},
 "bounce": {"normal_restitution": 0, "tangential_restitution": 0, "max_bounces": 0}}"#;

#[test]
fn minimal_document_parses_exactly() {
    let s = Scenario::from_json_str(MINIMAL).unwrap();
    assert_eq!(s.body.density_kg_m3, Some(2400.0));
    assert_eq!(s.body.spin.period_h, 3.7);
    assert_eq!(s.integrator.rel_tol, 1e-12);
    assert_eq!(s.integrator.max_time_s, 200000.0);
    assert_eq!(s.bounce.max_bounces, 0);
    assert_eq!(
        s.launches[0].state.as_ref().unwrap().position_m,
        [1.0, 2.0, 3.0]
    );
    assert_eq!(
        s.shape_source(),
        ShapeSource::File {
            path: "rock.obj".into(),
            unit: spinfall_gravity::LengthUnit::Kilometre
        }
    );
    let settings = s.flight_settings();
    assert_eq!(settings.integrator.abs_tol_m, 1e-9);
    assert_eq!(settings.bounce.normal_restitution, 0.0);
}

#[test]
fn documents_round_trip() {
    for s in [
        Scenario::from_json_str(MINIMAL).unwrap(),
        Scenario::builtin_example(),
    ] {
        let text = s.to_json_string_pretty().unwrap();
        let back = Scenario::from_json_str(&text).unwrap();
        assert_eq!(back, s, "{text}");
    }
}

#[test]
fn builtin_example_builds_body_and_launches() {
    let s = Scenario::builtin_example();
    assert_eq!(s.shape_source(), ShapeSource::BuiltinQuillon);
    let (shape, _) = spinfall_dynamics::scenario::builtin_quillon().unwrap();
    let body = s.build_body(shape).unwrap();
    assert_eq!(body.name, "Quillon");
    let com = body.shape.mass_properties().center_of_mass_m;
    assert!(
        com.coords.norm() < 1e-6 * body.brillouin_radius_m(),
        "not recentred: {com:?}"
    );
    let launches = s.build_launches(&body).unwrap();
    // 8 fan members + 6 dispersion members + 1 face launch + 1 explicit state.
    assert_eq!(launches.len(), 16);
    assert_eq!(launches[0].id, "fan/0");
    assert_eq!(launches[8].id, "scatter#0");
    // Same seed, same members.
    assert_eq!(s.build_launches(&body).unwrap(), launches);
    // The fan members leave at the requested speed relative to the surface.
    for l in &launches[..8] {
        assert!((l.vel_body_m_s.norm() - 0.8).abs() < 1e-12);
    }
}

/// Replaces `from` (which must occur) by `to` in the minimal document and parses it.
fn check_error(from: &str, to: &str, path: &str, words: &str) {
    assert!(
        MINIMAL.contains(from),
        "test bug: {from:?} not in the document"
    );
    let text = MINIMAL.replacen(from, to, 1);
    match Scenario::from_json_str(&text) {
        Err(DynamicsError::Scenario { path: p, message }) => {
            assert_eq!(p, path, "wrong path for {to:?} ({message})");
            assert!(
                message.contains(words),
                "message {message:?} lacks {words:?}"
            );
        }
        other => panic!("{to:?} should fail at {path}, got {other:?}"),
    }
}

#[test]
fn wrong_types_name_the_field_with_line_and_column() {
    check_error(
        "\"density_kg_m3\": 2400",
        "\"density_kg_m3\": \"dense\"",
        "body.density_kg_m3",
        "invalid type",
    );
    check_error(
        "\"period_h\": 3.7",
        "\"period_h\": true",
        "body.spin.period_h",
        "line 3",
    );
    check_error(
        "\"position_m\": [1,2,3]",
        "\"position_m\": [1,\"x\",3]",
        "launches[0].state.position_m[1]",
        "invalid type",
    );
    check_error(
        "\"position_m\": [1,2,3]",
        "\"position_m\": [1,2]",
        "launches[0].state.position_m",
        "invalid length",
    );
    check_error(
        "\"max_bounces\": 0",
        "\"max_bounces\": -1",
        "bounce.max_bounces",
        "invalid value",
    );
    check_error(
        "\"unit\": \"km\"",
        "\"unit\": \"mi\"",
        "body.unit",
        "unknown variant",
    );
    check_error(
        "\"axis\": [0,0,1]",
        "\"axis\": \"sideways\"",
        "body.spin.axis",
        "max-moment",
    );
}

#[test]
fn unknown_and_missing_keys_name_the_field() {
    check_error(
        "\"phase_deg\": 0",
        "\"phase_deg\": 0, \"wobble\": 1",
        "body.spin.wobble",
        "unknown field",
    );
    check_error(
        "\"id\": \"a\",",
        "\"id\": \"a\", \"colour\": \"red\",",
        "launches[0].colour",
        "unknown field",
    );
    check_error(
        "\"format\": \"spinfall-scenario\", \"version\": 1,",
        "\"format\": \"spinfall-scenario\", \"version\": 1, \"extra\": 0,",
        "extra",
        "unknown field",
    );
    check_error(
        "\"period_h\": 3.7, ",
        "",
        "body.spin",
        "missing field `period_h`",
    );
    check_error(
        "\"velocity_m_s\": [0,0,1]",
        "\"speed\": 1",
        "launches[0].state.speed",
        "unknown field",
    );
    check_error(
        "\"shape\": \"rock.obj\", ",
        "",
        "body",
        "missing field `shape`",
    );
}

#[test]
fn semantic_errors_name_the_field() {
    check_error(
        "\"density_kg_m3\": 2400",
        "\"density_kg_m3\": -2400",
        "body.density_kg_m3",
        "> 0",
    );
    check_error(
        "\"density_kg_m3\": 2400",
        "\"density_kg_m3\": 2400, \"mass_kg\": 1e12",
        "body",
        "density_kg_m3, mass_kg",
    );
    check_error("\"density_kg_m3\": 2400,", "", "body", "found none");
    check_error(
        "\"period_h\": 3.7",
        "\"period_h\": 0",
        "body.spin.period_h",
        "> 0",
    );
    check_error(
        "\"axis\": [0,0,1]",
        "\"axis\": [0,0,0]",
        "body.spin.axis",
        "non-zero",
    );
    check_error(
        "\"rel_tol\": 1e-12",
        "\"rel_tol\": 2",
        "integrator.rel_tol",
        "[1e-14, 0.001]",
    );
    check_error(
        "\"max_time_s\": 200000",
        "\"max_time_s\": -5",
        "integrator.max_time_s",
        "> 0",
    );
    check_error(
        "\"normal_restitution\": 0",
        "\"normal_restitution\": 1.5",
        "bounce.normal_restitution",
        "[0.0, 1.0]",
    );
    check_error(
        "\"shape\": \"rock.obj\"",
        "\"shape\": \"builtin:nowhere\"",
        "body.shape",
        "unknown built-in",
    );
    check_error(
        "\"version\": 1",
        "\"version\": 2",
        "version",
        "unsupported version 2",
    );
    check_error(
        "\"format\": \"spinfall-scenario\"",
        "\"format\": \"other\"",
        "format",
        "expected",
    );
    // JSON has no NaN; a number too large for f64 is rejected by the parser with its place.
    check_error(
        "\"density_kg_m3\": 2400",
        "\"density_kg_m3\": 1e999",
        "body.density_kg_m3",
        "out of range",
    );
    check_error(
        "\"launches\": [{\"id\": \"a\", \"state\": {\"position_m\": [1,2,3], \"velocity_m_s\": [0,0,1]}}]",
        "\"launches\": []",
        "launches",
        "at least one",
    );
    check_error(
        "\"state\": {\"position_m\": [1,2,3], \"velocity_m_s\": [0,0,1]}",
        "\"site\": {\"lat_deg\": 95, \"lon_deg\": 0}, \"speed_m_s\": 1",
        "launches[0].site.lat_deg",
        "[-90.0, 90.0]",
    );
    check_error(
        "\"state\": {\"position_m\": [1,2,3], \"velocity_m_s\": [0,0,1]}",
        "\"site\": {\"face\": 3, \"lat_deg\": 5, \"lon_deg\": 0}, \"speed_m_s\": 1",
        "launches[0].site",
        "exactly one",
    );
    check_error(
        "\"state\": {\"position_m\": [1,2,3], \"velocity_m_s\": [0,0,1]}",
        "\"site\": {\"face\": 3}",
        "launches[0].speed_m_s",
        "needs a speed",
    );
    check_error(
        "\"state\": {\"position_m\": [1,2,3], \"velocity_m_s\": [0,0,1]}",
        "\"site\": {\"face\": 3}, \"speed_m_s\": 1, \"fan\": {\"vary\": \"elevation_deg\", \"to\": 120, \"count\": 3}",
        "launches[0].fan.to",
        "[0.0, 90.0]",
    );
    check_error(
        "\"velocity_m_s\": [0,0,1]}",
        "\"velocity_m_s\": [0,0,1]}, \"speed_m_s\": 3",
        "launches[0].speed_m_s",
        "only applies",
    );
    check_error("\"id\": \"a\"", "\"id\": \"\"", "launches[0].id", "empty");
}

#[test]
fn syntax_errors_report_line_and_column() {
    let text = MINIMAL.replacen("\"unit\": \"km\",", "\"unit\": \"km\"", 1);
    let e = Scenario::from_json_str(&text).unwrap_err().to_string();
    assert!(e.contains("line 2"), "{e}");
}

#[test]
fn every_json_example_in_scenario_md_parses() {
    let doc = include_str!("../SCENARIO.md");
    let blocks: Vec<&str> = doc
        .split("```json")
        .skip(1)
        .map(|b| b.split("```").next().unwrap())
        .collect();
    assert_eq!(blocks.len(), 2);
    for b in &blocks {
        Scenario::from_json_str(b).unwrap_or_else(|e| panic!("{e}\n{b}"));
    }
    // The complete example is the built-in one (whose density and period come from the demo
    // constants of the gravity crate: if this fails after they changed, update SCENARIO.md).
    assert_eq!(
        Scenario::from_json_str(blocks[1]).unwrap(),
        Scenario::builtin_example(),
        "SCENARIO.md's complete example differs from Scenario::builtin_example()"
    );
}
