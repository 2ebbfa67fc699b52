//! Geometry queries on a shape model through a bounding-volume hierarchy (the `bvh` crate, in
//! f64): first hit of a ray or segment, nearest surface point, inside test.
//!
//! The BVH is walked by hand (front to back, pruned by the best hit so far) so a short segment
//! only visits the boxes it crosses; exact triangle tests are done in f64.

use bvh::aabb::{Aabb, Bounded};
use bvh::bounding_hierarchy::BHShape;
use bvh::bvh::{Bvh, BvhNode};
use nalgebra::{Point3, Vector3};
use serde::Serialize;

use crate::mesh::Mesh;

/// Where a query met the surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SurfaceHit {
    /// Ray parameter: in units of the ray direction for ray queries, in [0, 1] along the segment
    /// for segment queries, the distance in metres for nearest-point queries.
    pub t: f64,
    /// The point on the surface, body frame, m.
    pub point_m: Point3<f64>,
    /// Index of the face that was hit.
    pub face: usize,
    /// True when the surface was met from outside (direction . outward normal < 0). For the
    /// nearest-point query: true when the query point is on the outer side of that face's plane.
    pub front_face: bool,
}

/// Barycentric slack of the ray–triangle test, so a ray through an edge or a vertex hits at
/// least one of the faces that share it.
const EDGE_SLACK: f64 = 1e-10;

/// A face's bounding box, as the `bvh` crate wants it.
#[derive(Debug, Clone)]
struct FaceBox {
    aabb: Aabb<f64, 3>,
    node_index: usize,
}

impl Bounded<f64, 3> for FaceBox {
    fn aabb(&self) -> Aabb<f64, 3> {
        self.aabb
    }
}

impl BHShape<f64, 3> for FaceBox {
    fn set_bh_node_index(&mut self, index: usize) {
        self.node_index = index;
    }
    fn bh_node_index(&self) -> usize {
        self.node_index
    }
}

/// Marks a child slot that holds a face index instead of a node index.
const LEAF_BIT: u32 = 1 << 31;

/// An inner node of the flattened hierarchy: the boxes of both children (f32, rounded outward,
/// so they still contain their faces) and the children (node index, or face index | LEAF_BIT).
#[derive(Debug, Clone, Copy)]
struct FlatNode {
    lo: [[f32; 3]; 2],
    hi: [[f32; 3]; 2],
    child: [u32; 2],
}

/// The BVH over the faces of a mesh, built by the `bvh` crate (SAH, in f64) and flattened into
/// compact nodes (56 bytes instead of about 128) with faces stored directly in the child slots.
#[derive(Debug, Clone)]
pub(crate) struct FaceBvh {
    nodes: Vec<FlatNode>,
    /// Set when the mesh has a single face (the tree is one leaf).
    single_face: Option<u32>,
}

/// Largest f32 not above `x`.
fn f32_down(x: f64) -> f32 {
    let f = x as f32;
    if f64::from(f) > x { f.next_down() } else { f }
}

/// Smallest f32 not below `x`.
fn f32_up(x: f64) -> f32 {
    let f = x as f32;
    if f64::from(f) < x { f.next_up() } else { f }
}

/// Squared distance from `p` to the box `lo..hi`.
fn box_distance_squared(p: &Point3<f64>, lo: &[f32; 3], hi: &[f32; 3]) -> f64 {
    let mut d2 = 0.0;
    for i in 0..3 {
        let below = f64::from(lo[i]) - p[i];
        let above = p[i] - f64::from(hi[i]);
        let d = below.max(above).max(0.0);
        d2 += d * d;
    }
    d2
}

/// A ray prepared for slab tests.
struct SlabRay {
    origin: Point3<f64>,
    inv_dir: Vector3<f64>,
    zero: [bool; 3],
}

impl SlabRay {
    fn new(origin: &Point3<f64>, dir: &Vector3<f64>) -> SlabRay {
        SlabRay {
            origin: *origin,
            inv_dir: dir.map(|d| 1.0 / d),
            zero: [dir.x == 0.0, dir.y == 0.0, dir.z == 0.0],
        }
    }

