//! Storing an interpolated field as bytes and reading it back, with every damage detected.
//!
//! Layout (little-endian): the magic `SPFIELD` and a format byte, the 64 hexadecimal digits of
//! the key the field was built for (see [`cache_key`]), the payload length (u64), the payload,
//! and the SHA-256 of the payload. A reader refuses a file whose magic, key, length or digest
//! does not match: a truncated, damaged or stale file is never trusted (the caller rebuilds).
//! The mesh-derived parts (face data, the exact field) are not stored; the reader rebuilds them
//! from the mesh, which the key pins.

use std::io::{Read, Write};
use std::sync::Arc;

use sha2::{Digest, Sha256};

use super::face_set::FaceGeometry;
use super::fit::Space;
use super::{BuildStats, InterpolatedGravity, InterpolationSettings, Node};
use crate::error::{GravityError, Result};
use crate::field::exterior::Exterior;
use crate::field::{MassSpec, PolyhedronGravity};
use crate::mesh::Mesh;

const MAGIC: &[u8; 8] = b"SPFIELD\x01";

/// Version of the field's construction: part of every key, so a build of another version is
/// never mistaken for this one's.
const BUILD_VERSION: &str = "interpolated-field-2";

/// The key of an interpolated field: SHA-256 (hexadecimal) of everything its values depend on
/// (the mesh's coordinates and faces, the mass, the settings and the build version).
pub fn cache_key(mesh: &Mesh, mass: MassSpec, settings: &InterpolationSettings) -> String {
    let mut h = Sha256::new();
    h.update(BUILD_VERSION.as_bytes());
    h.update((mesh.vertices_m.len() as u64).to_le_bytes());
    for v in &mesh.vertices_m {
        for c in [v.x, v.y, v.z] {
            h.update(c.to_bits().to_le_bytes());
        }
    }
    h.update((mesh.faces.len() as u64).to_le_bytes());
    for f in &mesh.faces {
        for i in f {
            h.update(i.to_le_bytes());
        }
    }
    let (tag, value) = match mass {
        MassSpec::DensityKgM3(v) => (0u8, v),
        MassSpec::MassKg(v) => (1, v),
        MassSpec::GmM3S2(v) => (2, v),
    };
    h.update([tag]);
    h.update(value.to_bits().to_le_bytes());
    h.update(settings.max_rel_error.to_bits().to_le_bytes());
    h.update((settings.leaf_near_faces as u64).to_le_bytes());
    hex(&h.finalize())
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

struct Out(Vec<u8>);

impl Out {
    fn u8(&mut self, v: u8) {
        self.0.push(v);
    }
    fn u32(&mut self, v: u32) {
        self.0.extend_from_slice(&v.to_le_bytes());
    }
    fn u64(&mut self, v: u64) {
        self.0.extend_from_slice(&v.to_le_bytes());
    }
    fn f64(&mut self, v: f64) {
        self.0.extend_from_slice(&v.to_le_bytes());
    }
    fn f64s(&mut self, v: &[f64]) {
        self.u64(v.len() as u64);
        for x in v {
            self.f64(*x);
        }
    }
    fn u32s(&mut self, v: &[u32]) {
        self.u64(v.len() as u64);
        for x in v {
            self.u32(*x);
        }
    }
    fn bytes(&mut self, v: &[u8]) {
        self.u64(v.len() as u64);
        self.0.extend_from_slice(v);
    }
}

struct In<'a> {
    data: &'a [u8],
    at: usize,
}

fn damaged(what: &str) -> GravityError {
    GravityError::Stored(format!("the stored field is damaged ({what})"))
}

