//! The Environment section: zero-velocity curves of the selected launch and of a typed
//! constant, the equilibrium table and markers, all drawn through the body view's guides.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use common::{add_site, click_label, demo_harness, settle};
use egui_kittest::kittest::Queryable;
use nalgebra::Point3;
use spinfall_dynamics::zero_velocity::geopotential;
use spinfall_gui::Command;

#[test]
fn curves_follow_the_selected_launch_and_the_typed_constant() {
    let mut harness = demo_harness();
    add_site(&mut harness, 15.0, 40.0, 0.3, 4.0 * 3600.0);
    harness.state_mut().push_command(Command::Run);
    settle(&mut harness);
    assert_eq!(harness.state().reports().len(), 1);
    harness
        .state_mut()
        .push_command(Command::SelectLaunch(Some(0)));
    harness.state_mut().handle_commands();
    harness.step();
    // Nothing drawn before the values exist.
    let guides = harness.state().guides().unwrap();
    assert!(guides.zero_velocity.is_none());

    click_label(&mut harness, "Compute values");
    settle(&mut harness);
    let guides = harness.state().guides().unwrap();
    let z = guides.zero_velocity.as_ref().expect("curves of the launch");
    let report = harness.state().reports()[0].clone();
    assert_eq!(z.label, report.id);
    // A slow hop is bound: its zero-velocity surface closes around the body, so the curve
    // crosses the equatorial plane and the outside beyond it is hatched.
    assert!(!z.plane_curves.is_empty());
    assert!(!z.forbidden_hatch.is_empty());
    // The curves are level curves of the geopotential at the launch's Jacobi constant
    // C = |v|^2/2 + Phi(r0) (interpolated between grid points: to a small fraction of the
    // range of Phi over a cell).
    let app = harness.state();
    let body = app.view_body().unwrap();
    let v = nalgebra::Vector3::from(report.launch_vel_body_m_s);
    let c = 0.5 * v.norm_squared() + geopotential(&body, &Point3::from(report.launch_pos_body_m));
    let worst = z
        .plane_curves
        .iter()
        .flatten()
        .map(|p| (geopotential(&body, &Point3::from(*p)) - c).abs() / c.abs())
        .fold(0.0, f64::max);
    assert!(worst < 1e-3, "curve points off the level by {worst} of |C|");
    // The figures the user exports carry them too: the legend names the launch.
    let legend: Vec<String> = spinfall_scene::guide_legend_entries(
        app.view().unwrap(),
        &spinfall_scene::ViewOptions::default(),
    )
    .into_iter()
    .map(|e| e.text)
    .collect();
    assert!(legend.iter().any(|t| t.contains(&report.id)), "{legend:?}");

    // Switching to a typed constant starts from the launch's: the same curves, labelled so.
    let before = z.plane_curves.clone();
    click_label(&mut harness, "Jacobi constant");
    let guides = harness.state().guides().unwrap();
    let z = guides.zero_velocity.as_ref().unwrap();
    assert_eq!(z.label, "constant");
    assert_eq!(z.plane_curves, before);
    // A constant above every value on the plane and the surface draws no curve.
    harness.state_mut().set_zero_velocity_constant(1e6);
    harness.step();
    harness.step();
    let guides = harness.state().guides().unwrap();
    let z = guides.zero_velocity.as_ref().unwrap();
    assert!(z.plane_curves.is_empty() && z.surface_curves.is_empty());
    assert!(z.forbidden_hatch.is_empty());
    harness.get_by_label_contains("No curve at this constant");
}

#[test]
fn equilibria_are_listed_and_marked() {
    let mut harness = demo_harness();
    click_label(&mut harness, "Find equilibrium points");
    settle(&mut harness);
    let n = harness
        .state()
        .equilibria()
        .expect("the search ran")
        .equilibria
        .len();
    // An elongated body spinning slowly enough has points off its ends and sides.
    assert!(n >= 2, "{n} equilibria");
    let guides = harness.state().guides().unwrap();
    assert_eq!(guides.equilibria.len(), n);
    harness.get_by_label("lat (°)");
    // Unticking the box takes the markers away, the table stays.
    click_label(&mut harness, "Mark on the body");
    let guides = harness.state().guides().unwrap();
    assert!(guides.equilibria.is_empty());
    harness.get_by_label("lat (°)");
}

/// A scenario with a Sun: its sunlight layer can be chosen as a map, and the Environment
/// section says the zero-velocity surfaces leave its forces out.
#[test]
fn a_scenario_with_a_sun_offers_its_sunlight_map() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("sunny.json");
    std::fs::write(
        &path,
        r#"{"format": "spinfall-scenario", "version": 1,
            "body": {"shape": "builtin:quillon", "density_kg_m3": 2100, "recenter": true,
                     "spin": {"period_h": 5.0}},
            "environment": {
              "sun": {"direction_inertial": [1, 0, 0], "distance_au": 1.4},
              "particle": {"radius_m": 2e-5, "density_kg_m3": 2500}}}"#,
    )
    .unwrap();
    let mut harness = demo_harness();
    harness
        .state_mut()
        .push_command(Command::LoadScenario(path.clone()));
    settle(&mut harness);
    harness.state_mut().push_command(Command::ComputeMap);
    settle(&mut harness);
    harness.get_by_label_contains("The scenario's Sun adds forces");
    harness.get_by_label("Colour by").click();
    harness.step();
    harness.step();
    assert!(
        !common::labels_containing(&harness, "Sunlit").is_empty(),
        "the sunlight layer is offered"
    );
    assert!(!common::labels_containing(&harness, "Radiation pressure along surface").is_empty());
}