    /// Entry parameter of the ray into the box `min..max` within [0, t_max], or None.
    fn enter(&self, min: &[f32; 3], max: &[f32; 3], t_max: f64) -> Option<f64> {
        let mut lo = 0.0_f64;
        let mut hi = t_max;
        for i in 0..3 {
            let (b0, b1) = (f64::from(min[i]), f64::from(max[i]));
            if self.zero[i] {
                if self.origin[i] < b0 || self.origin[i] > b1 {
                    return None;
                }
                continue;
            }
            let t1 = (b0 - self.origin[i]) * self.inv_dir[i];
            let t2 = (b1 - self.origin[i]) * self.inv_dir[i];
            lo = lo.max(t1.min(t2));
            hi = hi.min(t1.max(t2));
            if lo > hi {
                return None;
            }
        }
        Some(lo)
    }
}

/// Möller & Trumbore (1997), "Fast, minimum storage ray-triangle intersection": the ray
/// parameter of the hit, with `slack` widening the barycentric test.
fn ray_triangle(
    origin: &Point3<f64>,
    dir: &Vector3<f64>,
    [a, b, c]: &[Point3<f64>; 3],
    slack: f64,
) -> Option<f64> {
    let e1 = b - a;
    let e2 = c - a;
    let p = dir.cross(&e2);
    let det = e1.dot(&p);
    if det == 0.0 || !det.is_finite() {
        return None;
    }
    let inv = 1.0 / det;
    let s = origin - a;
    let u = s.dot(&p) * inv;
    if u < -slack || u > 1.0 + slack {
        return None;
    }
    let q = s.cross(&e1);
    let v = dir.dot(&q) * inv;
    if v < -slack || u + v > 1.0 + slack {
        return None;
    }
    Some(e2.dot(&q) * inv)
}

/// Closest point to `p` on triangle `abc`: Ericson (2005), "Real-Time Collision Detection",
/// section 5.1.5 (Voronoi regions of the vertices, edges and face).
fn closest_on_triangle(p: &Point3<f64>, [a, b, c]: &[Point3<f64>; 3]) -> Point3<f64> {
    let ab = b - a;
    let ac = c - a;
    let ap = p - a;
    let d1 = ab.dot(&ap);
    let d2 = ac.dot(&ap);
    if d1 <= 0.0 && d2 <= 0.0 {
        return *a;
    }
    let bp = p - b;
    let d3 = ab.dot(&bp);
    let d4 = ac.dot(&bp);
    if d3 >= 0.0 && d4 <= d3 {
        return *b;
    }
    let vc = d1 * d4 - d3 * d2;
    if vc <= 0.0 && d1 >= 0.0 && d3 <= 0.0 {
        return a + ab * (d1 / (d1 - d3));
    }
    let cp = p - c;
    let d5 = ab.dot(&cp);
    let d6 = ac.dot(&cp);
    if d6 >= 0.0 && d5 <= d6 {
        return *c;
    }
    let vb = d5 * d2 - d1 * d6;
    if vb <= 0.0 && d2 >= 0.0 && d6 <= 0.0 {
        return a + ac * (d2 / (d2 - d6));
    }
    let va = d3 * d6 - d5 * d4;
    if va <= 0.0 && (d4 - d3) >= 0.0 && (d5 - d6) >= 0.0 {
        return b + (c - b) * ((d4 - d3) / ((d4 - d3) + (d5 - d6)));
    }
    let denom = 1.0 / (va + vb + vc);
    a + ab * (vb * denom) + ac * (vc * denom)
}

/// Relative tolerance of the crossing test: barycentric and segment parameters within it of a
/// boundary count as on the boundary.
const CROSSING_TOL: f64 = 1e-9;

/// Whether segment `p -> q` meets triangle `tri`. With `strict`, only a crossing through the
/// triangle's interior away from the segment's ends counts (for triangles that share a vertex,
/// which touch there); otherwise touching counts too. Segments in the triangle's plane never
/// count (coplanar overlaps are not detected).
fn segment_meets_triangle(
    p: &Point3<f64>,
    q: &Point3<f64>,
    [a, b, c]: &[Point3<f64>; 3],
    strict: bool,
) -> bool {
    let dir = q - p;
    let e1 = b - a;
    let e2 = c - a;
    let h = dir.cross(&e2);
    let det = e1.dot(&h);
    let scale = e1.norm() * e2.norm() * dir.norm();
    if det.abs() <= 1e-12 * scale || !det.is_finite() {
        return false;
    }
    let inv = 1.0 / det;
    let s = p - a;
    let u = s.dot(&h) * inv;
    let k = s.cross(&e1);
    let v = dir.dot(&k) * inv;
    let t = e2.dot(&k) * inv;
    let tol = if strict { CROSSING_TOL } else { -CROSSING_TOL };
    u > tol && v > tol && u + v < 1.0 - tol && t > tol && t < 1.0 - tol
}

