//! The exact potential of any set of faces of the polyhedron, in the single-layer split.
//!
//! By the divergence theorem the polyhedron's potential is `U = sum_f U_f` with
//! `U_f(x) = (G rho / 2) h_f S_f(x)`: `h_f = n_f . (v_f - x)` the signed distance to the face
//! plane and `S_f = integral over face f of dA / |y - x|` its single-layer potential, which on
//! a triangle is `S_f = sum_e u_fe L_e - h_f omega_f` (`u_fe = nu_fe . (a_e - x)` with `nu_fe`
//! the in-plane outward normal of edge `e`, `L_e` the edge log and `omega_f` the signed solid
//! angle of Werner & Scheeres 1997). Its gradient is exact and local:
//! `grad S_f = n_f omega_f - sum_e nu_fe L_e`, so
//! `grad U_f = (G rho / 2) (-n_f S_f + h_f grad S_f)`. Summed over every face these are the
//! Werner–Scheeres potential and acceleration; over a subset they are the potential of those
//! faces with a consistent gradient, which is what the interpolated field needs: the faces near
//! a cell are summed exactly and the rest, smooth there, is fitted.
//!
//! Second derivatives use `grad L_e = 2 l (r_a/|r_a| + r_b/|r_b|) / (s^2 - l^2)` (`s = |r_a| +
//! |r_b|`) and `grad omega_f`, the Biot–Savart field of a unit current around the face (each
//! edge contributes `(r_a x r_b)(|r_a| + |r_b|) / (|r_a||r_b|(|r_a||r_b| + r_a . r_b))`).

use nalgebra::Point3;

use super::super::DirectKernel;
use super::super::block::{BLOCK, Oct, Runner, fill_block};
use super::super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::super::tables::Tables;
use crate::mesh::Mesh;

/// What the sums need of one face, in two blocks of eight: its corners `v0`, `v1`, `v2`
/// (slots 0-8, m), its unit outward normal (9-11) and the lengths of its edges `(v0, v1)`,
/// `(v1, v2)`, `(v2, v0)` (12-14, m); slot 15 is zero. One face's data are two cache lines in
/// a row, and eight faces' blocks become sixteen vectors of one quantity each by two
/// transpositions in registers (`Lanes::transpose8`). The edges' in-plane normals are
/// computed from these where they are used ([`edge_normal`]): stored, they would be a third
/// cache line per face, and a query next to the surface waits on memory more than it
/// computes (on the demo body at 100,820 facets, gathering the faces' data number by number
/// from separate arrays was 60 % of such a query).
#[derive(Debug, Clone, Copy, PartialEq)]
#[repr(C, align(64))]
pub(crate) struct FaceRecord(pub [[f64; 8]; 2]);

impl FaceRecord {
    #[inline(always)]
    fn slot(&self, k: usize) -> f64 {
        self.0[k / 8][k % 8]
    }

    #[inline(always)]
    fn triple(&self, start: usize) -> [f64; 3] {
        std::array::from_fn(|a| self.slot(start + a))
    }
}

/// The in-plane outward unit normal of an edge from `a` to `b` (length `len`) of a face with
/// unit normal `n`: `((b - a) x n) / len`, each operation rounded on its own, so that the
/// vector kernels (which compute it lane by lane in the same order) get the same bits.
#[inline(always)]
pub(crate) fn edge_normal(a: [f64; 3], b: [f64; 3], n: [f64; 3], len: f64) -> [f64; 3] {
    scale(cross(sub(b, a), n), 1.0 / len)
}

/// Per-face data of a mesh for face-set sums.
#[derive(Debug, Clone)]
pub(crate) struct FaceGeometry {
    pub vertices: Vec<[f64; 3]>,
    pub faces: Vec<[u32; 3]>,
    /// Per face: corners, normal and edge lengths (see [`FaceRecord`]).
    pub records: Vec<FaceRecord>,
    /// The mesh's undirected edges numbered, made on first use (the build's face-set tables
    /// need them; queries do not): see [`FaceGeometry::face_edges`].
    edge_numbers: std::sync::OnceLock<(Vec<[u32; 3]>, usize)>,
}

