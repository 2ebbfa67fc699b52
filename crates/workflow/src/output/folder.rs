//! Sets of files written together into one folder (a run's results, an export): all staged
//! under exclusive temporary names, renamed into place only when every one is complete, and
//! described by a manifest written last.

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{SystemTime, UNIX_EPOCH};

use sha2::{Digest, Sha256};

use super::destination::{Destination, OutputTarget, resolve};
use super::lock::{LOCK_WAIT, lock_folder};
use super::manifest::{MANIFEST_FORMAT, Manifest, ManifestFile, ManifestState, RunInfo};
use super::staging::{
    Fill, Staged, TEMP_PREFIX, TEMP_SUFFIX, Written, hex, probe_writable, stage, write_in_place,
};
use crate::error::{Result, WorkflowError};

/// A checked output folder.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OutputFolder {
    dir: PathBuf,
}

/// One file of a set: its name in the folder and what writes it.
pub struct SetFile<'a> {
    /// File name (no folder part).
    pub name: String,
    /// Writes the bytes.
    pub fill: Fill<'a>,
}

impl<'a> SetFile<'a> {
    /// A file of a set.
    pub fn new(
        name: impl Into<String>,
        fill: impl FnOnce(&mut dyn std::io::Write) -> Result<()> + Send + 'a,
    ) -> Self {
        SetFile {
            name: name.into(),
            fill: Box::new(fill),
        }
    }
}

impl OutputFolder {
    /// Creates `dir` (and its parents) if missing and checks that files can be created there.
    /// Done before any work, so a bad folder is refused at once.
    pub fn prepare(dir: &Path) -> Result<OutputFolder> {
        if dir.as_os_str() == "-" {
            return Err(WorkflowError::output_msg(
                dir,
                "standard output cannot take a folder of files; give a folder",
            ));
        }
        std::fs::create_dir_all(dir).map_err(|e| WorkflowError::output(dir, &e))?;
        if !dir.is_dir() {
            return Err(WorkflowError::output_msg(dir, "is not a folder"));
        }
        probe_writable(dir, dir)?;
        Ok(OutputFolder {
            dir: dir.to_path_buf(),
        })
    }

    /// The folder.
    pub fn path(&self) -> &Path {
        &self.dir
    }

    /// Refuses when the folder's file system has less free space than `needed_bytes` (unknown
    /// free space passes).
    pub fn check_space(&self, needed_bytes: u64) -> Result<()> {
        match crate::limits::free_space_bytes(&self.dir) {
            Some(free) if free < needed_bytes => Err(WorkflowError::NotEnoughSpace {
                folder: self.dir.clone(),
                free_bytes: free,
                needed_bytes,
            }),
            _ => Ok(()),
        }
    }

