//! The app's defects of issue 10 ("App:"), each driven through the real app with
//! egui_kittest: one test per defect, named for what must hold now.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use common::*;
use egui::{Event, Key, Modifiers};
use egui_kittest::kittest::Queryable;
use spinfall_dynamics::Outcome;
use spinfall_dynamics::scenario::DispersionSpec;
use spinfall_gui::{Command, NoticeKind, RunState};
use spinfall_render::{Anchor, Item, measure_text};
use spinfall_scene::plots::PlotKind;
use spinfall_scene::{DisplayUnits, LengthDisplay, TimeDisplay};

/// A dispersion set of `count` launches from the first site.
fn disperse(harness: &mut H, count: usize) {
    harness.state_mut().sites_mut()[0].dispersion = Some(DispersionSpec {
        count,
        speed_sigma_m_s: None,
        speed_sigma_percent: Some(5.0),
        direction_sigma_deg: 5.0,
    });
}

#[test]
fn progress_names_the_known_launch_count_from_the_start() {
    let mut h = demo_harness();
    add_site(&mut h, 5.0, 10.0, 0.3, 48.0 * 3600.0);
    disperse(&mut h, 400);
    h.state_mut().push_command(Command::Run);
    // Before any launch has ended, and while the run is being prepared.
    for _ in 0..4 {
        h.step();
        let texts = labels_containing(&h, "launches flown");
        assert_eq!(texts.len(), 1, "{texts:?}");
        assert!(texts[0].contains("/ 400 launches"), "{texts:?}");
        assert!(!texts[0].contains("0 / 0"), "{texts:?}");
    }
    h.state_mut().push_command(Command::CancelJobs);
    settle(&mut h);
}

