//! The whole mesh's potential, gradient and Hessian at many points from a tree of face
//! clusters, each far cluster replaced by a Taylor expansion with a rigorous bound on the
//! acceleration error: what the build fits its top cells to on large meshes, instead of a sum
//! over every face at every point. Not a field users query (the interpolated field is).
//!
//! # The expansion
//! In the single-layer split (`face_set`) a face's potential is `U_f(x) = (1/2) h_f(x) S_f(x)`
//! with `h_f(x) = n_f . (v_f - x)` and `S_f(x) = integral over f of dA / |y - x|`. For a cluster
//! of faces about a centre `c`, with `R = x - c` and `c_f = n_f . (v_f - c)`,
//! `U = (1/2) (S^c(x) - R . S^n(x))`, where `S^c = sum_f c_f S_f` and `S^n_j = sum_f n_fj S_f`
//! are single layers of constant density on each face: four harmonic functions outside the
//! cluster. Each is expanded as `sum_alpha b_alpha(R) M_alpha`, with the cluster's moments
//! `M_alpha = sum_f w_f integral over f of (y - c)^alpha dA` and `b_alpha(R) = (1/alpha!)
//! d^alpha/dy^alpha 1/|x - y|` at `y = c`, by the recurrence of Lindsay & Krasny (2001, J.
//! Comput. Phys. 172, 879-907): `k |R|^2 b_alpha = (2k-1) sum_i R_i b_(alpha-e_i) - (k-1)
//! sum_i b_(alpha-2e_i)`, `k = |alpha|`. Gradient and Hessian follow from
//! `d/dx_i b_alpha = -(alpha_i + 1) b_(alpha+e_i)`.
//!
//! A triangle's moments are exact: over a simplex, `integral (xi . y)^k dA = 2 A k!/(k+2)!
//! h_k(xi . a, xi . b, xi . c)` with `h_k` the complete homogeneous symmetric polynomial of the
//! corners (a classical identity; e.g. Lasserre & Avrachenkov 2001, Amer. Math. Monthly
//! 108(2), 151-154), whose coefficients in `xi` come from `h_k(x,y,z) = h_k(x,y) + z
//! h_(k-1)(x,y,z)`. A parent's moments are its children's moved to its centre (binomial
//! shifts, one axis at a time).
//!
//! # The bound
//! Truncated after total degree `p` the series of `1/|x - y|` is its Legendre series after
//! degree `p`; with `|y - c| <= a` (the cluster's radius), `q = a/|R|`, the remainder is at
//! most `E0 = q^(p+1) / (|R| - a)` and its gradient at most `E1 = sum_(n>p) (n+1) q^n /
//! |R|^2` (each degree's exterior solid harmonic has gradient at most `(n+1)/|R|^(n+2)`
//! because `(n+1)^2 P_n^2 + (1-t^2) P_n'^2 <= (n+1)^2` on `[-1, 1]`). With `|c_f| <= a` and
//! unit normals the acceleration error of the cluster is at most `(A/2) ((a + |R|) E1 + E0)`
//! per unit `G rho`, `A` its area. A cluster is expanded at the lowest degree that keeps this
//! within its share of the tolerance (the tolerance times its share of the total area), else
//! opened; leaves that cannot be expanded are summed exactly. The Hessian has no bound of its
//! own (the build's fits use it as data; their checks, on the gradient, carry the proof).

use multiversion::multiversion;
use nalgebra::Point3;
use rayon::prelude::*;

use super::face_set::{FaceGeometry, FaceSet, SetJet, cross, dot, norm, set_jets, sub};
use super::solid::PAIRS;

/// Highest degree of a cluster's expansion.
pub(crate) const MAX_ORDER: usize = 18;

/// Faces in a leaf cluster. Larger leaves sum more faces exactly near a point and expand fewer
/// clusters: on the demo body at 1,003,520 facets the build's top levels took 106 s to the end
/// of level 5 with 1,024 (91 MB of moments), 108 s with 2,048, 124 s with 512 and 121 s with
/// 256 (353 MB); at 100,820 facets 1,024 was also the fastest (README, Performance).
const LEAF_FACES: usize = 1024;

/// Points evaluated side by side in one expansion.
const LANES: usize = 8;

/// The multi-indices up to total degree `MAX_ORDER + 2`, by degree, with their neighbours.
struct Index {
    alpha: Vec<[usize; 3]>,
    /// `count[k]`: multi-indices of degree at most `k`.
    count: Vec<usize>,
    /// `alpha - e_i` and `alpha - 2 e_i` (`ZERO` when a component would be negative).
    down1: Vec<[u32; 3]>,
    down2: Vec<[u32; 3]>,
    /// `alpha + e_i`, `alpha + e_i + e_j` (xx, xy, xz, yy, yz, zz), for degrees up to `MAX_ORDER`.
    up1: Vec<[u32; 3]>,
    up2: Vec<[u32; 6]>,
    /// `alpha! / (|alpha| + 2)!`.
    moment_factor: Vec<f64>,
}

