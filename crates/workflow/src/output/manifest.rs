//! The manifest of a run's files: which files belong to the run, their sizes and SHA-256, the run
//! id, the scenario's hash and the gravity kernel. Written last; readers trust only files that a
//! complete manifest names and whose bytes match it.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::error::{Result, WorkflowError};

/// Value of the manifest's `format` key.
pub const MANIFEST_FORMAT: &str = "spinfall-manifest";
/// Manifest name of a `spinfall fly` output folder.
pub const RUN_MANIFEST: &str = "spinfall-manifest.json";

/// Whether every file of the set is in place.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ManifestState {
    /// Written before the files are renamed into place: a run killed while renaming leaves
    /// this, and the folder may hold a mix of old and new files.
    Incomplete,
    /// Every named file is in place.
    Complete,
}

/// One file of a set.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ManifestFile {
    /// File name in the folder.
    pub name: String,
    /// Size, bytes.
    pub bytes: u64,
    /// SHA-256, lowercase hex.
    pub sha256: String,
}

/// A manifest.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Manifest {
    /// Always [`MANIFEST_FORMAT`].
    pub format: String,
    /// Always 1.
    pub version: u32,
    /// See [`ManifestState`].
    pub state: ManifestState,
    /// Random id of the run that wrote the set.
    pub run_id: String,
    /// The program and its version.
    pub software: String,
    /// Seconds since 1970 when the set was written.
    pub written_unix_s: u64,
    /// SHA-256 of the scenario document (its canonical JSON) the run flew, if any.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scenario_sha256: Option<String>,
    /// The gravity method and kernel the run used.
    pub kernel: String,
    /// The caution that goes with every result.
    pub note: String,
    /// Where this process got the interpolated field: `read from PATH`, `built and stored as
    /// PATH`, or `built, not stored: why` (absent for the direct method). Kept here, not in
    /// results.json, because it belongs to the process, not to the results.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub field_store: Option<String>,
    /// Wall-clock time this process spent building the interpolated field, s (absent when it
    /// was read from the store). Kept here, not in results.json, for the same reason.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub field_build_s: Option<f64>,
    /// A shard of a run (`spinfall fly --shard K/N`): `[K, N]`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shard: Option<[u32; 2]>,
    /// A shard: how many launches the whole run has.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub launch_count: Option<u64>,
    /// A shard: the gravity method without the machine's kernel (a re-submitted shard is
    /// skipped only when it would use the same one).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub field_method: Option<String>,
    /// A shard: the ids of its launches, in launch order.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub launch_ids: Option<Vec<String>>,
    /// A merged run (`spinfall merge`): the shards it was merged from, in shard order.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub merged_from: Option<Vec<MergedShard>>,
    /// The files of the set.
    pub files: Vec<ManifestFile>,
}

/// What a shard's manifest says about it besides the run manifest (see [`Manifest::shard`]).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ShardRecord {
    /// `K` of `K/N`.
    pub index: u32,
    /// `N` of `K/N`.
    pub count: u32,
    /// Launches of the whole run.
    pub launch_count: u64,
    /// The gravity method without the machine's kernel.
    pub field_method: String,
    /// The shard's launch ids, in launch order.
    pub launch_ids: Vec<String>,
}

/// One shard a merged run was made from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MergedShard {
    /// `[K, N]`.
    pub shard: [u32; 2],
    /// The shard's folder, as given to the merge.
    pub folder: PathBuf,
    /// The run id in the shard's manifest.
    pub run_id: String,
    /// The gravity method and kernel the shard used.
    pub kernel: String,
}

/// What the writer of a set says about it.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RunInfo {
    /// SHA-256 of the scenario document, if the set comes from a scenario.
    pub scenario_sha256: Option<String>,
    /// The gravity method and kernel.
    pub kernel: String,
    /// The gravity method in detail (written into results.json).
    pub field: Option<crate::gravity_method::FieldUsed>,
    /// The scenario the run flew, embedded in results.json (not in the manifest).
    pub embedded: Option<crate::results_file::EmbeddedScenario>,
    /// A shard's record (`spinfall fly --shard`).
    pub shard: Option<ShardRecord>,
    /// The shards of a merged run (`spinfall merge`).
    pub merged_from: Option<Vec<MergedShard>>,
}

/// A set whose manifest is complete and whose files all match it.
#[derive(Debug, Clone, PartialEq)]
pub struct VerifiedSet {
    /// The manifest.
    pub manifest: Manifest,
    /// The files, in manifest order.
    pub files: Vec<PathBuf>,
}

impl VerifiedSet {
    /// The path of the file called `name`, if the set has it.
    pub fn file(&self, name: &str) -> Option<&Path> {
        self.manifest
            .files
            .iter()
            .zip(&self.files)
            .find(|(f, _)| f.name == name)
            .map(|(_, p)| p.as_path())
    }
}

/// Reads the manifest `manifest_name` in `folder` and checks every file it names: it must be
/// complete, and each file must exist with the size and SHA-256 written there. A file another
/// run replaced, or one left from before, is refused by name.
pub fn read_verified(folder: &Path, manifest_name: &str) -> Result<VerifiedSet> {
    let path = folder.join(manifest_name);
    let bad = |message: String| WorkflowError::Invalid(format!("{}: {message}", path.display()));
    let bytes = std::fs::read(&path).map_err(|error| WorkflowError::Read {
        path: path.clone(),
        error,
    })?;
    let manifest: Manifest =
        serde_json::from_slice(&bytes).map_err(|e| bad(format!("not a Spinfall manifest: {e}")))?;
    if manifest.format != MANIFEST_FORMAT {
        return Err(bad(format!(
            "format is {}, expected {MANIFEST_FORMAT}",
            spinfall_gravity::text::excerpt(&manifest.format)
        )));
    }
    if manifest.state != ManifestState::Complete {
        return Err(bad(
            "the run that wrote this folder stopped while putting its files in place; the \
             files may be a mix of two runs: run again"
                .into(),
        ));
    }
    let mut files = Vec::with_capacity(manifest.files.len());
    for f in &manifest.files {
        if f.name.contains(['/', '\\']) || f.name.starts_with('.') {
            return Err(bad(format!(
                "names {} outside the folder",
                spinfall_gravity::text::excerpt(&f.name)
            )));
        }
        let file = folder.join(&f.name);
        let (bytes, sha) = file_digest(&file)?;
        if bytes != f.bytes || sha != f.sha256 {
            return Err(bad(format!(
                "{} does not match the manifest (it was changed or written by another run)",
                f.name
            )));
        }
        files.push(file);
    }
    Ok(VerifiedSet { manifest, files })
}

/// Size and SHA-256 (lowercase hex) of a file, read in pieces (a shard's trajectories may not
/// fit in memory).
pub fn file_digest(path: &Path) -> Result<(u64, String)> {
    use std::io::Read;
    let read_error = |error| WorkflowError::Read {
        path: path.to_path_buf(),
        error,
    };
    let mut file = std::fs::File::open(path).map_err(read_error)?;
    let mut hash = sha2::Sha256::new();
    let mut buf = vec![0u8; 1 << 20];
    let mut bytes = 0u64;
    loop {
        let n = match file.read(&mut buf) {
            Ok(0) => break,
            Ok(n) => n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(read_error(e)),
        };
        hash.update(&buf[..n]);
        bytes += n as u64;
    }
    Ok((bytes, super::staging::hex(&hash.finalize())))
}

use sha2::Digest;
