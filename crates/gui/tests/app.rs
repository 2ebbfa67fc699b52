//! Drives the real app with egui_kittest: no display, no GPU, no file dialogs.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use common::*;
use egui::{Event, Modifiers, PointerButton, Pos2};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use spinfall_gravity::LengthUnit;
use spinfall_gui::SpinfallApp;

#[test]
fn starts_on_the_demo_body_and_renders_both_views() {
    let mut harness = demo_harness();
    settle(&mut harness);
    let app = harness.state();
    let shape = app.shape().expect("demo body loaded");
    assert_eq!(shape.name(), spinfall_gravity::demo::NAME);
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
        site.speed_m_s = Some(0.05);
        site.elevation_deg = Some(60.0);
        app.scenario_mut().integrator.max_time_s = 6.0 * 3600.0;
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
    harness.state_mut().sites_mut()[0].speed_m_s = Some(0.12);
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
    assert_eq!(app.shape().unwrap().name(), spinfall_gravity::demo::NAME);
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

#[test]
fn export_writes_every_file_and_the_scenario_reloads() {
    let mut harness = demo_harness();
    settle(&mut harness);
    {
        let app = harness.state_mut();
        app.push_command(spinfall_gui::Command::AddSiteLatLon {
            lat_deg: 20.0,
            lon_deg: 45.0,
        });
        app.handle_commands();
        app.sites_mut()[0].speed_m_s = Some(0.08);
        app.scenario_mut().integrator.max_time_s = 3.0 * 3600.0;
        app.push_command(spinfall_gui::Command::Run);
    }
    settle(&mut harness);
    assert_eq!(harness.state().reports().len(), 1);
    let dir = tempfile::tempdir().unwrap();
    harness
        .state_mut()
        .push_command(spinfall_gui::Command::Export(spinfall_gui::ExportRequest {
            folder: dir.path().to_path_buf(),
            stem: "run".into(),
            composite: true,
            body_view: true,
            figure: spinfall_gui::FigureChoice {
                size: spinfall_render::FigureSize::Pixels {
                    width_px: 400,
                    height_px: 240,
                },
                ..Default::default()
            },
            results: true,
            trajectories: true,
            surface_map: true,
            scenario: true,
            ..Default::default()
        }));
    settle(&mut harness);
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n != spinfall_workflow::output::LOCK_FILE)
        .collect();
    names.sort();
    // The surface map is computed for the export; no temporary files are left behind; the
    // manifest lists the set.
    assert_eq!(
        names,
        [
            "run_body_fixed.png",
            "run_manifest.json",
            "run_results.csv",
            "run_results.json",
            "run_scenario.json",
            "run_surface_map.csv",
            "run_trajectories.csv",
            "run_views.png"
        ],
        "notices: {:?}",
        harness.state().notices()
    );
    // PNG signature (PNG specification, section 5.2).
    let png = std::fs::read(dir.path().join("run_views.png")).unwrap();
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
    let csv = std::fs::read_to_string(dir.path().join("run_results.csv")).unwrap();
    assert_eq!(csv.lines().count(), 2, "{csv}");
    // One row per face plus the header.
    let faces = harness.state().shape().unwrap().shape.face_count();
    let map_csv = std::fs::read_to_string(dir.path().join("run_surface_map.csv")).unwrap();
    assert_eq!(map_csv.lines().count(), faces + 1);
    let json: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.path().join("run_results.json")).unwrap(),
    )
    .unwrap();
    assert!(json.is_object() || json.is_array());
    let set = spinfall_workflow::output::read_verified(dir.path(), "run_manifest.json").unwrap();
    assert_eq!(set.manifest.files.len(), 7);

    // The scenario reloads to the same site and launch settings.
    let sites_before = harness.state().sites().to_vec();
    harness.state_mut().sites_mut().clear();
    harness
        .state_mut()
        .push_command(spinfall_gui::Command::LoadScenario(
            dir.path().join("run_scenario.json"),
        ));
    settle(&mut harness);
    assert_eq!(
        harness.state().sites(),
        &sites_before[..],
        "{:?}",
        harness.state().notices()
    );
}

