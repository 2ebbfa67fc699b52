//! Scenario documents: the minimal document, round trips, and errors that name the field.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use spinfall_dynamics::DynamicsError;
use spinfall_dynamics::scenario::{FieldMethodSpec, Scenario, ShapeSource};

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
    assert_eq!(blocks.len(), 5, "SCENARIO.md's JSON examples");
    for b in &blocks {
        // A whole document parses as it is; a fragment (`"key": value`) parses inside the
        // minimal document.
        let text = if b.trim_start().starts_with('{') {
            b.to_string()
        } else {
            MINIMAL.replacen('{', &format!("{{{},", b.trim()), 1)
        };
        Scenario::from_json_str(&text).unwrap_or_else(|e| panic!("{e}\n{b}"));
    }
    // The third is a targeted launch: its mode and tolerance reach the parsed scenario.
    let targeted = Scenario::from_json_str(blocks[2]).unwrap();
    assert_eq!(
        targeted.launches[0].mode,
        Some(spinfall_dynamics::targeting::TargetMode::FixedSpeed {
            speed_m_s: 0.6,
            arc: spinfall_dynamics::targeting::ArcChoice::Low
        })
    );
    assert_eq!(targeted.launches[0].miss_tolerance_m, Some(0.5));
    // The fragment is the `field` section, and it reaches the parsed scenario.
    let with_field = MINIMAL.replacen('{', &format!("{{{},", blocks[3].trim()), 1);
    let field = Scenario::from_json_str(&with_field).unwrap().field.unwrap();
    assert_eq!(field.method, FieldMethodSpec::Interpolated);
    assert_eq!(field.max_rel_error, 1e-9);
    assert_eq!(field.max_memory_mb, Some(4096));
    // The fourth is the `environment` section, and it reaches the parsed scenario.
    let with_env = MINIMAL.replacen('{', &format!("{{{},", blocks[4].trim()), 1);
    let env = Scenario::from_json_str(&with_env).unwrap();
    assert_eq!(env.sun().unwrap().distance_au, 2.2);
    assert_eq!(env.default_particle().unwrap().radius_m, 5e-5);
    // The complete example is the built-in one (whose density and period come from the demo
    // constants of the gravity crate: if this fails after they changed, update SCENARIO.md).
    assert_eq!(
        Scenario::from_json_str(blocks[1]).unwrap(),
        Scenario::builtin_example(),
        "SCENARIO.md's complete example differs from Scenario::builtin_example()"
    );
}

/// The built-in demo body with the example's mass and spin (recentred).
fn demo_body() -> spinfall_dynamics::Body {
    let (shape, _) = spinfall_dynamics::scenario::builtin_quillon().unwrap();
    Scenario::builtin_example().build_body(shape).unwrap()
}

/// Issue 9, fault 12: a fan `a` next to an explicit launch `a/1` used to give two launches
/// with the same id; the collision is now an input error naming both entries.
#[test]
fn generated_ids_that_collide_with_given_ids_are_refused() {
    let mut s = Scenario::builtin_example();
    // launches[0] is the fan "fan" (members fan/0 .. fan/7); add an explicit "fan/1".
    let mut explicit = s.launches[3].clone();
    explicit.id = "fan/1".into();
    s.launches.push(explicit);
    s.validate().unwrap();
    let e = s.build_launches(&demo_body()).unwrap_err().to_string();
    assert!(e.contains("\"fan/1\""), "{e}");
    assert!(
        e.contains("launches[0]") && e.contains("launches[4]"),
        "{e}"
    );
    // A dispersion member against a given id, too.
    let mut s = Scenario::builtin_example();
    s.launches[2].id = "scatter#3".into();
    let e = s.build_launches(&demo_body()).unwrap_err().to_string();
    assert!(e.contains("\"scatter#3\""), "{e}");
}

