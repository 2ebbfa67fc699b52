//! Putting the shards of a run back together (`spinfall merge`): every file a single
//! `spinfall fly` would have written, through the same writers ([`crate::run_files`]).
//!
//! **Checked before anything is written** (each failure names the folder and what is wrong,
//! and leaves the output folder untouched, not even created):
//! - each folder holds a complete set whose files all match their manifest ([`read_verified`]:
//!   sizes and SHA-256), so a shard killed while writing or a file changed since is refused;
//! - each manifest names a valid shard `K/N` with its launches, written by this very version of
//!   Spinfall (the files are rewritten by this version's writers);
//! - all shards have the same scenario (SHA-256), the same `N` and the same gravity method and
//!   field; each `K` in `0..N` is present exactly once;
//! - each shard's results.json embeds the scenario of that SHA-256, and its launches are the
//!   ones the scenario's expansion gives shard `K` (launch `i` goes to shard `i mod N`), so no
//!   launch is missing or duplicated;
//! - for statistics, the shape model is found and is the one the shards flew.
//!
//! **Byte-identical.** A launch's report does not depend on the shard that flew it (see
//! [`crate::shard`]), and what belongs to a process (run id, time written, the interpolated
//! field's store outcome and build time) is only in the manifests, so the merged results.json,
//! results.csv, trajectories.csv, statistics.json and landing_density.csv equal a single run's
//! byte for byte. Shards that ran different vector kernels (the manifest's `kernel`; a cluster
//! of mixed machines) are merged with a warning: their gravity sums differ by rounding, which
//! the integration carries into the trajectories, so the results are to be compared within
//! each launch's `frame_agreement_m`, not bit for bit.
//!
//! **Memory.** The launch reports are held (as a single run holds them, without trajectories);
//! trajectories.csv is streamed, one launch at a time, from the shards' files, whose SHA-256 is
//! checked again as they are read.

use std::io::Read;
use std::path::{Path, PathBuf};

use sha2::{Digest, Sha256};
use spinfall_dynamics::FlightReport;

use crate::error::{Result, WorkflowError};
use crate::export::{TrajectoryBlocks, TrajectoryCsv};
use crate::gravity_method::FieldUsed;
use crate::output::{
    Manifest, ManifestFile, MergedShard, OutputFolder, RUN_MANIFEST, RunInfo, SetFile,
    read_verified,
};
use crate::results_file::{StoredResults, open_results_body, read_results};
use crate::run_files::{RUN_FILES, StatisticsOutput, run_set_files, scenario_sha256};
use crate::shard::{Shard, software, unlisted_run_file};
use crate::statistics::{StatisticsRequest, compute_statistics};

/// One shard, checked.
#[derive(Debug, Clone)]
struct ShardInput {
    folder: PathBuf,
    shard: Shard,
    manifest: Manifest,
}

/// What a merge wrote.
#[derive(Debug, Clone)]
pub struct MergeOutcome {
    /// The files written, the manifest last.
    pub written: Vec<PathBuf>,
    /// Shards merged.
    pub shards: usize,
    /// Launches of the run.
    pub launches: usize,
    /// The launches that failed, with their reasons (as `spinfall fly` reports them).
    pub failed: Vec<(String, String)>,
}