/// Degree the index reaches (two above the expansions', for the Hessian).
const INDEX_DEGREE: usize = MAX_ORDER + 2;

/// The row of zeros after the last multi-index.
fn zero_slot() -> u32 {
    Index::get().alpha.len() as u32
}

impl Index {
    fn get() -> &'static Index {
        static INDEX: std::sync::OnceLock<Index> = std::sync::OnceLock::new();
        INDEX.get_or_init(Index::new)
    }

    fn new() -> Index {
        let d = INDEX_DEGREE + 1;
        let mut alpha = Vec::new();
        let mut count = Vec::new();
        let mut pos = vec![u32::MAX; d * d * d];
        for k in 0..=INDEX_DEGREE {
            for a in (0..=k).rev() {
                for b in (0..=k - a).rev() {
                    let c = k - a - b;
                    pos[(a * d + b) * d + c] = alpha.len() as u32;
                    alpha.push([a, b, c]);
                }
            }
            count.push(alpha.len());
        }
        let zero = alpha.len() as u32;
        let at = |m: [isize; 3]| -> u32 {
            if m.iter().any(|&x| x < 0) || m.iter().sum::<isize>() > INDEX_DEGREE as isize {
                zero
            } else {
                pos[(m[0] as usize * d + m[1] as usize) * d + m[2] as usize]
            }
        };
        let shifted = |al: &[usize; 3], i: usize, s: isize| -> [isize; 3] {
            let mut m = al.map(|x| x as isize);
            m[i] += s;
            m
        };
        let down1 = alpha
            .iter()
            .map(|al| std::array::from_fn(|i| at(shifted(al, i, -1))))
            .collect();
        let down2 = alpha
            .iter()
            .map(|al| std::array::from_fn(|i| at(shifted(al, i, -2))))
            .collect();
        let up1 = alpha
            .iter()
            .map(|al| std::array::from_fn(|i| at(shifted(al, i, 1))))
            .collect();
        let up2 = alpha
            .iter()
            .map(|al| {
                std::array::from_fn(|k| {
                    let (i, j) = PAIRS[k];
                    let mut m = shifted(al, i, 1);
                    m[j] += 1;
                    at(m)
                })
            })
            .collect();
        let fact = |n: usize| (1..=n).fold(1.0f64, |p, k| p * k as f64);
        let moment_factor = alpha
            .iter()
            .map(|al| fact(al[0]) * fact(al[1]) * fact(al[2]) / fact(al[0] + al[1] + al[2] + 2))
            .collect();
        Index {
            alpha,
            count,
            down1,
            down2,
            up1,
            up2,
            moment_factor,
        }
    }
}

/// Moments per cluster: the four densities (`c_f`, `n_x`, `n_y`, `n_z`) up to `MAX_ORDER`.
fn moment_len() -> usize {
    Index::get().count[MAX_ORDER]
}

/// `integral over the triangle of (y - c)^alpha dA` for every `|alpha| <= MAX_ORDER` into `out`,
/// from the corners relative to the expansion centre `c`; `scratch` holds four working rows.
fn triangle_moments(
    corners: [[f64; 3]; 3],
    area: f64,
    out: &mut [f64],
    scratch: &mut [Vec<f64>; 4],
) {
    let ix = Index::get();
    let [x, y, z, tmp] = scratch;
    for row in [&mut *x, &mut *y, &mut *z, &mut *tmp] {
        row.clear();
        row.resize(ix.alpha.len() + 1, 0.0);
    }
    x[0] = 1.0;
    y[0] = 1.0;
    z[0] = 1.0;
    for k in 1..=MAX_ORDER {
        // The coefficients in xi of X_k = (xi.a)^k, Y_k = h_k(xi.a, xi.b) = X_k + (xi.b) Y_(k-1)
        // and Z_k = h_k(xi.a, xi.b, xi.c) = Y_k + (xi.c) Z_(k-1); each degree has its own
        // slots, so degree k - 1 stays readable while degree k is written.
        let (lo, hi) = (ix.count[k - 1], ix.count[k]);
        times_linear(ix, corners[0], x, tmp, k);
        x[lo..hi].copy_from_slice(&tmp[..hi - lo]);
        times_linear(ix, corners[1], y, tmp, k);
        for (m, t) in (lo..hi).zip(tmp.iter()) {
            y[m] = x[m] + t;
        }
        times_linear(ix, corners[2], z, tmp, k);
        for (m, t) in (lo..hi).zip(tmp.iter()) {
            z[m] = y[m] + t;
        }
    }
    for (m, o) in out[..moment_len()].iter_mut().enumerate() {
        *o = 2.0 * area * ix.moment_factor[m] * z[m];
    }
}

