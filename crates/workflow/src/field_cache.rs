//! The on-disk store of interpolated gravity fields: built once per body, mass and bound, then
//! read back by every later run (and every process of a cluster job sharing the folder).
//!
//! Each field is one file named by its key (SHA-256 of the mesh, mass, settings and build
//! version; see `spinfall_gravity::cache_key`), written under a temporary name and renamed
//! when complete. A lock file per key lets concurrent processes share one build: the first
//! builds while the others wait, then read. A stored file that is damaged, truncated or built
//! for other inputs is detected by the reader (magic, key, length, SHA-256 of the content) and
//! rebuilt, never trusted. A folder that cannot be used makes the run go on without storing,
//! with a warning.

use std::fs::{File, OpenOptions, TryLockError};
use std::io::{BufReader, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use spinfall_gravity::{
    BuildProgress, GravityError, InterpolatedGravity, InterpolationSettings, MassSpec, Mesh,
    build_interpolated, cache_key,
};

use crate::error::{Result, WorkflowError};

/// Environment variable naming the store's folder (the `--cache-dir` option wins).
pub const CACHE_DIR_ENV: &str = "SPINFALL_CACHE_DIR";

/// How long a process waits for another one building the same field.
pub const BUILD_WAIT: Duration = Duration::from_secs(3 * 3600);

/// The per-user folder of stored fields: `$SPINFALL_CACHE_DIR`, else `$XDG_CACHE_HOME/spinfall`,
/// else `~/.cache/spinfall` (on Windows `%LOCALAPPDATA%\spinfall`); `None` if none is known.
pub fn default_cache_dir() -> Option<PathBuf> {
    let env = |name: &str| {
        std::env::var_os(name)
            .filter(|v| !v.is_empty())
            .map(PathBuf::from)
    };
    env(CACHE_DIR_ENV)
        .or_else(|| env("XDG_CACHE_HOME").map(|p| p.join("spinfall")))
        .or_else(|| env("HOME").map(|p| p.join(".cache").join("spinfall")))
        .or_else(|| env("LOCALAPPDATA").map(|p| p.join("spinfall")))
}

/// What happened to the store during a run.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum StoreOutcome {
    /// The field was read from the store.
    Read(PathBuf),
    /// The field was built and stored.
    Built(PathBuf),
    /// The field was built; the store could not be used (the reason).
    BuiltWithoutStore(String),
}

/// Callbacks of a field build.
pub struct BuildHooks<'a> {
    /// Progress of the build.
    pub progress: Box<dyn Fn(&BuildProgress) + Sync + 'a>,
    /// Set to stop (the build ends with [`WorkflowError::Cancelled`]).
    pub cancel: &'a AtomicBool,
    /// Warnings that do not stop the run (an unusable store, a damaged file rebuilt).
    pub warn: Box<dyn Fn(String) + Sync + 'a>,
}

static NEVER: AtomicBool = AtomicBool::new(false);

impl Default for BuildHooks<'static> {
    fn default() -> Self {
        BuildHooks {
            progress: Box::new(|_| {}),
            cancel: &NEVER,
            warn: Box::new(|_| {}),
        }
    }
}

fn gravity_error(e: GravityError) -> WorkflowError {
    match e {
        GravityError::Cancelled => WorkflowError::Cancelled,
        other => WorkflowError::Invalid(format!("interpolated gravity field: {other}")),
    }
}

