//! The gravity method in the app (the scenario's `field` section: choose, build with progress
//! and cancel, shown with the results, saved) and the export of figures and animations (issue
//! 10 part 1 and 2 choices in the app), through the real app with egui_kittest.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::path::Path;

use common::*;
use egui_kittest::kittest::Queryable;
use spinfall_dynamics::scenario::{FieldMethodSpec, Scenario};
use spinfall_gravity::LengthUnit;
use spinfall_gui::{AnimationRequest, AnimationTarget, Command, FigureChoice};
use spinfall_render::{FigureSize, ThemeKind};

/// A 1 km ball of 320 faces in metres (its interpolated field builds in seconds).
fn ball(dir: &Path) -> std::path::PathBuf {
    let path = dir.join("ball.obj");
    let mesh = spinfall_gravity::generate::icosphere(1000.0, 2);
    std::fs::write(
        &path,
        spinfall_gravity::generate::to_obj(&mesh, LengthUnit::Metre, "ball"),
    )
    .unwrap();
    path
}

#[test]
fn the_gravity_method_is_chosen_built_with_progress_shown_with_the_results_and_saved() {
    let dir = tempfile::tempdir().unwrap();
    let cache = tempfile::tempdir().unwrap();
    let mut h = harness_with(egui::vec2(1400.0, 900.0), Some(cache.path()));
    h.state_mut()
        .push_command(Command::LoadShape(ball(dir.path()), LengthUnit::Metre));
    settle(&mut h);
    assert_eq!(h.state().shape().unwrap().name(), "ball");
    assert_eq!(h.state().body_field().method, "direct");
    h.get_by_label_contains("Body now: direct sums");

    click_label(&mut h, "interpolated");
    type_fast(&mut h, "Max. relative error:", "1e-6");
    h.get_by_label("edited, not applied");
    let field = h.state().scenario().field.unwrap();
    assert_eq!(field.method, FieldMethodSpec::Interpolated);
    assert_eq!(field.max_rel_error, 1e-6);

    // The build runs on a worker with its progress and a Cancel beside it. (Clicked by hand,
    // not with `click_label`, whose extra frames can outlast a quick build.)
    h.get_by_label("Apply body settings").scroll_to_me();
    h.step();
    h.get_by_label("Apply body settings").click();
    h.step();
    h.state_mut().handle_commands();
    let mut saw_progress = false;
    while h.state().busy() {
        h.step();
        saw_progress |= !labels_containing(&h, "gravity field").is_empty()
            && h.query_all_by_label("Cancel")
                .any(|n| n.rect().max.x < 400.0);
        h.state_mut()
            .wait_for_jobs(std::time::Duration::from_millis(50));
    }
    settle(&mut h);
    assert!(saw_progress, "no progress of the build was shown");
    let used = h.state().body_field().clone();
    assert_eq!(
        (used.method.as_str(), used.max_rel_error),
        ("interpolated", Some(1e-6))
    );
    h.get_by_label_contains("Body now: interpolated, relative error ≤ 1e-6");
    assert!(labels_containing(&h, "edited, not applied").is_empty());

    // Flown with it, and said beside the results.
    add_site(&mut h, 10.0, 20.0, 0.05, 3600.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    assert_eq!(h.state().reports().len(), 1, "{:?}", h.state().notices());
    assert_eq!(h.state().reports_field().max_rel_error, Some(1e-6));
    h.get_by_label_contains(
        "Gravity: interpolated field, relative error ≤ 1e-6, read from the cache",
    );

    // Saved in the scenario's field section, and read back.
    let saved = dir.path().join("s.json");
    h.state_mut()
        .push_command(Command::SaveScenario(saved.clone()));
    settle(&mut h);
    let text = std::fs::read_to_string(&saved).unwrap();
    let json: serde_json::Value = serde_json::from_str(&text).unwrap();
    assert_eq!(json["field"]["method"], "interpolated");
    assert_eq!(json["field"]["max_rel_error"], 1e-6);
    let mut h2 = harness_with(egui::vec2(1400.0, 900.0), Some(cache.path()));
    h2.state_mut()
        .push_command(Command::LoadScenario(saved.clone()));
    settle(&mut h2);
    assert_eq!(
        h2.state().scenario().field,
        Scenario::from_json_str(&text).unwrap().field
    );
    assert_eq!(h2.state().body_field().method, "interpolated");
}

#[test]
fn cancelling_the_field_build_keeps_the_body_as_it_was() {
    let cache = tempfile::tempdir().unwrap();
    let mut h = harness_with(egui::vec2(1400.0, 900.0), Some(cache.path()));
    click_label(&mut h, "interpolated");
    type_fast(&mut h, "Max. relative error:", "1e-8");
    click_label(&mut h, "Apply body settings");
    // Wait for the build to report cells, then cancel it from the body panel.
    let start = std::time::Instant::now();
    while labels_containing(&h, "building the interpolated gravity field").is_empty() {
        h.step();
        assert!(
            start.elapsed() < WAIT && h.state().busy(),
            "the build never reported"
        );
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    // The Cancel beside the build's progress in the side panel (the toolbar has one too).
    let cancel = h
        .query_all_by_label("Cancel")
        .map(|n| n.rect())
        .find(|r| r.max.x < 400.0)
        .expect("a Cancel beside the build");
    click_at(&mut h, cancel.center());
    settle(&mut h);
    assert_eq!(h.state().body_field().method, "direct");
    assert!(
        h.state()
            .notices()
            .iter()
            .any(|n| n.text.contains("not applied (cancelled)")),
        "{:?}",
        h.state().notices()
    );
    h.get_by_label("edited, not applied");
    // Nothing half-built is left in the cache.
    let stored: Vec<_> = std::fs::read_dir(cache.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".field"))
        .collect();
    assert!(stored.is_empty(), "{stored:?}");
}

/// Width, height and the top-left pixel of a PNG, and its text chunks.
fn png_facts(path: &Path) -> (u32, u32, [u8; 4], Vec<(String, String)>) {
    let decoder = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(path).unwrap()));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let frame = reader.next_frame(&mut buf).unwrap();
    let ch = frame.color_type.samples();
    let mut px = [255u8; 4];
    px[..ch.min(4)].copy_from_slice(&buf[..ch.min(4)]);
    let info = reader.info();
    let mut text: Vec<(String, String)> = info
        .uncompressed_latin1_text
        .iter()
        .map(|t| (t.keyword.clone(), t.text.clone()))
        .collect();
    for t in &info.utf8_text {
        text.push((t.keyword.clone(), t.get_text().unwrap_or_default()));
    }
    (frame.width, frame.height, px, text)
}