/// Whether two triangles cross: an edge of one meets the other. Triangles sharing a vertex only
/// count when they cross away from it.
fn triangles_cross(t1: &[Point3<f64>; 3], t2: &[Point3<f64>; 3], share_vertex: bool) -> bool {
    let edges = |t: &[Point3<f64>; 3]| [(t[0], t[1]), (t[1], t[2]), (t[2], t[0])];
    edges(t1)
        .iter()
        .any(|(p, q)| segment_meets_triangle(p, q, t2, share_vertex))
        || edges(t2)
            .iter()
            .any(|(p, q)| segment_meets_triangle(p, q, t1, share_vertex))
}

impl FaceBvh {
    /// Calls `visit` on every face whose box overlaps the box `lo..hi`, until it returns true;
    /// returns whether it did.
    fn any_overlapping(
        &self,
        lo: &Point3<f64>,
        hi: &Point3<f64>,
        mut visit: impl FnMut(usize) -> bool,
    ) -> bool {
        if let Some(face) = self.single_face {
            return visit(face as usize);
        }
        if self.nodes.is_empty() {
            return false;
        }
        let overlaps = |nlo: &[f32; 3], nhi: &[f32; 3]| {
            (0..3).all(|k| f64::from(nlo[k]) <= hi[k] && f64::from(nhi[k]) >= lo[k])
        };
        let mut stack: Vec<u32> = Vec::with_capacity(64);
        stack.push(0);
        while let Some(index) = stack.pop() {
            if index & LEAF_BIT != 0 {
                if visit((index & !LEAF_BIT) as usize) {
                    return true;
                }
                continue;
            }
            let node = &self.nodes[index as usize];
            for slot in 0..2 {
                if overlaps(&node.lo[slot], &node.hi[slot]) {
                    stack.push(node.child[slot]);
                }
            }
        }
        false
    }

    /// The first pair of faces `(a, b)`, `a < b`, that cross each other (lowest `a`), if any.
    /// Faces that share an edge are not tested; faces that share a vertex only count when they
    /// cross away from it.
    pub(crate) fn first_crossing_pair(&self, mesh: &Mesh) -> Option<(usize, usize)> {
        use rayon::prelude::*;
        (0..mesh.faces.len()).into_par_iter().find_map_first(|a| {
            let fa = mesh.faces[a];
            let ta = mesh.triangle(a);
            let lo = ta[0].inf(&ta[1]).inf(&ta[2]);
            let hi = ta[0].sup(&ta[1]).sup(&ta[2]);
            let mut found = None;
            let mut lowest = usize::MAX;
            self.any_overlapping(&lo, &hi, |b| {
                if b <= a || b >= lowest {
                    return false;
                }
                let fb = mesh.faces[b];
                let shared = fa.iter().filter(|v| fb.contains(v)).count();
                if shared < 2 && triangles_cross(&ta, &mesh.triangle(b), shared == 1) {
                    lowest = b;
                    found = Some((a, b));
                }
                false
            });
            found
        })
    }

    /// Builds the hierarchy over the faces of `mesh`, boxes padded by a hair (1e-9 of the mesh
    /// size) so flat boxes of axis-aligned faces keep a thickness.
    pub(crate) fn build(mesh: &Mesh) -> FaceBvh {
        let size = mesh
            .vertices_m
            .iter()
            .map(|p| p.coords.amax())
            .fold(0.0, f64::max);
        let pad = Vector3::repeat(1e-9 * size.max(f64::MIN_POSITIVE));
        let mut boxes: Vec<FaceBox> = (0..mesh.faces.len())
            .map(|f| {
                let [a, b, c] = mesh.triangle(f);
                FaceBox {
                    aabb: Aabb::with_bounds(a.inf(&b).inf(&c) - pad, a.sup(&b).sup(&c) + pad),
                    node_index: 0,
                }
            })
            .collect();
        let bvh = Bvh::build_with_executor(&mut boxes, bvh::bvh::rayon_executor);
        FaceBvh::flatten(&bvh.nodes)
    }