impl<'a> In<'a> {
    fn take(&mut self, n: usize) -> Result<&'a [u8]> {
        let end = self.at.checked_add(n).filter(|&e| e <= self.data.len());
        let end = end.ok_or_else(|| damaged("it ends early"))?;
        let s = &self.data[self.at..end];
        self.at = end;
        Ok(s)
    }
    fn u8(&mut self) -> Result<u8> {
        Ok(self.take(1)?[0])
    }
    fn u32(&mut self) -> Result<u32> {
        let b = self.take(4)?;
        Ok(u32::from_le_bytes([b[0], b[1], b[2], b[3]]))
    }
    fn u64(&mut self) -> Result<u64> {
        let b = self.take(8)?;
        let mut a = [0u8; 8];
        a.copy_from_slice(b);
        Ok(u64::from_le_bytes(a))
    }
    fn f64(&mut self) -> Result<f64> {
        Ok(f64::from_bits(self.u64()?))
    }
    /// A length that fits in what is left (`unit` bytes per element).
    fn len(&mut self, unit: usize) -> Result<usize> {
        let n = self.u64()?;
        let left = (self.data.len() - self.at) as u64;
        if n.checked_mul(unit as u64).is_none_or(|b| b > left) {
            return Err(damaged("a length beyond the end"));
        }
        Ok(n as usize)
    }
    fn f64s(&mut self) -> Result<Vec<f64>> {
        let n = self.len(8)?;
        (0..n).map(|_| self.f64()).collect()
    }
    fn u32s(&mut self) -> Result<Vec<u32>> {
        let n = self.len(4)?;
        (0..n).map(|_| self.u32()).collect()
    }
    fn bytes(&mut self) -> Result<Vec<u8>> {
        let n = self.len(1)?;
        Ok(self.take(n)?.to_vec())
    }
}

impl InterpolatedGravity {
    /// Writes the field for the key `key` (see [`cache_key`]).
    pub fn write_to(&self, w: &mut dyn Write, key: &str) -> Result<()> {
        let mut p = Out(Vec::with_capacity(
            self.coefs.len() * 8 + self.near_faces.len() * 4,
        ));
        p.f64(self.settings.max_rel_error);
        p.u64(self.settings.max_memory_bytes as u64);
        p.u64(self.settings.leaf_near_faces as u64);
        let stats = serde_json::to_vec(&self.stats).map_err(|e| {
            GravityError::Stored(format!("cannot encode the build statistics: {e}"))
        })?;
        p.bytes(&stats);
        for c in self.root_center {
            p.f64(c);
        }
        p.f64(self.root_half_m);
        p.f64(self.switch_radius_m);
        p.u64(self.nodes.len() as u64);
        for n in &self.nodes {
            match *n {
                Node::Branch { first_child } => {
                    p.u8(0);
                    p.u32(first_child);
                }
                Node::Leaf {
                    coef,
                    space,
                    degree,
                    near,
                    near_len,
                } => {
                    p.u8(1);
                    p.u32(coef);
                    p.u8(match space {
                        Space::Biharmonic => 0,
                        Space::Harmonic => 1,
                    });
                    p.u8(degree);
                    p.u32(near);
                    p.u32(near_len);
                }
                Node::Exact => p.u8(2),
            }
        }
        p.f64s(&self.coefs);
        p.u32s(&self.near_faces);
        let (degree, ref_radius_m, c, s) = self.exterior.parts();
        p.u64(degree as u64);
        p.f64(ref_radius_m);
        p.f64s(c);
        p.f64s(s);
        let digest = Sha256::digest(&p.0);
        let io = |e: std::io::Error| GravityError::Stored(format!("cannot write the field: {e}"));
        w.write_all(MAGIC).map_err(io)?;
        w.write_all(key.as_bytes()).map_err(io)?;
        w.write_all(&(p.0.len() as u64).to_le_bytes()).map_err(io)?;
        w.write_all(&p.0).map_err(io)?;
        w.write_all(&digest).map_err(io)?;
        Ok(())
    }

