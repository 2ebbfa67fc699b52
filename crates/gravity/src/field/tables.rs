//! Precomputed per-face and per-edge quantities of the polyhedron, stored as structure of arrays.
//!
//! Face dyads `F_f = n_f n_f^T` are kept as the unit normals `n_f`; the edge dyads
//! `E_e = n_A n_A12^T + n_B n_B21^T` (Werner & Scheeres 1997) are symmetric, so six components
//! are kept for each. All arrays
//! are padded to a multiple of [`PAD`] with inert entries (zero dyads, vertex index 0) so the
//! vector kernels need no remainder loop.

use std::collections::HashMap;

use nalgebra::{Matrix3, Point3, Vector3};

use crate::error::{GravityError, Result};
use crate::mesh::Mesh;

/// Padding of the face and edge tables: a multiple of every kernel's width (4 or 8 lanes).
pub(crate) const PAD: usize = 8;

/// Six components of a symmetric 3x3 matrix, one `Vec` each: xx, xy, xz, yy, yz, zz.
#[derive(Debug, Clone, Default)]
pub(crate) struct SymSoa {
    pub xx: Vec<f64>,
    pub xy: Vec<f64>,
    pub xz: Vec<f64>,
    pub yy: Vec<f64>,
    pub yz: Vec<f64>,
    pub zz: Vec<f64>,
}

impl SymSoa {
    fn push(&mut self, m: &Matrix3<f64>) {
        // Average the off-diagonal pairs: the dyads are symmetric up to rounding.
        self.xx.push(m[(0, 0)]);
        self.xy.push(0.5 * (m[(0, 1)] + m[(1, 0)]));
        self.xz.push(0.5 * (m[(0, 2)] + m[(2, 0)]));
        self.yy.push(m[(1, 1)]);
        self.yz.push(0.5 * (m[(1, 2)] + m[(2, 1)]));
        self.zz.push(m[(2, 2)]);
    }

    fn heap_bytes(&self) -> usize {
        6 * self.xx.capacity() * std::mem::size_of::<f64>()
    }

    /// The six columns, in the order of [`SymSoa::get`].
    fn columns_mut(&mut self) -> [&mut Vec<f64>; 6] {
        [
            &mut self.xx,
            &mut self.xy,
            &mut self.xz,
            &mut self.yy,
            &mut self.yz,
            &mut self.zz,
        ]
    }

    /// Pushes a matrix stored as by [`SymSoa::get`] (already symmetric).
    fn push_stored(&mut self, m: [f64; 6]) {
        for (column, x) in self.columns_mut().into_iter().zip(m) {
            column.push(x);
        }
    }

    /// The matrix at `i`.
    pub fn get(&self, i: usize) -> [f64; 6] {
        [
            self.xx[i], self.xy[i], self.xz[i], self.yy[i], self.yz[i], self.zz[i],
        ]
    }
}

/// Everything the field kernels read.
#[derive(Debug, Clone)]
pub(crate) struct Tables {
    /// Vertex coordinates, metres (one `Vec` per axis, not padded).
    pub vx: Vec<f64>,
    pub vy: Vec<f64>,
    pub vz: Vec<f64>,
    /// Real number of faces (before padding).
    pub face_count: usize,
    /// Face corner indices (padded with 0).
    pub f0: Vec<u32>,
    pub f1: Vec<u32>,
    pub f2: Vec<u32>,
    /// Face unit normals (padded with zeros); the face dyad is `F_f = n n^T`, so
    /// `F_f r = n (n . r)` needs only the normal.
    pub nx: Vec<f64>,
    pub ny: Vec<f64>,
    pub nz: Vec<f64>,
    /// Real number of undirected edges.
    pub edge_count: usize,
    /// Edge end indices (padded with 0).
    pub e0: Vec<u32>,
    pub e1: Vec<u32>,
    /// Edge lengths, metres (padded with 1).
    pub edge_len_m: Vec<f64>,
    /// Edge dyads (padded with zeros).
    pub edge_dyad: SymSoa,
    /// The face each edge was taken from (its end vertices are that face's corners; not
    /// padded). Edges are stored in increasing order of it. Empty in pieces.
    pub edge_owner: Vec<u32>,
    /// Face sets only (empty otherwise): the edges of the set with one of their two faces in
    /// it, each as (from, to) in the direction that face runs along it, padded with (0, 0).
    /// The kernel's `OPEN` terms are a line integral along them (see `kernel`).
    pub b0: Vec<u32>,
    pub b1: Vec<u32>,
}

