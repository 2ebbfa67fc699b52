//! Atomic file writes: write to a temporary file in the target folder, then rename over it.
//!
//! A failed or interrupted export leaves the old file (or nothing), never half a file.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

/// Write `path` atomically with the bytes `fill` produces.
///
/// The temporary file sits next to the target (same folder, so the rename stays on one file
/// system) and is removed when anything fails.
pub fn write_atomic(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> Result<(), String>,
) -> Result<(), String> {
    let folder = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    if !folder.is_dir() {
        return Err(format!("folder {} does not exist", folder.display()));
    }
    let file_name = path
        .file_name()
        .ok_or_else(|| format!("{} does not name a file", path.display()))?;
    let tmp = folder.join(format!(
        ".{}.{}.tmp",
        file_name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| {
        let file =
            File::create(&tmp).map_err(|e| format!("cannot create {}: {e}", tmp.display()))?;
        let mut w = BufWriter::new(file);
        fill(&mut w)?;
        let file = w
            .into_inner()
            .map_err(|e| format!("cannot write {}: {}", tmp.display(), e.error()))?;
        file.sync_all()
            .map_err(|e| format!("cannot write {}: {e}", tmp.display()))?;
        std::fs::rename(&tmp, path)
            .map_err(|e| format!("cannot move the new file to {}: {e}", path.display()))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn failed_write_leaves_old_file_and_no_temp() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("out.csv");
        std::fs::write(&path, "old").unwrap();
        let r = write_atomic(&path, |w| {
            w.write_all(b"half").map_err(|e| e.to_string())?;
            Err("boom".into())
        });
        assert!(r.is_err());
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "old");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
        write_atomic(&path, |w| w.write_all(b"new").map_err(|e| e.to_string())).unwrap();
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "new");
    }

    #[test]
    fn missing_folder_is_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("nope").join("out.csv");
        let e = write_atomic(&path, |_| Ok(())).unwrap_err();
        assert!(e.contains("does not exist"), "{e}");
    }
}