#[test]
fn the_export_window_offers_theme_physical_size_vector_output_and_a_colour_range() {
    let mut h = demo_harness();
    h.state_mut().push_command(Command::ComputeMap);
    settle(&mut h);
    add_site(&mut h, 20.0, 45.0, 0.08, 2.0 * 3600.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    h.state_mut().push_command(Command::ShowExport);
    settle(&mut h);
    let dir = tempfile::tempdir().unwrap();
    focus_field(&mut h, "Folder:");
    h.get_by_label("Folder:")
        .type_text(dir.path().to_str().unwrap());
    h.step();
    click_label(&mut h, "light (print)");
    click_label(&mut h, "mm");
    type_fast(&mut h, "Width:", "180");
    type_fast(&mut h, "Height:", "100");
    type_fast(&mut h, "Resolution:", "150");
    h.get_by_label_contains("1063 x 591 px");
    // The colour range is offered once the body is coloured by a map.
    h.state_mut()
        .set_shown_map(Some(spinfall_dynamics::surface_map::SurfaceField::Slope));
    h.step();
    click_label(&mut h, "fixed (otherwise the data's range)");
    type_fast(&mut h, "from", "0");
    type_fast(&mut h, "to", "40");
    click_label(&mut h, "body-fixed view");
    click_label(
        &mut h,
        "plots of the selected launch (altitude, speed, Jacobi drift)",
    );
    click_label(&mut h, "Export files");
    settle(&mut h);
    let (w, px_h, corner, text) = png_facts(&dir.path().join("spinfall_views.png"));
    assert_eq!((w, px_h), (1063, 591));
    assert_eq!(&corner[..3], &[255, 255, 255], "the light theme is white");
    let range = text
        .iter()
        .find(|(k, _)| k == "ColorRange")
        .map(|(_, v)| v.clone())
        .unwrap_or_default();
    assert!(
        range.contains("0 to 40") && range.contains("fixed by the user"),
        "{text:?}"
    );
    for name in [
        "spinfall_body_fixed.png",
        "spinfall_altitude.png",
        "spinfall_speed.png",
        "spinfall_jacobi_drift.png",
    ] {
        assert!(dir.path().join(name).is_file(), "{name} missing");
    }

    // The same as SVG: vector lines and text.
    click_label(&mut h, "SVG (vector lines and text)");
    click_label(&mut h, "Export files");
    settle(&mut h);
    let svg = std::fs::read_to_string(dir.path().join("spinfall_views.svg")).unwrap();
    assert!(
        svg.starts_with("<svg") || svg.starts_with("<?xml"),
        "{}",
        &svg[..80]
    );
    assert!(svg.contains("<text"), "text is not vector text");
    assert!(
        svg.contains("<path") || svg.contains("<polyline"),
        "traces are not vector lines"
    );
    assert!(svg.contains("Body-fixed frame"));
}

fn animation(dir: &Path, target: AnimationTarget, frames: u32, size: [u32; 2]) -> AnimationRequest {
    AnimationRequest {
        folder: dir.to_path_buf(),
        stem: "a".into(),
        target,
        frames,
        fps: 10.0,
        from_s: 0.0,
        to_s: 3600.0,
        figure: FigureChoice {
            theme: ThemeKind::Light,
            size: FigureSize::Pixels {
                width_px: size[0],
                height_px: size[1],
            },
            ..FigureChoice::default()
        },
    }
}

#[test]
fn animations_are_exported_with_progress_and_a_cancel_that_leaves_nothing() {
    let mut h = demo_harness();
    add_site(&mut h, 20.0, 45.0, 0.08, 3600.0);
    h.state_mut().push_command(Command::Run);
    settle(&mut h);
    let dir = tempfile::tempdir().unwrap();
    let sub = dir.path().join("made");
    h.state_mut()
        .push_command(Command::ExportAnimation(animation(
            &sub,
            AnimationTarget::Gif,
            4,
            [320, 200],
        )));
    settle(&mut h);
    let gif = std::fs::read(sub.join("a_animation.gif")).unwrap();
    assert_eq!(&gif[..6], b"GIF89a");
    h.get_by_label_contains(&format!("created the folder {}", sub.display()));
    h.state_mut()
        .push_command(Command::ExportAnimation(animation(
            dir.path(),
            AnimationTarget::Frames,
            3,
            [320, 200],
        )));
    settle(&mut h);
    for i in 0..3 {
        assert!(
            dir.path()
                .join(format!("a_frames/frame_000{i}.png"))
                .is_file()
        );
    }

    // A long APNG: its progress counts frames in the export window, and Cancel leaves no file.
    h.state_mut().push_command(Command::ShowExport);
    h.state_mut()
        .push_command(Command::ExportAnimation(animation(
            dir.path(),
            AnimationTarget::Apng,
            600,
            [1280, 720],
        )));
    h.state_mut().handle_commands();
    let start = std::time::Instant::now();
    loop {
        h.step();
        let shown = labels_containing(&h, "/ 600 frames");
        if shown.iter().any(|t| !t.starts_with("0 /")) {
            break;
        }
        assert!(start.elapsed() < WAIT, "no frame progress: {shown:?}");
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    h.state_mut().push_command(Command::CancelJobs);
    settle(&mut h);
    assert!(!dir.path().join("a_animation.png").exists());
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(spinfall_workflow::output::TEMP_PREFIX))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
    assert!(
        h.state()
            .notices()
            .iter()
            .any(|n| n.text.starts_with("animation cancelled")),
        "{:?}",
        h.state().notices()
    );
}