    /// Converts the `bvh` crate's nodes (root at 0) to [`FlatNode`]s (root at 0).
    fn flatten(nodes: &[BvhNode<f64, 3>]) -> FaceBvh {
        match nodes.first() {
            None => {
                return FaceBvh {
                    nodes: Vec::new(),
                    single_face: None,
                };
            }
            Some(BvhNode::Leaf { shape_index, .. }) => {
                return FaceBvh {
                    nodes: Vec::new(),
                    single_face: Some(*shape_index as u32),
                };
            }
            Some(BvhNode::Node { .. }) => {}
        }
        let mut flat: Vec<FlatNode> = Vec::with_capacity(nodes.len() / 2 + 1);
        // (source node, slot in the parent to patch).
        let mut todo: Vec<(usize, Option<(usize, usize)>)> = vec![(0, None)];
        while let Some((source, parent)) = todo.pop() {
            let BvhNode::Node {
                child_l_index,
                child_l_aabb,
                child_r_index,
                child_r_aabb,
                ..
            } = &nodes[source]
            else {
                continue;
            };
            let here = flat.len();
            if let Some((p, slot)) = parent {
                flat[p].child[slot] = here as u32;
            }
            let mut node = FlatNode {
                lo: [[0.0; 3]; 2],
                hi: [[0.0; 3]; 2],
                child: [0; 2],
            };
            for (slot, (index, aabb)) in
                [(child_l_index, child_l_aabb), (child_r_index, child_r_aabb)]
                    .into_iter()
                    .enumerate()
            {
                node.lo[slot] = [0, 1, 2].map(|k| f32_down(aabb.min[k]));
                node.hi[slot] = [0, 1, 2].map(|k| f32_up(aabb.max[k]));
                match &nodes[*index] {
                    BvhNode::Leaf { shape_index, .. } => {
                        node.child[slot] = *shape_index as u32 | LEAF_BIT;
                    }
                    BvhNode::Node { .. } => todo.push((*index, Some((here, slot)))),
                }
            }
            flat.push(node);
        }
        FaceBvh {
            nodes: flat,
            single_face: None,
        }
    }

    /// Calls `visit` on the faces whose boxes the ray meets within [0, t_max()], front to back
    /// by box entry; `t_max` is re-read after every face so hits can shrink it.
    fn walk_ray(
        &self,
        ray: &SlabRay,
        mut t_max: impl FnMut() -> f64,
        mut visit: impl FnMut(usize),
    ) {
        if let Some(face) = self.single_face {
            visit(face as usize);
            return;
        }
        if self.nodes.is_empty() {
            return;
        }
        let mut stack: Vec<u32> = Vec::with_capacity(64);
        stack.push(0);
        while let Some(index) = stack.pop() {
            if index & LEAF_BIT != 0 {
                visit((index & !LEAF_BIT) as usize);
                continue;
            }
            let node = &self.nodes[index as usize];
            let limit = t_max();
            let l = ray.enter(&node.lo[0], &node.hi[0], limit);
            let r = ray.enter(&node.lo[1], &node.hi[1], limit);
            match (l, r) {
                (Some(tl), Some(tr)) => {
                    // Push the far child first so the near one is visited first.
                    if tl <= tr {
                        stack.push(node.child[1]);
                        stack.push(node.child[0]);
                    } else {
                        stack.push(node.child[0]);
                        stack.push(node.child[1]);
                    }
                }
                (Some(_), None) => stack.push(node.child[0]),
                (None, Some(_)) => stack.push(node.child[1]),
                (None, None) => {}
            }
        }
    }