pub(crate) fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
pub(crate) fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
pub(crate) fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
pub(crate) fn norm(a: [f64; 3]) -> f64 {
    dot(a, a).sqrt()
}
fn scale(a: [f64; 3], s: f64) -> [f64; 3] {
    [a[0] * s, a[1] * s, a[2] * s]
}

impl FaceGeometry {
    /// From a closed, outward-oriented mesh (as the field accepts it), its faces renumbered
    /// along a Morton curve through their centroids and its vertices in order of first use by
    /// them: faces close together in space are close together in memory, so a set of faces
    /// around a point (a leaf's near set, a ring) is read from a few runs of memory instead of
    /// all over a large mesh, whatever the order of the file. Face numbers here are this
    /// geometry's, not the mesh's.
    pub fn new(mesh: &Mesh) -> FaceGeometry {
        let mesh_vertices: Vec<[f64; 3]> =
            mesh.vertices_m.iter().map(|p| [p.x, p.y, p.z]).collect();
        let centroids: Vec<[f64; 3]> = mesh
            .faces
            .iter()
            .map(|f| {
                let [a, b, c] = f.map(|i| mesh_vertices[i as usize]);
                std::array::from_fn(|k| (a[k] + b[k] + c[k]) / 3.0)
            })
            .collect();
        let axes = crate::field::tables::axis_bounds(mesh_vertices.iter().copied());
        let order = crate::field::tables::morton_order(&centroids, axes);
        let mut new_index = vec![u32::MAX; mesh_vertices.len()];
        let mut vertices = Vec::with_capacity(mesh_vertices.len());
        let faces: Vec<[u32; 3]> = order
            .iter()
            .map(|&f| {
                mesh.faces[f as usize].map(|v| {
                    let slot = &mut new_index[v as usize];
                    if *slot == u32::MAX {
                        *slot = vertices.len() as u32;
                        vertices.push(mesh_vertices[v as usize]);
                    }
                    *slot
                })
            })
            .collect();
        let mut records = Vec::with_capacity(faces.len());
        for f in &faces {
            let v = f.map(|i| vertices[i as usize]);
            let nrm = cross(sub(v[1], v[0]), sub(v[2], v[0]));
            let n = scale(nrm, 1.0 / norm(nrm));
            let el: [f64; 3] = std::array::from_fn(|k| norm(sub(v[(k + 1) % 3], v[k])));
            let mut record = FaceRecord([[0.0; 8]; 2]);
            for (k, x) in v.iter().flatten().chain(&n).chain(&el).enumerate() {
                record.0[k / 8][k % 8] = *x;
            }
            records.push(record);
        }
        FaceGeometry {
            vertices,
            faces,
            records,
            edge_numbers: std::sync::OnceLock::new(),
        }
    }

    /// Memory of the vertices and the per-face arrays, bytes (the edge numbers and spatial
    /// ranks, made for builds only, aside).
    pub fn memory_bytes(&self) -> usize {
        std::mem::size_of_val(self.vertices.as_slice())
            + std::mem::size_of_val(self.faces.as_slice())
            + std::mem::size_of_val(self.records.as_slice())
    }

    /// Face `f`'s unit outward normal.
    pub fn normal(&self, f: usize) -> [f64; 3] {
        self.records[f].triple(9)
    }

    /// Face `f`'s in-plane outward unit normal of edge `k` (`(v_k, v_(k+1))`).
    pub fn edge_normal(&self, f: usize, k: usize) -> [f64; 3] {
        let r = &self.records[f];
        edge_normal(
            r.triple(3 * k),
            r.triple(3 * ((k + 1) % 3)),
            r.triple(9),
            r.slot(12 + k),
        )
    }

    /// The length of face `f`'s edge `k`, m.
    pub fn edge_len_m(&self, f: usize, k: usize) -> f64 {
        self.records[f].slot(12 + k)
    }

