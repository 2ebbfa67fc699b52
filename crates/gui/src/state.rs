//! What the app remembers between runs (eframe persistence).

use std::path::PathBuf;

use serde::{Deserialize, Serialize};
use spinfall_gravity::LengthUnit;
use spinfall_scene::ViewOptions;

/// How many recent files the File menu keeps.
pub const MAX_RECENT: usize = 8;

/// Persisted app state: plain data only, every field defaulted so old files still load.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(default)]
pub struct PersistedState {
    /// Recently opened shape models and scenarios, newest first.
    pub recent_files: Vec<RecentFile>,
    /// Length unit last chosen for shape files.
    pub unit: LengthUnit,
    /// View toggles shared by both 3D views.
    pub view: ViewOptions,
    /// Orbit/zoom the two views together.
    pub link_cameras: bool,
    /// Folder exports go to (typed or chosen).
    pub export_folder: String,
    /// Image export size, pixels.
    pub export_size_px: [u32; 2],
    /// Show the results panel at the bottom.
    pub show_results: bool,
    /// Animation speed: simulated seconds per wall-clock second.
    pub playback_speed: f64,
}

impl Default for PersistedState {
    fn default() -> Self {
        Self {
            recent_files: Vec::new(),
            unit: LengthUnit::Kilometre,
            view: ViewOptions::default(),
            link_cameras: false,
            export_folder: String::new(),
            export_size_px: [1920, 1080],
            show_results: true,
            playback_speed: 600.0,
        }
    }
}

/// A file in the recent list.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RecentFile {
    /// Where it is.
    pub path: PathBuf,
    /// What it is.
    pub kind: RecentKind,
    /// Length unit used when it was a shape model.
    pub unit: LengthUnit,
}

/// Kind of a recent file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum RecentKind {
    /// A Wavefront OBJ shape model.
    Shape,
    /// A scenario JSON file.
    Scenario,
}

impl PersistedState {
    /// Put `file` at the top of the recent list.
    pub fn remember(&mut self, file: RecentFile) {
        self.recent_files.retain(|f| f.path != file.path);
        self.recent_files.insert(0, file);
        self.recent_files.truncate(MAX_RECENT);
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn old_or_partial_state_loads_with_defaults() {
        let s: PersistedState = serde_json::from_str(r#"{"link_cameras": true}"#).unwrap();
        assert!(s.link_cameras);
        assert_eq!(s.export_size_px, [1920, 1080]);
        let s: PersistedState = serde_json::from_str("{}").unwrap();
        assert!(s.recent_files.is_empty());
    }

    #[test]
    fn recent_files_move_to_front_without_duplicates() {
        let mut s = PersistedState::default();
        for i in 0..(MAX_RECENT + 3) {
            s.remember(RecentFile {
                path: format!("/tmp/{i}.obj").into(),
                kind: RecentKind::Shape,
                unit: LengthUnit::Metre,
            });
        }
        assert_eq!(s.recent_files.len(), MAX_RECENT);
        let again = s.recent_files[3].clone();
        s.remember(again.clone());
        assert_eq!(s.recent_files[0], again);
        assert_eq!(s.recent_files.len(), MAX_RECENT);
    }
}