/// The degree-`k` coefficients of `(xi . v) src` (`src` holding degree `k - 1` in its slots and
/// zero in the zero slot) into the start of `dst`.
fn times_linear(ix: &Index, v: [f64; 3], src: &[f64], dst: &mut [f64], k: usize) {
    let lo = ix.count[k - 1];
    for (m, out) in (lo..ix.count[k]).zip(dst.iter_mut()) {
        let d = ix.down1[m];
        *out = v[0] * src[d[0] as usize] + v[1] * src[d[1] as usize] + v[2] * src[d[2] as usize];
    }
}

/// Moments about a centre moved by `d` (new centre = old - d, i.e. `y - new = (y - old) + d`):
/// `M'_alpha = sum_(beta <= alpha) C(alpha, beta) d^(alpha - beta) M_beta`, one axis at a time.
fn shifted(m: &[f64], d: [f64; 3]) -> Vec<f64> {
    let ix = Index::get();
    let n = moment_len();
    let mut cur = m.to_vec();
    for axis in 0..3 {
        let mut next = vec![0.0; n];
        for (t, al) in ix.alpha[..n].iter().enumerate() {
            // sum over j <= al[axis]: C(al_axis, j) d^(al_axis - j) M_(al with axis = j).
            let mut acc = 0.0;
            let mut src = t as u32;
            let mut power = 1.0;
            let mut binom = 1.0;
            for step in 0..=al[axis] {
                acc += binom * power * cur[src as usize];
                // Move to axis component one lower.
                let j = al[axis] - step;
                if j == 0 {
                    break;
                }
                src = ix.down1[src as usize][axis];
                power *= d[axis];
                binom = binom * j as f64 / (step + 1) as f64;
            }
            next[t] = acc;
        }
        cur = next;
    }
    cur
}

/// A cluster of faces consecutive along the Morton curve.
struct Cluster {
    /// Range in `FarField::order`.
    start: usize,
    end: usize,
    center: [f64; 3],
    radius_m: f64,
    children: Option<[usize; 2]>,
}

/// The tree of clusters with their moments.
pub(crate) struct FarField {
    order: Vec<u32>,
    clusters: Vec<Cluster>,
    /// Per cluster: four rows of `moment_len()` moments.
    moments: Vec<f64>,
    /// Per leaf cluster: its faces' tables (indexed like `clusters`, `None` above the leaves).
    leaf_sets: Vec<Option<FaceSet>>,
    total_area: f64,
}

/// What one point needs from one cluster.
#[derive(Clone, Copy)]
enum Need {
    Expansion { cluster: u32, degree: u8 },
    Exact { cluster: u32 },
}

impl FarField {
    /// The tree over `geometry`'s faces, leaves of [`LEAF_FACES`] faces.
    pub fn new(geometry: &FaceGeometry) -> FarField {
        FarField::with_leaf_faces(geometry, LEAF_FACES)
    }