#[test]
fn inertial_click_unrotates_the_ray() {
    // At t > 0 the inertial view shows the body turned; a click at the view centre must land on
    // the body point drawn there, found by turning the ray back into the body frame.
    let mut harness = demo_harness();
    settle(&mut harness);
    let period_s = harness.state().body_view().unwrap().body().spin.period_s;
    harness
        .state_mut()
        .push_command(spinfall_gui::Command::ResetCameras);
    settle(&mut harness);
    // Quarter of a turn.
    harness.state_mut().set_time_s(period_s / 4.0);
    settle(&mut harness);
    let rect = harness.state().view_rect(1).unwrap();
    click_at(&mut harness, rect.center());
    harness.state_mut().handle_commands();
    let app = harness.state();
    assert_eq!(app.sites().len(), 1);
    let point_body_m = app.sites()[0]
        .site
        .as_ref()
        .and_then(|s| s.point_m)
        .expect("a picked point");
    // Where that body point is drawn now: turned by inertial_from_body(t), then projected.
    let body = app.body_view().unwrap().body();
    let p_inertial =
        body.pos_inertial_from_body(period_s / 4.0, &nalgebra::Point3::from(point_body_m));
    let camera = app.camera(1).unwrap();
    let (x, y, _) = camera.project(&p_inertial).unwrap();
    let ppp = 1.0;
    let centre = (
        rect.width() as f64 * ppp / 2.0,
        rect.height() as f64 * ppp / 2.0,
    );
    assert!(
        (x - centre.0).abs() < 1.5 && (y - centre.1).abs() < 1.5,
        "picked point projects to ({x:.1}, {y:.1}), clicked at {centre:?}"
    );
    // The body-frame point differs from the un-rotated pick (the body has turned 90 degrees).
    let (o, d) = camera.ray_at_pixel(centre.0, centre.1);
    let naive = body
        .shape
        .ray_first_hit(&o, &d, 1e7)
        .map(|h| h.point_m)
        .unwrap_or(nalgebra::Point3::origin());
    assert!((naive - nalgebra::Point3::from(point_body_m)).norm() > 10.0);
}

#[test]
fn keyboard_shortcuts_play_and_run() {
    let mut harness = demo_harness();
    settle(&mut harness);
    assert!(!harness.state().is_playing());
    harness.key_press(egui::Key::Space);
    harness.step();
    assert!(harness.state().is_playing(), "Space starts the animation");
    harness.key_press(egui::Key::Space);
    harness.step();
    assert!(!harness.state().is_playing(), "Space pauses it");

    harness
        .state_mut()
        .push_command(spinfall_gui::Command::AddSiteLatLon {
            lat_deg: -10.0,
            lon_deg: 100.0,
        });
    harness.state_mut().sites_mut().clear();
    harness.state_mut().handle_commands();
    harness.state_mut().sites_mut()[0].speed_m_s = Some(0.05);
    harness.state_mut().scenario_mut().integrator.max_time_s = 3600.0;
    harness.key_press_modifiers(Modifiers::COMMAND, egui::Key::R);
    harness.step();
    settle(&mut harness);
    assert_eq!(harness.state().reports().len(), 1, "Ctrl+R runs");
}

/// A file dropped on the window.
#[derive(Debug)]
struct TestFile(std::path::PathBuf);

impl egui::DroppedFile for TestFile {
    fn path(&self) -> &std::path::Path {
        &self.0
    }

    fn bytes(&self) -> Result<Vec<u8>, String> {
        std::fs::read(&self.0).map_err(|e| e.to_string())
    }
}

#[test]
fn dropped_obj_file_loads_in_the_background() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("brick.obj");
    let mesh = spinfall_gravity::generate::box_mesh(400.0, 200.0, 100.0);
    std::fs::write(
        &path,
        spinfall_gravity::generate::to_obj(&mesh, LengthUnit::Metre, "test brick"),
    )
    .unwrap();
    let mut harness = demo_harness();
    settle(&mut harness);
    harness.state_mut().params_mut().density_kg_m3 = 1000.0;
    // The unit follows the radio buttons; the file is in metres.
    harness.get_by_label("m").click();
    harness.step();
    harness
        .input_mut()
        .dropped_files
        .push(std::sync::Arc::new(TestFile(path.clone())));
    harness.step();
    settle(&mut harness);
    let app = harness.state();
    let shape = app.shape().expect("a shape");
    assert_eq!(shape.name(), "brick", "{:?}", app.notices());
    assert_eq!(shape.shape.face_count(), 12);
    // Mass of a 400 m x 200 m x 100 m brick of 1000 kg/m^3: 8e9 kg (rho * V).
    let mass_kg = app.body_view().unwrap().body().figures().mass_kg;
    assert!((mass_kg / 8.0e9 - 1.0).abs() < 1e-9, "mass {mass_kg} kg");
    assert!(app.persisted().recent_files.iter().any(|f| f.path == path));
}

fn drag(harness: &mut Harness<'static, SpinfallApp>, from: Pos2, to: Pos2) {
    harness.input_mut().events.push(Event::PointerMoved(from));
    harness.step();
    harness.input_mut().events.push(Event::PointerButton {
        pos: from,
        button: PointerButton::Primary,
        pressed: true,
        modifiers: Modifiers::NONE,
    });
    harness.step();
    for k in 1..=5 {
        let p = from + (to - from) * (k as f32 / 5.0);
        harness.input_mut().events.push(Event::PointerMoved(p));
        harness.step();
    }
    harness.input_mut().events.push(Event::PointerButton {
        pos: to,
        button: PointerButton::Primary,
        pressed: false,
        modifiers: Modifiers::NONE,
    });
    harness.step();
}