/// Merges the shard folders `folders` into `out` (see the module docs). `warn` receives what
/// does not stop the merge (shards on different kernels, on scenario copies in different
/// folders, shape warnings).
///
/// # Errors
/// Any check of the module docs (bad input, naming the folder), an unusable `out`.
pub fn merge_shards(
    folders: &[PathBuf],
    out: &Path,
    warn: &dyn Fn(String),
) -> Result<MergeOutcome> {
    check_out(folders, out)?;
    let mut shards = read_manifests(folders)?;
    shards.sort_by_key(|s| s.shard.index());
    let count = shards.first().map_or(1, |s| s.shard.count() as usize);
    // Each shard's results, checked against the scenario's expansion.
    let mut stored: Vec<StoredResults> = Vec::with_capacity(shards.len());
    let mut ids: Vec<String> = Vec::new();
    for s in &shards {
        let results = read_results(&s.folder.join(RUN_FILES[0]))
            .map_err(|e| in_folder(&s.folder, e.to_string()))?;
        let Some(embedded) = &results.embedded else {
            return Err(in_folder(
                &s.folder,
                "its results.json has no embedded scenario".into(),
            ));
        };
        if scenario_sha256(&embedded.scenario) != s.manifest.scenario_sha256 {
            return Err(in_folder(
                &s.folder,
                "the scenario embedded in its results.json is not the one its manifest names \
                 (SHA-256 differs)"
                    .into(),
            ));
        }
        if ids.is_empty() {
            ids = embedded.scenario.launch_ids();
        }
        check_launches(s, &results, &ids)?;
        if let Some(first) = stored.first() {
            check_same_run(&shards[0], first, s, &results, warn)?;
        }
        stored.push(results);
    }
    let Some(first) = stored.first() else {
        return Err(WorkflowError::Invalid(
            "merge: give at least one shard folder".into(),
        ));
    };
    let embedded = first
        .embedded
        .clone()
        .ok_or_else(|| in_folder(&shards[0].folder, "no embedded scenario".into()))?;
    let field = merged_field(&shards, &stored, warn)?;
    let statistics_body = if crate::statistics::chosen_groups(&embedded.scenario, None)?.is_empty()
    {
        None
    } else {
        // The shape model, for the statistics (found as `spinfall stats` finds it).
        let run = open_results_body(first, None)
            .map_err(|e| in_folder(&shards[0].folder, e.to_string()))?;
        for w in &run.shape.warnings {
            warn(format!("shape model: {w}"));
        }
        Some(run)
    };
    // The reports in launch order: launch i is report i / N of shard i mod N.
    let mut per_shard: Vec<std::vec::IntoIter<FlightReport>> =
        stored.into_iter().map(|s| s.reports.into_iter()).collect();
    let mut reports = Vec::with_capacity(ids.len());
    for i in 0..ids.len() {
        let next = per_shard.get_mut(i % count).and_then(Iterator::next);
        reports.push(next.ok_or_else(|| {
            WorkflowError::Invalid(format!("merge: launch {i} is missing (internal check)"))
        })?);
    }
    let statistics = match &statistics_body {
        Some(run) => compute_statistics(
            &run.body,
            &embedded.scenario,
            &reports,
            &StatisticsRequest::default(),
        )?,
        None => None,
    };
    let info = RunInfo {
        scenario_sha256: scenario_sha256(&embedded.scenario),
        kernel: field.describe(),
        field: Some(field),
        embedded: Some(embedded),
        shard: None,
        merged_from: Some(
            shards
                .iter()
                .map(|s| MergedShard {
                    shard: [s.shard.index(), s.shard.count()],
                    folder: std::path::absolute(&s.folder).unwrap_or_else(|_| s.folder.clone()),
                    run_id: s.manifest.run_id.clone(),
                    kernel: s.manifest.kernel.clone(),
                })
                .collect(),
        ),
    };
    // Each shard's trajectories.csv with its manifest entry (read_manifests checked it is
    // listed).
    let sources: Vec<(PathBuf, ManifestFile)> = shards
        .iter()
        .map(|s| {
            let listed = s.manifest.files.iter().find(|f| f.name == RUN_FILES[2]);
            listed
                .map(|f| (s.folder.join(RUN_FILES[2]), f.clone()))
                .ok_or_else(|| {
                    in_folder(
                        &s.folder,
                        format!("its manifest does not list {}", RUN_FILES[2]),
                    )
                })
        })
        .collect::<Result<_>>()?;
    // Everything is checked: now the output folder.
    let folder = OutputFolder::prepare(out)?;
    let needed: u64 = shards
        .iter()
        .flat_map(|s| &s.manifest.files)
        .map(|f| f.bytes)
        .sum();
    folder.check_space(needed)?;
    let trajectories = {
        let (sources, ids) = (&sources, &ids);
        SetFile::new(RUN_FILES[2], move |w| stream_trajectories(w, sources, ids))
    };
    let stats_out = match (&statistics, &statistics_body) {
        (Some((statistics, density)), Some(run)) => Some(StatisticsOutput {
            body: &run.body,
            statistics,
            density,
        }),
        _ => None,
    };
    let files = run_set_files(&reports, &info, Some(trajectories), stats_out.as_ref());
    let written = folder.write_set(
        RUN_MANIFEST,
        files,
        &info,
        &std::sync::atomic::AtomicBool::new(false),
    )?;
    let failed = crate::run::failures(&reports)
        .map(|(id, why)| (id.to_string(), why.to_string()))
        .collect();
    Ok(MergeOutcome {
        written,
        shards: shards.len(),
        launches: reports.len(),
        failed,
    })
}