/// Issue 9, fault 14: a scenario without launches describes a body (enough for a surface map).
#[test]
fn a_scenario_without_launches_is_valid() {
    let text = MINIMAL.replace(
        r#""launches": [{"id": "a", "state": {"position_m": [1,2,3], "velocity_m_s": [0,0,1]}}],"#,
        "",
    );
    let s = Scenario::from_json_str(&text).unwrap();
    assert!(s.launches.is_empty());
    assert_eq!(s.launch_count(), 0);
    let back = Scenario::from_json_str(&s.to_json_string_pretty().unwrap()).unwrap();
    assert_eq!(back, s);
}

/// A document cut short names where the text ended, not a field path ("?" before).
#[test]
fn a_truncated_document_names_the_line_and_column_only() {
    for cut in [
        &MINIMAL[..MINIMAL.len() / 2],
        "{\"bad\": 1",
        "{\"format\": \"spinfall-scenario\"",
    ] {
        let e = Scenario::from_json_str(cut).unwrap_err().to_string();
        assert!(e.contains("EOF while parsing"), "{e}");
        assert!(e.contains("line"), "{e}");
        assert!(!e.contains('?'), "{e}");
    }
}

/// Issue 9, fault 13: a UTF-8 byte-order mark is not "expected value at line 1 column 1", and
/// UTF-16 is named.
#[test]
fn byte_order_marks_and_utf16_are_handled() {
    let with_bom = format!("\u{FEFF}{MINIMAL}");
    assert_eq!(
        Scenario::from_json_str(&with_bom).unwrap(),
        Scenario::from_json_str(MINIMAL).unwrap()
    );
    assert_eq!(
        Scenario::from_json_bytes(with_bom.as_bytes()).unwrap(),
        Scenario::from_json_str(MINIMAL).unwrap()
    );
    let mut utf16 = vec![0xFF, 0xFE];
    utf16.extend(MINIMAL.encode_utf16().flat_map(|u| u.to_le_bytes()));
    let e = Scenario::from_json_bytes(&utf16).unwrap_err().to_string();
    assert!(e.contains("UTF-16"), "{e}");
}

/// Issue 9, fault 9 (scenario side): serde quotes the whole offending string; the message keeps
/// at most about 80 characters of it.
#[test]
fn long_strings_are_not_echoed_whole() {
    let long = "x".repeat(1_000_000);
    let text = MINIMAL.replacen("2400", &format!("\"{long}\""), 1);
    let e = Scenario::from_json_str(&text).unwrap_err().to_string();
    assert!(e.len() < 400, "{} bytes", e.len());
    assert!(e.contains("body.density_kg_m3"), "{e}");
    let text = MINIMAL.replacen("\"seed\"", "", 1).replacen(
        "\"format\"",
        &format!("\"{long}\": 1, \"format\""),
        1,
    );
    let e = Scenario::from_json_str(&text).unwrap_err().to_string();
    assert!(e.len() < 400, "{} bytes: {}", e.len(), &e[..300]);
}

/// Issue 9, fault 5: the launch count is known before anything is built, and the limit is read
/// from the scenario.
#[test]
fn launch_counts_and_limits_are_known_before_building() {
    let s = Scenario::builtin_example();
    assert_eq!(s.launch_count(), 16);
    assert_eq!(
        s.max_launches(),
        spinfall_dynamics::scenario::DEFAULT_MAX_LAUNCHES
    );
    let text = MINIMAL.replacen(
        "\"format\"",
        "\"limits\": {\"max_launches\": 12}, \"format\"",
        1,
    );
    let s = Scenario::from_json_str(&text).unwrap();
    assert_eq!(s.max_launches(), 12);
    let mut huge = Scenario::builtin_example();
    huge.launches[0].fan.as_mut().unwrap().count = 100_000;
    huge.launches[0].dispersion = huge.launches[1].dispersion.clone();
    huge.launches[0].dispersion.as_mut().unwrap().count = 100_000;
    assert_eq!(huge.launch_count(), 10_000_000_000 + 8);
    let bad = MINIMAL.replacen(
        "\"format\"",
        "\"limits\": {\"max_launches\": 0}, \"format\"",
        1,
    );
    let e = Scenario::from_json_str(&bad).unwrap_err().to_string();
    assert!(e.contains("limits.max_launches"), "{e}");
}