    /// For each face, the numbers of its edges `(v0, v1)`, `(v1, v2)`, `(v2, v0)` among the
    /// mesh's undirected edges (two faces sharing an edge get the same number), and how many
    /// edges there are. Computed once, on first use, by sorting the vertex pairs.
    pub fn face_edges(&self) -> (&[[u32; 3]], usize) {
        let (numbers, count) = self.edge_numbers.get_or_init(|| {
            let mut keyed: Vec<(u64, u32)> = Vec::with_capacity(3 * self.faces.len());
            for (f, face) in self.faces.iter().enumerate() {
                for k in 0..3 {
                    let (a, b) = (face[k], face[(k + 1) % 3]);
                    let key = (u64::from(a.min(b)) << 32) | u64::from(a.max(b));
                    keyed.push((key, (3 * f + k) as u32));
                }
            }
            keyed.sort_unstable();
            let mut numbers = vec![[0u32; 3]; self.faces.len()];
            let mut count = 0u32;
            for (i, &(key, slot)) in keyed.iter().enumerate() {
                if i > 0 && keyed[i - 1].0 != key {
                    count += 1;
                }
                numbers[slot as usize / 3][slot as usize % 3] = count;
            }
            let edges = if keyed.is_empty() {
                0
            } else {
                count as usize + 1
            };
            (numbers, edges)
        });
        (numbers, *count)
    }

    pub fn face_count(&self) -> usize {
        self.faces.len()
    }

    /// Smallest distance from `p` to the triangle of face `f`, m (Ericson, "Real-Time Collision
    /// Detection", 2005, sec. 5.1.5).
    pub fn distance_to_face(&self, f: usize, p: [f64; 3]) -> f64 {
        let [a, b, c] = self.faces[f].map(|i| self.vertices[i as usize]);
        let q = closest_point_on_triangle(p, a, b, c);
        norm(sub(p, q))
    }

    /// Whether `p` lies inside the body, decided by face `f` when `f` holds the point of the
    /// surface nearest `p` (the caller's part): `Some` when the foot of the perpendicular from
    /// `p` to the face's plane falls inside the triangle, clear of its edges (barycentric
    /// coordinates above 1e-9). The open segment from `p` to that foot then meets no surface
    /// (a point of it would be nearer `p`) and around the foot the surface is the face's plane,
    /// so `p` is on the side the outward normal says. `None` when the foot is on or near an
    /// edge or a vertex, where the neighbouring faces would have a say.
    pub fn side_by_nearest_face(&self, f: usize, p: [f64; 3]) -> Option<bool> {
        let [a, b, c] = self.faces[f].map(|i| self.vertices[i as usize]);
        let n = self.normal(f);
        let h = dot(sub(p, a), n);
        let foot = sub(p, scale(n, h));
        // Barycentric coordinates of the foot from the signed areas of the sub-triangles.
        let total = dot(cross(sub(b, a), sub(c, a)), n);
        if total <= 0.0 || h == 0.0 {
            return None;
        }
        let wa = dot(cross(sub(b, foot), sub(c, foot)), n) / total;
        let wb = dot(cross(sub(c, foot), sub(a, foot)), n) / total;
        let wc = 1.0 - wa - wb;
        (wa > 1e-9 && wb > 1e-9 && wc > 1e-9).then_some(h < 0.0)
    }
}

fn closest_point_on_triangle(p: [f64; 3], a: [f64; 3], b: [f64; 3], c: [f64; 3]) -> [f64; 3] {
    let ab = sub(b, a);
    let ac = sub(c, a);
    let ap = sub(p, a);
    let d1 = dot(ab, ap);
    let d2 = dot(ac, ap);
    if d1 <= 0.0 && d2 <= 0.0 {
        return a;
    }
    let bp = sub(p, b);
    let d3 = dot(ab, bp);
    let d4 = dot(ac, bp);
    if d3 >= 0.0 && d4 <= d3 {
        return b;
    }
    let vc = d1 * d4 - d3 * d2;
    if vc <= 0.0 && d1 >= 0.0 && d3 <= 0.0 {
        let v = d1 / (d1 - d3);
        return [a[0] + v * ab[0], a[1] + v * ab[1], a[2] + v * ab[2]];
    }
    let cp = sub(p, c);
    let d5 = dot(ab, cp);
    let d6 = dot(ac, cp);
    if d6 >= 0.0 && d5 <= d6 {
        return c;
    }
    let vb = d5 * d2 - d1 * d6;
    if vb <= 0.0 && d2 >= 0.0 && d6 <= 0.0 {
        let w = d2 / (d2 - d6);
        return [a[0] + w * ac[0], a[1] + w * ac[1], a[2] + w * ac[2]];
    }
    let va = d3 * d6 - d5 * d4;
    if va <= 0.0 && (d4 - d3) >= 0.0 && (d5 - d6) >= 0.0 {
        let w = (d4 - d3) / ((d4 - d3) + (d5 - d6));
        let bc = sub(c, b);
        return [b[0] + w * bc[0], b[1] + w * bc[1], b[2] + w * bc[2]];
    }
    let denom = 1.0 / (va + vb + vc);
    let v = vb * denom;
    let w = vc * denom;
    [
        a[0] + ab[0] * v + ac[0] * w,
        a[1] + ab[1] * v + ac[1] * w,
        a[2] + ab[2] * v + ac[2] * w,
    ]
}