/// An error about one shard folder.
fn in_folder(folder: &Path, what: String) -> WorkflowError {
    WorkflowError::Invalid(format!("shard folder {}: {what}", folder.display()))
}

/// `out` must not be one of the shards, nor a file.
fn check_out(folders: &[PathBuf], out: &Path) -> Result<()> {
    if folders.is_empty() {
        return Err(WorkflowError::Invalid(
            "merge: give at least one shard folder".into(),
        ));
    }
    if out.exists() && !out.is_dir() {
        return Err(WorkflowError::output_msg(out, "is not a folder"));
    }
    if let Ok(out_real) = std::fs::canonicalize(out) {
        for f in folders {
            if std::fs::canonicalize(f).is_ok_and(|r| r == out_real) {
                return Err(WorkflowError::Invalid(format!(
                    "merge: --out {} is one of the shard folders; merge into another folder",
                    out.display()
                )));
            }
        }
    }
    Ok(())
}

/// Reads and checks every shard's manifest: complete, files matching, a valid shard with its
/// launches, the same scenario, software and `N`, each `K` once.
fn read_manifests(folders: &[PathBuf]) -> Result<Vec<ShardInput>> {
    let mut shards: Vec<ShardInput> = Vec::with_capacity(folders.len());
    for folder in folders {
        let set = read_verified(folder, RUN_MANIFEST).map_err(|e| {
            let why = match &e {
                WorkflowError::Read { path, error }
                    if error.kind() == std::io::ErrorKind::NotFound =>
                {
                    format!(
                        "{} is missing (not a finished Spinfall shard: was the job killed, or the \
                         folder mistyped?)",
                        path.display()
                    )
                }
                _ => e.to_string(),
            };
            in_folder(folder, why)
        })?;
        let m = set.manifest;
        let Some([k, n]) = m.shard else {
            return Err(in_folder(
                folder,
                "it holds a run that is not a shard (its manifest has no shard; shards are \
                 written by spinfall fly --shard K/N)"
                    .into(),
            ));
        };
        let shard = Shard::new(k, n).map_err(|e| {
            in_folder(
                folder,
                format!("its manifest names an impossible shard: {e}"),
            )
        })?;
        if m.launch_ids.is_none() || m.launch_count.is_none() {
            return Err(in_folder(
                folder,
                "its manifest does not list the shard's launches".into(),
            ));
        }
        if let Some(name) = unlisted_run_file(&m) {
            return Err(in_folder(
                folder,
                format!("its manifest does not list {name}"),
            ));
        }
        if m.software != software() {
            return Err(in_folder(
                folder,
                format!(
                    "it was written by {}, but this is {}; merge with the version that flew \
                     the shards",
                    spinfall_gravity::text::excerpt(&m.software),
                    software()
                ),
            ));
        }
        if let Some(first) = shards.first() {
            if first.shard.count() != n {
                return Err(in_folder(
                    folder,
                    format!(
                        "it is shard {shard} of {n}, but {} is shard {} of {}: all shards must \
                         come from one split",
                        first.folder.display(),
                        first.shard,
                        first.shard.count()
                    ),
                ));
            }
            if first.manifest.scenario_sha256 != m.scenario_sha256 {
                return Err(in_folder(
                    folder,
                    format!(
                        "it flew another scenario than {} (the scenario's SHA-256 differs)",
                        first.folder.display()
                    ),
                ));
            }
        }
        if let Some(twin) = shards.iter().find(|s| s.shard == shard) {
            return Err(in_folder(
                folder,
                format!(
                    "shard {shard} is given twice (also {}); give each shard once",
                    twin.folder.display()
                ),
            ));
        }
        shards.push(ShardInput {
            folder: folder.clone(),
            shard,
            manifest: m,
        });
    }
    let n = shards.first().map_or(0, |s| s.shard.count());
    let missing: Vec<String> = (0..n)
        .filter(|k| !shards.iter().any(|s| s.shard.index() == *k))
        .map(|k| format!("{k}/{n}"))
        .collect();
    if !missing.is_empty() {
        let shown: Vec<&str> = missing.iter().take(10).map(String::as_str).collect();
        return Err(WorkflowError::Invalid(format!(
            "merge: {} of {n} shards missing: {}{}; give every shard's folder (or fly the \
             missing shards first)",
            missing.len(),
            shown.join(", "),
            if missing.len() > shown.len() {
                ", ..."
            } else {
                ""
            }
        )));
    }
    Ok(shards)
}