/// A sharded run names its launches without building them: `Scenario::launch_ids` must give
/// exactly the ids (and order) of the expansion, for single launches, fans, dispersion sets,
/// fans of dispersion sets and explicit states.
#[test]
fn launch_ids_are_the_ids_of_the_expansion() {
    let mut s = Scenario::builtin_example();
    // A fan of dispersion sets next to the example's fan, dispersion set, face and state.
    let mut both = s.launches[0].clone();
    both.id = "both".into();
    both.fan.as_mut().unwrap().count = 3;
    both.dispersion = s.launches[1].dispersion.clone();
    both.dispersion.as_mut().unwrap().count = 4;
    s.launches.push(both);
    let built: Vec<String> = s
        .build_launches(&demo_body())
        .unwrap()
        .into_iter()
        .map(|l| l.id)
        .collect();
    assert_eq!(s.launch_ids(), built);
    assert_eq!(built.len() as u64, s.launch_count());
    assert!(built.contains(&"both/2#3".to_string()), "{built:?}");
}

/// Solving only some targeted entries (one process of a sharded run) gives those entries the
/// same solution, bit for bit, as solving them all; the others get no record.
#[test]
fn targeted_entries_solved_alone_equal_those_solved_together() {
    let mut s = Scenario::builtin_example();
    s.launches.truncate(3);
    let target = |lat: f64, lon: f64| spinfall_dynamics::scenario::LaunchEntry {
        id: format!("hop{lat}"),
        site: Some(spinfall_dynamics::scenario::SiteSpec {
            lat_deg: Some(lat),
            lon_deg: Some(lon),
            ..Default::default()
        }),
        target: Some(spinfall_dynamics::scenario::SiteSpec {
            lat_deg: Some(lat + 2.0),
            lon_deg: Some(lon + 3.0),
            ..Default::default()
        }),
        ..Default::default()
    };
    s.launches.push(target(10.0, 30.0));
    s.launches.push(target(-20.0, 120.0));
    s.validate().unwrap();
    let body = demo_body();
    let never = std::sync::atomic::AtomicBool::new(false);
    let all = s
        .build_launches_targeted(&body, &|_, _, _| {}, &never)
        .unwrap();
    let last = s
        .build_launches_targeted_for(&body, &|i| i == 4, &|_, _, _| {}, &never)
        .unwrap();
    assert_eq!(all.targeting.len(), 2);
    assert_eq!(last.targeting.len(), 1);
    let (a, b) = (&all.targeting[1], &last.targeting[0]);
    assert_eq!((a.entry, &a.id, &a.launches), (b.entry, &b.id, &b.launches));
    assert_eq!(a.report, b.report);
    let k = a.launches.start;
    assert_eq!(all.states[k], last.states[k]);
    // The unsolved entry keeps its place (same ids, same count) but is not solved.
    let ids = |t: &spinfall_dynamics::scenario::TargetedLaunches| -> Vec<String> {
        t.states.iter().map(|l| l.id.clone()).collect()
    };
    assert_eq!(ids(&all), ids(&last));
    // A bad target is refused even when its entry is not solved.
    s.launches[3].target.as_mut().unwrap().face = Some(usize::MAX / 2);
    s.launches[3].target.as_mut().unwrap().lat_deg = None;
    s.launches[3].target.as_mut().unwrap().lon_deg = None;
    let e = s
        .build_launches_targeted_for(&body, &|_| false, &|_, _, _| {}, &never)
        .unwrap_err()
        .to_string();
    assert!(e.contains("launches[3].target"), "{e}");
}