    /// The tree with leaves of at most `leaf_faces` faces.
    pub fn with_leaf_faces(geometry: &FaceGeometry, leaf_faces: usize) -> FarField {
        let leaf_faces = leaf_faces.max(1);
        // Face numbers run along the Morton curve (see `FaceGeometry::new`).
        let order: Vec<u32> = (0..geometry.face_count() as u32).collect();
        // The tree, children after parents; leaves split ranges in halves.
        let mut clusters = Vec::new();
        let mut stack = vec![(0usize, order.len(), usize::MAX, 0usize)];
        while let Some((start, end, parent, slot)) = stack.pop() {
            let me = clusters.len();
            clusters.push(Cluster {
                start,
                end,
                center: [0.0; 3],
                radius_m: 0.0,
                children: None,
            });
            if parent != usize::MAX {
                let c = clusters[parent].children.get_or_insert([0, 0]);
                c[slot] = me;
            }
            if end - start > leaf_faces {
                let mid = start + (end - start) / 2;
                stack.push((mid, end, me, 1));
                stack.push((start, mid, me, 0));
            }
        }
        let corners = |f: u32| geometry.faces[f as usize].map(|i| geometry.vertices[i as usize]);
        // Centres (of the bounding box) and radii, from the faces themselves.
        let geom: Vec<([f64; 3], f64)> = clusters
            .par_iter()
            .map(|c| {
                let b = crate::field::tables::axis_bounds(
                    order[c.start..c.end].iter().flat_map(|&f| corners(f)),
                );
                let center = b.map(|(lo, span)| lo + 0.5 * span);
                let radius = order[c.start..c.end]
                    .iter()
                    .flat_map(|&f| corners(f))
                    .map(|v| norm(sub(v, center)))
                    .fold(0.0, f64::max);
                (center, radius)
            })
            .collect();
        for (c, (center, radius)) in clusters.iter_mut().zip(geom) {
            c.center = center;
            c.radius_m = radius;
        }
        let n = moment_len();
        let area_of = |f: u32| {
            let [a, b, c] = corners(f);
            0.5 * norm(cross(sub(b, a), sub(c, a)))
        };
        let total_area = order.iter().map(|&f| area_of(f)).sum();
        // Leaves: exact triangle moments; parents: children's moments moved, from the last
        // cluster back (children come after their parents).
        let mut moments = vec![0.0; clusters.len() * 4 * n];
        moments
            .par_chunks_mut(4 * n)
            .zip(&clusters)
            .filter(|(_, c)| c.children.is_none())
            .for_each(|(m, c)| {
                let mut g = vec![0.0; n];
                let mut scratch = [Vec::new(), Vec::new(), Vec::new(), Vec::new()];
                for &f in &order[c.start..c.end] {
                    let v = corners(f);
                    let rel = v.map(|p| sub(p, c.center));
                    triangle_moments(rel, area_of(f), &mut g, &mut scratch);
                    let nrm = geometry.normal(f as usize);
                    let w = [dot(nrm, rel[0]), nrm[0], nrm[1], nrm[2]];
                    for (d, wd) in w.iter().enumerate() {
                        for (o, gm) in m[d * n..(d + 1) * n].iter_mut().zip(&g) {
                            *o += wd * gm;
                        }
                    }
                }
            });
        for k in (0..clusters.len()).rev() {
            let Some(children) = clusters[k].children else {
                continue;
            };
            let mut acc = vec![0.0; 4 * n];
            for ch in children {
                // c_f about the parent = c_f about the child + n_f . (child - parent).
                let d = sub(clusters[ch].center, clusters[k].center);
                let src = &moments[ch * 4 * n..(ch + 1) * 4 * n];
                let mut dens_c = src[..n].to_vec();
                for j in 0..3 {
                    for (o, s) in dens_c.iter_mut().zip(&src[(j + 1) * n..(j + 2) * n]) {
                        *o += d[j] * s;
                    }
                }
                for dens in 0..4 {
                    let row = if dens == 0 {
                        shifted(&dens_c, d)
                    } else {
                        shifted(&src[dens * n..(dens + 1) * n], d)
                    };
                    for (o, s) in acc[dens * n..(dens + 1) * n].iter_mut().zip(&row) {
                        *o += s;
                    }
                }
            }
            moments[k * 4 * n..(k + 1) * 4 * n].copy_from_slice(&acc);
        }
        let leaf_sets = clusters
            .par_iter()
            .map(|c| {
                c.children
                    .is_none()
                    .then(|| FaceSet::new(geometry, &order[c.start..c.end]))
            })
            .collect();
        FarField {
            order,
            clusters,
            moments,
            leaf_sets,
            total_area,
        }
    }

    /// Bytes the tree takes: moments, face order, cluster records and the leaves' face tables.
    pub fn memory_bytes(&self) -> usize {
        std::mem::size_of_val(self.moments.as_slice())
            + std::mem::size_of_val(self.order.as_slice())
            + std::mem::size_of_val(self.clusters.as_slice())
            + self
                .leaf_sets
                .iter()
                .flatten()
                .map(FaceSet::heap_bytes)
                .sum::<usize>()
    }

    /// The clusters a point needs and how, the acceleration error of the expansions at most
    /// `tolerance` per unit `G rho`, in a fixed order (the tree's, depth first).
    fn needs(&self, x: [f64; 3], tolerance: f64, out: &mut Vec<Need>) {
        out.clear();
        // Per unit area: (1/2) ((a + r) E1 + E0) <= tolerance / total area.
        let allowed = tolerance / self.total_area;
        let mut stack = vec![0usize];
        while let Some(k) = stack.pop() {
            let c = &self.clusters[k];
            let r = norm(sub(x, c.center));
            let a = c.radius_m;
            if let Some(degree) = expansion_degree(a, r, allowed) {
                out.push(Need::Expansion {
                    cluster: k as u32,
                    degree: degree as u8,
                });
            } else if let Some([c0, c1]) = c.children {
                stack.push(c1);
                stack.push(c0);
            } else {
                out.push(Need::Exact { cluster: k as u32 });
            }
        }
    }

