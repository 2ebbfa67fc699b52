//! The on-disk store of interpolated fields, as a run uses it: build once, read back the same
//! field, rebuild (never trust) a damaged, truncated or foreign file, share one build between
//! concurrent callers, and run on without a store when the folder cannot be used.
#![allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]

use std::path::{Path, PathBuf};
use std::sync::{Arc, Barrier, Mutex};

use nalgebra::Point3;
use spinfall_gravity::{InterpolatedGravity, InterpolationSettings, MassSpec, Mesh, generate};
use spinfall_workflow::field_cache::{BuildHooks, StoreOutcome, load_or_build};

const RHO: f64 = 1900.0;

fn mesh() -> Mesh {
    // An invented lumpy body of 320 faces (the demo generator at a low resolution).
    generate::demo_body_geodesic(4)
}

fn settings() -> InterpolationSettings {
    InterpolationSettings {
        max_rel_error: 1e-5,
        ..Default::default()
    }
}

/// Loads or builds with hooks that record warnings.
fn load(mesh: &Mesh, folder: Option<&Path>) -> (InterpolatedGravity, StoreOutcome, Vec<String>) {
    let warnings = Mutex::new(Vec::new());
    let hooks = BuildHooks {
        warn: Box::new(|w| warnings.lock().unwrap().push(w)),
        ..Default::default()
    };
    let (field, outcome) =
        load_or_build(mesh, MassSpec::DensityKgM3(RHO), settings(), folder, &hooks)
            .expect("the field is built or read");
    drop(hooks);
    (field, outcome, warnings.into_inner().unwrap())
}

fn stored_path(outcome: &StoreOutcome) -> PathBuf {
    match outcome {
        StoreOutcome::Built(p) | StoreOutcome::Read(p) => p.clone(),
        other => panic!("expected a stored field, got {other:?}"),
    }
}

/// Potential and acceleration at a few points around the body, to compare fields bit for bit.
fn samples(field: &InterpolatedGravity) -> Vec<(u64, [u64; 3])> {
    (0..40)
        .map(|k| {
            let t = k as f64 * 0.7;
            let r = 1400.0 + 60.0 * k as f64;
            let p = Point3::new(r * t.cos(), r * t.sin(), 300.0 * (t * 1.3).sin());
            let (u, a) = field.potential_acceleration(&p);
            (u.to_bits(), [a.x.to_bits(), a.y.to_bits(), a.z.to_bits()])
        })
        .collect()
}

#[test]
fn a_stored_field_is_read_back_identically_and_a_flipped_byte_means_a_rebuild() {
    let dir = tempfile::tempdir().unwrap();
    let mesh = mesh();
    let (built, outcome, warnings) = load(&mesh, Some(dir.path()));
    assert!(matches!(outcome, StoreOutcome::Built(_)), "{outcome:?}");
    assert!(warnings.is_empty(), "{warnings:?}");
    let path = stored_path(&outcome);

    let (read, outcome, warnings) = load(&mesh, Some(dir.path()));
    assert_eq!(outcome, StoreOutcome::Read(path.clone()));
    assert!(warnings.is_empty(), "{warnings:?}");
    assert_eq!(samples(&built), samples(&read));

    // One byte flipped in the middle of the stored coefficients.
    let mut bytes = std::fs::read(&path).unwrap();
    let mid = bytes.len() / 2;
    bytes[mid] ^= 0x10;
    std::fs::write(&path, &bytes).unwrap();
    let (rebuilt, outcome, warnings) = load(&mesh, Some(dir.path()));
    assert_eq!(
        outcome,
        StoreOutcome::Built(path.clone()),
        "rebuilt, not read"
    );
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert!(warnings[0].contains("rebuilding"), "{warnings:?}");
    assert_eq!(samples(&built), samples(&rebuilt));
    // The rebuilt file is whole again.
    let (_, outcome, _) = load(&mesh, Some(dir.path()));
    assert_eq!(outcome, StoreOutcome::Read(path));
}

#[test]
fn a_truncated_or_foreign_file_is_rebuilt_with_a_warning() {
    let dir = tempfile::tempdir().unwrap();
    let mesh = mesh();
    let (built, outcome, _) = load(&mesh, Some(dir.path()));
    let path = stored_path(&outcome);
    let whole = std::fs::read(&path).unwrap();

    std::fs::write(&path, &whole[..whole.len() / 3]).unwrap();
    let (rebuilt, outcome, warnings) = load(&mesh, Some(dir.path()));
    assert_eq!(outcome, StoreOutcome::Built(path.clone()));
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert_eq!(samples(&built), samples(&rebuilt));

    // The stored field of another body put under this body's name.
    let other = generate::ellipsoid(900.0, 700.0, 500.0, 2);
    let other_dir = tempfile::tempdir().unwrap();
    let (_, other_outcome, _) = load(&other, Some(other_dir.path()));
    std::fs::copy(stored_path(&other_outcome), &path).unwrap();
    let (rebuilt, outcome, warnings) = load(&mesh, Some(dir.path()));
    assert_eq!(outcome, StoreOutcome::Built(path));
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert_eq!(samples(&built), samples(&rebuilt));
}

#[test]
fn an_unusable_folder_means_a_run_without_a_store_and_a_warning() {
    let dir = tempfile::tempdir().unwrap();
    // A folder below a regular file cannot be created, whoever runs the test.
    let blocker = dir.path().join("not-a-folder");
    std::fs::write(&blocker, b"x").unwrap();
    let folder = blocker.join("cache");
    let mesh = mesh();
    let (field, outcome, warnings) = load(&mesh, Some(&folder));
    assert!(
        matches!(&outcome, StoreOutcome::BuiltWithoutStore(r) if r.contains("cannot create")),
        "{outcome:?}"
    );
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert!(warnings[0].contains("without storing"), "{warnings:?}");
    let (stored, _, _) = load(&mesh, Some(dir.path()));
    assert_eq!(samples(&field), samples(&stored));
}

#[test]
fn concurrent_callers_share_one_build() {
    let dir = tempfile::tempdir().unwrap();
    let mesh = Arc::new(mesh());
    let barrier = Arc::new(Barrier::new(3));
    let handles: Vec<_> = (0..3)
        .map(|_| {
            let (mesh, barrier) = (Arc::clone(&mesh), Arc::clone(&barrier));
            let folder = dir.path().to_path_buf();
            std::thread::spawn(move || {
                barrier.wait();
                let (field, outcome, _) = load(&mesh, Some(&folder));
                (samples(&field), outcome)
            })
        })
        .collect();
    let results: Vec<_> = handles.into_iter().map(|h| h.join().unwrap()).collect();
    let built = results
        .iter()
        .filter(|(_, o)| matches!(o, StoreOutcome::Built(_)))
        .count();
    let read = results
        .iter()
        .filter(|(_, o)| matches!(o, StoreOutcome::Read(_)))
        .count();
    assert_eq!(
        (built, read),
        (1, 2),
        "{:?}",
        results.iter().map(|r| &r.1).collect::<Vec<_>>()
    );
    assert!(results.windows(2).all(|w| w[0].0 == w[1].0));
}
