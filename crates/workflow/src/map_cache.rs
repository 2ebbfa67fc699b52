//! The on-disk store of surface maps, in the same folder as the interpolated gravity fields
//! ([`crate::field_cache`]): a map of a large model takes minutes, so it is computed once per
//! body and read back by later sessions.
//!
//! A stored map is named by its key ([`map_key`]), the SHA-256 of everything the map depends
//! on: the mesh as placed in the body frame (so the recentring is in it; the flag is hashed
//! too), the gravitational parameter, the spin rate and axis, and the gravity method with its
//! error bound. The file holds a magic line, the key, the face count, the per-face arrays and
//! the SHA-256 of all that; a file that does not match in every respect is recomputed, never
//! trusted. Files are written through [`crate::output`].
//!
//! A stored map never holds the sunlight layer (it depends on the Sun's direction, the grain and
//! the epoch, not on the body alone, and costs one ray test per face): the stored file and its
//! key are those of the map without the Sun, and [`load_or_compute_scenario_map`] computes the
//! layer afresh on every call. A map stored without the Sun is therefore never served as the map
//! of a scenario with one.

use std::path::{Path, PathBuf};

use sha2::{Digest, Sha256};
use spinfall_dynamics::surface_map::SurfaceMap;
use spinfall_dynamics::{Body, Cancel};
use spinfall_gravity::{InterpolationSettings, MassSpec, cache_key};

use crate::error::Result;
use crate::gravity_method::FieldUsed;
use crate::output::{OutputTarget, io_error, manifest_hex, write_file};
use crate::surface::{add_sunlight, compute_surface_map};

/// First bytes of a stored surface map.
const MAGIC: &[u8] = b"SPINFALL-SURFACE-MAP 1\n";

/// Extension of stored maps in the cache folder.
pub const MAP_EXTENSION: &str = "surface-map";

/// The key of the surface map of `body` (mesh, GM, spin rate and axis), recentred or not, with
/// gravity computed as `field` says.
pub fn map_key(body: &Body, recentred: bool, field: &FieldUsed) -> String {
    // The mesh and the mass as the stored fields key them (with the bound of an interpolated
    // field, or none), then what the map adds: the spin, the recentring, the method.
    let settings = InterpolationSettings {
        max_rel_error: field.max_rel_error.unwrap_or(0.0),
        ..InterpolationSettings::default()
    };
    let field_key = cache_key(
        body.shape.mesh(),
        MassSpec::GmM3S2(body.gm_m3_s2()),
        &settings,
    );
    let mut h = Sha256::new();
    h.update(MAGIC);
    h.update(field_key.as_bytes());
    h.update(body.spin.period_s.to_bits().to_le_bytes());
    for c in body.spin.axis_body.iter() {
        h.update(c.to_bits().to_le_bytes());
    }
    h.update([u8::from(recentred)]);
    h.update(field.method.as_bytes());
    // A separate global contact model: the map lies on it, and its gravity comes from the
    // gravity shape, which is keyed too (a patch does not change the map).
    if let Some(gravity_shape) = &body.gravity_shape {
        h.update(b"gravity shape");
        h.update(
            cache_key(
                gravity_shape.mesh(),
                MassSpec::GmM3S2(body.gm_m3_s2()),
                &settings,
            )
            .as_bytes(),
        );
    }
    manifest_hex(&h.finalize())
}

/// Where the map of `key` is stored in `folder`.
pub fn map_path(folder: &Path, key: &str) -> PathBuf {
    folder.join(format!("{key}.{MAP_EXTENSION}"))
}

/// The per-face arrays of a map, in file order.
fn arrays(map: &SurfaceMap) -> [&[f64]; 6] {
    [
        &map.slope_deg,
        &map.geopotential_m2_s2,
        &map.effective_gravity_m_s2,
        &map.escape_speed_normal_m_s,
        &map.escape_speed_min_m_s,
        &map.radial_sign,
    ]
}

/// The bytes of a stored map.
fn encode(map: &SurfaceMap, key: &str) -> Vec<u8> {
    let n = map.len();
    let mut out = Vec::with_capacity(MAGIC.len() + 72 + 8 * 9 * n + 32);
    out.extend_from_slice(MAGIC);
    out.extend_from_slice(key.as_bytes());
    out.extend_from_slice(&(n as u64).to_le_bytes());
    for a in &map.effective_acceleration_m_s2 {
        for c in a {
            out.extend_from_slice(&c.to_le_bytes());
        }
    }
    for values in arrays(map) {
        for v in values {
            out.extend_from_slice(&v.to_le_bytes());
        }
    }
    let digest = Sha256::digest(&out);
    out.extend_from_slice(&digest);
    out
}