    /// First hit of `origin + t dir` for t in [0, max_t].
    pub(crate) fn first_hit(
        &self,
        mesh: &Mesh,
        normals: &[nalgebra::Unit<Vector3<f64>>],
        origin: &Point3<f64>,
        dir: &Vector3<f64>,
        max_t: f64,
    ) -> Option<SurfaceHit> {
        if !(dir.iter().all(|d| d.is_finite()) && origin.iter().all(|x| x.is_finite()))
            || dir.norm_squared() == 0.0
            || max_t.is_nan()
            || max_t < 0.0
        {
            return None;
        }
        let ray = SlabRay::new(origin, dir);
        let best = std::cell::Cell::new((max_t, None::<usize>));
        self.walk_ray(
            &ray,
            || best.get().0,
            |face| {
                let tri = mesh.triangle(face);
                if let Some(t) = ray_triangle(origin, dir, &tri, EDGE_SLACK)
                    && t >= 0.0
                    && t <= best.get().0
                {
                    best.set((t, Some(face)));
                }
            },
        );
        let (t, face) = best.get();
        face.map(|face| SurfaceHit {
            t,
            point_m: origin + dir * t,
            face,
            front_face: dir.dot(&normals[face]) < 0.0,
        })
    }

    /// Number of faces crossed by the ray `origin + t dir`, t > 0 (exact barycentric test).
    fn crossings(&self, mesh: &Mesh, origin: &Point3<f64>, dir: &Vector3<f64>) -> usize {
        let ray = SlabRay::new(origin, dir);
        let mut count = 0;
        self.walk_ray(
            &ray,
            || f64::INFINITY,
            |face| {
                if let Some(t) = ray_triangle(origin, dir, &mesh.triangle(face), 0.0)
                    && t > 0.0
                {
                    count += 1;
                }
            },
        );
        count
    }

    /// Inside test by the parity of surface crossings along three fixed, unrelated directions,
    /// majority vote (a ray grazing an edge or a vertex can miscount; two rarely do at once).
    pub(crate) fn contains(&self, mesh: &Mesh, p: &Point3<f64>) -> bool {
        if !p.iter().all(|x| x.is_finite()) {
            return false;
        }
        let dirs = [
            Vector3::new(0.577_215_664_9, 0.618_033_988_7, 0.532_088_886_2),
            Vector3::new(-0.683_012_701_9, 0.151_321_245_7, -0.714_285_714_3),
            Vector3::new(0.267_949_192_4, -0.841_470_984_8, 0.469_846_310_4),
        ];
        let votes = dirs
            .iter()
            .filter(|d| self.crossings(mesh, p, d) % 2 == 1)
            .count();
        votes >= 2
    }

    /// Nearest point of the surface to `p`.
    pub(crate) fn nearest(
        &self,
        mesh: &Mesh,
        normals: &[nalgebra::Unit<Vector3<f64>>],
        p: &Point3<f64>,
    ) -> Option<SurfaceHit> {
        if !p.iter().all(|x| x.is_finite()) || mesh.faces.is_empty() {
            return None;
        }
        let mut best_d2 = f64::INFINITY;
        let mut best: Option<(usize, Point3<f64>)> = None;
        let mut consider = |face: usize, best_d2: &mut f64| {
            let q = closest_on_triangle(p, &mesh.triangle(face));
            let d2 = (q - p).norm_squared();
            if d2 < *best_d2 {
                *best_d2 = d2;
                best = Some((face, q));
            }
        };
        if let Some(face) = self.single_face {
            consider(face as usize, &mut best_d2);
        } else if !self.nodes.is_empty() {
            let mut stack: Vec<(u32, f64)> = Vec::with_capacity(64);
            stack.push((0, 0.0));
            while let Some((index, box_d2)) = stack.pop() {
                if box_d2 > best_d2 {
                    continue;
                }
                if index & LEAF_BIT != 0 {
                    consider((index & !LEAF_BIT) as usize, &mut best_d2);
                    continue;
                }
                let node = &self.nodes[index as usize];
                let dl = box_distance_squared(p, &node.lo[0], &node.hi[0]);
                let dr = box_distance_squared(p, &node.lo[1], &node.hi[1]);
                let (near, dn, far, df) = if dl <= dr {
                    (node.child[0], dl, node.child[1], dr)
                } else {
                    (node.child[1], dr, node.child[0], dl)
                };
                if df <= best_d2 {
                    stack.push((far, df));
                }
                if dn <= best_d2 {
                    stack.push((near, dn));
                }
            }
        }
        best.map(|(face, q)| SurfaceHit {
            t: best_d2.sqrt(),
            point_m: q,
            face,
            front_face: (p - q).dot(&normals[face]) >= 0.0,
        })
    }
}