    /// Potential, gradient and (with `HESS`) Hessian of the whole mesh per unit `G rho` at
    /// `points`, the gradient within `tolerance` (per unit `G rho`) of the exact sums. A
    /// point's value does not depend on the other points evaluated with it.
    pub fn jets<const HESS: bool>(&self, points: &[Point3<f64>], tolerance: f64) -> Vec<SetJet> {
        // What each point needs, in its own order; a slot per need.
        let needs: Vec<Vec<Need>> = points
            .par_iter()
            .map(|p| {
                let mut v = Vec::new();
                self.needs([p.x, p.y, p.z], tolerance, &mut v);
                v
            })
            .collect();
        let mut offset = Vec::with_capacity(points.len() + 1);
        offset.push(0usize);
        for v in &needs {
            offset.push(offset.last().copied().unwrap_or(0) + v.len());
        }
        // Group by cluster: (point, slot, degree).
        let mut by_cluster: Vec<Vec<(u32, u32, u8)>> = vec![Vec::new(); self.clusters.len()];
        for (i, v) in needs.iter().enumerate() {
            for (j, need) in v.iter().enumerate() {
                let slot = (offset[i] + j) as u32;
                match *need {
                    Need::Expansion { cluster, degree } => {
                        by_cluster[cluster as usize].push((i as u32, slot, degree))
                    }
                    Need::Exact { cluster } => {
                        by_cluster[cluster as usize].push((i as u32, slot, u8::MAX))
                    }
                }
            }
        }
        drop(needs);
        let parts: Vec<Vec<(u32, SetJet)>> = by_cluster
            .into_par_iter()
            .enumerate()
            .filter(|(_, v)| !v.is_empty())
            .map(|(k, mut v)| {
                let mut out = Vec::with_capacity(v.len());
                let exact: Vec<(u32, u32)> = v
                    .iter()
                    .filter(|e| e.2 == u8::MAX)
                    .map(|e| (e.0, e.1))
                    .collect();
                if let (false, Some(set)) = (exact.is_empty(), &self.leaf_sets[k]) {
                    let pts: Vec<Point3<f64>> =
                        exact.iter().map(|e| points[e.0 as usize]).collect();
                    let mut scratch = Vec::new();
                    let jets = set_jets::<HESS>(set, &pts, &mut scratch);
                    out.extend(exact.iter().map(|e| e.1).zip(jets));
                }
                v.retain(|e| e.2 != u8::MAX);
                v.sort_unstable_by_key(|e| e.2);
                for group in v.chunks(LANES) {
                    let xs: [[f64; 3]; LANES] = std::array::from_fn(|l| {
                        let p = points[group[l.min(group.len() - 1)].0 as usize];
                        [p.x, p.y, p.z]
                    });
                    let degrees: [usize; LANES] =
                        std::array::from_fn(|l| group[l.min(group.len() - 1)].2 as usize);
                    let jets = self.expand::<HESS>(k, &xs, &degrees);
                    out.extend(group.iter().map(|e| e.1).zip(jets));
                }
                out
            })
            .collect();
        let mut slots = vec![SetJet::default(); offset[points.len()]];
        for part in parts {
            for (slot, jet) in part {
                slots[slot as usize] = jet;
            }
        }
        (0..points.len())
            .map(|i| {
                let mut sum = SetJet::default();
                for s in &slots[offset[i]..offset[i + 1]] {
                    sum.add(s, 1.0);
                }
                sum
            })
            .collect()
    }

    /// Cluster `k`'s expansion at up to [`LANES`] points, each truncated at its own degree.
    fn expand<const HESS: bool>(
        &self,
        k: usize,
        xs: &[[f64; 3]; LANES],
        degrees: &[usize; LANES],
    ) -> [SetJet; LANES] {
        let n = moment_len();
        let c = self.clusters[k].center;
        let m = &self.moments[k * 4 * n..(k + 1) * 4 * n];
        let at = LanePoints {
            rel: std::array::from_fn(|a| std::array::from_fn(|l| xs[l][a] - c[a])),
            degrees: *degrees,
        };
        expand_lanes::<HESS>(m, n, &at)
    }

    /// Faces in the tree (for tests).
    #[cfg(test)]
    fn face_count(&self) -> usize {
        self.order.len()
    }
}

/// Lowest degree at which a cluster of radius `a` seen from distance `r` keeps the acceleration
/// error per unit area within `allowed` (see the module docs), if any up to [`MAX_ORDER`].
fn expansion_degree(a: f64, r: f64, allowed: f64) -> Option<usize> {
    // Not outside the cluster's ball (or not a number): no expansion.
    if r.partial_cmp(&a) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    let q = a / r;
    let one_minus = 1.0 - q;
    // q^(p+1), starting at p = 0.
    let mut qp = q;
    for p in 0..=MAX_ORDER {
        let e0 = qp / (r * one_minus);
        let e1 = qp / (r * r) * ((p as f64 + 2.0) / one_minus + q / (one_minus * one_minus));
        if 0.5 * ((a + r) * e1 + e0) <= allowed {
            return Some(p);
        }
        qp *= q;
    }
    None
}

/// Up to [`LANES`] points relative to an expansion's centre (lanes side by side), lane `l`
/// truncated after degree `degrees[l]`.
struct LanePoints {
    rel: [[f64; LANES]; 3],
    degrees: [usize; LANES],
}