/// The low 21 bits of `v` spread to every third bit (bit `k` to bit `3k`), for Morton codes.
fn spread_bits(v: u64) -> u64 {
    let mut x = v & 0x1f_ffff;
    x = (x | x << 32) & 0x001f_0000_0000_ffff;
    x = (x | x << 16) & 0x001f_0000_ff00_00ff;
    x = (x | x << 8) & 0x100f_00f0_0f00_f00f;
    x = (x | x << 4) & 0x10c3_0c30_c30c_30c3;
    x = (x | x << 2) & 0x1249_2492_4924_9249;
    x
}

/// The bounding box of `points`: `(low, span)` per axis (a zero span taken as the smallest
/// positive number).
pub(crate) fn axis_bounds(points: impl Iterator<Item = [f64; 3]>) -> [(f64, f64); 3] {
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    for p in points {
        for a in 0..3 {
            lo[a] = lo[a].min(p[a]);
            hi[a] = hi[a].max(p[a]);
        }
    }
    std::array::from_fn(|a| (lo[a], (hi[a] - lo[a]).max(f64::MIN_POSITIVE)))
}

/// Indices of `points` sorted along a Morton (Z-order) curve, 21 bits per axis over the box
/// `axes` (see [`axis_bounds`]; ties by index, so the order is reproducible).
pub(crate) fn morton_order(points: &[[f64; 3]], axes: [(f64, f64); 3]) -> Vec<u32> {
    let mut keyed: Vec<(u64, u32)> = points
        .iter()
        .enumerate()
        .map(|(i, p)| {
            let mut code = 0u64;
            for (axis, &(lo, span)) in axes.iter().enumerate() {
                let cell = (((p[axis] - lo) / span) * 2_097_151.0).clamp(0.0, 2_097_151.0) as u64;
                code |= spread_bits(cell) << axis;
            }
            (code, i as u32)
        })
        .collect();
    keyed.sort_unstable();
    keyed.into_iter().map(|(_, i)| i).collect()
}

/// Volume and centre of mass of the homogeneous polyhedron (signed tetrahedra from the origin).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Bulk {
    pub volume_m3: f64,
    pub center_of_mass_m: Point3<f64>,
}

fn padded(n: usize) -> usize {
    n.div_ceil(PAD) * PAD
}

