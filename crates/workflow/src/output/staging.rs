//! Writing one file's bytes: to an exclusive temporary file beside its target (renamed over it
//! later), in place for a device or FIFO, or to standard output; with the size and SHA-256 of
//! what was written.

use std::fs::{File, OpenOptions, Permissions};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use sha2::{Digest, Sha256};

use super::destination::Destination;
use crate::error::{Result, WorkflowError};

/// Prefix of Spinfall's temporary files; a run removes the ones earlier runs left in its
/// output folder (recognised by this prefix and [`TEMP_SUFFIX`]).
pub const TEMP_PREFIX: &str = ".spinfall-tmp-";
/// Suffix of Spinfall's temporary files.
pub const TEMP_SUFFIX: &str = ".part";

/// What a fill function writes into.
pub type Fill<'a> = Box<dyn FnOnce(&mut dyn Write) -> Result<()> + Send + 'a>;

/// A writer that counts and hashes what passes through it.
struct Tally<W> {
    inner: W,
    bytes: u64,
    hash: Sha256,
}

impl<W: Write> Write for Tally<W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.inner.write(buf)?;
        self.bytes += n as u64;
        self.hash.update(&buf[..n]);
        Ok(n)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush()
    }
}

/// Size and SHA-256 (lowercase hex) of written bytes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Written {
    /// Bytes written.
    pub bytes: u64,
    /// SHA-256 of them, lowercase hex.
    pub sha256: String,
}

/// Lowercase hex of bytes.
pub(crate) fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// Runs `fill` into `sink` through a tally; maps write errors to an output error on `path`.
fn fill_into<W: Write>(sink: W, path: &Path, fill: Fill<'_>) -> Result<(Written, W)> {
    let mut tally = Tally {
        inner: BufWriter::with_capacity(1 << 16, sink),
        bytes: 0,
        hash: Sha256::new(),
    };
    fill(&mut tally).map_err(|e| relabel(e, path))?;
    tally.flush().map_err(|e| WorkflowError::output(path, &e))?;
    let written = Written {
        bytes: tally.bytes,
        sha256: hex(&tally.hash.finalize()),
    };
    let inner = tally
        .inner
        .into_inner()
        .map_err(|e| WorkflowError::output(path, e.error()))?;
    Ok((written, inner))
}

/// Output errors raised inside a fill function (by a writer that knows no path) get the path.
fn relabel(e: WorkflowError, path: &Path) -> WorkflowError {
    match e {
        WorkflowError::Output { path: p, message } if p.as_os_str().is_empty() => {
            WorkflowError::Output {
                path: path.to_path_buf(),
                message,
            }
        }
        other => other,
    }
}

/// A file written to its temporary name, waiting to be renamed over its target.
pub(crate) struct Staged {
    temp: tempfile::TempPath,
    real: PathBuf,
    requested: PathBuf,
    /// Size and hash.
    pub written: Written,
}

impl Staged {
    /// Renames the temporary file over its target.
    pub(crate) fn commit(self) -> Result<()> {
        let requested = self.requested;
        self.temp.persist(&self.real).map_err(|e| {
            WorkflowError::output_msg(
                &requested,
                format!("cannot move the finished file into place: {}", e.error),
            )
        })
    }
}

/// Writes `fill` to an exclusive temporary file beside `real` (created `O_EXCL` by `tempfile`
/// with the usual permissions, or the existing file's), flushed to disk. Nothing is renamed
/// yet; dropping the result removes the temporary file.
pub(crate) fn stage(
    requested: &Path,
    real: &Path,
    permissions: Option<&Permissions>,
    fill: Fill<'_>,
) -> Result<Staged> {
    let folder = super::destination::parent_folder(real);
    let mut builder = tempfile::Builder::new();
    builder.prefix(TEMP_PREFIX).suffix(TEMP_SUFFIX);
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        // Like a file created by open(2): 0666 less the umask.
        builder.permissions(Permissions::from_mode(0o666));
    }
    let temp = builder
        .tempfile_in(&folder)
        .map_err(|e| WorkflowError::output(requested, &e))?;
    let (file, temp) = temp.into_parts();
    let (written, file) = fill_into(file, requested, fill)?;
    if let Some(p) = permissions {
        file.set_permissions(p.clone())
            .map_err(|e| WorkflowError::output(requested, &e))?;
    }
    file.sync_all()
        .map_err(|e| WorkflowError::output(requested, &e))?;
    Ok(Staged {
        temp,
        real: real.to_path_buf(),
        requested: requested.to_path_buf(),
        written,
    })
}

/// Writes `fill` straight into an existing device or FIFO (never replaced, never truncated).
pub(crate) fn write_in_place(requested: &Path, real: &Path, fill: Fill<'_>) -> Result<Written> {
    let file: File = OpenOptions::new()
        .write(true)
        .open(real)
        .map_err(|e| WorkflowError::output(requested, &e))?;
    let (written, _) = fill_into(file, requested, fill)?;
    Ok(written)
}

/// Writes `fill` to standard output. A closed pipe or a full device is an error, not a panic.
pub(crate) fn write_stdout(fill: Fill<'_>) -> Result<Written> {
    let stdout = std::io::stdout();
    let lock = stdout.lock();
    let (written, _) = fill_into(lock, Path::new("standard output"), fill)?;
    Ok(written)
}

/// Writes one output completely: staged and renamed, in place, or to standard output.
pub(crate) fn write_destination(dest: &Destination, fill: Fill<'_>) -> Result<Written> {
    match dest {
        Destination::Stdout => write_stdout(fill),
        Destination::InPlace { requested, real } => write_in_place(requested, real, fill),
        Destination::Replace {
            requested,
            real,
            permissions,
        } => {
            let staged = stage(requested, real, permissions.as_ref(), fill)?;
            let written = staged.written.clone();
            staged.commit()?;
            Ok(written)
        }
    }
}

/// Checks that a folder takes new files: creates (and removes) an exclusive temporary file.
pub(crate) fn probe_writable(folder: &Path, requested: &Path) -> Result<()> {
    tempfile::Builder::new()
        .prefix(TEMP_PREFIX)
        .suffix(TEMP_SUFFIX)
        .tempfile_in(folder)
        .map(drop)
        .map_err(|e| {
            WorkflowError::output_msg(
                requested,
                format!("cannot create files in {}: {e}", folder.display()),
            )
        })
}