/// The expansion with moments `m` (four rows of `n`) at the points `at`.
fn expand_lanes<const HESS: bool>(m: &[f64], n: usize, at: &LanePoints) -> [SetJet; LANES] {
    thread_local! {
        static B: std::cell::RefCell<Vec<[f64; LANES]>> = const { std::cell::RefCell::new(Vec::new()) };
    }
    B.with(|b| {
        let mut b = b.borrow_mut();
        let zero = zero_slot() as usize;
        if b.len() != zero + 1 {
            *b = vec![[0.0; LANES]; zero + 1];
        }
        expand_into::<HESS>(&mut b, m, n, at)
    })
}

/// [`expand_lanes`] with the rows of `b_alpha` in `b` (its last row zeros).
#[multiversion(targets("x86_64+avx512f+avx512dq+avx2+fma+avx", "x86_64+avx2+fma+avx"))]
fn expand_into<const HESS: bool>(
    b: &mut [[f64; LANES]],
    m: &[f64],
    n: usize,
    at: &LanePoints,
) -> [SetJet; LANES] {
    let ix = Index::get();
    let (rel, degrees) = (&at.rel, &at.degrees);
    let top = degrees.iter().copied().max().unwrap_or(0);
    let reach = top + if HESS { 2 } else { 1 };
    let r2: [f64; LANES] = std::array::from_fn(|l| {
        rel[0][l] * rel[0][l] + rel[1][l] * rel[1][l] + rel[2][l] * rel[2][l]
    });
    let inv_r2: [f64; LANES] = std::array::from_fn(|l| 1.0 / r2[l]);
    b[0] = std::array::from_fn(|l| inv_r2[l].sqrt());
    for k in 1..=reach {
        let (c1, c2) = ((2 * k - 1) as f64 / k as f64, (k - 1) as f64 / k as f64);
        for t in ix.count[k - 1]..ix.count[k] {
            let d1 = ix.down1[t];
            let d2 = ix.down2[t];
            let (a0, a1, a2) = (b[d1[0] as usize], b[d1[1] as usize], b[d1[2] as usize]);
            let (e0, e1, e2) = (b[d2[0] as usize], b[d2[1] as usize], b[d2[2] as usize]);
            let mut row = [0.0; LANES];
            for l in 0..LANES {
                let s1 = rel[0][l] * a0[l] + rel[1][l] * a1[l] + rel[2][l] * a2[l];
                let s2 = e0[l] + e1[l] + e2[l];
                row[l] = (c1 * s1 - c2 * s2) * inv_r2[l];
            }
            b[t] = row;
        }
    }
    // Totals and one degree's part (added to the totals of the lanes that reach it): the value
    // of K = M^c - R . M^n, its gradient and Hessian; S^n and its gradient (gsn[j][i] =
    // d S^n_j / d x_i).
    let mut total = [[0.0; LANES]; 22];
    for deg in 0..=top {
        let mut part = [[0.0; LANES]; 22];
        let lo = if deg == 0 { 0 } else { ix.count[deg - 1] };
        for t in lo..ix.count[deg] {
            let al = ix.alpha[t];
            let mc = m[t];
            let mn = [m[n + t], m[2 * n + t], m[3 * n + t]];
            let mut kv = [0.0; LANES];
            for l in 0..LANES {
                kv[l] = mc - rel[0][l] * mn[0] - rel[1][l] * mn[1] - rel[2][l] * mn[2];
            }
            let b0 = b[t];
            let up1 = ix.up1[t];
            for l in 0..LANES {
                part[0][l] += b0[l] * kv[l];
            }
            for i in 0..3 {
                let w = -((al[i] + 1) as f64);
                let bi = b[up1[i] as usize];
                let mut wb = [0.0; LANES];
                for l in 0..LANES {
                    wb[l] = w * bi[l];
                }
                for l in 0..LANES {
                    part[1 + i][l] += wb[l] * kv[l];
                    part[4 + i][l] += b0[l] * mn[i];
                }
                if HESS {
                    for l in 0..LANES {
                        part[7 + i][l] += wb[l] * mn[0];
                        part[10 + i][l] += wb[l] * mn[1];
                        part[13 + i][l] += wb[l] * mn[2];
                    }
                }
            }
            if HESS {
                let up2 = ix.up2[t];
                for (p, &(i, j)) in PAIRS.iter().enumerate() {
                    let w = ((al[i] + 1) * (al[j] + 1 + usize::from(i == j))) as f64;
                    let bij = b[up2[p] as usize];
                    for l in 0..LANES {
                        part[16 + p][l] += w * bij[l] * kv[l];
                    }
                }
            }
        }
        let used = if HESS { 22 } else { 7 };
        for q in 0..used {
            for l in 0..LANES {
                if deg <= degrees[l] {
                    total[q][l] += part[q][l];
                }
            }
        }
    }
    std::array::from_fn(|l| {
        // U = (1/2)(S^c - R . S^n); dU/dx_i = (1/2)(dK_i - S^n_i);
        // d2U/dx_i dx_j = (1/2)(d2K_ij - dS^n_i/dx_j - dS^n_j/dx_i).
        let grad = std::array::from_fn(|i| 0.5 * (total[1 + i][l] - total[4 + i][l]));
        let gsn = |j: usize, i: usize| total[7 + 3 * j + i][l];
        let hess = if HESS {
            std::array::from_fn(|p| {
                let (i, j) = PAIRS[p];
                0.5 * (total[16 + p][l] - gsn(i, j) - gsn(j, i))
            })
        } else {
            [0.0; 6]
        };
        SetJet {
            potential: 0.5 * total[0][l],
            grad,
            hess,
            omega: 0.0,
        }
    })
}