impl Tables {
    /// Checks the mesh (indices in range, non-degenerate faces, every undirected edge shared by
    /// exactly two faces traversing it in opposite directions) and precomputes the tables.
    pub fn build(mesh: &Mesh) -> Result<(Tables, Bulk)> {
        let nv = mesh.vertices_m.len();
        let nf = mesh.faces.len();
        if nf < 4 {
            return Err(GravityError::InvalidMesh(format!(
                "a closed polyhedron needs at least 4 faces, the mesh has {nf}"
            )));
        }
        if let Some((i, v)) = mesh
            .vertices_m
            .iter()
            .enumerate()
            .find(|(_, v)| !(v.x.is_finite() && v.y.is_finite() && v.z.is_finite()))
        {
            return Err(GravityError::InvalidMesh(format!(
                "vertex {i} has a non-finite coordinate ({}, {}, {})",
                v.x, v.y, v.z
            )));
        }
        for (f, face) in mesh.faces.iter().enumerate() {
            for &k in face {
                if k as usize >= nv {
                    return Err(GravityError::InvalidMesh(format!(
                        "face {f} references vertex {k} but the mesh has {nv} vertices"
                    )));
                }
            }
        }

        let mut normals = Vec::with_capacity(nf);
        let mut volume6 = 0.0;
        let mut com_acc = Vector3::zeros();
        // Reference point inside the bounding box keeps the signed-volume sums well conditioned.
        let origin = mesh.vertices_m[mesh.faces[0][0] as usize].coords;
        for (f, _) in mesh.faces.iter().enumerate() {
            let [a, b, c] = mesh.triangle(f);
            let cross = (b - a).cross(&(c - a));
            let norm = cross.norm();
            let scale = (b - a).norm().max((c - a).norm()).max((c - b).norm());
            if norm.is_nan() || norm <= 1e-14 * scale * scale {
                return Err(GravityError::InvalidMesh(format!(
                    "face {f} is degenerate (zero area)"
                )));
            }
            normals.push(cross / norm);
            let (a, b, c) = (a.coords - origin, b.coords - origin, c.coords - origin);
            let v6 = a.dot(&b.cross(&c));
            volume6 += v6;
            com_acc += v6 * (a + b + c);
        }
        let volume_m3 = volume6 / 6.0;
        if volume_m3.is_nan() || volume_m3 <= 0.0 {
            return Err(GravityError::InvalidMesh(format!(
                "the enclosed volume is {volume_m3} m^3; faces must be ordered counter-clockwise \
                 seen from outside (check face 0)"
            )));
        }
        let center_of_mass_m = Point3::from(origin + com_acc / (4.0 * volume6));

        // Directed edge (from, to) -> face. Each undirected edge needs (i, j) in one face and
        // (j, i) in another.
        let mut directed: HashMap<(u32, u32), u32> = HashMap::with_capacity(3 * nf);
        for (f, face) in mesh.faces.iter().enumerate() {
            for k in 0..3 {
                let (i, j) = (face[k], face[(k + 1) % 3]);
                if directed.insert((i, j), f as u32).is_some() {
                    return Err(GravityError::InvalidMesh(format!(
                        "edge {i}-{j} is traversed in the same direction by two faces \
                         (one is face {f}); the mesh is not consistently oriented or not manifold"
                    )));
                }
            }
        }

        let np = padded(nf);
        let mut t = Tables {
            vx: mesh.vertices_m.iter().map(|v| v.x).collect(),
            vy: mesh.vertices_m.iter().map(|v| v.y).collect(),
            vz: mesh.vertices_m.iter().map(|v| v.z).collect(),
            face_count: nf,
            f0: Vec::with_capacity(np),
            f1: Vec::with_capacity(np),
            f2: Vec::with_capacity(np),
            nx: Vec::with_capacity(np),
            ny: Vec::with_capacity(np),
            nz: Vec::with_capacity(np),
            edge_count: 0,
            e0: Vec::new(),
            e1: Vec::new(),
            edge_len_m: Vec::new(),
            edge_dyad: SymSoa::default(),
            edge_owner: Vec::with_capacity(3 * nf / 2),
            b0: Vec::new(),
            b1: Vec::new(),
        };
        for (f, face) in mesh.faces.iter().enumerate() {
            t.f0.push(face[0]);
            t.f1.push(face[1]);
            t.f2.push(face[2]);
            let n = normals[f];
            t.nx.push(n.x);
            t.ny.push(n.y);
            t.nz.push(n.z);
        }
        while t.f0.len() < np {
            t.f0.push(0);
            t.f1.push(0);
            t.f2.push(0);
            t.nx.push(0.0);
            t.ny.push(0.0);
            t.nz.push(0.0);
        }

        let ne = 3 * nf / 2;
        let npe = padded(ne);
        t.e0.reserve(npe);
        t.e1.reserve(npe);
        t.edge_len_m.reserve(npe);
        let vert = |k: u32| mesh.vertices_m[k as usize];
        for (f, face) in mesh.faces.iter().enumerate() {
            for k in 0..3 {
                let (i, j) = (face[k], face[(k + 1) % 3]);
                let Some(&g) = directed.get(&(j, i)) else {
                    return Err(GravityError::InvalidMesh(format!(
                        "edge {i}-{j} of face {f} has no neighbouring face traversing it as \
                         {j}-{i}; the mesh must be closed and consistently oriented"
                    )));
                };
                if i > j {
                    continue; // each undirected edge once, from the face that has it as i < j
                }
                let (pi, pj) = (vert(i), vert(j));
                let edge = pj - pi;
                let len = edge.norm();
                let dir = edge / len;
                let n_a = normals[f];
                let n_b = normals[g as usize];
                // Edge normals lie in each face's plane and point out of that face. Face A
                // traverses the edge as i->j, so its outward edge normal is dir x n_A; face B
                // traverses it as j->i, so its edge normal is -dir x n_B.
                let n_a12 = dir.cross(&n_a);
                let n_b21 = -dir.cross(&n_b);
                let e = n_a * n_a12.transpose() + n_b * n_b21.transpose();
                t.e0.push(i);
                t.e1.push(j);
                t.edge_len_m.push(len);
                t.edge_dyad.push(&e);
                t.edge_owner.push(f as u32);
            }
        }
        t.edge_count = t.e0.len();
        if t.edge_count != ne {
            return Err(GravityError::InvalidMesh(format!(
                "expected {ne} edges for {nf} closed triangles, found {}",
                t.edge_count
            )));
        }
        while t.e0.len() < npe {
            t.e0.push(0);
            t.e1.push(0);
            t.edge_len_m.push(1.0);
            t.edge_dyad.push(&Matrix3::zeros());
        }
        Ok((
            t,
            Bulk {
                volume_m3,
                center_of_mass_m,
            },
        ))
    }

