//! Drives the real app with egui_kittest: no display, no GPU, no file dialogs.

use std::time::Duration;

use egui::{Event, Modifiers, PointerButton, Pos2};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use spinfall_gravity::LengthUnit;
use spinfall_gui::{GuiOptions, SpinfallApp};

const WAIT: Duration = Duration::from_secs(120);

fn demo_harness() -> Harness<'static, SpinfallApp> {
    let mut app = SpinfallApp::new_for_test(GuiOptions::default());
    assert!(app.wait_for_jobs(WAIT), "demo body did not load in time");
    Harness::builder()
        .with_size(egui::vec2(1400.0, 900.0))
        .build_ui_state(|ui, app: &mut SpinfallApp| app.ui(ui), app)
}

/// Step the harness, letting background jobs finish.
fn settle(harness: &mut Harness<'static, SpinfallApp>) {
    for _ in 0..3 {
        harness.step();
    }
    assert!(
        harness.state_mut().wait_for_jobs(WAIT),
        "background jobs did not finish"
    );
    for _ in 0..3 {
        harness.step();
    }
}

fn click_at(harness: &mut Harness<'static, SpinfallApp>, pos: Pos2) {
    harness.input_mut().events.push(Event::PointerMoved(pos));
    harness.step();
    harness.input_mut().events.push(Event::PointerButton {
        pos,
        button: PointerButton::Primary,
        pressed: true,
        modifiers: Modifiers::NONE,
    });
    harness.step();
    harness.input_mut().events.push(Event::PointerButton {
        pos,
        button: PointerButton::Primary,
        pressed: false,
        modifiers: Modifiers::NONE,
    });
    harness.step();
    harness.step();
}

/// Place a site by clicking the middle of the body-fixed view.
fn place_site_in_body_view(harness: &mut Harness<'static, SpinfallApp>) {
    settle(harness);
    let rect = harness.state().view_rect(0).expect("body-fixed view drawn");
    click_at(harness, rect.center());
    harness.state_mut().handle_commands();
    harness.step();
}

#[test]
fn starts_on_the_demo_body_and_renders_both_views() {
    let mut harness = demo_harness();
    settle(&mut harness);
    let app = harness.state();
    let shape = app.shape().expect("demo body loaded");
    assert_eq!(shape.name, spinfall_gravity::demo::NAME);
    assert!(shape.shape.face_count() > 100);
    let renders = app.render_counts();
    assert!(renders[0] >= 1 && renders[1] >= 1, "renders: {renders:?}");
    // Nothing changed: no new render on the next frames.
    harness.step();
    harness.step();
    assert_eq!(harness.state().render_counts(), renders);
}

#[test]
fn click_places_site_run_fills_table_and_speed_change_takes_effect() {
    let mut harness = demo_harness();
    place_site_in_body_view(&mut harness);
    assert_eq!(
        harness.state().sites().len(),
        1,
        "a click on the body places one site"
    );
    {
        let app = harness.state_mut();
        let site = &mut app.sites_mut()[0];
        site.launch.speed_m_s = 0.05;
        site.launch.elevation_deg = 60.0;
        app.settings_mut().integrator.max_time_s = 6.0 * 3600.0;
    }
    harness.get_by_label_contains("Run 1 launch").click();
    harness.step();
    eprintln!("after click: busy {} cmds", harness.state().busy());
    settle(&mut harness);
    let first = harness.state().reports().to_vec();
    assert_eq!(
        first.len(),
        1,
        "run state {:?}, notices {:?}",
        harness.state().run_state(),
        harness.state().notices()
    );
    // The table shows the launch.
    harness.get_by_label(&first[0].id);
    let alt_slow = first[0].max_altitude_m;

    // A faster launch flies higher.
    harness.state_mut().sites_mut()[0].launch.speed_m_s = 0.12;
    harness.state_mut().push_command(spinfall_gui::Command::Run);
    settle(&mut harness);
    let second = harness.state().reports().to_vec();
    assert_eq!(second.len(), 1);
    assert!(
        second[0].max_altitude_m > alt_slow,
        "max altitude {} m at 0.12 m/s should exceed {} m at 0.05 m/s",
        second[0].max_altitude_m,
        alt_slow
    );
}

#[test]
fn broken_obj_shows_error_and_keeps_old_body() {
    let mut harness = demo_harness();
    settle(&mut harness);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("broken.obj");
    std::fs::write(&path, "v 0 0 0\nv 1 0 0\nf 1 2 7\n").unwrap();
    harness
        .state_mut()
        .push_command(spinfall_gui::Command::LoadShape(
            path.clone(),
            LengthUnit::Metre,
        ));
    settle(&mut harness);
    let app = harness.state();
    assert_eq!(app.shape().unwrap().name, spinfall_gravity::demo::NAME);
    let errors: Vec<_> = app
        .notices()
        .iter()
        .filter(|n| n.kind == spinfall_gui::NoticeKind::Error)
        .collect();
    assert_eq!(errors.len(), 1, "{:?}", app.notices());
    assert!(errors[0].text.contains("broken.obj"), "{}", errors[0].text);
    assert!(
        errors[0].text.contains("previous body stays"),
        "{}",
        errors[0].text
    );
    // The message is on screen.
    harness.get_by_label_contains("broken.obj");
}