/// Potential, gradient and (with `HESS`) Hessian of a face set at a point, per unit `G rho`
/// (multiply by `G rho` for m^2/s^2, m/s^2, 1/s^2).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(crate) struct SetJet {
    pub potential: f64,
    pub grad: [f64; 3],
    /// xx, xy, xz, yy, yz, zz.
    pub hess: [f64; 6],
    /// Sum of the faces' solid angles, sr.
    pub omega: f64,
}

impl SetJet {
    pub fn add(&mut self, o: &SetJet, s: f64) {
        self.potential += s * o.potential;
        for k in 0..3 {
            self.grad[k] += s * o.grad[k];
        }
        for k in 0..6 {
            self.hess[k] += s * o.hess[k];
        }
        self.omega += s * o.omega;
    }
}

/// `L_e` with the same floor as the direct kernel.
fn edge_log(ra: f64, rb: f64, l: f64) -> f64 {
    let num = ra + rb + l;
    let den = (ra + rb - l).max(EDGE_FLOOR * num);
    (2.0 * l / den).ln_1p()
}

/// The sums over `faces` at `p` (see the module docs), per unit `G rho`.
pub(crate) fn set_jet<const HESS: bool>(
    g: &FaceGeometry,
    faces: &[u32],
    p: &Point3<f64>,
) -> SetJet {
    let x = [p.x, p.y, p.z];
    let mut out = SetJet::default();
    for &f in faces {
        let f = f as usize;
        let idx = g.faces[f];
        let r = idx.map(|i| sub(g.vertices[i as usize], x));
        let len = r.map(norm);
        let n = g.normal(f);
        let nus: [[f64; 3]; 3] = std::array::from_fn(|k| g.edge_normal(f, k));
        // Solid angle (van Oosterom & Strackee 1983) with the surface rule of `direct`.
        let num = dot(r[0], cross(r[1], r[2]));
        let prod = len[0] * len[1] * len[2];
        let den =
            prod + len[0] * dot(r[1], r[2]) + len[1] * dot(r[2], r[0]) + len[2] * dot(r[0], r[1]);
        let tol = PLANE_TOL * prod;
        let omega = if num.abs() <= tol && den <= tol {
            0.0
        } else {
            2.0 * num.atan2(den)
        };
        let h = dot(n, r[0]);
        let mut s_f = -h * omega;
        let mut grad_s = scale(n, omega);
        let mut logs = [0.0; 3];
        for (k, log) in logs.iter_mut().enumerate() {
            let a = k;
            let b = (k + 1) % 3;
            let l = edge_log(len[a], len[b], g.edge_len_m(f, k));
            *log = l;
            let nu = nus[k];
            s_f += dot(nu, r[a]) * l;
            for c in 0..3 {
                grad_s[c] -= nu[c] * l;
            }
        }
        out.omega += omega;
        out.potential += 0.5 * h * s_f;
        for c in 0..3 {
            out.grad[c] += 0.5 * (-n[c] * s_f + h * grad_s[c]);
        }
        if HESS {
            // grad omega: Biot-Savart sum over the face's edges.
            let mut grad_omega = [0.0; 3];
            for k in 0..3 {
                let (a, b) = (k, (k + 1) % 3);
                let c = cross(r[a], r[b]);
                let d = len[a] * len[b] * (len[a] * len[b] + dot(r[a], r[b]));
                if d > 0.0 {
                    let s = (len[a] + len[b]) / d;
                    for i in 0..3 {
                        grad_omega[i] += c[i] * s;
                    }
                }
            }
            // d_i d_j S = n_i d_j omega - sum_e nu_ei d_j L_e.
            let mut hs = [[0.0; 3]; 3];
            for i in 0..3 {
                for j in 0..3 {
                    hs[i][j] = n[i] * grad_omega[j];
                }
            }
            for (k, nu) in nus.iter().enumerate() {
                let (a, b) = (k, (k + 1) % 3);
                let l = g.edge_len_m(f, k);
                let s = len[a] + len[b];
                let den = (s * s - l * l).max(EDGE_FLOOR * s * s);
                let coef = 2.0 * l / den;
                let gl: [f64; 3] =
                    std::array::from_fn(|c| coef * (r[a][c] / len[a] + r[b][c] / len[b]));
                for i in 0..3 {
                    for j in 0..3 {
                        hs[i][j] -= nu[i] * gl[j];
                    }
                }
            }
            // d_i d_j U_f = (1/2)(-n_i d_j S - n_j d_i S + h d_i d_j S), symmetrised.
            let pairs = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)];
            for (k, &(i, j)) in pairs.iter().enumerate() {
                let sym = 0.5 * (hs[i][j] + hs[j][i]);
                out.hess[k] += 0.5 * (-n[i] * grad_s[j] - n[j] * grad_s[i] + h * sym);
            }
        }
    }
    out
}

