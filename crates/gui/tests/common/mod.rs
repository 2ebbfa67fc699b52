//! Helpers shared by the app's tests: a harness on the demo body, waiting for jobs, clicks,
//! typing as a fast typist does.
#![allow(dead_code, reason = "each test file uses its own subset")]
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use std::path::Path;
use std::time::Duration;

use egui::{Event, Key, Modifiers, PointerButton, Pos2};
use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use spinfall_gui::{Command, GuiOptions, SpinfallApp};

pub const WAIT: Duration = Duration::from_secs(180);

/// The default window size of the app (`spinfall_gui::run`).
pub const DEFAULT_WINDOW: egui::Vec2 = egui::vec2(1500.0, 920.0);

pub type H = Harness<'static, SpinfallApp>;

/// The app on the demo body in a window of `size`, with its own cache folder when given.
pub fn harness_with(size: egui::Vec2, cache_dir: Option<&Path>) -> H {
    let mut app = SpinfallApp::new_for_test(GuiOptions {
        cache_dir: cache_dir.map(Path::to_path_buf),
        ..GuiOptions::default()
    });
    assert!(app.wait_for_jobs(WAIT), "demo body did not load in time");
    Harness::builder()
        .with_size(size)
        .build_ui_state(|ui, app: &mut SpinfallApp| app.ui(ui), app)
}

pub fn demo_harness() -> H {
    harness_with(egui::vec2(1400.0, 900.0), None)
}

/// Step the harness, letting background jobs finish.
pub fn settle(harness: &mut H) {
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

pub fn click_at(harness: &mut H, pos: Pos2) {
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
pub fn place_site_in_body_view(harness: &mut H) {
    settle(harness);
    let rect = harness.state().view_rect(0).expect("body-fixed view drawn");
    click_at(harness, rect.center());
    harness.state_mut().handle_commands();
    harness.step();
}

/// Adds a site by latitude/longitude with `speed_m_s` and a time limit, through commands.
pub fn add_site(harness: &mut H, lat_deg: f64, lon_deg: f64, speed_m_s: f64, max_time_s: f64) {
    let app = harness.state_mut();
    app.push_command(Command::AddSiteLatLon { lat_deg, lon_deg });
    app.handle_commands();
    let last = app.sites().len() - 1;
    app.sites_mut()[last].speed_m_s = Some(speed_m_s);
    app.scenario_mut().integrator.max_time_s = max_time_s;
}

pub fn key(harness: &mut H, key: Key, modifiers: Modifiers, pressed: bool) {
    harness.input_mut().events.push(Event::Key {
        key,
        physical_key: None,
        pressed,
        repeat: false,
        modifiers,
    });
}

/// Scrolls the widget labelled `label` into view (as a user scrolls the side panel), then
/// clicks it.
pub fn click_label(harness: &mut H, label: &str) {
    harness.get_by_label(label).scroll_to_me();
    for _ in 0..3 {
        harness.step();
    }
    harness.get_by_label(label).click();
    harness.step();
    harness.state_mut().handle_commands();
    // A window or toast that opens is laid out in its first frame, shown from the next.
    harness.step();
    harness.step();
}

/// Focuses the text field labelled `label` (its text is selected, so typing replaces it).
pub fn focus_field(harness: &mut H, label: &str) {
    harness.get_by_label(label).scroll_to_me();
    harness.step();
    harness.step();
    harness.get_by_label(label).focus();
    harness.step();
    harness.step();
    assert!(
        harness.get_by_label(label).is_focused(),
        "the field {label:?} did not take the focus"
    );
}

/// Types `text` into the field labelled `label` as a fast typist does (every key and the
/// final Enter within one frame), then lets the app handle it.
pub fn type_fast(harness: &mut H, label: &str, text: &str) {
    focus_field(harness, label);
    for c in text.chars() {
        harness.input_mut().events.push(Event::Text(c.to_string()));
    }
    key(harness, Key::Enter, Modifiers::NONE, true);
    key(harness, Key::Enter, Modifiers::NONE, false);
    harness.step();
    harness.step();
    harness.state_mut().handle_commands();
    harness.step();
}

/// Presses a key with modifiers, as a frame of its own.
pub fn press(harness: &mut H, k: Key, modifiers: Modifiers) {
    harness
        .input_mut()
        .events
        .push(Event::ModifiersChanged(modifiers));
    key(harness, k, modifiers, true);
    key(harness, k, modifiers, false);
    harness.step();
    harness
        .input_mut()
        .events
        .push(Event::ModifiersChanged(Modifiers::NONE));
    harness.step();
    harness.state_mut().handle_commands();
    harness.step();
}

/// The labels of every node whose label contains `text`.
pub fn labels_containing(harness: &H, text: &str) -> Vec<String> {
    harness
        .query_all_by_label_contains(text)
        .map(|n| {
            let n = n.accesskit_node();
            n.value()
                .or_else(|| n.label())
                .map(|s| s.to_string())
                .unwrap_or_default()
        })
        .collect()
}
