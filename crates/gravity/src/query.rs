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

/// The BVH over the faces of a mesh (leaf shape index = face index).
#[derive(Debug, Clone)]
pub(crate) struct FaceBvh {
    nodes: Vec<BvhNode<f64, 3>>,
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

    /// Entry parameter of the ray into `aabb` within [0, t_max], or None if it misses.
    fn enter(&self, aabb: &Aabb<f64, 3>, t_max: f64) -> Option<f64> {
        let mut lo = 0.0_f64;
        let mut hi = t_max;
        for i in 0..3 {
            if self.zero[i] {
                if self.origin[i] < aabb.min[i] || self.origin[i] > aabb.max[i] {
                    return None;
                }
                continue;
            }
            let t1 = (aabb.min[i] - self.origin[i]) * self.inv_dir[i];
            let t2 = (aabb.max[i] - self.origin[i]) * self.inv_dir[i];
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

impl FaceBvh {
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
        FaceBvh { nodes: bvh.nodes }
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
        if self.nodes.is_empty()
            || !(dir.iter().all(|d| d.is_finite()) && origin.iter().all(|x| x.is_finite()))
            || dir.norm_squared() == 0.0
            || max_t.is_nan()
            || max_t < 0.0
        {
            return None;
        }
        let ray = SlabRay::new(origin, dir);
        let mut best_t = max_t;
        let mut best_face = None;
        let mut stack: Vec<usize> = Vec::with_capacity(64);
        stack.push(0);
        while let Some(node) = stack.pop() {
            match &self.nodes[node] {
                BvhNode::Leaf { shape_index, .. } => {
                    let tri = mesh.triangle(*shape_index);
                    if let Some(t) = ray_triangle(origin, dir, &tri, EDGE_SLACK) {
                        if t >= 0.0 && t <= best_t {
                            best_t = t;
                            best_face = Some(*shape_index);
                        }
                    }
                }
                BvhNode::Node {
                    child_l_index,
                    child_l_aabb,
                    child_r_index,
                    child_r_aabb,
                    ..
                } => {
                    let l = ray.enter(child_l_aabb, best_t);
                    let r = ray.enter(child_r_aabb, best_t);
                    match (l, r) {
                        (Some(tl), Some(tr)) => {
                            // Push the far child first so the near one is visited first.
                            if tl <= tr {
                                stack.push(*child_r_index);
                                stack.push(*child_l_index);
                            } else {
                                stack.push(*child_l_index);
                                stack.push(*child_r_index);
                            }
                        }
                        (Some(_), None) => stack.push(*child_l_index),
                        (None, Some(_)) => stack.push(*child_r_index),
                        (None, None) => {}
                    }
                }
            }
        }
        // The root of a one-face tree is a leaf, handled above; a root node's own box is the
        // union of its children's, so it needs no test of its own.
        best_face.map(|face| SurfaceHit {
            t: best_t,
            point_m: origin + dir * best_t,
            face,
            front_face: dir.dot(&normals[face]) < 0.0,
        })
    }

    /// Number of faces crossed by the ray `origin + t dir`, t > 0 (exact barycentric test).
    fn crossings(&self, mesh: &Mesh, origin: &Point3<f64>, dir: &Vector3<f64>) -> usize {
        let ray = SlabRay::new(origin, dir);
        let mut count = 0;
        let mut stack: Vec<usize> = Vec::with_capacity(64);
        stack.push(0);
        while let Some(node) = stack.pop() {
            match &self.nodes[node] {
                BvhNode::Leaf { shape_index, .. } => {
                    let tri = mesh.triangle(*shape_index);
                    if let Some(t) = ray_triangle(origin, dir, &tri, 0.0) {
                        if t > 0.0 {
                            count += 1;
                        }
                    }
                }
                BvhNode::Node {
                    child_l_index,
                    child_l_aabb,
                    child_r_index,
                    child_r_aabb,
                    ..
                } => {
                    if ray.enter(child_l_aabb, f64::INFINITY).is_some() {
                        stack.push(*child_l_index);
                    }
                    if ray.enter(child_r_aabb, f64::INFINITY).is_some() {
                        stack.push(*child_r_index);
                    }
                }
            }
        }
        count
    }

    /// Inside test by the parity of surface crossings along three fixed, unrelated directions,
    /// majority vote (a ray grazing an edge or a vertex can miscount; two rarely do at once).
    pub(crate) fn contains(&self, mesh: &Mesh, p: &Point3<f64>) -> bool {
        if self.nodes.is_empty() || !p.iter().all(|x| x.is_finite()) {
            return false;
        }
        let dirs = [
            Vector3::new(0.577_215_664_9, 0.618_033_988_7, 0.532_088_886_2),
            Vector3::new(-0.707_106_781_2, 0.141_421_356_2, -0.692_820_323_0),
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
        if self.nodes.is_empty() || !p.iter().all(|x| x.is_finite()) {
            return None;
        }
        let mut best_d2 = f64::INFINITY;
        let mut best: Option<(usize, Point3<f64>)> = None;
        let mut stack: Vec<(usize, f64)> = Vec::with_capacity(64);
        stack.push((0, 0.0));
        while let Some((node, box_d2)) = stack.pop() {
            if box_d2 > best_d2 {
                continue;
            }
            match &self.nodes[node] {
                BvhNode::Leaf { shape_index, .. } => {
                    let q = closest_on_triangle(p, &mesh.triangle(*shape_index));
                    let d2 = (q - p).norm_squared();
                    if d2 < best_d2 {
                        best_d2 = d2;
                        best = Some((*shape_index, q));
                    }
                }
                BvhNode::Node {
                    child_l_index,
                    child_l_aabb,
                    child_r_index,
                    child_r_aabb,
                    ..
                } => {
                    let dl = child_l_aabb.min_distance_squared(*p);
                    let dr = child_r_aabb.min_distance_squared(*p);
                    let (near, dn, far, df) = if dl <= dr {
                        (*child_l_index, dl, *child_r_index, dr)
                    } else {
                        (*child_r_index, dr, *child_l_index, dl)
                    };
                    if df <= best_d2 {
                        stack.push((far, df));
                    }
                    if dn <= best_d2 {
                        stack.push((near, dn));
                    }
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