impl SetJet {
    fn from_sums(s: &Sums, hess: bool) -> SetJet {
        let mut j = SetJet {
            potential: 0.5 * (s.edge_u - s.face_u),
            grad: std::array::from_fn(|k| s.face_a[k] - s.edge_a[k]),
            hess: [0.0; 6],
            omega: s.omega,
        };
        if hess {
            j.hess = std::array::from_fn(|k| s.edge_grad[k] - s.face_grad[k] + s.open_grad[k]);
        }
        j
    }
}

/// Most faces in one piece of a [`FaceSet`]: the piece's tables (~190 bytes per face) and the
/// vertex vectors of a block of points (256 bytes per vertex, about half a vertex per face)
/// stay in a core's L2 cache (1 MiB on the development machine). A ring of 20,000 faces in
/// one table set spilled its 2.6 MB of vertex vectors to L3 at every block of points.
pub(crate) const SET_PIECE_FACES: usize = 2048;

/// A set of faces as the vector kernel reads it: the tables of pieces of at most
/// [`SET_PIECE_FACES`] faces close together (consecutive along a Morton curve through the face
/// centroids). Each piece is an open set with its own boundary, so the pieces' sums add up to
/// the set's (the line integrals along the cuts between pieces cancel to rounding).
pub(crate) struct FaceSet {
    pieces: Vec<Tables>,
}

impl FaceSet {
    /// Bytes its tables take.
    pub fn heap_bytes(&self) -> usize {
        self.pieces.iter().map(Tables::heap_bytes).sum()
    }

    /// The set of `faces` (any order) of `g`.
    pub fn new(g: &FaceGeometry, faces: &[u32]) -> FaceSet {
        FaceSet::with_piece_faces(g, faces, SET_PIECE_FACES)
    }

    /// As [`FaceSet::new`] with pieces of at most `piece_faces` faces.
    pub fn with_piece_faces(g: &FaceGeometry, faces: &[u32], piece_faces: usize) -> FaceSet {
        let piece_faces = piece_faces.max(1);
        if faces.len() <= piece_faces {
            return FaceSet {
                pieces: vec![Tables::from_face_set(g, faces)],
            };
        }
        // Face numbers run along the Morton curve (see `FaceGeometry::new`).
        let mut ordered = faces.to_vec();
        ordered.sort_unstable();
        FaceSet {
            pieces: ordered
                .chunks(piece_faces)
                .map(|c| Tables::from_face_set(g, c))
                .collect(),
        }
    }