#[cfg(test)]
mod tests {
    use super::super::face_set::set_jet;
    use super::*;
    use crate::field::exterior::gauss_legendre_01;
    use crate::generate;

    /// `integral over the triangle of y^alpha dA` by a collapsed (Duffy) product of
    /// Gauss–Legendre rules, exact for polynomials of degree up to 2k - 2 in each variable.
    fn quadrature_moments(v: [[f64; 3]; 3], area: f64, k: usize) -> Vec<f64> {
        let ix = Index::get();
        let rule = gauss_legendre_01(k);
        let mut out = vec![0.0; moment_len()];
        for &(s, ws) in &rule {
            for &(t, wt) in &rule {
                // (s, t) in the unit square to the triangle: u = s, v = (1 - s) t, Jacobian 1 - s.
                let (u, w) = (s, (1.0 - s) * t);
                let y: [f64; 3] = std::array::from_fn(|a| {
                    v[0][a] + u * (v[1][a] - v[0][a]) + w * (v[2][a] - v[0][a])
                });
                let weight = 2.0 * area * ws * wt * (1.0 - s);
                for (m, al) in ix.alpha[..moment_len()].iter().enumerate() {
                    out[m] += weight
                        * y[0].powi(al[0] as i32)
                        * y[1].powi(al[1] as i32)
                        * y[2].powi(al[2] as i32);
                }
            }
        }
        out
    }

    fn triangle() -> ([[f64; 3]; 3], f64) {
        let v = [[0.3, -0.2, 0.1], [1.1, 0.4, -0.3], [-0.2, 0.9, 0.5]];
        (v, 0.5 * norm(cross(sub(v[1], v[0]), sub(v[2], v[0]))))
    }

    #[test]
    fn triangle_moments_match_quadrature() {
        // The simplex identity against a 16 x 16 collapsed Gauss rule (exact to degree 30 in
        // each variable, so to rounding here).
        let (v, area) = triangle();
        let mut got = vec![0.0; moment_len()];
        let mut scratch = [Vec::new(), Vec::new(), Vec::new(), Vec::new()];
        triangle_moments(v, area, &mut got, &mut scratch);
        let want = quadrature_moments(v, area, 16);
        for (m, (g, w)) in got.iter().zip(&want).enumerate() {
            assert!(
                (g - w).abs() <= 1e-13 * w.abs().max(1e-3),
                "{:?}: {g} vs {w}",
                Index::get().alpha[m]
            );
        }
    }

    #[test]
    fn shifted_moments_equal_moments_about_the_new_centre() {
        let (v, area) = triangle();
        let d = [0.25, -0.4, 0.15];
        let mut scratch = [Vec::new(), Vec::new(), Vec::new(), Vec::new()];
        let mut about_old = vec![0.0; moment_len()];
        triangle_moments(v, area, &mut about_old, &mut scratch);
        // About new = old - d: corners relative to it are v + d.
        let moved = v.map(|p| [p[0] + d[0], p[1] + d[1], p[2] + d[2]]);
        let mut about_new = vec![0.0; moment_len()];
        triangle_moments(moved, area, &mut about_new, &mut scratch);
        let got = shifted(&about_old, d);
        for (g, w) in got.iter().zip(&about_new) {
            assert!((g - w).abs() <= 1e-12 * w.abs().max(1e-3), "{g} vs {w}");
        }
    }

    #[test]
    fn degree_bound_holds_for_a_point_mass_pair() {
        // The Legendre tail bound against the exact remainder of 1/|x - y| for |y| = a.
        let a = 1.0f64;
        for r in [1.5, 2.0, 4.0] {
            let x = [r, 0.0, 0.0];
            let y = [a * 0.6, a * 0.8, 0.0];
            let ix = Index::get();
            for p in [2usize, 6, 12] {
                // Truncated series: sum over |alpha| <= p of b_alpha(x) y^alpha, via expand_lanes
                // on a unit "moment" y^alpha.
                let n = moment_len();
                let mut m = vec![0.0; 4 * n];
                for (t, al) in ix.alpha[..n].iter().enumerate() {
                    m[t] =
                        y[0].powi(al[0] as i32) * y[1].powi(al[1] as i32) * y[2].powi(al[2] as i32);
                }
                let rel: [[f64; LANES]; 3] = std::array::from_fn(|k| [x[k]; LANES]);
                let at = LanePoints {
                    rel,
                    degrees: [p; LANES],
                };
                let jets = expand_lanes::<false>(&m, n, &at);
                let exact = 1.0 / norm(sub(x, y));
                let err = (2.0 * jets[0].potential - exact).abs();
                let q = a / r;
                let bound = q.powi(p as i32 + 1) / (r - a);
                assert!(err <= bound, "r {r} p {p}: {err} > {bound}");
                assert!(err > 1e-4 * bound, "the bound should not be absurdly loose");
            }
        }
    }

