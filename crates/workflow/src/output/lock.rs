//! The output folder's lock: one writer at a time, so two runs into the same folder never mix
//! their files. The lock is the operating system's advisory lock on `.spinfall.lock` (released
//! when the process ends, even when killed); the file itself stays.

use std::fs::{File, OpenOptions, TryLockError};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use crate::error::{Result, WorkflowError};

/// Name of the lock file in an output folder.
pub const LOCK_FILE: &str = ".spinfall.lock";

/// How long a writer waits for another one to finish before giving up.
pub const LOCK_WAIT: Duration = Duration::from_secs(600);

/// A held lock on an output folder (released on drop).
#[derive(Debug)]
pub(crate) struct FolderLock {
    file: File,
}

impl Drop for FolderLock {
    fn drop(&mut self) {
        // Closing the file releases the lock too; unlocking first makes it immediate.
        let _ = self.file.unlock();
    }
}

/// Takes the lock of `folder`, waiting (up to `wait`) while another run writes there. Returns
/// [`WorkflowError::Busy`] when the wait runs out and [`WorkflowError::Cancelled`] when
/// `cancel` is set meanwhile.
pub(crate) fn lock_folder(
    folder: &Path,
    wait: Duration,
    cancel: &AtomicBool,
) -> Result<FolderLock> {
    let path: PathBuf = folder.join(LOCK_FILE);
    let file = OpenOptions::new()
        .create(true)
        .truncate(false)
        .write(true)
        .open(&path)
        .map_err(|e| WorkflowError::output(&path, &e))?;
    let start = Instant::now();
    loop {
        match file.try_lock() {
            Ok(()) => return Ok(FolderLock { file }),
            Err(TryLockError::WouldBlock) => {}
            Err(TryLockError::Error(e)) => return Err(WorkflowError::output(&path, &e)),
        }
        if cancel.load(Ordering::Relaxed) {
            return Err(WorkflowError::Cancelled);
        }
        if start.elapsed() >= wait {
            return Err(WorkflowError::Busy {
                folder: folder.to_path_buf(),
                lock: path,
            });
        }
        std::thread::sleep(Duration::from_millis(50));
    }
}
