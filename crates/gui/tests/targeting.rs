//! Hop targeting in the app: aim the selected launch at a point (Pick target, then a click on
//! the body), fly it, and read the solution; the solved launch's first contact lies within the
//! miss tolerance of the target.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use common::{add_site, click_at, click_label, demo_harness, settle};
use egui_kittest::kittest::Queryable;
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::targeting::TargetingStatus;
use spinfall_gui::Command;

#[test]
fn a_picked_target_is_solved_and_reached() {
    let mut harness = demo_harness();
    add_site(&mut harness, 10.0, 30.0, 0.2, 6.0 * 3600.0);
    harness.step();
    // The button arms the next click on the body as the target.
    click_label(&mut harness, "Pick target");
    let rect = harness.state().view_rect(0).unwrap();
    click_at(&mut harness, rect.center());
    harness.state_mut().handle_commands();
    harness.step();
    let target = harness.state().sites()[0].target.clone();
    assert!(
        target.and_then(|t| t.point_m).is_some(),
        "the click set a target"
    );
    assert!(harness.state().sites()[0].speed_m_s.is_none());
    assert_eq!(
        harness.state().sites().len(),
        1,
        "the click placed no new site"
    );

    // Aim at a known point a few hundred metres away and fly.
    let body = harness.state().view_body().unwrap();
    let aim = Site::from_lat_lon(&body, 14.0, 37.0, NormalMode::Face).unwrap();
    harness.state_mut().push_command(Command::SetTarget {
        point_body_m: aim.point_body_m,
    });
    harness.state_mut().handle_commands();
    harness.state_mut().push_command(Command::Run);
    settle(&mut harness);
    let report = harness.state().reports()[0].clone();
    let t = report.targeting.as_ref().expect("a targeting report");
    assert_eq!(t.status, TargetingStatus::Solved, "{:?}", t.reason);
    let first = report.contacts.first().expect("a first contact").pos_body_m;
    let miss = (nalgebra::Point3::from(first) - aim.point_body_m).norm();
    assert!(
        miss <= t.miss_tolerance_m + 1e-9,
        "first contact {miss} m from the target"
    );
    harness.get_by_label_contains("Targeting:");
    harness.get_by_label_contains("per cm/s of speed");
}