    /// Tables for an open set of faces of a mesh: their corners as local vertices, every edge
    /// of those faces once, with the symmetric part of `sum over the set's faces on it of
    /// n_f nu_fe^T` as its dyad (the Werner–Scheeres dyad where both faces are in the set).
    /// The kernel's sums over these tables are the set's potential and its gradient in the
    /// single-layer split (see `interp::face_set`); its tensor needs the `OPEN` terms.
    ///
    /// Local vertices and edges are numbered in order of first appearance in `faces`. The
    /// mesh's edge numbering ([`FaceGeometry::face_edges`]) and a per-thread table of slots
    /// (indexed by mesh vertex and edge, cleared after use) find repeated ones without hashing,
    /// so the tables cost a small fraction of one point's sums per face (the interpolated
    /// field's build makes them for every cell's rings).
    ///
    /// [`FaceGeometry::face_edges`]: super::interp::face_set::FaceGeometry::face_edges
    pub fn from_face_set(g: &super::interp::face_set::FaceGeometry, faces: &[u32]) -> Tables {
        thread_local! {
            /// Local index + 1 of each mesh vertex and edge in the set being built (0: absent).
            static SLOTS: std::cell::RefCell<(Vec<u32>, Vec<u32>)> =
                const { std::cell::RefCell::new((Vec::new(), Vec::new())) };
        }
        let (face_edges, mesh_edges) = g.face_edges();
        SLOTS.with_borrow_mut(|(vertex_slot, edge_slot)| {
            if vertex_slot.len() < g.vertices.len() {
                vertex_slot.resize(g.vertices.len(), 0);
            }
            if edge_slot.len() < mesh_edges {
                edge_slot.resize(mesh_edges, 0);
            }
            let np = padded(faces.len());
            let mut global_vertices: Vec<u32> = Vec::with_capacity(faces.len() / 2 + 8);
            let mut vx = Vec::with_capacity(faces.len() / 2 + 8);
            let mut vy = Vec::with_capacity(faces.len() / 2 + 8);
            let mut vz = Vec::with_capacity(faces.len() / 2 + 8);
            let mut f0 = Vec::with_capacity(np);
            let mut f1 = Vec::with_capacity(np);
            let mut f2 = Vec::with_capacity(np);
            let mut nx = Vec::with_capacity(np);
            let mut ny = Vec::with_capacity(np);
            let mut nz = Vec::with_capacity(np);
            let ne_max = padded(3 * faces.len() / 2 + faces.len() / 4 + 8);
            let mut global_edges: Vec<u32> = Vec::with_capacity(ne_max);
            let mut e0 = Vec::with_capacity(ne_max);
            let mut e1 = Vec::with_capacity(ne_max);
            let mut edge_len_m = Vec::with_capacity(ne_max);
            let mut dyads: Vec<Matrix3<f64>> = Vec::with_capacity(ne_max);
            // Faces of the set on each edge, and the direction the first runs along it.
            let mut on_edge: Vec<(u8, u32, u32)> = Vec::with_capacity(ne_max);
            for &f in faces {
                let fi = f as usize;
                let l = g.faces[fi].map(|v| {
                    let slot = &mut vertex_slot[v as usize];
                    if *slot == 0 {
                        let p = g.vertices[v as usize];
                        vx.push(p[0]);
                        vy.push(p[1]);
                        vz.push(p[2]);
                        global_vertices.push(v);
                        *slot = global_vertices.len() as u32;
                    }
                    *slot - 1
                });
                f0.push(l[0]);
                f1.push(l[1]);
                f2.push(l[2]);
                let n = g.normal(fi);
                nx.push(n[0]);
                ny.push(n[1]);
                nz.push(n[2]);
                let nv = Vector3::new(n[0], n[1], n[2]);
                for k in 0..3 {
                    let e = face_edges[fi][k];
                    let slot = &mut edge_slot[e as usize];
                    let (a, b) = (l[k], l[(k + 1) % 3]);
                    if *slot == 0 {
                        e0.push(a.min(b));
                        e1.push(a.max(b));
                        edge_len_m.push(g.edge_len_m(fi, k));
                        dyads.push(Matrix3::zeros());
                        on_edge.push((0, a, b));
                        global_edges.push(e);
                        *slot = global_edges.len() as u32;
                    }
                    let i = *slot as usize - 1;
                    on_edge[i].0 += 1;
                    let nu = g.edge_normal(fi, k);
                    dyads[i] += nv * Vector3::new(nu[0], nu[1], nu[2]).transpose();
                }
            }
            for &v in &global_vertices {
                vertex_slot[v as usize] = 0;
            }
            for &e in &global_edges {
                edge_slot[e as usize] = 0;
            }
            let face_count = f0.len();
            let edge_count = e0.len();
            let mut t = Tables {
                vx,
                vy,
                vz,
                face_count,
                f0,
                f1,
                f2,
                nx,
                ny,
                nz,
                edge_count,
                e0,
                e1,
                edge_len_m,
                edge_dyad: SymSoa::default(),
                edge_owner: Vec::new(),
                b0: Vec::new(),
                b1: Vec::new(),
            };
            for &(count, a, b) in &on_edge {
                if count == 1 {
                    t.b0.push(a);
                    t.b1.push(b);
                }
            }
            while !t.b0.len().is_multiple_of(PAD) {
                t.b0.push(0);
                t.b1.push(0);
            }
            for d in t.edge_dyad.columns_mut() {
                d.reserve(padded(edge_count));
            }
            for d in &dyads {
                t.edge_dyad.push(d);
            }
            t.pad_only();
            t
        })
    }

