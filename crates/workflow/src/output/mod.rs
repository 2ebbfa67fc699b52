//! Every file Spinfall writes goes through here, and nowhere else.
//!
//! - A regular file is written to an exclusive temporary file (`tempfile`, `O_EXCL`) in the
//!   target's own folder, flushed to disk, given the target's permissions (or the usual ones
//!   for a new file) and renamed over the target only when complete. A symlink is followed and
//!   its target written. A device, FIFO or socket is written in place, never replaced; `-` is
//!   standard output. A failed write leaves the old file and no temporary file.
//! - A set of files ([`OutputFolder::write_set`]: a run's results, an export) is staged
//!   completely before the first rename, and a [`manifest`] (names, sizes, SHA-256, run id,
//!   scenario hash, kernel) is written last; readers ([`read_verified`]) trust only files a
//!   complete manifest names and whose bytes match it.
//! - Writers take the folder's lock file ([`LOCK_FILE`]), so two runs into one folder are
//!   serialised; under the lock, temporary files that killed runs left are removed.
//! - Outputs are checked before the work starts ([`check_file`], [`OutputFolder::prepare`]).
//!
//! Spinfall never deletes or replaces a file it did not write, except the file it was asked
//! to write.

mod destination;
mod folder;
mod lock;
pub mod manifest;
mod staging;

use std::sync::atomic::AtomicBool;

pub use destination::{OutputTarget, parent_folder};
pub use folder::{OutputFolder, SetFile};
pub use lock::{LOCK_FILE, LOCK_WAIT};
pub use manifest::{
    Manifest, ManifestFile, ManifestState, MergedShard, RUN_MANIFEST, RunInfo, ShardRecord,
    VerifiedSet,
};
pub use manifest::{file_digest, read_verified};
pub use staging::{Fill, TEMP_PREFIX, TEMP_SUFFIX, Written};

use destination::{Destination, resolve};

use crate::error::{Result, WorkflowError};

/// A single output checked before the work: where its bytes will go.
#[derive(Debug, Clone)]
pub struct CheckedFile {
    dest: Destination,
}

/// Checks a single output before the work starts: `-` is standard output; a path must be in an
/// existing folder where files can be created, and must not be a folder. Symlinks are followed.
pub fn check_file(target: &OutputTarget) -> Result<CheckedFile> {
    let dest = resolve(target)?;
    if let Some(folder) = dest.folder() {
        if !folder.is_dir() {
            return Err(WorkflowError::output_msg(
                dest.requested(),
                format!("the folder {} does not exist", folder.display()),
            ));
        }
        staging::probe_writable(&folder, &dest.requested())?;
    }
    Ok(CheckedFile { dest })
}

impl CheckedFile {
    /// The path asked for, or "standard output".
    pub fn describe(&self) -> String {
        self.dest.requested().display().to_string()
    }

    /// Whether the output is standard output.
    pub fn is_stdout(&self) -> bool {
        matches!(self.dest, Destination::Stdout)
    }

    /// Writes the output completely (see the module documentation), holding the folder's lock
    /// while a regular file is replaced.
    pub fn write(
        &self,
        fill: impl FnOnce(&mut dyn std::io::Write) -> Result<()> + Send,
    ) -> Result<Written> {
        let _lock = match self.dest.folder() {
            Some(folder) => {
                let lock = lock::lock_folder(&folder, LOCK_WAIT, &AtomicBool::new(false))?;
                folder::remove_stale_temps(&folder);
                Some(lock)
            }
            None => None,
        };
        staging::write_destination(&self.dest, Box::new(fill))
    }
}

/// Writes one output (checked now): a shorthand for [`check_file`] then [`CheckedFile::write`].
pub fn write_file(
    target: &OutputTarget,
    fill: impl FnOnce(&mut dyn std::io::Write) -> Result<()> + Send,
) -> Result<Written> {
    check_file(target)?.write(fill)
}

/// Lowercase hex of a digest (as manifests write SHA-256).
pub fn manifest_hex(bytes: &[u8]) -> String {
    staging::hex(bytes)
}

/// An I/O error inside a fill function, as an output error (the path is filled in by the
/// writer that called the fill function).
pub fn io_error(e: std::io::Error) -> WorkflowError {
    WorkflowError::output("", &e)
}