    /// Faces in the set.
    pub fn face_count(&self) -> usize {
        self.pieces.iter().map(|t| t.face_count).sum()
    }
}

/// [`set_jet`] at many points with the vector kernel, over a [`FaceSet`]; the Hessian when
/// `HESS`. An empty set gives zeros. Each block of points runs over the pieces in order, so a
/// point's value does not depend on the other points.
pub(crate) fn set_jets<const HESS: bool>(
    set: &FaceSet,
    points: &[Point3<f64>],
    scratch: &mut Vec<Oct>,
) -> Vec<SetJet> {
    if set.face_count() == 0 {
        return vec![SetJet::default(); points.len()];
    }
    let runner = Runner::for_kernel(DirectKernel::Auto).unwrap_or(Runner::Portable);
    let mut out = Vec::with_capacity(points.len());
    for block in points.chunks(BLOCK) {
        let pts: [[f64; 3]; BLOCK] = std::array::from_fn(|j| {
            let p = block[j.min(block.len() - 1)];
            [p.x, p.y, p.z]
        });
        let mut sums = [Sums::default(); BLOCK];
        for (k, t) in set.pieces.iter().enumerate() {
            fill_block(t, &pts, scratch);
            let part = if HESS {
                runner.run_mode::<true, true>(t, scratch, block.len())
            } else {
                runner.run_mode::<false, false>(t, scratch, block.len())
            };
            if k == 0 {
                sums = part;
            } else {
                for (s, p) in sums.iter_mut().zip(&part) {
                    *s = s.merged(p);
                }
            }
        }
        out.extend(
            sums[..block.len()]
                .iter()
                .map(|s| SetJet::from_sums(s, HESS)),
        );
    }
    out
}

/// The gradient as a vector (for tests).
#[cfg(test)]
pub(crate) fn grad_vec(j: &SetJet) -> nalgebra::Vector3<f64> {
    nalgebra::Vector3::new(j.grad[0], j.grad[1], j.grad[2])
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]
mod tests {
    use super::*;
    use crate::field::{G_SI, MassSpec, PolyhedronGravity};
    use crate::generate;