    /// The mesh cut into pieces of `faces_per_piece` faces close together (consecutive along a
    /// Morton curve through the face centroids), each a self-contained table set with its own
    /// (local) vertices: every edge goes with the face it was taken from, whose corners it
    /// joins. Vertices shared by pieces are repeated. Summing the face and edge terms over all
    /// pieces gives the whole mesh's sums; a piece is small enough that its tables and
    /// per-vertex scratch stay in the core's cache while several field points are evaluated
    /// over it, and compact enough (whatever the face order of the file) that few vertices
    /// repeat.
    pub fn pieces(&self, faces_per_piece: usize) -> Vec<Tables> {
        let faces_per_piece = faces_per_piece.max(1);
        let order = self.spatial_face_order();
        let mut piece_of = vec![0u32; self.face_count];
        for (rank, &f) in order.iter().enumerate() {
            piece_of[f as usize] = (rank / faces_per_piece) as u32;
        }
        let mut edges_of: Vec<Vec<u32>> = vec![Vec::new(); order.len().div_ceil(faces_per_piece)];
        for e in 0..self.edge_count {
            edges_of[piece_of[self.edge_owner[e] as usize] as usize].push(e as u32);
        }
        let mut local = vec![u32::MAX; self.vx.len()];
        let mut out = Vec::with_capacity(edges_of.len());
        for (faces, edges) in order.chunks(faces_per_piece).zip(&edges_of) {
            let mut global: Vec<u32> = Vec::new();
            let mut map = |g: u32, global: &mut Vec<u32>| -> u32 {
                let slot = &mut local[g as usize];
                if *slot == u32::MAX {
                    *slot = global.len() as u32;
                    global.push(g);
                }
                *slot
            };
            let np = padded(faces.len());
            let mut t = Tables {
                vx: Vec::new(),
                vy: Vec::new(),
                vz: Vec::new(),
                face_count: faces.len(),
                f0: Vec::with_capacity(np),
                f1: Vec::with_capacity(np),
                f2: Vec::with_capacity(np),
                nx: Vec::with_capacity(np),
                ny: Vec::with_capacity(np),
                nz: Vec::with_capacity(np),
                edge_count: 0,
                e0: Vec::new(),
                e1: Vec::new(),
                edge_len_m: Vec::new(),
                edge_dyad: SymSoa::default(),
                edge_owner: Vec::new(),
                b0: Vec::new(),
                b1: Vec::new(),
            };
            for &f in faces {
                let f = f as usize;
                t.f0.push(map(self.f0[f], &mut global));
                t.f1.push(map(self.f1[f], &mut global));
                t.f2.push(map(self.f2[f], &mut global));
                t.nx.push(self.nx[f]);
                t.ny.push(self.ny[f]);
                t.nz.push(self.nz[f]);
            }
            for &e in edges {
                let e = e as usize;
                t.e0.push(map(self.e0[e], &mut global));
                t.e1.push(map(self.e1[e], &mut global));
                t.edge_len_m.push(self.edge_len_m[e]);
                t.edge_dyad.push_stored(self.edge_dyad.get(e));
            }
            t.edge_count = t.e0.len();
            for &g in &global {
                t.vx.push(self.vx[g as usize]);
                t.vy.push(self.vy[g as usize]);
                t.vz.push(self.vz[g as usize]);
                local[g as usize] = u32::MAX;
            }
            t.pad();
            out.push(t);
        }
        out
    }