/// A shard's launches must be the ones the scenario gives it, in its manifest and its
/// results.json alike.
fn check_launches(s: &ShardInput, results: &StoredResults, ids: &[String]) -> Result<()> {
    let m = &s.manifest;
    if m.launch_count != Some(ids.len() as u64) {
        return Err(in_folder(
            &s.folder,
            format!(
                "its manifest says the run has {} launches, the scenario has {}",
                m.launch_count.unwrap_or(0),
                ids.len()
            ),
        ));
    }
    let expected: Vec<&String> = s.shard.launches(ids.len()).map(|i| &ids[i]).collect();
    let listed = m.launch_ids.as_deref().unwrap_or_default();
    let in_results: Vec<&String> = results.reports.iter().map(|r| &r.id).collect();
    for (what, have) in [
        ("its manifest lists", listed.iter().collect::<Vec<_>>()),
        ("its results.json holds", in_results),
    ] {
        if have != expected {
            let first_diff = have
                .iter()
                .zip(&expected)
                .position(|(a, b)| a != b)
                .unwrap_or(have.len().min(expected.len()));
            let name = |v: Option<&&String>| {
                v.map_or("nothing".to_string(), |id| {
                    format!("launch {}", spinfall_gravity::text::excerpt(id))
                })
            };
            return Err(in_folder(
                &s.folder,
                format!(
                    "{what} {} launches where shard {} has {}: at its launch {first_diff} it has \
                     {} where the scenario gives {}",
                    have.len(),
                    s.shard,
                    expected.len(),
                    name(have.get(first_diff)),
                    name(expected.get(first_diff))
                ),
            ));
        }
    }
    Ok(())
}

/// Shard `s` must have flown the same body and field as the first shard.
fn check_same_run(
    first_shard: &ShardInput,
    first: &StoredResults,
    s: &ShardInput,
    results: &StoredResults,
    warn: &dyn Fn(String),
) -> Result<()> {
    let (a, b) = (first.embedded.as_ref(), results.embedded.as_ref());
    if a.map(|e| e.shape_check) != b.map(|e| e.shape_check) {
        return Err(in_folder(
            &s.folder,
            format!(
                "it flew another shape model than {} (face count or volume differ)",
                first_shard.folder.display()
            ),
        ));
    }
    if a.map(|e| &e.scenario_dir) != b.map(|e| &e.scenario_dir) {
        warn(format!(
            "shard folder {}: its scenario was read from another folder than {}'s; the merged \
             results.json records {}'s",
            s.folder.display(),
            first_shard.folder.display(),
            first_shard.folder.display()
        ));
    }
    let without_kernel = |f: Option<&FieldUsed>| {
        f.map(|f| FieldUsed {
            kernel: String::new(),
            ..f.clone()
        })
    };
    if without_kernel(first.field.as_ref()) != without_kernel(results.field.as_ref()) {
        return Err(in_folder(
            &s.folder,
            format!(
                "it computed gravity otherwise than {} ({} against {})",
                first_shard.folder.display(),
                results
                    .field
                    .as_ref()
                    .map_or("unknown".into(), FieldUsed::describe_method),
                first
                    .field
                    .as_ref()
                    .map_or("unknown".into(), FieldUsed::describe_method)
            ),
        ));
    }
    Ok(())
}