#[test]
fn cancel_keeps_the_previous_results_with_true_counts_and_no_times_for_unflown_launches() {
    let mut h = demo_harness();
    add_site(&mut h, 5.0, 10.0, 0.08, 2.0 * 3600.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    let previous: Vec<String> = h.state().reports().iter().map(|r| r.id.clone()).collect();
    assert_eq!(previous.len(), 1);

    // A large run, cancelled once a few launches have ended.
    disperse(&mut h, 600);
    h.state_mut().scenario_mut().integrator.max_time_s = 48.0 * 3600.0;
    h.state_mut().push_command(Command::Run);
    h.state_mut().handle_commands();
    let start = std::time::Instant::now();
    loop {
        h.step();
        if h.state()
            .run_progress_counts()
            .is_some_and(|(done, _)| done >= 3)
        {
            break;
        }
        assert!(start.elapsed() < WAIT, "no launch ended");
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    h.state_mut().push_command(Command::CancelJobs);
    settle(&mut h);
    let RunState::Cancelled { finished, launches } = h.state().run_state().clone() else {
        panic!("{:?}", h.state().run_state());
    };
    assert_eq!(launches, 600);
    assert!((3..600).contains(&finished), "{finished} finished");
    // The previous complete results are still shown.
    let shown: Vec<String> = h.state().reports().iter().map(|r| r.id.clone()).collect();
    assert_eq!(shown, previous);
    assert!(h.state().showing_partial_run().is_none());
    h.get_by_label_contains(&format!(
        "Run cancelled: {finished} of 600 launches had finished"
    ));
    h.get_by_label_contains("last run cancelled: ");

    // The finished part, marked as such, holds only launches that ended on their own.
    h.get_by_label(&format!("Show the {finished} finished launches"))
        .click();
    h.step();
    h.state_mut().handle_commands();
    h.step();
    assert_eq!(h.state().showing_partial_run(), Some(600));
    assert_eq!(h.state().reports().len(), finished);
    for r in h.state().reports() {
        assert!(
            !matches!(&r.outcome, Outcome::Failed { reason } if reason.contains("cancelled")),
            "a cancelled launch is listed: {} {:?}",
            r.id,
            r.outcome
        );
    }
    h.get_by_label_contains("Partial run (cancelled)");
    assert!(
        labels_containing(&h, "cancelled")
            .iter()
            .all(|l| !l.starts_with("failed"))
    );
    h.get_by_label_contains("Back to the previous complete results")
        .click();
    h.step();
    h.state_mut().handle_commands();
    h.step();
    let shown: Vec<String> = h.state().reports().iter().map(|r| r.id.clone()).collect();
    assert_eq!(shown, previous);
}

/// The x tick labels of the plot drawn last: text under the data area, above the axis label.
fn x_tick_labels(fig: &spinfall_render::Figure) -> Vec<(String, f32, f32)> {
    let area = fig.regions.iter().find(|r| r.name == "plot").unwrap().rect;
    let bottom = area.y_px + area.height_px;
    let label_top = fig
        .regions
        .iter()
        .find(|r| r.name == "x label")
        .unwrap()
        .rect
        .y_px;
    fig.items
        .iter()
        .filter_map(|i| match i {
            Item::Text {
                text,
                x_px,
                y_px,
                size_px,
                anchor: Anchor::TopCenter,
                vertical: false,
                ..
            } if *y_px > bottom && *y_px < label_top => {
                let (w, _) = measure_text(text, *size_px);
                Some((text.clone(), x_px - 0.5 * w, x_px + 0.5 * w))
            }
            _ => None,
        })
        .collect()
}

#[test]
fn plots_keep_their_tick_labels_on_long_flights_and_nothing_overlaps() {
    let mut h = harness_with(common::DEFAULT_WINDOW, None);
    // A launch that leaves slowly: still in flight at the 9000 s limit or escaping late.
    add_site(&mut h, 0.0, 0.0, 1.2, 9000.0);
    h.state_mut().sites_mut()[0].elevation_deg = Some(60.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    let r = &h.state().reports()[0];
    assert!(r.end_time_s > 5000.0, "flight of {} s only", r.end_time_s);
    for kind in [PlotKind::Altitude, PlotKind::Speed, PlotKind::JacobiDrift] {
        h.state_mut().set_plot_kind(kind);
        settle(&mut h);
        let fig = h.state().plot_figure().expect("a plot is drawn").clone();
        let ticks = x_tick_labels(&fig);
        assert!(ticks.len() >= 3, "{kind:?}: x ticks {ticks:?}");
        for w in ticks.windows(2) {
            assert!(w[0].2 < w[1].1, "{kind:?}: tick labels collide: {ticks:?}");
        }
        // Title, labels, legend and data area never overlap, and all lie in the figure.
        let regions: Vec<_> = fig.regions.iter().collect();
        for (i, a) in regions.iter().enumerate() {
            let r = &a.rect;
            assert!(
                r.x_px >= -0.5
                    && r.y_px >= -0.5
                    && r.x_px + r.width_px <= fig.width_px as f32 + 0.5
                    && r.y_px + r.height_px <= fig.height_px as f32 + 0.5,
                "{kind:?}: {} outside the figure",
                a.name
            );
            for b in &regions[i + 1..] {
                assert!(
                    !a.rect.overlaps(&b.rect),
                    "{kind:?}: {} overlaps {}",
                    a.name,
                    b.name
                );
            }
        }
        assert!(fig.regions.iter().any(|r| r.name == "legend"));
    }
}

#[test]
fn the_jacobi_plot_says_that_steps_are_energy_lost_in_bounces() {
    let mut h = demo_harness();
    add_site(&mut h, 20.0, 45.0, 0.08, 3.0 * 3600.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    assert!(!h.state().reports()[0].contacts.is_empty(), "no bounce");
    click_label(&mut h, "Jacobi");
    settle(&mut h);
    let fig = h.state().plot_figure().unwrap();
    assert!(fig.items.iter().any(|i| matches!(
        i,
        Item::Text { text, .. } if text.contains("energy lost in bounces")
    )));
}

#[test]
fn an_escaped_launch_shows_when_it_ended() {
    let mut h = demo_harness();
    h.state_mut().set_units(DisplayUnits::SI);
    add_site(&mut h, 10.0, 30.0, 6.0, 6.0 * 3600.0);
    h.state_mut().sites_mut()[0].elevation_deg = Some(80.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    let r = h.state().reports()[0].clone();
    assert_eq!(r.outcome, Outcome::Escaped);
    assert!(r.first_contact_time_s.is_none());
    h.get_by_label(&format!("{:.1}", r.end_time_s));
    h.get_by_label("Ended at (s)");
}

#[test]
fn export_into_a_missing_folder_creates_it_and_says_so_where_the_user_looks() {
    let mut h = demo_harness();
    let dir = tempfile::tempdir().unwrap();
    let folder = dir.path().join("new").join("figures");
    h.state_mut().push_command(Command::ShowExport);
    settle(&mut h);
    h.get_by_label("Folder:").click();
    h.step();
    h.get_by_label("Folder:")
        .type_text(folder.to_str().unwrap());
    h.step();
    click_label(&mut h, "Export files");
    settle(&mut h);
    assert!(folder.join("spinfall_views.png").is_file());
    let text = format!("created the folder {}", folder.display());
    // The toast (the export window repeats it after "Last: ").
    let toast = h
        .query_all_by_label_contains(&text)
        .find(|n| {
            use egui_kittest::kittest::NodeT;
            let n = n.accesskit_node();
            n.value()
                .or(n.label())
                .is_some_and(|t| t.starts_with("created"))
        })
        .expect("a toast");
    // In the window, above everything (the export window included).
    let screen = egui::Rect::from_min_size(egui::Pos2::ZERO, egui::vec2(1400.0, 900.0));
    assert!(screen.contains_rect(toast.rect()), "{:?}", toast.rect());
    let notice = h.state().notices().last().unwrap();
    assert_eq!(notice.kind, NoticeKind::Info);
    // And in the export window, beside its buttons, until the next export.
    h.get_by_label_contains(&format!("Last: {text}"));

    // An error stays until dismissed; information fades.
    let blocker = dir.path().join("a file");
    std::fs::write(&blocker, "not a folder").unwrap();
    h.state_mut()
        .push_command(Command::Export(spinfall_gui::ExportRequest {
            folder: blocker.join("below"),
            stem: "x".into(),
            scenario: true,
            ..Default::default()
        }));
    settle(&mut h);
    for _ in 0..80 {
        h.step();
    }
    let kinds: Vec<NoticeKind> = h.state().notices().iter().map(|n| n.kind).collect();
    assert_eq!(kinds, [NoticeKind::Error], "{:?}", h.state().notices());
    h.get_by_label_contains("Error: export failed");
    h.get_by_label("x").click();
    h.step();
    assert!(h.state().notices().is_empty());
}

#[test]
fn enter_opens_the_typed_shape_path_and_a_failed_open_restores_the_field() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("brick.obj");
    let mesh = spinfall_gravity::generate::box_mesh(400.0, 200.0, 100.0);
    std::fs::write(
        &path,
        spinfall_gravity::generate::to_obj(&mesh, spinfall_gravity::LengthUnit::Metre, "brick"),
    )
    .unwrap();
    let mut h = demo_harness();
    h.get_by_label("m").click();
    h.step();
    h.get_by_label("Shape file:").click();
    h.step();
    h.get_by_label("Shape file:")
        .type_text(path.to_str().unwrap());
    h.step();
    h.key_press(Key::Enter);
    h.step();
    settle(&mut h);
    assert_eq!(
        h.state().shape().unwrap().name(),
        "brick",
        "{:?}",
        h.state().notices()
    );
    assert_eq!(h.state().shape_path_text(), path.to_str().unwrap());

    let bad = dir.path().join("missing.obj");
    h.get_by_label("Shape file:").click();
    h.step();
    // Select all and type the bad path over it.
    h.key_press_modifiers(Modifiers::COMMAND, Key::A);
    h.step();
    h.get_by_label("Shape file:")
        .type_text(bad.to_str().unwrap());
    h.step();
    h.key_press(Key::Enter);
    h.step();
    settle(&mut h);
    assert_eq!(h.state().shape().unwrap().name(), "brick");
    assert_eq!(h.state().shape_path_text(), path.to_str().unwrap());
    h.get_by_label_contains("missing.obj");
}

#[test]
fn the_side_panel_is_usable_at_the_default_window_size() {
    let mut h = harness_with(common::DEFAULT_WINDOW, None);
    place_site_in_body_view(&mut h);
    settle(&mut h);
    for label in [
        "Bulk density:",
        "Max bounces:",
        "Elevation:",
        "Start height:",
        "Dispersion seed:",
    ] {
        if label == "Max bounces:" {
            click_label(&mut h, "Flight settings");
        }
        h.get_by_label(label).scroll_to_me();
        for _ in 0..4 {
            h.step();
        }
        let r = h.get_by_label(label).rect();
        assert!(
            r.min.y >= 0.0 && r.max.y <= 920.0 - 24.0 && r.max.x <= 1500.0,
            "{label} is out of reach at {r:?}"
        );
        // It takes typing there.
        h.get_by_label(label).focus();
        h.step();
        assert!(h.get_by_label(label).is_focused(), "{label}");
        h.key_press(Key::Escape);
        h.step();
    }
}

#[test]
fn a_placed_site_can_be_moved_raised_and_given_the_smoothed_vertical() {
    let mut h = demo_harness();
    h.state_mut().set_units(DisplayUnits::SI);
    place_site_in_body_view(&mut h);
    assert!(
        h.state().sites()[0]
            .site
            .as_ref()
            .unwrap()
            .point_m
            .is_some()
    );
    // Passing through the fields (shown rounded) moves nothing.
    focus_field(&mut h, "Latitude:");
    h.key_press(Key::Tab);
    h.step();
    h.key_press(Key::Tab);
    h.step();
    let site = h.state().sites()[0].site.clone().unwrap();
    assert!(site.point_m.is_some() && site.lat_deg.is_none(), "{site:?}");
    type_fast(&mut h, "Latitude:", "12.5");
    type_fast(&mut h, "Longitude:", "-40");
    type_fast(&mut h, "Start height:", "2");
    click_label(&mut h, "smoothed");
    let l = h.state().sites()[0].clone();
    let site = l.site.as_ref().unwrap();
    assert_eq!((site.lat_deg, site.lon_deg), (Some(12.5), Some(-40.0)));
    assert!(site.point_m.is_none());
    assert_eq!(l.altitude_m, Some(2.0));
    assert_eq!(
        l.normal,
        Some(spinfall_dynamics::site::NormalMode::Smoothed)
    );
    // The site is placed there on the body.
    settle(&mut h);
    let body = h.state().body_view().unwrap().body().clone();
    let placed = l.site(&body).unwrap().unwrap();
    assert!((placed.lat_deg - 12.5).abs() < 1e-6 && (placed.lon_deg + 40.0).abs() < 1e-6);
    // Kilometres: the same height shows as 0.002 km and a typed 0.01 km is 10 m.
    h.state_mut().set_units(DisplayUnits {
        length: LengthDisplay::Kilometres,
        time: TimeDisplay::Seconds,
    });
    h.step();
    assert_eq!(
        h.get_by_label("Start height:").value().as_deref(),
        Some("0.002")
    );
    type_fast(&mut h, "Start height:", "0.01");
    assert_eq!(h.state().sites()[0].altitude_m, Some(10.0));
}

#[test]
fn undo_and_redo_walk_back_site_and_body_edits_and_a_removal() {
    let mut h = demo_harness();
    place_site_in_body_view(&mut h);
    h.step();
    let density0 = h.state().params().density_kg_m3;
    type_fast(&mut h, "Speed:", "0.25");
    type_fast(&mut h, "Bulk density:", "1800");
    assert_eq!(h.state().sites()[0].speed_m_s, Some(0.25));
    assert_eq!(h.state().params().density_kg_m3, 1800.0);

    press(&mut h, Key::Z, Modifiers::COMMAND);
    assert_eq!(h.state().params().density_kg_m3, density0);
    assert_eq!(h.state().sites()[0].speed_m_s, Some(0.25));
    press(&mut h, Key::Z, Modifiers::COMMAND);
    assert_ne!(h.state().sites()[0].speed_m_s, Some(0.25));
    press(&mut h, Key::Z, Modifiers::COMMAND);
    assert!(h.state().sites().is_empty(), "placing the site is undone");
    press(&mut h, Key::Z, Modifiers::COMMAND.plus(Modifiers::SHIFT));
    press(&mut h, Key::Z, Modifiers::COMMAND.plus(Modifiers::SHIFT));
    press(&mut h, Key::Z, Modifiers::COMMAND.plus(Modifiers::SHIFT));
    assert_eq!(h.state().sites().len(), 1);
    assert_eq!(h.state().sites()[0].speed_m_s, Some(0.25));
    assert_eq!(h.state().params().density_kg_m3, 1800.0);

    // Remove: undoable, from its notice or Ctrl+Z.
    click_label(&mut h, "Remove");
    assert!(h.state().sites().is_empty());
    // A new toast is laid out in its first frame and shown from the next.
    h.step();
    h.get_by_label_contains("removed “Site 1”");
    click_label(&mut h, "Undo");
    assert_eq!(h.state().sites().len(), 1);
    assert_eq!(h.state().sites()[0].speed_m_s, Some(0.25));
}

#[test]
fn results_are_marked_out_of_date_when_sites_or_body_change() {
    let mut h = demo_harness();
    add_site(&mut h, 20.0, 45.0, 0.08, 2.0 * 3600.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    assert!(labels_containing(&h, "Out of date").is_empty());
    type_fast(&mut h, "Speed:", "0.1");
    h.get_by_label_contains("Out of date: the launches changed");
    type_fast(&mut h, "Bulk density:", "2500");
    h.get_by_label_contains("Out of date: the body, launches changed");
    h.get_by_label_contains("results out of date");
    press(&mut h, Key::Z, Modifiers::COMMAND);
    press(&mut h, Key::Z, Modifiers::COMMAND);
    assert!(h.state().stale_reasons().is_empty());
    assert!(labels_containing(&h, "Out of date").is_empty());
}

#[test]
fn the_surface_map_is_kept_in_the_cache_and_comes_back_with_the_session() {
    let cache = tempfile::tempdir().unwrap();
    let dir = tempfile::tempdir().unwrap();
    let scenario = dir.path().join("session.json");
    let mut h = harness_with(egui::vec2(1400.0, 900.0), Some(cache.path()));
    assert!(h.state().surface_map().is_none());
    h.state_mut().push_command(Command::ComputeMap);
    settle(&mut h);
    let map = h.state().surface_map().unwrap().clone();
    assert!(
        h.state()
            .surface_map_source()
            .unwrap()
            .starts_with("computed and kept"),
        "{:?}",
        h.state().surface_map_source()
    );
    add_site(&mut h, 10.0, 10.0, 0.1, 3600.0);
    h.state_mut()
        .push_command(Command::SaveScenario(scenario.clone()));
    settle(&mut h);

    // A new session loads the scenario: the map is read back, not computed.
    let mut h = harness_with(egui::vec2(1400.0, 900.0), Some(cache.path()));
    h.state_mut()
        .push_command(Command::LoadScenario(scenario.clone()));
    settle(&mut h);
    assert!(
        h.state()
            .surface_map_source()
            .unwrap()
            .starts_with("read from the cache"),
        "{:?}",
        h.state().surface_map_source()
    );
    assert_eq!(**h.state().surface_map().unwrap(), *map);
    h.get_by_label_contains("Map read from the cache");
    // Another spin is another map: none is read for it.
    type_fast(&mut h, "Spin period:", "20000");
    click_label(&mut h, "Apply body settings");
    settle(&mut h);
    assert!(h.state().surface_map().is_none());
}

#[test]
fn numeric_fields_never_drop_fast_keystrokes_and_refuse_bad_text_visibly() {
    let mut h = harness_with(common::DEFAULT_WINDOW, None);
    h.state_mut().set_units(DisplayUnits::SI);
    place_site_in_body_view(&mut h);
    click_label(&mut h, "dispersion");
    click_label(&mut h, "Flight settings");
    // Every digit typed within one frame (30 ms between keys at a slow frame) is kept.
    let cases: [(&str, &str); 13] = [
        ("Bulk density:", "2345.75"),
        ("Spin period:", "17284.5"),
        ("Phase at t = 0:", "-12.375"),
        ("Speed:", "0.1234"),
        ("Azimuth (from north, east +):", "123.25"),
        ("Elevation:", "61.125"),
        ("Start height:", "0.125"),
        ("Launches in the set:", "1234"),
        ("Direction error (1 sigma):", "12.5"),
        ("Time limit:", "12345.5"),
        ("Max bounces:", "123"),
        ("Rest below:", "0.0125"),
        ("Dispersion seed:", "987654321"),
    ];
    for (label, text) in cases {
        h.get_by_label(label).scroll_to_me();
        h.step();
        type_fast(&mut h, label, text);
        let app = h.state();
        let launch = &app.sites()[0];
        let d = launch.dispersion.as_ref().unwrap();
        let b = &app.scenario().bounce;
        let got = match label {
            "Bulk density:" => app.params().density_kg_m3.to_string(),
            "Spin period:" => (app.params().period_h * 3600.0).to_string(),
            "Phase at t = 0:" => app.params().phase_deg.to_string(),
            "Speed:" => launch.speed_m_s.unwrap().to_string(),
            "Azimuth (from north, east +):" => launch.azimuth_deg.unwrap().to_string(),
            "Elevation:" => launch.elevation_deg.unwrap().to_string(),
            "Start height:" => launch.altitude_m.unwrap().to_string(),
            "Launches in the set:" => d.count.to_string(),
            "Direction error (1 sigma):" => d.direction_sigma_deg.to_string(),
            "Time limit:" => app.scenario().integrator.max_time_s.to_string(),
            "Max bounces:" => b.max_bounces.to_string(),
            "Rest below:" => b.rest_speed_m_s.to_string(),
            _ => app.scenario().seed.unwrap().to_string(),
        };
        let want: f64 = text.parse().unwrap();
        let got: f64 = got.parse().unwrap();
        assert!(
            (got - want).abs() <= 1e-9 * want.abs(),
            "{label}: typed {text}, the field holds {got}"
        );
    }

    // Bad text is kept in the field, said to be wrong, and the value does not change.
    let before = h.state().sites()[0].speed_m_s;
    type_fast(&mut h, "Speed:", "0.2x5");
    assert_eq!(h.state().sites()[0].speed_m_s, before);
    assert_eq!(h.get_by_label("Speed:").value().as_deref(), Some("0.2x5"));
    h.get_by_label_contains("“0.2x5” is not a number");
    // Out of range, likewise.
    type_fast(&mut h, "Elevation:", "95");
    h.get_by_label_contains("“95” is out of range: 0 to 90");
    assert_eq!(h.state().sites()[0].elevation_deg, Some(61.125));
    // Escape puts the value back.
    focus_field(&mut h, "Speed:");
    h.key_press(Key::Escape);
    h.step();
    h.step();
    assert_eq!(h.get_by_label("Speed:").value().as_deref(), Some("0.1234"));
    assert!(labels_containing(&h, "is not a number").is_empty());
    // Typing one key per frame changes nothing until the field is left.
    focus_field(&mut h, "Speed:");
    for c in "0.3".chars() {
        h.input_mut().events.push(Event::Text(c.to_string()));
        h.step();
    }
    assert_eq!(h.state().sites()[0].speed_m_s, Some(0.1234));
    h.key_press(Key::Tab);
    h.step();
    h.step();
    assert_eq!(h.state().sites()[0].speed_m_s, Some(0.3));
}

#[test]
fn display_units_apply_to_the_table_the_plots_and_the_figures_but_not_the_data() {
    let mut h = demo_harness();
    add_site(&mut h, 20.0, 45.0, 0.08, 3.0 * 3600.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    h.state_mut().set_units(DisplayUnits {
        length: LengthDisplay::Metres,
        time: TimeDisplay::Hours,
    });
    settle(&mut h);
    let r = h.state().reports()[0].clone();
    h.get_by_label("Ended at (h)");
    h.get_by_label("Max alt (m)");
    h.get_by_label(&format!("{:.5}", r.end_time_s / 3600.0));
    h.get_by_label(&format!("{:.1}", r.max_altitude_m));
    let fig = h.state().plot_figure().unwrap();
    assert!(
        fig.items
            .iter()
            .any(|i| matches!(i, Item::Text { text, .. } if text == "time after launch (h)")),
        "the plot's time axis is not in hours"
    );
    assert!(
        fig.items
            .iter()
            .any(|i| matches!(i, Item::Text { text, .. } if text == "altitude (m)"))
    );
    // A figure's time stamp in hours; the data files in SI with units in the column names.
    let dir = tempfile::tempdir().unwrap();
    h.state_mut()
        .push_command(Command::Export(spinfall_gui::ExportRequest {
            folder: dir.path().to_path_buf(),
            stem: "u".into(),
            composite: true,
            format: spinfall_gui::ImageFormat::Svg,
            results: true,
            ..Default::default()
        }));
    settle(&mut h);
    let svg = std::fs::read_to_string(dir.path().join("u_views.svg")).unwrap();
    let stamp = format!("t = {:.4} h", h.state().time_s() / 3600.0);
    assert!(svg.contains(&stamp), "no {stamp:?} in the SVG");
    let csv = std::fs::read_to_string(dir.path().join("u_results.csv")).unwrap();
    let header = csv.lines().next().unwrap();
    assert!(header.contains("_s") && header.contains("_m"), "{header}");
}

#[test]
fn the_body_wide_escape_speed_range_is_among_the_derived_figures() {
    let mut h = demo_harness();
    h.get_by_label_contains("needs the surface map");
    h.state_mut().push_command(Command::ComputeMap);
    settle(&mut h);
    let [normal, min] = h.state().escape_speed_ranges_m_s().unwrap();
    let map = h.state().surface_map().unwrap();
    let v = &map.escape_speed_normal_m_s;
    let lo = v.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    assert_eq!(normal, (lo, hi));
    assert!(min.0 <= normal.0 && min.1 <= normal.1 + 1e-12);
    h.get_by_label(&format!(
        "{:.4} to {:.4} m/s over the surface",
        normal.0, normal.1
    ));
}