    #[test]
    fn the_tree_matches_the_exact_sums_within_its_tolerance() {
        // Small leaves so that expansions, opened clusters and exact leaves all occur; points
        // on the surface, just off it, inside and well away.
        let mesh = generate::demo_body(3);
        let g = FaceGeometry::new(&mesh);
        let far = FarField::with_leaf_faces(&g, 16);
        assert_eq!(far.face_count(), g.face_count());
        let all: Vec<u32> = (0..g.face_count() as u32).collect();
        let v0 = mesh.vertices_m[5];
        let c0 = mesh.triangle(40);
        let mid = (c0[0].coords + c0[1].coords) * 0.5;
        let points = vec![
            v0,
            Point3::from(mid * 1.001),
            Point3::from(mid * 0.5),
            Point3::new(0.0, 0.0, 0.0),
            Point3::new(4000.0, -2500.0, 1200.0),
            Point3::new(9000.0, 300.0, -7000.0),
            Point3::from(v0.coords * 1.3),
        ];
        for tol_rel in [1e-6, 1e-10] {
            let g_scale = 1e3; // per unit G rho, ~ V / R^2 for the demo body
            let tol = tol_rel * g_scale;
            let got = far.jets::<true>(&points, tol);
            let mut needs = Vec::new();
            let mut expansions = 0;
            for (p, j) in points.iter().zip(&got) {
                let want = set_jet::<true>(&g, &all, p);
                let err = norm(sub(j.grad, want.grad));
                assert!(err <= tol, "at {p:?}: gradient off by {err:e} > {tol:e}");
                let scale = norm(want.grad).max(1.0);
                assert!((j.potential - want.potential).abs() <= 1e-3 * scale * 3e3);
                if !points[..1].contains(p) {
                    for k in 0..6 {
                        assert!(
                            (j.hess[k] - want.hess[k]).abs()
                                <= 1e-4 * want.hess.iter().fold(0.0f64, |m, h| m.max(h.abs())),
                            "hessian at {p:?}: {:?} vs {:?}",
                            j.hess,
                            want.hess
                        );
                    }
                }
                far.needs([p.x, p.y, p.z], tol, &mut needs);
                expansions += needs
                    .iter()
                    .filter(|n| matches!(n, Need::Expansion { .. }))
                    .count();
            }
            assert!(expansions > 0, "the expansions were never used");
            // The same points one at a time give the same bits (the Hessian at the vertex is
            // not a number, so the potential and gradient are compared).
            for (p, j) in points.iter().zip(&got) {
                let alone = far.jets::<true>(&[*p], tol)[0];
                assert_eq!(alone.potential.to_bits(), j.potential.to_bits());
                assert_eq!(alone.grad.map(f64::to_bits), j.grad.map(f64::to_bits));
            }
        }
    }

    #[test]
    fn values_do_not_depend_on_the_batch() {
        let mesh = generate::demo_body(3);
        let g = FaceGeometry::new(&mesh);
        let far = FarField::with_leaf_faces(&g, 16);
        let mut points = Vec::new();
        for k in 0..3000u32 {
            let f = (k as usize * 37) % g.face_count();
            let t = mesh.triangle(f);
            let c = (t[0].coords + t[1].coords + t[2].coords) / 3.0;
            let s = 1.0 + (k % 17) as f64 * 0.01;
            points.push(Point3::from(c * s));
        }
        let tol = 1e-7;
        let all = far.jets::<true>(&points, tol);
        let again = far.jets::<true>(&points, tol);
        let chunked: Vec<SetJet> = points
            .chunks(97)
            .flat_map(|c| far.jets::<true>(c, tol))
            .collect();
        for k in 0..points.len() {
            assert_eq!(
                all[k].grad.map(f64::to_bits),
                again[k].grad.map(f64::to_bits),
                "{k} again"
            );
            assert_eq!(
                all[k].grad.map(f64::to_bits),
                chunked[k].grad.map(f64::to_bits),
                "{k} chunked"
            );
            assert_eq!(
                all[k].hess.map(f64::to_bits),
                chunked[k].hess.map(f64::to_bits),
                "{k} chunked"
            );
        }
    }
}