    /// Writes `files` as one set with the manifest `manifest_name`, waiting while another run
    /// writes to the folder. On any error, or when `cancel` is set before the files are put in
    /// place, the folder keeps its previous files and no temporary file is left. Returns the
    /// paths written (the manifest last).
    pub fn write_set(
        &self,
        manifest_name: &str,
        files: Vec<SetFile<'_>>,
        info: &RunInfo,
        cancel: &AtomicBool,
    ) -> Result<Vec<PathBuf>> {
        let _lock = lock_folder(&self.dir, LOCK_WAIT, cancel)?;
        remove_stale_temps(&self.dir);
        let mut staged: Vec<(String, Staged)> = Vec::new();
        let mut in_place = Vec::new();
        for file in files {
            check_name(&self.dir, &file.name)?;
            let dest = resolve(&OutputTarget::Path(self.dir.join(&file.name)))?;
            match dest {
                Destination::Replace {
                    requested,
                    real,
                    permissions,
                } => {
                    let s = stage(&requested, &real, permissions.as_ref(), file.fill)?;
                    staged.push((file.name, s));
                }
                Destination::InPlace { requested, real } => {
                    in_place.push((file.name, requested, real, file.fill));
                }
                Destination::Stdout => {}
            }
            if cancel.load(Ordering::Relaxed) {
                return Err(WorkflowError::Cancelled);
            }
        }
        let mut listed: Vec<ManifestFile> = staged
            .iter()
            .map(|(name, s)| listed(name, &s.written))
            .collect();
        let mut manifest = Manifest {
            format: MANIFEST_FORMAT.into(),
            version: 1,
            state: ManifestState::Incomplete,
            run_id: run_id(&self.dir),
            software: format!("spinfall {}", env!("CARGO_PKG_VERSION")),
            written_unix_s: SystemTime::now()
                .duration_since(UNIX_EPOCH)
                .map_or(0, |d| d.as_secs()),
            scenario_sha256: info.scenario_sha256.clone(),
            kernel: info.kernel.clone(),
            note: crate::CAUTION.into(),
            field_store: info.field.as_ref().and_then(|f| f.store.clone()),
            field_build_s: info.field.as_ref().and_then(|f| f.build_s),
            shard: info.shard.as_ref().map(|s| [s.index, s.count]),
            launch_count: info.shard.as_ref().map(|s| s.launch_count),
            field_method: info.shard.as_ref().map(|s| s.field_method.clone()),
            launch_ids: info.shard.as_ref().map(|s| s.launch_ids.clone()),
            merged_from: info.merged_from.clone(),
            files: listed.clone(),
        };
        // First the intent: a run killed while renaming leaves a manifest that says so.
        self.write_manifest(manifest_name, &manifest)?;
        let mut paths = Vec::new();
        for (name, s) in staged {
            s.commit()?;
            paths.push(self.dir.join(name));
        }
        for (name, requested, real, fill) in in_place {
            let w = write_in_place(&requested, &real, fill)?;
            listed.push(self::listed(&name, &w));
            paths.push(requested);
        }
        manifest.files = listed;
        manifest.state = ManifestState::Complete;
        self.write_manifest(manifest_name, &manifest)?;
        paths.push(self.dir.join(manifest_name));
        Ok(paths)
    }

    fn write_manifest(&self, name: &str, manifest: &Manifest) -> Result<()> {
        let dest = resolve(&OutputTarget::Path(self.dir.join(name)))?;
        let text = serde_json::to_vec_pretty(manifest)
            .map_err(|e| WorkflowError::output_msg(self.dir.join(name), e.to_string()))?;
        super::staging::write_destination(
            &dest,
            Box::new(move |w| {
                w.write_all(&text)
                    .and_then(|()| w.write_all(b"\n"))
                    .map_err(|e| WorkflowError::output("", &e))
            }),
        )?;
        Ok(())
    }
}

fn listed(name: &str, w: &Written) -> ManifestFile {
    ManifestFile {
        name: name.to_string(),
        bytes: w.bytes,
        sha256: w.sha256.clone(),
    }
}

/// A set's file names are plain names: no folders, no hidden files.
fn check_name(dir: &Path, name: &str) -> Result<()> {
    if name.is_empty() || name.contains(['/', '\\']) || name.starts_with('.') {
        return Err(WorkflowError::output_msg(
            dir,
            format!(
                "{} is not a plain file name",
                spinfall_gravity::text::excerpt(name)
            ),
        ));
    }
    Ok(())
}

/// A fresh id for a run: the hash of the time, the process and the folder.
fn run_id(dir: &Path) -> String {
    let mut h = Sha256::new();
    let now = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| d.as_nanos());
    h.update(now.to_le_bytes());
    h.update(std::process::id().to_le_bytes());
    h.update(dir.as_os_str().as_encoded_bytes());
    hex(&h.finalize()[..8])
}

/// Removes the temporary files that earlier runs left in `dir` (killed before they could clean
/// up): regular files named like Spinfall's temporary files, nothing else. Call only while
/// holding the folder's lock (a live run's temporary files exist only while it holds it).
pub(crate) fn remove_stale_temps(dir: &Path) -> usize {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return 0;
    };
    let mut removed = 0;
    for entry in entries.flatten() {
        let name = entry.file_name();
        let name = name.to_string_lossy();
        if !(name.starts_with(TEMP_PREFIX) && name.ends_with(TEMP_SUFFIX)) {
            continue;
        }
        // Never follow a link or touch a folder.
        let is_file = std::fs::symlink_metadata(entry.path()).is_ok_and(|m| m.is_file());
        if is_file && std::fs::remove_file(entry.path()).is_ok() {
            removed += 1;
        }
    }
    removed
}