    /// Face indices sorted along a Morton (Z-order) curve through the face centroids over the
    /// vertices' bounding box (see [`morton_order`]).
    fn spatial_face_order(&self) -> Vec<u32> {
        let centroids: Vec<[f64; 3]> = (0..self.face_count)
            .map(|f| {
                let corners = [self.f0[f], self.f1[f], self.f2[f]].map(|i| i as usize);
                let v = [&self.vx, &self.vy, &self.vz];
                std::array::from_fn(|a| corners.iter().map(|&i| v[a][i]).sum::<f64>() / 3.0)
            })
            .collect();
        let vertices = (0..self.vx.len()).map(|i| [self.vx[i], self.vy[i], self.vz[i]]);
        morton_order(&centroids, axis_bounds(vertices))
    }

    /// Pads faces and edges to a multiple of [`PAD`] with inert entries and frees spare
    /// capacity.
    fn pad(&mut self) {
        self.pad_only();
        self.shrink();
    }

    /// Pads faces and edges to a multiple of [`PAD`] with inert entries.
    fn pad_only(&mut self) {
        while !self.f0.len().is_multiple_of(PAD) {
            self.f0.push(0);
            self.f1.push(0);
            self.f2.push(0);
            self.nx.push(0.0);
            self.ny.push(0.0);
            self.nz.push(0.0);
        }
        while !self.e0.len().is_multiple_of(PAD) {
            self.e0.push(0);
            self.e1.push(0);
            self.edge_len_m.push(1.0);
            self.edge_dyad.push(&Matrix3::zeros());
        }
    }

    /// Frees spare capacity (tables kept for the life of a field).
    fn shrink(&mut self) {
        for v in [
            &mut self.vx,
            &mut self.vy,
            &mut self.vz,
            &mut self.nx,
            &mut self.ny,
        ]
        .into_iter()
        .chain([&mut self.nz, &mut self.edge_len_m])
        {
            v.shrink_to_fit();
        }
        for v in [
            &mut self.f0,
            &mut self.f1,
            &mut self.f2,
            &mut self.e0,
            &mut self.e1,
        ] {
            v.shrink_to_fit();
        }
        let d = &mut self.edge_dyad;
        for v in [
            &mut d.xx, &mut d.xy, &mut d.xz, &mut d.yy, &mut d.yz, &mut d.zz,
        ] {
            v.shrink_to_fit();
        }
    }