    /// Reads a field written by [`Self::write_to`] for `mesh` and `mass` with `settings`,
    /// checking that it was stored whole, undamaged, and for exactly these inputs.
    pub fn read_from(
        r: &mut dyn Read,
        mesh: &Mesh,
        mass: MassSpec,
        settings: &InterpolationSettings,
    ) -> Result<InterpolatedGravity> {
        let mut all = Vec::new();
        r.read_to_end(&mut all)
            .map_err(|e| GravityError::Stored(format!("cannot read the stored field: {e}")))?;
        let key = cache_key(mesh, mass, settings);
        let mut i = In { data: &all, at: 0 };
        if i.take(8)? != MAGIC {
            return Err(GravityError::Stored(
                "not a stored field of this version (wrong magic bytes)".into(),
            ));
        }
        if i.take(64)? != key.as_bytes() {
            return Err(GravityError::Stored(
                "the stored field was built for another mesh, mass or bound (stale)".into(),
            ));
        }
        let len = i.u64()? as usize;
        let payload = i.take(len)?;
        let digest = i.take(32)?;
        if Sha256::digest(payload).as_slice() != digest {
            return Err(damaged("its checksum does not match"));
        }
        let mut p = In {
            data: payload,
            at: 0,
        };
        let stored = InterpolationSettings {
            max_rel_error: p.f64()?,
            max_memory_bytes: p.u64()? as usize,
            leaf_near_faces: p.u64()? as usize,
        };
        let stats: BuildStats = serde_json::from_slice(&p.bytes()?)
            .map_err(|e| damaged(&format!("build statistics: {e}")))?;
        let root_center = [p.f64()?, p.f64()?, p.f64()?];
        let root_half_m = p.f64()?;
        let switch_radius_m = p.f64()?;
        let n_nodes = p.len(1)?;
        let mut nodes = Vec::with_capacity(n_nodes);
        for _ in 0..n_nodes {
            nodes.push(match p.u8()? {
                0 => Node::Branch {
                    first_child: p.u32()?,
                },
                1 => Node::Leaf {
                    coef: p.u32()?,
                    space: match p.u8()? {
                        0 => Space::Biharmonic,
                        1 => Space::Harmonic,
                        _ => return Err(damaged("an unknown fit space")),
                    },
                    degree: p.u8()?,
                    near: p.u32()?,
                    near_len: p.u32()?,
                },
                2 => Node::Exact,
                _ => return Err(damaged("an unknown cell kind")),
            });
        }
        let coefs = p.f64s()?;
        let near_faces = p.u32s()?;
        let degree = p.u64()? as usize;
        let ref_radius_m = p.f64()?;
        let c = p.f64s()?;
        let s = p.f64s()?;
        if degree > 64 {
            return Err(damaged("an exterior degree beyond 64"));
        }
        let exterior = Exterior::from_parts(degree, ref_radius_m, c, s)
            .ok_or_else(|| damaged("exterior expansion"))?;
        let exact = Arc::new(PolyhedronGravity::from_mesh(mesh, mass)?);
        let geometry = Arc::new(FaceGeometry::new(mesh));
        let field = InterpolatedGravity {
            exact,
            geometry,
            root_center,
            root_half_m,
            nodes,
            coefs,
            near_faces,
            exterior,
            switch_radius_m,
            settings: InterpolationSettings {
                max_memory_bytes: settings.max_memory_bytes,
                ..stored
            },
            stats,
        };
        field.check_structure()?;
        Ok(field)
    }

    /// Every index in range, so evaluation cannot go out of bounds whatever the bytes were.
    fn check_structure(&self) -> Result<()> {
        let nf = self.geometry.face_count() as u64;
        if self.nodes.is_empty() {
            return Err(damaged("no cells"));
        }
        for n in &self.nodes {
            match *n {
                Node::Branch { first_child } => {
                    if first_child as usize + 8 > self.nodes.len() || first_child == 0 {
                        return Err(damaged("a child index out of range"));
                    }
                }
                Node::Leaf {
                    coef,
                    space,
                    degree,
                    near,
                    near_len,
                } => {
                    if degree as usize > space.max_degree() {
                        return Err(damaged("a degree out of range"));
                    }
                    let len = if degree == 0 {
                        1
                    } else {
                        super::fit::Solver::get(space, degree as usize)
                            .layout()
                            .map_or(1, |l| l.len())
                    };
                    if coef as usize + len > self.coefs.len()
                        || near as u64 + near_len as u64 > self.near_faces.len() as u64
                    {
                        return Err(damaged("a cell's data out of range"));
                    }
                }
                Node::Exact => {}
            }
        }
        if self.near_faces.iter().any(|&f| f as u64 >= nf) {
            return Err(damaged("a face index out of range"));
        }
        if !(self.root_half_m > 0.0 && self.switch_radius_m > 0.0) {
            return Err(damaged("the octree's size"));
        }
        Ok(())
    }
}
