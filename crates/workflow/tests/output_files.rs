//! The output module: single files, devices, FIFOs, symlinks, permissions, sets with manifests,
//! stale temporary files, and concurrent writers (issue 9, faults 2, 3 and 4).
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use std::io::Write;
use std::path::Path;
use std::sync::atomic::AtomicBool;

use spinfall_workflow::output::{
    LOCK_FILE, ManifestState, OutputFolder, OutputTarget, RunInfo, SetFile, TEMP_PREFIX,
    TEMP_SUFFIX, check_file, read_verified, write_file,
};
use spinfall_workflow::{ErrorKind, WorkflowError};

fn text(s: &'static str) -> impl FnOnce(&mut dyn Write) -> spinfall_workflow::Result<()> + Send {
    move |w| {
        w.write_all(s.as_bytes())
            .map_err(spinfall_workflow::output::io_error)
    }
}

fn target(p: &Path) -> OutputTarget {
    OutputTarget::Path(p.to_path_buf())
}

/// Files in `dir` other than the lock file.
fn listing(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n != LOCK_FILE)
        .collect();
    names.sort();
    names
}

#[test]
fn a_failed_write_keeps_the_old_file_and_leaves_no_temporary_file() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("out.csv");
    std::fs::write(&path, "old").unwrap();
    let e = write_file(&target(&path), |w| {
        w.write_all(b"half").unwrap();
        Err(WorkflowError::Invalid("boom".into()))
    })
    .unwrap_err();
    assert!(e.to_string().contains("boom"));
    assert_eq!(std::fs::read_to_string(&path).unwrap(), "old");
    assert_eq!(listing(dir.path()), ["out.csv"]);
    write_file(&target(&path), text("new")).unwrap();
    assert_eq!(std::fs::read_to_string(&path).unwrap(), "new");
    assert_eq!(listing(dir.path()), ["out.csv"]);
}

/// Issue 9, fault 2: a symlink was replaced by a plain file; now its target is written.
#[cfg(unix)]
#[test]
fn a_symlink_is_followed_and_stays_a_symlink() {
    let dir = tempfile::tempdir().unwrap();
    let real_dir = dir.path().join("real");
    std::fs::create_dir(&real_dir).unwrap();
    let real = real_dir.join("data.csv");
    std::fs::write(&real, "old").unwrap();
    let link = dir.path().join("link.csv");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    write_file(&target(&link), text("new")).unwrap();
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert_eq!(std::fs::read_to_string(&real).unwrap(), "new");
    // A dangling link names the file to create.
    let dangling = dir.path().join("dangling.csv");
    std::os::unix::fs::symlink("real/new.csv", &dangling).unwrap();
    write_file(&target(&dangling), text("fresh")).unwrap();
    assert!(
        std::fs::symlink_metadata(&dangling)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert_eq!(
        std::fs::read_to_string(real_dir.join("new.csv")).unwrap(),
        "fresh"
    );
}

/// Issue 9, fault 2: a device node was replaced by a plain file; now it is written in place.
#[cfg(unix)]
#[test]
fn a_device_is_written_in_place() {
    use std::os::unix::fs::FileTypeExt;
    let dev = Path::new("/dev/null");
    let written = write_file(&target(dev), text("into the void")).unwrap();
    assert_eq!(written.bytes, 13);
    assert!(std::fs::metadata(dev).unwrap().file_type().is_char_device());
    // A full device is an output error, not a panic.
    let full = Path::new("/dev/full");
    if full.exists() {
        let e = write_file(&target(full), text("x")).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::Output, "{e}");
    }
}

/// Issue 9, fault 2: a FIFO was replaced by a plain file; now it is written in place.
#[cfg(unix)]
#[test]
fn a_fifo_is_written_in_place() {
    use std::os::unix::fs::FileTypeExt;
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("pipe");
    let made = std::process::Command::new("mkfifo").arg(&fifo).status();
    if !made.is_ok_and(|s| s.success()) {
        panic!("mkfifo (coreutils) is needed by this test");
    }
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read_to_string(fifo).unwrap())
    };
    write_file(&target(&fifo), text("through the pipe")).unwrap();
    assert_eq!(reader.join().unwrap(), "through the pipe");
    assert!(std::fs::metadata(&fifo).unwrap().file_type().is_fifo());
}

