//! Where bytes for an output path really go: a regular file replaced through a temporary file,
//! a device or FIFO written in place, or standard output. Symlinks are followed.

use std::fs::Permissions;
use std::path::{Path, PathBuf};

use crate::error::{Result, WorkflowError};

/// How many symlinks are followed before giving up (as the kernel's limit).
const MAX_LINKS: usize = 40;

/// Where one output goes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum OutputTarget {
    /// Standard output (`-` on the command line).
    Stdout,
    /// A path.
    Path(PathBuf),
}

impl OutputTarget {
    /// `-` is standard output; anything else a path.
    pub fn from_arg(arg: &Path) -> OutputTarget {
        if arg.as_os_str() == "-" {
            OutputTarget::Stdout
        } else {
            OutputTarget::Path(arg.to_path_buf())
        }
    }

    /// How the target is named in messages.
    pub fn describe(&self) -> String {
        match self {
            OutputTarget::Stdout => "standard output".into(),
            OutputTarget::Path(p) => p.display().to_string(),
        }
    }
}

/// The resolved destination of an output.
#[derive(Debug, Clone)]
pub(crate) enum Destination {
    /// Standard output.
    Stdout,
    /// A device, FIFO or socket: written in place, never replaced.
    InPlace {
        /// The path asked for.
        requested: PathBuf,
        /// The node itself (symlinks followed).
        real: PathBuf,
    },
    /// A regular file (existing or new): written to an exclusive temporary file in the real
    /// file's folder and renamed over it.
    Replace {
        /// The path asked for.
        requested: PathBuf,
        /// The file itself (symlinks followed); may not exist yet.
        real: PathBuf,
        /// Permissions of the existing file, kept on the new one.
        permissions: Option<Permissions>,
    },
}

impl Destination {
    /// The path asked for (for messages).
    pub(crate) fn requested(&self) -> PathBuf {
        match self {
            Destination::Stdout => PathBuf::from("standard output"),
            Destination::InPlace { requested, .. } | Destination::Replace { requested, .. } => {
                requested.clone()
            }
        }
    }

    /// The folder the real file is in (for a replaced file).
    pub(crate) fn folder(&self) -> Option<PathBuf> {
        match self {
            Destination::Replace { real, .. } => Some(parent_folder(real)),
            _ => None,
        }
    }
}

/// The folder of `path` (`.` for a bare file name).
pub fn parent_folder(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Resolves `target`: follows symlinks (a dangling one names the file to create), refuses a
/// folder, and tells a device or FIFO (written in place) from a regular file (replaced).
pub(crate) fn resolve(target: &OutputTarget) -> Result<Destination> {
    let requested = match target {
        OutputTarget::Stdout => return Ok(Destination::Stdout),
        OutputTarget::Path(p) => p.clone(),
    };
    if requested.file_name().is_none() {
        return Err(WorkflowError::output_msg(
            &requested,
            "does not name a file",
        ));
    }
    let mut real = requested.clone();
    for _ in 0..MAX_LINKS {
        let meta = match std::fs::symlink_metadata(&real) {
            Ok(meta) => meta,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                return Ok(Destination::Replace {
                    requested,
                    real,
                    permissions: None,
                });
            }
            Err(e) => return Err(WorkflowError::output(&requested, &e)),
        };
        let kind = meta.file_type();
        if kind.is_symlink() {
            let link =
                std::fs::read_link(&real).map_err(|e| WorkflowError::output(&requested, &e))?;
            real = if link.is_absolute() {
                link
            } else {
                parent_folder(&real).join(link)
            };
            continue;
        }
        if kind.is_dir() {
            return Err(WorkflowError::output_msg(
                &requested,
                "is a folder; give a file name",
            ));
        }
        if kind.is_file() {
            return Ok(Destination::Replace {
                requested,
                real,
                permissions: Some(meta.permissions()),
            });
        }
        // A character or block device, a FIFO or a socket: never replaced.
        return Ok(Destination::InPlace { requested, real });
    }
    Err(WorkflowError::output_msg(
        &requested,
        format!("more than {MAX_LINKS} symbolic links to follow"),
    ))
}