/// Reads the numbers of a stored map, checking every part (`Err` says which part failed).
fn decode(bytes: &[u8], key: &str, faces: usize) -> std::result::Result<SurfaceMap, String> {
    let body_len = bytes
        .len()
        .checked_sub(32)
        .ok_or("the file is shorter than its checksum")?;
    let (content, digest) = bytes.split_at(body_len);
    if Sha256::digest(content).as_slice() != digest {
        return Err("its checksum does not match (damaged or truncated)".into());
    }
    let rest = content
        .strip_prefix(MAGIC)
        .ok_or("it is not a stored surface map of this version")?;
    let rest = rest
        .strip_prefix(key.as_bytes())
        .ok_or("it was computed for another body or settings")?;
    let (count, rest) = rest.split_at_checked(8).ok_or("it has no face count")?;
    let mut count_bytes = [0u8; 8];
    count_bytes.copy_from_slice(count);
    let n = u64::from_le_bytes(count_bytes);
    if n != faces as u64 {
        return Err(format!("it has {n} faces, the body {faces}"));
    }
    if rest.len() != 8 * 9 * faces {
        return Err(format!(
            "it holds {} bytes of values, {} expected",
            rest.len(),
            8 * 9 * faces
        ));
    }
    let mut values = rest.chunks_exact(8).map(|c| {
        let mut b = [0u8; 8];
        b.copy_from_slice(c);
        f64::from_le_bytes(b)
    });
    let mut take = |k: usize| -> Vec<f64> { values.by_ref().take(k).collect() };
    let flat = take(3 * faces);
    let effective_acceleration_m_s2 = flat.chunks_exact(3).map(|c| [c[0], c[1], c[2]]).collect();
    Ok(SurfaceMap {
        effective_acceleration_m_s2,
        slope_deg: take(faces),
        geopotential_m2_s2: take(faces),
        effective_gravity_m_s2: take(faces),
        escape_speed_normal_m_s: take(faces),
        escape_speed_min_m_s: take(faces),
        radial_sign: take(faces),
        sunlight: None,
        landing_density_per_m2: None,
    })
}

/// The stored map of `key` for a body of `faces` faces: `None` when there is none, an error
/// text when the file is there but cannot be used.
pub fn read_stored_map(
    folder: &Path,
    key: &str,
    faces: usize,
) -> Option<std::result::Result<SurfaceMap, String>> {
    let path = map_path(folder, key);
    match std::fs::read(&path) {
        Ok(bytes) => Some(decode(&bytes, key, faces)),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => None,
        Err(e) => Some(Err(format!("cannot read it: {e}"))),
    }
}

/// Stores `map` under `key` in `folder` (created if missing), replacing a file of the same key.
///
/// # Errors
/// The folder cannot be created or written.
pub fn store_map(folder: &Path, key: &str, map: &SurfaceMap) -> Result<PathBuf> {
    std::fs::create_dir_all(folder).map_err(|e| crate::WorkflowError::output(folder, &e))?;
    let path = map_path(folder, key);
    let bytes = encode(map, key);
    write_file(&OutputTarget::Path(path.clone()), |w| {
        w.write_all(&bytes).map_err(io_error)
    })?;
    Ok(path)
}

/// Where a surface map came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum MapSource {
    /// Read from the store.
    Read(PathBuf),
    /// Computed and stored there.
    Stored(PathBuf),
    /// Computed; not stored (the reason).
    NotStored(String),
}

/// The surface map of `body`: read from the store in `folder` when a valid one is there,
/// else computed (with progress and cancel) and stored. Problems with the store are passed to
/// `warn` and never stop the map.
///
/// # Errors
/// [`crate::WorkflowError::Cancelled`] when `cancel` was set.
pub fn load_or_compute_map(
    body: &Body,
    key: &str,
    folder: Option<&Path>,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
    warn: &dyn Fn(String),
) -> Result<(SurfaceMap, MapSource)> {
    let faces = body.shape.face_count();
    if let Some(folder) = folder {
        match read_stored_map(folder, key, faces) {
            Some(Ok(map)) => return Ok((map, MapSource::Read(map_path(folder, key)))),
            Some(Err(why)) => warn(format!(
                "stored surface map {} not used ({why}); computing it again",
                map_path(folder, key).display()
            )),
            None => {}
        }
    }
    let map = compute_surface_map(body, progress, cancel)?;
    let source = match folder {
        None => MapSource::NotStored("no cache folder is known".into()),
        Some(folder) => match store_map(folder, key, &map) {
            Ok(path) => MapSource::Stored(path),
            Err(e) => {
                let why = e.to_string();
                warn(format!("surface map not stored: {why}"));
                MapSource::NotStored(why)
            }
        },
    };
    Ok((map, source))
}