/// Issue 9, fault 2: permissions were reset to 0644; now the file keeps its own.
#[cfg(unix)]
#[test]
fn permissions_are_kept() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("private.csv");
    std::fs::write(&path, "old").unwrap();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o600)).unwrap();
    write_file(&target(&path), text("new")).unwrap();
    let mode = std::fs::metadata(&path).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o600);
    // A new file gets the usual permissions (0666 less the umask), not tempfile's 0600.
    let fresh = dir.path().join("fresh.csv");
    write_file(&target(&fresh), text("x")).unwrap();
    let mode = std::fs::metadata(&fresh).unwrap().permissions().mode() & 0o777;
    assert_ne!(
        mode, 0o600,
        "new files must be readable by the group as usual"
    );
    assert_eq!(mode & 0o600, 0o600);
}

/// Issue 9, fault 4: temporary names were predictable (`.NAME.PID.tmp`) and opened without
/// O_EXCL, so a planted symlink redirected the write. Now names are random and created
/// exclusively: a planted link at the old name (or any name) is never written through.
#[cfg(unix)]
#[test]
fn planted_symlinks_in_the_output_folder_are_never_written_through() {
    let dir = tempfile::tempdir().unwrap();
    let victim = dir.path().join("victim.txt");
    std::fs::write(&victim, "precious").unwrap();
    let out = dir.path().join("out");
    std::fs::create_dir(&out).unwrap();
    let pid = std::process::id();
    for name in [
        format!(".results.json.{pid}.tmp"),
        format!(".trajectories.csv.{pid}.tmp"),
    ] {
        std::os::unix::fs::symlink(&victim, out.join(name)).unwrap();
    }
    let folder = OutputFolder::prepare(&out).unwrap();
    folder
        .write_set(
            "m.json",
            vec![
                SetFile::new("results.json", text("{}")),
                SetFile::new("trajectories.csv", text("a,b\n")),
            ],
            &RunInfo::default(),
            &AtomicBool::new(false),
        )
        .unwrap();
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");
    // The links are not Spinfall's temporary files: left alone.
    assert_eq!(listing(&out).len(), 5, "{:?}", listing(&out));
}

/// Issue 9, fault 3: a set is renamed into place only when every file is complete; a failure
/// leaves the previous set, consistent with its manifest, and no temporary file.
#[test]
fn a_set_is_all_or_nothing_and_its_manifest_verifies() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("nested").join("run");
    let folder = OutputFolder::prepare(&out).unwrap();
    let info = RunInfo {
        scenario_sha256: Some("ab".repeat(32)),
        kernel: "test kernel".into(),
        ..RunInfo::default()
    };
    let no = AtomicBool::new(false);
    folder
        .write_set(
            "m.json",
            vec![
                SetFile::new("a.csv", text("first a")),
                SetFile::new("b.csv", text("first b")),
            ],
            &info,
            &no,
        )
        .unwrap();
    let set = read_verified(&out, "m.json").unwrap();
    assert_eq!(set.manifest.state, ManifestState::Complete);
    assert_eq!(set.manifest.kernel, "test kernel");
    assert_eq!(set.manifest.files.len(), 2);
    // SHA-256 (FIPS 180-4) of the bytes, checked against coreutils' sha256sum.
    assert_eq!(set.manifest.files[0].sha256, sha256_of(b"first a"));
    assert_eq!(set.manifest.files[0].bytes, 7);
    // The second file fails: nothing of the second run lands.
    let e = folder
        .write_set(
            "m.json",
            vec![
                SetFile::new("a.csv", text("second a")),
                SetFile::new("b.csv", |_| Err(WorkflowError::Invalid("disk full".into()))),
            ],
            &info,
            &no,
        )
        .unwrap_err();
    assert!(e.to_string().contains("disk full"));
    assert_eq!(
        std::fs::read_to_string(out.join("a.csv")).unwrap(),
        "first a"
    );
    assert_eq!(listing(&out), ["a.csv", "b.csv", "m.json"]);
    read_verified(&out, "m.json").unwrap();
    // A file changed behind the manifest's back is refused by name.
    std::fs::write(out.join("b.csv"), "tampered").unwrap();
    let e = read_verified(&out, "m.json").unwrap_err().to_string();
    assert!(e.contains("b.csv") && e.contains("does not match"), "{e}");
    // Cancelled before the renames: nothing changes either.
    let cancel = AtomicBool::new(true);
    let e = folder
        .write_set(
            "m.json",
            vec![SetFile::new("a.csv", text("third"))],
            &info,
            &cancel,
        )
        .unwrap_err();
    assert!(e.is_cancelled());
    assert_eq!(
        std::fs::read_to_string(out.join("a.csv")).unwrap(),
        "first a"
    );
}