    /// Approximate heap use, bytes.
    pub fn heap_bytes(&self) -> usize {
        let f64s = std::mem::size_of::<f64>();
        let u32s = std::mem::size_of::<u32>();
        3 * self.vx.capacity() * f64s
            + 3 * self.f0.capacity() * u32s
            + 3 * self.nx.capacity() * f64s
            + 2 * self.e0.capacity() * u32s
            + self.edge_len_m.capacity() * f64s
            + self.edge_dyad.heap_bytes()
            + self.edge_owner.capacity() * u32s
            + (self.b0.capacity() + self.b1.capacity()) * u32s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::direct;

    #[test]
    fn pieces_cover_every_face_and_edge_once() {
        // Euler: a closed triangle mesh has E = 3F/2 edges; the pieces must share them out, and
        // their sums must add up to the whole mesh's (to rounding).
        let (t, _) = Tables::build(&crate::generate::demo_body(2)).expect("valid");
        let whole = t.pieces(usize::MAX);
        assert_eq!(whole.len(), 1);
        let pieces = t.pieces(97);
        assert_eq!(pieces.len(), t.face_count.div_ceil(97));
        assert_eq!(
            pieces.iter().map(|p| p.face_count).sum::<usize>(),
            t.face_count
        );
        assert_eq!(
            pieces.iter().map(|p| p.edge_count).sum::<usize>(),
            3 * t.face_count / 2
        );
        let p = [310.0, -1200.0, 455.0];
        let sums = |ts: &[Tables]| {
            let mut scratch = Vec::new();
            ts.iter().fold(direct::Sums::default(), |acc, piece| {
                direct::fill_vertices(piece, p, &mut scratch);
                acc.merged(&direct::sums_scalar::<true>(piece, &scratch))
            })
        };
        let (a, b) = (sums(&whole), sums(&pieces));
        assert!((a.edge_u - b.edge_u).abs() < 1e-12 * a.edge_u.abs());
        assert!((a.face_u - b.face_u).abs() < 1e-12 * a.face_u.abs());
        for k in 0..3 {
            assert!((a.edge_a[k] - b.edge_a[k]).abs() < 1e-12 * a.edge_u.abs().sqrt());
        }
        assert!((a.omega - b.omega).abs() < 1e-12);
    }

    #[test]
    fn morton_bits_spread_to_every_third_bit() {
        for k in 0..21 {
            assert_eq!(spread_bits(1 << k), 1 << (3 * k));
        }
        assert_eq!(spread_bits(0x1f_ffff), 0x1249_2492_4924_9249);
    }

    #[test]
    fn pieces_stay_compact_whatever_the_face_order() {
        // Faces of an icosphere in a scrambled order (a fixed multiplicative permutation):
        // consecutive faces would be scattered over the sphere, so pieces cut in file order
        // would each touch most of the vertices. Cut along the Morton curve they stay compact:
        // the vertices repeated at piece borders stay a fraction of the total.
        let mut mesh = crate::generate::icosphere(1.0, 4);
        let nf = mesh.faces.len();
        let faces = mesh.faces.clone();
        mesh.faces = (0..nf).map(|i| faces[(i * 7919) % nf]).collect();
        let (t, _) = Tables::build(&mesh).expect("valid");
        let pieces = t.pieces(512);
        assert_eq!(pieces.iter().map(|p| p.face_count).sum::<usize>(), nf);
        assert_eq!(
            pieces.iter().map(|p| p.edge_count).sum::<usize>(),
            3 * nf / 2
        );
        let vertices: usize = pieces.iter().map(|p| p.vx.len()).sum();
        assert!(
            vertices < 3 * t.vx.len() / 2,
            "{vertices} piece vertices for {} mesh vertices",
            t.vx.len()
        );
    }
}