    #[test]
    fn the_nearest_face_rule_agrees_with_the_solid_angle() {
        // Points at random around the demo body (inside, outside, near and far): wherever the
        // nearest-face rule gives a side, the exact field's solid angle (4 pi inside, 0
        // outside) must give the same; and the rule must decide a good share of them.
        let mesh = generate::demo_body(3);
        let g = FaceGeometry::new(&mesh);
        let field = PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(2000.0)).unwrap();
        let mut seed = 7u64;
        let mut rnd = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let (mut decided, mut inside_seen, mut outside_seen) = (0, 0, 0);
        for _ in 0..2000 {
            let p = [8000.0 * rnd(), 8000.0 * rnd(), 8000.0 * rnd()];
            let nearest = (0..g.face_count())
                .map(|f| (g.distance_to_face(f, p), f))
                .fold((f64::INFINITY, 0), |a, b| if b.0 < a.0 { b } else { a });
            if let Some(inside) = g.side_by_nearest_face(nearest.1, p) {
                let want = field.is_inside(&Point3::new(p[0], p[1], p[2]));
                assert_eq!(inside, want, "{p:?}");
                decided += 1;
                if inside {
                    inside_seen += 1;
                } else {
                    outside_seen += 1;
                }
            }
        }
        assert!(decided > 300, "only {decided} of 2000 points decided");
        assert!(
            inside_seen > 50 && outside_seen > 50,
            "{inside_seen} / {outside_seen}"
        );
    }

    #[test]
    fn all_faces_give_the_werner_scheeres_field_and_tensor() {
        let mesh = generate::demo_body(2);
        let g = FaceGeometry::new(&mesh);
        let field = PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(2000.0)).unwrap();
        let g_rho = G_SI * 2000.0;
        let all: Vec<u32> = (0..g.face_count() as u32).collect();
        for p in [
            Point3::new(3500.0, 200.0, -300.0),
            Point3::new(-100.0, 2900.0, 800.0),
            Point3::new(10.0, 20.0, -30.0),
        ] {
            let want = field.evaluate(&p);
            let got = set_jet::<true>(&g, &all, &p);
            let u = g_rho * got.potential;
            assert!(
                (u - want.potential_m2_s2).abs() < 1e-12 * u.abs(),
                "{u} vs {}",
                want.potential_m2_s2
            );
            let a = grad_vec(&got) * g_rho;
            assert!(
                (a - want.acceleration_m_s2).norm() < 1e-12 * a.norm(),
                "{a} vs {}",
                want.acceleration_m_s2
            );
            let w = want.gradient_s2;
            let want_h = [
                w[(0, 0)],
                w[(0, 1)],
                w[(0, 2)],
                w[(1, 1)],
                w[(1, 2)],
                w[(2, 2)],
            ];
            let scale = want_h.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for (gh, wh) in got.hess.iter().zip(want_h) {
                assert!(
                    (g_rho * gh - wh).abs() < 1e-11 * scale,
                    "{} vs {wh}",
                    g_rho * gh
                );
            }
        }
    }

    #[test]
    fn vector_kernel_on_a_face_set_matches_the_scalar_sums() {
        // The kernel over `Tables::from_face_set` (shared edges, symmetric dyads, open-set
        // tensor terms) against the per-face scalar formulas, for a scattered subset and the
        // whole mesh (where the open-set terms must cancel), in one piece and cut into pieces
        // of 37 faces (each piece an open set whose boundary runs along the cuts: their line
        // integrals must cancel in the sum).
        let mesh = generate::demo_body(2);
        let g = FaceGeometry::new(&mesh);
        let some: Vec<u32> = (0..g.face_count() as u32)
            .filter(|f| f % 3 != 1)
            .take(150)
            .collect();
        let all: Vec<u32> = (0..g.face_count() as u32).collect();
        // Also points next to the surface: off a corner and an edge of a face in the subset,
        // and off one of its boundary edges (the open-set terms are a line integral along the
        // set's boundary, see `kernel`).
        let [a, b, c] = g.faces[some[7] as usize].map(|i| {
            let v = g.vertices[i as usize];
            Point3::new(v[0], v[1], v[2])
        });
        let n = (b - a).cross(&(c - a)).normalize();
        let mid = Point3::from((a.coords + b.coords) * 0.5);
        let pts = [
            Point3::new(2600.0, 900.0, 400.0),
            Point3::new(-300.0, 2200.0, -1700.0),
            Point3::new(50.0, -80.0, 20.0),
            a + n * 1e-3,
            mid + n * 0.5,
            Point3::from((a.coords + b.coords + c.coords) / 3.0) + n * 2.0,
        ];
        let mut scratch = Vec::new();
        for (set, piece_faces) in [
            (&some, usize::MAX),
            (&all, usize::MAX),
            (&some, 37),
            (&all, 37),
        ] {
            let t = FaceSet::with_piece_faces(&g, set, piece_faces);
            assert_eq!(
                t.pieces.len(),
                set.len().div_ceil(piece_faces.min(set.len()))
            );
            let fast = set_jets::<true>(&t, &pts, &mut scratch);
            for (p, f) in pts.iter().zip(&fast) {
                let s = set_jet::<true>(&g, set, p);
                let su = s.potential.abs().max(1.0);
                assert!(
                    (f.potential - s.potential).abs() < 1e-11 * su,
                    "{} vs {}",
                    f.potential,
                    s.potential
                );
                let sg = s.grad.iter().fold(0.0f64, |m, v| m.max(v.abs())).max(1e-3);
                for k in 0..3 {
                    assert!(
                        (f.grad[k] - s.grad[k]).abs() < 1e-11 * sg,
                        "{:?} vs {:?}",
                        f.grad,
                        s.grad
                    );
                }
                let sh = s.hess.iter().fold(0.0f64, |m, v| m.max(v.abs())).max(1e-6);
                for k in 0..6 {
                    assert!(
                        (f.hess[k] - s.hess[k]).abs() < 1e-9 * sh,
                        "{:?} vs {:?}",
                        f.hess,
                        s.hess
                    );
                }
                assert!((f.omega - s.omega).abs() < 1e-12);
            }
        }
    }

    #[test]
    fn edge_numbers_pair_the_faces_of_each_edge() {
        // Euler: a closed triangle mesh has E = 3F/2 edges, each shared by exactly two faces
        // that list its ends in opposite orders.
        let mesh = generate::demo_body(2);
        let g = FaceGeometry::new(&mesh);
        let (numbers, count) = g.face_edges();
        assert_eq!(count, 3 * g.face_count() / 2);
        let mut ends: Vec<Vec<(u32, u32)>> = vec![Vec::new(); count];
        for (f, face) in g.faces.iter().enumerate() {
            for k in 0..3 {
                ends[numbers[f][k] as usize].push((face[k], face[(k + 1) % 3]));
            }
        }
        for (e, pair) in ends.iter().enumerate() {
            assert_eq!(pair.len(), 2, "edge {e}");
            assert_eq!(pair[0], (pair[1].1, pair[1].0), "edge {e}");
        }
    }

    #[test]
    fn face_set_tables_do_not_depend_on_the_sets_built_before() {
        // The tables keep per-thread slots between calls: a set's tables must come out the
        // same after other (overlapping) sets were built on the thread as on a fresh thread.
        let mesh = generate::demo_body(2);
        let g = FaceGeometry::new(&mesh);
        let a: Vec<u32> = (0..g.face_count() as u32).step_by(2).collect();
        let b: Vec<u32> = (0..g.face_count() as u32).rev().step_by(3).collect();
        let _ = Tables::from_face_set(&g, &a);
        let here = Tables::from_face_set(&g, &b);
        let fresh = std::thread::scope(|s| {
            s.spawn(|| Tables::from_face_set(&g, &b))
                .join()
                .expect("thread")
        });
        assert_eq!(here.vx, fresh.vx);
        assert_eq!((here.f0, here.f1, here.f2), (fresh.f0, fresh.f1, fresh.f2));
        assert_eq!((here.e0, here.e1), (fresh.e0, fresh.e1));
        assert_eq!(here.edge_dyad.xy, fresh.edge_dyad.xy);
        assert_eq!(here.edge_count, fresh.edge_count);
        // Every local vertex is a corner of the set (none left over from set a).
        let corners: std::collections::HashSet<[u64; 3]> = b
            .iter()
            .flat_map(|&f| g.faces[f as usize])
            .map(|v| g.vertices[v as usize].map(f64::to_bits))
            .collect();
        assert_eq!(corners.len(), here.vx.len());
    }

    #[test]
    fn a_subset_has_a_consistent_gradient_and_hessian() {
        // For an open set of faces only the per-face split is consistent: check the gradient
        // and Hessian against central differences of the potential and gradient.
        let mesh = generate::demo_body(2);
        let g = FaceGeometry::new(&mesh);
        let some: Vec<u32> = (0..g.face_count() as u32).step_by(3).take(40).collect();
        let p = Point3::new(2600.0, 900.0, 400.0);
        let j = set_jet::<true>(&g, &some, &p);
        let h = 0.05;
        for axis in 0..3 {
            let mut d = nalgebra::Vector3::zeros();
            d[axis] = h;
            let up = set_jet::<false>(&g, &some, &(p + d));
            let dn = set_jet::<false>(&g, &some, &(p - d));
            let fd = (up.potential - dn.potential) / (2.0 * h);
            assert!(
                (fd - j.grad[axis]).abs() < 1e-7 * j.grad[axis].abs().max(1.0),
                "{fd} vs {}",
                j.grad[axis]
            );
            let idx = |a: usize, b: usize| match (a.min(b), a.max(b)) {
                (0, 0) => 0,
                (0, 1) => 1,
                (0, 2) => 2,
                (1, 1) => 3,
                (1, 2) => 4,
                _ => 5,
            };
            for c in 0..3 {
                let fd2 = (up.grad[c] - dn.grad[c]) / (2.0 * h);
                let got = j.hess[idx(axis, c)];
                assert!(
                    (fd2 - got).abs() < 1e-6 * got.abs().max(1e-3),
                    "{axis}{c}: {fd2} vs {got}"
                );
            }
        }
    }
}