/// SHA-256 through sha256sum (coreutils), an implementation outside the project.
fn sha256_of(bytes: &[u8]) -> String {
    let mut child = std::process::Command::new("sha256sum")
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .expect("sha256sum (coreutils) runs");
    child.stdin.take().unwrap().write_all(bytes).unwrap();
    let out = child.wait_with_output().unwrap();
    String::from_utf8(out.stdout).unwrap()[..64].to_string()
}

/// Issue 9, fault 3: a killed run left a hidden temporary file that later runs never removed.
#[test]
fn the_next_run_removes_temporary_files_that_killed_runs_left() {
    let dir = tempfile::tempdir().unwrap();
    let stale = dir.path().join(format!("{TEMP_PREFIX}killed{TEMP_SUFFIX}"));
    std::fs::write(&stale, vec![0u8; 4096]).unwrap();
    let other = dir.path().join(".someone-elses.tmp");
    std::fs::write(&other, "not ours").unwrap();
    let folder = OutputFolder::prepare(dir.path()).unwrap();
    folder
        .write_set(
            "m.json",
            vec![SetFile::new("a.csv", text("a"))],
            &RunInfo::default(),
            &AtomicBool::new(false),
        )
        .unwrap();
    assert!(!stale.exists());
    assert!(
        other.exists(),
        "a file Spinfall did not write is never deleted"
    );
    // The same for single files.
    std::fs::write(&stale, "again").unwrap();
    write_file(&target(&dir.path().join("single.csv")), text("s")).unwrap();
    assert!(!stale.exists());
}

/// Issue 9, fault 3: two runs into one folder used to mix their files; now their writes are
/// serialised by the folder's lock and every finished set verifies against its manifest.
#[test]
fn concurrent_sets_into_one_folder_never_mix() {
    let dir = tempfile::tempdir().unwrap();
    let folder = OutputFolder::prepare(dir.path()).unwrap();
    std::thread::scope(|s| {
        for k in 0..6 {
            let folder = folder.clone();
            s.spawn(move || {
                let a = format!("run {k} a {}", "x".repeat(200_000));
                let b = format!("run {k} b");
                folder
                    .write_set(
                        "m.json",
                        vec![
                            SetFile::new("a.csv", move |w| {
                                w.write_all(a.as_bytes())
                                    .map_err(spinfall_workflow::output::io_error)
                            }),
                            SetFile::new("b.csv", move |w| {
                                w.write_all(b.as_bytes())
                                    .map_err(spinfall_workflow::output::io_error)
                            }),
                        ],
                        &RunInfo::default(),
                        &AtomicBool::new(false),
                    )
                    .unwrap();
            });
        }
    });
    read_verified(dir.path(), "m.json").unwrap();
    let a = std::fs::read_to_string(dir.path().join("a.csv")).unwrap();
    let b = std::fs::read_to_string(dir.path().join("b.csv")).unwrap();
    assert_eq!(
        a.split(' ').nth(1),
        b.split(' ').nth(1),
        "files of two runs mixed"
    );
    assert_eq!(listing(dir.path()), ["a.csv", "b.csv", "m.json"]);
}

/// Issue 9, fault 11: outputs are checked before any work.
#[test]
fn outputs_are_checked_up_front() {
    let dir = tempfile::tempdir().unwrap();
    let e = check_file(&target(&dir.path().join("missing").join("x.csv"))).unwrap_err();
    assert!(e.to_string().contains("does not exist"), "{e}");
    let e = check_file(&target(dir.path())).unwrap_err();
    assert!(e.to_string().contains("is a folder"), "{e}");
    assert!(check_file(&OutputTarget::Stdout).unwrap().is_stdout());
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let ro = dir.path().join("ro");
        std::fs::create_dir(&ro).unwrap();
        std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o500)).unwrap();
        // Root may write anyway; the check must agree with what actually happens.
        let writable = std::fs::write(ro.join("probe"), "x").is_ok();
        let _ = std::fs::remove_file(ro.join("probe"));
        let checked = check_file(&target(&ro.join("x.csv")));
        assert_eq!(checked.is_ok(), writable);
        assert_eq!(OutputFolder::prepare(&ro).is_ok(), writable);
    }
    let e = OutputFolder::prepare(Path::new("-")).unwrap_err();
    assert_eq!(e.kind(), ErrorKind::Output);
}