#[test]
fn dragging_orbits_one_view_or_both_when_linked() {
    let mut harness = demo_harness();
    settle(&mut harness);
    let eye = |h: &Harness<'static, SpinfallApp>, k: usize| h.state().camera(k).unwrap().eye();
    let (body0, inertial0) = (eye(&harness, 0), eye(&harness, 1));
    let renders0 = harness.state().render_counts();
    let c = harness.state().view_rect(0).unwrap().center();
    drag(&mut harness, c, c + egui::vec2(60.0, 0.0));
    assert!(
        (eye(&harness, 0) - body0).norm() > 1.0,
        "the body-fixed camera did not orbit"
    );
    assert_eq!(
        eye(&harness, 1),
        inertial0,
        "the inertial camera moved without the link"
    );
    assert!(
        harness.state().render_counts()[0] > renders0[0],
        "no re-render after orbit"
    );
    // A drag is not a click: no site was placed.
    assert!(harness.state().sites().is_empty());

    harness.get_by_label("Link cameras").click();
    harness.step();
    let (body1, inertial1) = (eye(&harness, 0), eye(&harness, 1));
    drag(&mut harness, c, c + egui::vec2(0.0, 40.0));
    assert!((eye(&harness, 0) - body1).norm() > 1.0);
    assert!(
        (eye(&harness, 1) - inertial1).norm() > 1.0,
        "linked camera did not follow"
    );
}

#[test]
fn cancel_stops_a_run() {
    let mut harness = demo_harness();
    settle(&mut harness);
    {
        let app = harness.state_mut();
        app.push_command(spinfall_gui::Command::AddSiteLatLon {
            lat_deg: 5.0,
            lon_deg: 10.0,
        });
        app.handle_commands();
        let site = &mut app.sites_mut()[0];
        site.speed_m_s = Some(0.3);
        site.dispersion = Some(spinfall_dynamics::scenario::DispersionSpec {
            count: 400,
            speed_sigma_m_s: None,
            speed_sigma_percent: Some(5.0),
            direction_sigma_deg: 5.0,
        });
        app.scenario_mut().integrator.max_time_s = 48.0 * 3600.0;
        app.push_command(spinfall_gui::Command::Run);
        app.handle_commands();
        assert!(app.busy());
        app.push_command(spinfall_gui::Command::CancelJobs);
        app.handle_commands();
    }
    settle(&mut harness);
    assert!(
        matches!(
            harness.state().run_state(),
            spinfall_gui::RunState::Cancelled { .. }
        ),
        "{:?}",
        harness.state().run_state()
    );
}

#[test]
fn clicking_a_trace_selects_its_launch() {
    let mut harness = demo_harness();
    settle(&mut harness);
    {
        let app = harness.state_mut();
        for (lat_deg, lon_deg) in [(10.0, 30.0), (-20.0, 150.0)] {
            app.push_command(spinfall_gui::Command::AddSiteLatLon { lat_deg, lon_deg });
        }
        app.handle_commands();
        for site in app.sites_mut() {
            site.speed_m_s = Some(0.4);
            site.elevation_deg = Some(70.0);
        }
        app.scenario_mut().integrator.max_time_s = 2.0 * 3600.0;
        app.push_command(spinfall_gui::Command::Run);
    }
    settle(&mut harness);
    assert_eq!(harness.state().reports().len(), 2);
    assert_eq!(harness.state().selected_launch(), Some(0));
    // The highest point of launch 1's trace, as the body-fixed camera shows it.
    let app = harness.state();
    let r = &app.reports()[1];
    let top = r
        .trajectory_body
        .iter()
        .max_by(|a, b| {
            let na = nalgebra::Vector3::from(a.pos_m).norm();
            let nb = nalgebra::Vector3::from(b.pos_m).norm();
            na.total_cmp(&nb)
        })
        .unwrap();
    let (x, y, _) = app
        .camera(0)
        .unwrap()
        .project(&nalgebra::Point3::from(top.pos_m))
        .unwrap();
    let rect = app.view_rect(0).unwrap();
    let pos = rect.min + egui::vec2(x as f32, y as f32);
    assert!(rect.contains(pos), "trace point off screen");
    let sites_before = app.sites().len();
    click_at(&mut harness, pos);
    harness.state_mut().handle_commands();
    assert_eq!(harness.state().selected_launch(), Some(1));
    assert_eq!(
        harness.state().sites().len(),
        sites_before,
        "a trace click placed a site"
    );
}