/// The field record of the merged run: the shards', with every kernel named when they differ
/// (and a warning).
fn merged_field(
    shards: &[ShardInput],
    stored: &[StoredResults],
    warn: &dyn Fn(String),
) -> Result<FieldUsed> {
    let Some(mut field) = stored.first().and_then(|s| s.field.clone()) else {
        return Err(in_folder(
            &shards[0].folder,
            "its results.json does not say how gravity was computed (no field record)".into(),
        ));
    };
    let mut kernels: Vec<String> = Vec::new();
    for s in stored {
        if let Some(k) = s.field.as_ref().map(|f| f.kernel.clone())
            && !kernels.contains(&k)
        {
            kernels.push(k);
        }
    }
    if kernels.len() > 1 {
        let per_shard: Vec<String> = shards
            .iter()
            .zip(stored)
            .map(|(s, r)| {
                format!(
                    "{}: {}",
                    s.shard,
                    r.field.as_ref().map_or("?", |f| f.kernel.as_str())
                )
            })
            .take(12)
            .collect();
        warn(format!(
            "the shards ran different vector kernels ({}): the merged results differ from a \
             single run by rounding, to be compared within each launch's frame_agreement_m, \
             not byte for byte",
            per_shard.join(", ")
        ));
        field.kernel = format!("mixed: {}", kernels.join(" + "));
    }
    Ok(field)
}

/// A reader that hashes and counts what passes through it.
struct Hashing<R> {
    inner: R,
    hash: Sha256,
    bytes: u64,
}

impl<R: Read> Read for Hashing<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.hash.update(&buf[..n]);
        self.bytes += n as u64;
        Ok(n)
    }
}

/// Writes trajectories.csv from the shards' files, launch by launch in launch order (launch
/// `i` from shard `i mod N`), checking each source's size and SHA-256 once read.
fn stream_trajectories(
    w: &mut dyn std::io::Write,
    sources: &[(PathBuf, ManifestFile)],
    ids: &[String],
) -> Result<()> {
    let mut blocks = Vec::with_capacity(sources.len());
    for (path, _) in sources {
        let file = std::fs::File::open(path).map_err(|error| WorkflowError::Read {
            path: path.clone(),
            error,
        })?;
        let reader = Hashing {
            inner: std::io::BufReader::with_capacity(1 << 20, file),
            hash: Sha256::new(),
            bytes: 0,
        };
        blocks.push(TrajectoryBlocks::new(reader, &path.display().to_string())?);
    }
    let mut out = TrajectoryCsv::start(w)?;
    let n = blocks.len();
    for (i, id) in ids.iter().enumerate() {
        let Some(source) = blocks.get_mut(i % n) else {
            break;
        };
        let block = source.take(id)?;
        out.launch(id, &block.body, &block.inertial)?;
    }
    for (b, (path, listed)) in blocks.into_iter().zip(sources) {
        let read = b.finish()?;
        let sha = crate::output::manifest_hex(&read.hash.finalize());
        if read.bytes != listed.bytes || sha != listed.sha256 {
            return Err(WorkflowError::Invalid(format!(
                "{} changed while it was merged (its size or SHA-256 no longer matches its \
                 manifest); nothing was written",
                path.display()
            )));
        }
    }
    out.finish()
}