/// The interpolated field of `mesh` with `mass` and `settings`: read from the store in
/// `folder` when a valid one is there, else built (and stored when the folder is usable).
///
/// # Errors
/// Invalid settings, a memory limit too small for the bound, or cancellation.
pub fn load_or_build(
    mesh: &Mesh,
    mass: MassSpec,
    settings: InterpolationSettings,
    folder: Option<&Path>,
    hooks: &BuildHooks<'_>,
) -> Result<(InterpolatedGravity, StoreOutcome)> {
    let build = || {
        build_interpolated(mesh, mass, settings, &*hooks.progress, hooks.cancel)
            .map_err(gravity_error)
    };
    let Some(folder) = folder else {
        let field = build()?;
        return Ok((
            field,
            StoreOutcome::BuiltWithoutStore("no cache folder is known (set --cache-dir)".into()),
        ));
    };
    if let Err(e) = std::fs::create_dir_all(folder) {
        let reason = format!("cannot create the cache folder {}: {e}", folder.display());
        (hooks.warn)(format!("{reason}; building the field without storing it"));
        return Ok((build()?, StoreOutcome::BuiltWithoutStore(reason)));
    }
    let key = cache_key(mesh, mass, &settings);
    let path = folder.join(format!("{key}.field"));
    let lock_path = folder.join(format!("{key}.lock"));
    let lock = match lock_key(&lock_path, hooks.cancel) {
        Ok(lock) => lock,
        Err(LockFailure::Cancelled) => return Err(WorkflowError::Cancelled),
        Err(LockFailure::Io(e)) => {
            let reason = format!("cannot lock {}: {e}", lock_path.display());
            (hooks.warn)(format!("{reason}; building the field without storing it"));
            return Ok((build()?, StoreOutcome::BuiltWithoutStore(reason)));
        }
    };
    if path.exists() {
        match read(&path, mesh, mass, &settings) {
            Ok(field) => {
                drop(lock);
                return Ok((field, StoreOutcome::Read(path)));
            }
            Err(reason) => {
                (hooks.warn)(format!(
                    "stored field {} not used ({reason}); rebuilding it",
                    path.display()
                ));
                let _ = std::fs::remove_file(&path);
            }
        }
    }
    let field = build()?;
    let outcome = match store(&field, &key, folder, &path) {
        Ok(()) => StoreOutcome::Built(path),
        Err(reason) => {
            (hooks.warn)(format!("{reason}; the field is used without being stored"));
            StoreOutcome::BuiltWithoutStore(reason)
        }
    };
    drop(lock);
    Ok((field, outcome))
}

fn read(
    path: &Path,
    mesh: &Mesh,
    mass: MassSpec,
    settings: &InterpolationSettings,
) -> std::result::Result<InterpolatedGravity, String> {
    let file = File::open(path).map_err(|e| format!("cannot open it: {e}"))?;
    InterpolatedGravity::read_from(&mut BufReader::new(file), mesh, mass, settings)
        .map_err(|e| e.to_string())
}

/// Writes `field` under an exclusive temporary name in `folder`, then renames it to `path`.
fn store(
    field: &InterpolatedGravity,
    key: &str,
    folder: &Path,
    path: &Path,
) -> std::result::Result<(), String> {
    let tmp = tempfile::Builder::new()
        .prefix(".spinfall-field-")
        .suffix(".part")
        .tempfile_in(folder)
        .map_err(|e| format!("cannot write in the cache folder {}: {e}", folder.display()))?;
    {
        let mut w = BufWriter::new(tmp.as_file());
        field
            .write_to(&mut w, key)
            .map_err(|e| format!("cannot store the field: {e}"))?;
        w.flush()
            .map_err(|e| format!("cannot store the field in {}: {e}", folder.display()))?;
    }
    tmp.persist(path)
        .map_err(|e| format!("cannot store the field as {}: {}", path.display(), e.error))?;
    Ok(())
}

enum LockFailure {
    Cancelled,
    Io(std::io::Error),
}

/// A held lock on one key (released on drop).
struct KeyLock {
    file: File,
}

impl Drop for KeyLock {
    fn drop(&mut self) {
        let _ = self.file.unlock();
    }
}

/// Takes the lock of one stored field, waiting while another process builds it.
fn lock_key(path: &Path, cancel: &AtomicBool) -> std::result::Result<KeyLock, LockFailure> {
    let file = OpenOptions::new()
        .create(true)
        .truncate(false)
        .write(true)
        .open(path)
        .map_err(LockFailure::Io)?;
    let start = Instant::now();
    loop {
        match file.try_lock() {
            Ok(()) => return Ok(KeyLock { file }),
            Err(TryLockError::WouldBlock) => {}
            Err(TryLockError::Error(e)) => return Err(LockFailure::Io(e)),
        }
        if cancel.load(Ordering::Relaxed) {
            return Err(LockFailure::Cancelled);
        }
        if start.elapsed() >= BUILD_WAIT {
            return Err(LockFailure::Io(std::io::Error::other(format!(
                "another process has held it for over {} s",
                BUILD_WAIT.as_secs()
            ))));
        }
        std::thread::sleep(Duration::from_millis(200));
    }
}