/// [`load_or_compute_map`] for `scenario`: the stored (or computed) map of the body, then the
/// sunlight layer of the scenario's Sun, computed afresh (none without a Sun).
///
/// # Errors
/// [`crate::WorkflowError::Cancelled`] when `cancel` was set.
pub fn load_or_compute_scenario_map(
    body: &Body,
    scenario: &spinfall_dynamics::scenario::Scenario,
    key: &str,
    folder: Option<&Path>,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
    warn: &dyn Fn(String),
) -> Result<(SurfaceMap, MapSource)> {
    let (mut map, source) = load_or_compute_map(body, key, folder, progress, cancel, warn)?;
    add_sunlight(body, scenario, &mut map, cancel)?;
    Ok((map, source))
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use std::sync::Arc;
    use std::sync::atomic::AtomicBool;

    use spinfall_dynamics::{Body, Spin, SpinAxis};
    use spinfall_gravity::{ShapeModel, generate};

    use super::*;

    fn brick(density_kg_m3: f64, period_h: f64, axis: SpinAxis) -> Body {
        let mesh = generate::box_mesh(400.0, 200.0, 100.0);
        let shape = Arc::new(ShapeModel::new(mesh).unwrap().0);
        let axis = axis.resolve(&shape).unwrap();
        let spin = Spin::from_hours(period_h, axis, 0.0).unwrap();
        Body::new("brick", shape, MassSpec::DensityKgM3(density_kg_m3), spin).unwrap()
    }

    /// A global contact model: the map lies on it and its gravity comes from the gravity
    /// shape, so two gravity shapes under one contact model (and equal GM) are two maps.
    #[test]
    fn the_key_changes_with_the_gravity_shape_under_a_contact_model() {
        use spinfall_dynamics::contact::ContactShape;
        let direct = FieldUsed::direct();
        let contact = Arc::new(
            ShapeModel::new(generate::box_mesh(400.0, 200.0, 100.0))
                .unwrap()
                .0,
        );
        let gm = brick(2000.0, 4.0, SpinAxis::PlusZ).gm_m3_s2();
        let on = |mesh| {
            let shape = Arc::new(ShapeModel::new(mesh).unwrap().0);
            let spin = Spin::from_hours(4.0, nalgebra::Vector3::z_axis(), 0.0).unwrap();
            Body::new("b", shape, MassSpec::GmM3S2(gm), spin)
                .unwrap()
                .with_contact(ContactShape::Global(contact.clone()))
        };
        let a = on(generate::box_mesh(400.0, 200.0, 100.0));
        let b = on(generate::ellipsoid(200.0, 100.0, 50.0, 2));
        assert_eq!(a.shape.mesh(), b.shape.mesh());
        assert_ne!(map_key(&a, true, &direct), map_key(&b, true, &direct));
    }

    #[test]
    fn the_key_changes_with_everything_the_map_depends_on() {
        let direct = FieldUsed::direct();
        let base = map_key(&brick(2000.0, 4.0, SpinAxis::PlusZ), true, &direct);
        assert_eq!(
            base,
            map_key(&brick(2000.0, 4.0, SpinAxis::PlusZ), true, &direct),
            "the key is deterministic"
        );
        let interpolated = FieldUsed {
            method: "interpolated".into(),
            max_rel_error: Some(1e-6),
            ..FieldUsed::direct()
        };
        let tighter = FieldUsed {
            max_rel_error: Some(1e-9),
            ..interpolated.clone()
        };
        let others = [
            map_key(&brick(2100.0, 4.0, SpinAxis::PlusZ), true, &direct),
            map_key(&brick(2000.0, 4.5, SpinAxis::PlusZ), true, &direct),
            map_key(
                &brick(2000.0, 4.0, SpinAxis::Vector([0.0, 1.0, 1.0])),
                true,
                &direct,
            ),
            map_key(&brick(2000.0, 4.0, SpinAxis::PlusZ), false, &direct),
            map_key(&brick(2000.0, 4.0, SpinAxis::PlusZ), true, &interpolated),
            map_key(&brick(2000.0, 4.0, SpinAxis::PlusZ), true, &tighter),
        ];
        for (i, k) in others.iter().enumerate() {
            assert_ne!(*k, base, "input {i} does not change the key");
        }
    }

    #[test]
    fn a_map_stored_without_the_sun_is_never_served_as_one_with_it() {
        let body = brick(2000.0, 4.0, SpinAxis::PlusZ);
        let key = map_key(&body, true, &FieldUsed::direct());
        let dir = tempfile::tempdir().unwrap();
        let cancel = AtomicBool::new(false);
        let mut scenario = spinfall_dynamics::scenario::Scenario::builtin_example();
        // First the scenario without a Sun: the map is stored, with no sunlight layer.
        let (plain, _) = load_or_compute_scenario_map(
            &body,
            &scenario,
            &key,
            Some(dir.path()),
            &|_, _| {},
            &cancel,
            &|_| {},
        )
        .unwrap();
        assert!(plain.sunlight.is_none());
        // Then the same body with a Sun (+z: the top face, z = 50 m, is lit): read from the
        // store, with the layer added.
        scenario.environment = Some(spinfall_dynamics::scenario::EnvironmentSpec {
            sun: Some(spinfall_dynamics::sunlight::Sun {
                direction_inertial: [0.0, 0.0, 1.0],
                distance_au: 1.0,
                radiation_pressure: true,
                shadow: true,
                tide: true,
            }),
            particle: None,
        });
        let (sunny, source) = load_or_compute_scenario_map(
            &body,
            &scenario,
            &key,
            Some(dir.path()),
            &|_, _| panic!("stored"),
            &cancel,
            &|_| {},
        )
        .unwrap();
        assert!(matches!(source, MapSource::Read(_)));
        let layer = sunny.sunlight.as_ref().unwrap();
        for f in 0..body.shape.face_count() {
            let up = body.shape.face_normal(f).z > 0.5;
            assert_eq!(layer.sunlit[f], if up { 1.0 } else { 0.0 }, "face {f}");
            // No grain: no radiation-pressure values.
            assert!(layer.radiation_pressure_to_gravity[f].is_nan());
        }
        // The stored file still holds the map without the Sun.
        let stored = read_stored_map(dir.path(), &key, body.shape.face_count())
            .unwrap()
            .unwrap();
        assert_eq!(stored, plain);
    }

    #[test]
    fn a_stored_map_reads_back_exactly_and_damage_is_refused() {
        let body = brick(2000.0, 4.0, SpinAxis::PlusZ);
        let key = map_key(&body, true, &FieldUsed::direct());
        let dir = tempfile::tempdir().unwrap();
        let folder = dir.path().join("made/on/demand");
        let cancel = AtomicBool::new(false);
        let warnings = std::cell::RefCell::new(Vec::new());
        let warn = |w: String| warnings.borrow_mut().push(w);
        let (first, source) =
            load_or_compute_map(&body, &key, Some(&folder), &|_, _| {}, &cancel, &warn).unwrap();
        assert!(matches!(source, MapSource::Stored(_)), "{source:?}");
        let (second, source) = load_or_compute_map(
            &body,
            &key,
            Some(&folder),
            &|_, _| panic!("a stored map must not be computed again"),
            &cancel,
            &warn,
        )
        .unwrap();
        assert!(matches!(source, MapSource::Read(_)), "{source:?}");
        assert_eq!(first, second);
        assert!(warnings.borrow().is_empty());

        // One flipped byte: refused by the checksum, computed and stored again.
        let path = map_path(&folder, &key);
        let mut bytes = std::fs::read(&path).unwrap();
        let mid = bytes.len() / 2;
        bytes[mid] ^= 0x40;
        std::fs::write(&path, &bytes).unwrap();
        assert!(matches!(
            read_stored_map(&folder, &key, body.shape.face_count()),
            Some(Err(ref why)) if why.contains("checksum")
        ));
        let (third, source) =
            load_or_compute_map(&body, &key, Some(&folder), &|_, _| {}, &cancel, &warn).unwrap();
        assert_eq!(third, first);
        assert!(matches!(source, MapSource::Stored(_)));
        assert_eq!(warnings.borrow().len(), 1, "{:?}", warnings.borrow());
        // Another key or face count is refused by name.
        let other = "0".repeat(64);
        std::fs::copy(&path, map_path(&folder, &other)).unwrap();
        assert!(matches!(
            read_stored_map(&folder, &other, body.shape.face_count()),
            Some(Err(ref why)) if why.contains("another body")
        ));
        assert!(matches!(
            read_stored_map(&folder, &key, 7),
            Some(Err(ref why)) if why.contains("faces")
        ));
        assert!(read_stored_map(&folder, &"f".repeat(64), 12).is_none());
    }
}
