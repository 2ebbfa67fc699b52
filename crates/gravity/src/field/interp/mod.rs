//! The interpolated field: the exact sums over the faces near a cell plus a fitted polynomial
//! for the rest, in an octree of cells from the surface out to where an exterior
//! spherical-harmonic expansion takes over.
//!
//! # The split
//! The potential of the polyhedron is a sum over its faces, `U = sum_f U_f` (the single-layer
//! split of `face_set`, whose per-face terms have exact, local gradients). In a cell of
//! half-width `h` the faces within `kappa h` of its centre (its *near set*) are summed exactly;
//! the rest, `F = U - sum_near U_f`, is analytic in a ball reaching past the cell's corners, so
//! a polynomial approximates it with an error falling geometrically with the degree. `F` is
//! biharmonic there (its Laplacian `-G rho sum_far omega_f` is harmonic), so the fit uses the
//! biharmonic polynomials of `basis` (`2 p^2 + 2` of them instead of `(p+1)(p+2)(p+3)/6`).
//! Right at the surface the near set holds the faces, edges and vertices whose terms are
//! singular (the gradient tensor diverges like `log d` at edges): those are summed exactly, so
//! the bound holds on the surface itself, where flights start, bounce and land.
//!
//! The interpolant is a potential, `U = G rho (sum_near U_f + P)`, and the acceleration is its
//! gradient, so the Jacobi constant is conserved by the integrator as with the direct field;
//! between cells the potential and acceleration jump by amounts below the error bound.
//!
//! # The build
//! The cells are fitted level by level from the root down. A cell's data (gradients and
//! Hessians of `F` at a fixed pattern of 125 points, 64 where no face is near, see `fit`) come
//! from the nearest ancestor whose fit held ("the source"): `F_cell = F_source +
//! sum_(near(source) - near(cell)) U_f`, the source's polynomial plus exact sums over the ring
//! of faces between the two near sets (the ring's gradient tensor includes terms an open set of
//! faces has; by Stokes' theorem they are a line integral around the ring's boundary, see the
//! field kernel). Neighbouring cells share the fit points on their common side (the patterns
//! sit on one lattice): a cell takes a shared point from a side neighbour that computed it,
//! adding the faces near that neighbour and not near itself and taking off the converse
//! (`F_cell = F_neighbour + sum_(near(neighbour) - near(cell)) U_f - sum_(near(cell) -
//! near(neighbour)) U_f`, about a seventh of a ring), where the neighbour's source is no less
//! accurate than its own. The faces are numbered along a Morton curve through their centroids,
//! so the faces of a near set or a ring lie close together in memory. So only the top cells, which have no source, need the whole mesh's field:
//! the exact sums, or on large meshes a tree of face clusters whose far members are Taylor
//! expansions with a rigorous error bound (`far_field`; that bound, a small share of the error
//! budget, is added to those cells' measured errors). Each fit is checked at 64 points it did not use
//! (27 in a cell with no near faces); its error there, added to its source's, is the cell's error. A cell
//! becomes a leaf when that error is below the bound and its near set is small enough to sum
//! quickly; otherwise it is split. Cells inside the body, and any cell the fit cannot bring
//! under the bound at the deepest level, evaluate the exact sums instead (never wrong, only
//! slower). Beyond the switch radius the exterior expansion, of a degree and radius chosen from
//! its rigorous truncation bound for the same error, takes over.
//!
//! Spinfall is for research and planning, not flight-certified.

pub(crate) mod basis;
mod build;
mod codec;
pub(crate) mod face_set;
pub(crate) mod far_field;
pub(crate) mod fit;
pub(crate) mod near;
pub(crate) mod poly3;
mod solid;

use std::sync::Arc;

use nalgebra::{Matrix3, Point3, Vector3};
use serde::{Deserialize, Serialize};

use super::exterior::Exterior;
use super::{FieldSample, PolyhedronGravity};
pub use build::{BuildProgress, build_interpolated};
pub use codec::cache_key;
use face_set::{FaceGeometry, set_jet};
use fit::{Solver, Space, monomial_jet};

/// How an interpolated field is built.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct InterpolationSettings {
    /// Largest relative error of the acceleration, as a fraction of the local gravity, allowed
    /// anywhere outside the body: in [1e-12, 1e-3].
    pub max_rel_error: f64,
    /// Most memory the field may take, bytes, its build included (the build stops with an
    /// error beyond it).
    pub max_memory_bytes: usize,
    /// Most faces summed exactly in a leaf cell (smaller: faster evaluation, more cells).
    pub leaf_near_faces: usize,
}

impl Default for InterpolationSettings {
    fn default() -> Self {
        InterpolationSettings {
            max_rel_error: 1e-9,
            max_memory_bytes: 4096 << 20,
            leaf_near_faces: 400,
        }
    }
}

/// What a build did and what the field takes.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct BuildStats {
    /// Cells of the octree (branches and leaves).
    pub cells: usize,
    /// Leaf cells with a fitted polynomial.
    pub leaves: usize,
    /// Cells that evaluate the exact sums (inside the body, or not fitted under the bound).
    pub exact_cells: usize,
    /// Deepest level of the octree.
    pub depth: usize,
    /// Exact field evaluations over the whole mesh made by the build.
    pub full_evaluations: u64,
    /// Face terms summed by the build in the rings between near sets (each one face at one
    /// point).
    pub ring_face_terms: u64,
    /// Largest error bound of a leaf (its own fit error plus its sources'), relative to the
    /// local gravity.
    pub worst_leaf_bound: f64,
    /// Average number of faces summed exactly in a leaf.
    pub mean_leaf_near_faces: f64,
    /// Largest polynomial degree used.
    pub max_degree: usize,
    /// Degree of the exterior expansion.
    pub exterior_degree: usize,
    /// Where the exterior expansion takes over, in Brillouin radii.
    pub switch_brillouin_multiple: f64,
    /// Wall-clock time of the build, s. Not serialised (stored fields and results files keep
    /// it out: it belongs to the process that built the field, not to the field), so 0 in a
    /// copy read back.
    #[serde(default, skip_serializing)]
    pub build_s: f64,
    /// Memory taken by the field (octree, polynomials, near sets, face data), bytes; the exact
    /// field it keeps for fallback cells adds its own tables.
    pub memory_bytes: usize,
    /// Most memory the build held at once (the field so far, the near sets and sources of a
    /// level's cells, and a chunk of cells being fitted), bytes; checked against the memory
    /// limit as the build goes. Not serialised, like `build_s` (0 in a copy read back).
    #[serde(default, skip_serializing)]
    pub build_peak_bytes: usize,
}

/// What answers a query of the interpolated field at a point (for diagnostics and timing).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Answer {
    /// Beyond the switch radius: the exterior expansion.
    Exterior,
    /// A fitted cell: exact sums over `near_faces` faces plus a polynomial of `degree` (0: none).
    Fitted {
        /// Faces summed exactly.
        near_faces: usize,
        /// Degree of the cell's polynomial.
        degree: u8,
    },
    /// The exact sums over the whole mesh (inside the body, or a cell not fitted).
    Exact,
}

impl std::fmt::Display for BuildStats {
    /// One line of every figure, for benchmarks and logs.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "built in {:.2} s; {} cells, {} leaves, {} exact cells, depth {}, max degree {}, \
             mean near faces {:.0}, worst leaf bound {:.2e}, {} full evaluations, {:.3e} ring \
             terms, {:.1} MB{}, switch at {:.2} R_B (exterior degree {})",
            self.build_s,
            self.cells,
            self.leaves,
            self.exact_cells,
            self.depth,
            self.max_degree,
            self.mean_leaf_near_faces,
            self.worst_leaf_bound,
            self.full_evaluations,
            self.ring_face_terms as f64,
            self.memory_bytes as f64 / 1e6,
            if self.build_peak_bytes > 0 {
                format!(
                    " ({:.0} MB at most while building)",
                    self.build_peak_bytes as f64 / 1e6
                )
            } else {
                String::new()
            },
            self.switch_brillouin_multiple,
            self.exterior_degree
        )
    }
}

/// A fitted leaf found for a point: its near faces, polynomial and cell.
struct LeafAt<'a> {
    faces: &'a [u32],
    coef: u32,
    space: Space,
    degree: u8,
    center: [f64; 3],
    half_m: f64,
}

/// One cell of the octree.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub(crate) enum Node {
    /// Split: its eight children are at `first_child ..` (order: bit 0 = +x, 1 = +y, 2 = +z).
    Branch { first_child: u32 },
    /// A fitted cell: polynomial coefficients at `coef`, of `degree`; near faces at
    /// `near .. near + near_len` of the near-face list.
    Leaf {
        coef: u32,
        space: Space,
        degree: u8,
        near: u32,
        near_len: u32,
    },
    /// Evaluated with the exact sums.
    Exact,
}

/// The polyhedron's field from an octree of fitted cells (see the module docs).
#[derive(Debug, Clone)]
pub struct InterpolatedGravity {
    pub(crate) exact: Arc<PolyhedronGravity>,
    pub(crate) geometry: Arc<FaceGeometry>,
    pub(crate) root_center: [f64; 3],
    pub(crate) root_half_m: f64,
    pub(crate) nodes: Vec<Node>,
    pub(crate) coefs: Vec<f64>,
    pub(crate) near_faces: Vec<u32>,
    pub(crate) exterior: Exterior,
    pub(crate) switch_radius_m: f64,
    pub(crate) settings: InterpolationSettings,
    pub(crate) stats: BuildStats,
}

/// A point of the cell with lattice `index` (per axis, counted from the root's low corner) and
/// half-width `h`: `offset` 0 is the cell's low side, 0.5 its centre, 1 its high side. The build
/// and the queries place cells with this one formula, so they agree to the bit, and the high
/// side of a cell is the low side of its neighbour to the bit.
pub(crate) fn lattice_point(
    root_center: [f64; 3],
    root_half_m: f64,
    h: f64,
    index: [i64; 3],
    offset: [f64; 3],
) -> [f64; 3] {
    std::array::from_fn(|a| root_center[a] - root_half_m + 2.0 * h * (index[a] as f64 + offset[a]))
}

impl InterpolatedGravity {
    /// The exact field it was built from (and falls back to inside the body).
    pub fn exact(&self) -> &PolyhedronGravity {
        &self.exact
    }

    /// The settings it was built with.
    pub fn settings(&self) -> &InterpolationSettings {
        &self.settings
    }

    /// What the build did.
    pub fn stats(&self) -> &BuildStats {
        &self.stats
    }

    /// Distance from the centre of mass beyond which the exterior expansion is used, m.
    pub fn switch_radius_m(&self) -> f64 {
        self.switch_radius_m
    }

    fn g_rho(&self) -> f64 {
        super::G_SI * self.exact.density_kg_m3()
    }

    /// The leaf cell holding `p`: its node, centre and half-width.
    fn locate(&self, p: &Point3<f64>) -> (Node, [f64; 3], f64) {
        let mut h = self.root_half_m;
        let mut index = [0i64; 3];
        let mut c = lattice_point(self.root_center, h, h, index, [0.5; 3]);
        let mut node = self.nodes[0];
        while let Node::Branch { first_child } = node {
            let q = [p.x > c[0], p.y > c[1], p.z > c[2]];
            let k = q[0] as usize | (q[1] as usize) << 1 | (q[2] as usize) << 2;
            h *= 0.5;
            for a in 0..3 {
                index[a] = 2 * index[a] + q[a] as i64;
            }
            c = lattice_point(self.root_center, self.root_half_m, h, index, [0.5; 3]);
            node = self.nodes[first_child as usize + k];
        }
        (node, c, h)
    }

    /// The fitted leaf holding `p`, if a fitted leaf holds it.
    fn leaf_at(&self, p: &Point3<f64>) -> Option<LeafAt<'_>> {
        match self.locate(p) {
            (
                Node::Leaf {
                    coef,
                    space,
                    degree,
                    near,
                    near_len,
                },
                center,
                half_m,
            ) => Some(LeafAt {
                faces: &self.near_faces[near as usize..(near + near_len) as usize],
                coef,
                space,
                degree,
                center,
                half_m,
            }),
            _ => None,
        }
    }

    /// A leaf's polynomial (in cell units) at `p`; degree 0 marks a leaf with none.
    fn poly_jet<const HESS: bool>(&self, leaf: &LeafAt<'_>, p: &Point3<f64>) -> poly3::Jet {
        if leaf.degree == 0 {
            return poly3::Jet::default();
        }
        let solver = Solver::get(leaf.space, leaf.degree as usize);
        let Some(layout) = solver.layout() else {
            return poly3::Jet::default();
        };
        let (c, h) = (leaf.center, leaf.half_m);
        let coef = leaf.coef as usize;
        let xi = [(p.x - c[0]) / h, (p.y - c[1]) / h, (p.z - c[2]) / h];
        monomial_jet::<HESS>(layout, &self.coefs[coef..coef + layout.len()], xi)
    }

    /// Whether `p` lies beyond the switch radius.
    fn far(&self, p: &Point3<f64>) -> bool {
        (p - self.exact.center_of_mass_m()).norm() > self.switch_radius_m
    }

    /// What answers a query at `p`: the exterior expansion, a fitted cell, or the exact sums.
    pub fn answer_at(&self, p: &Point3<f64>) -> Answer {
        if !(p.x.is_finite() && p.y.is_finite() && p.z.is_finite()) {
            return Answer::Exact;
        }
        if self.far(p) {
            return Answer::Exterior;
        }
        match self.leaf_at(p) {
            Some(leaf) => Answer::Fitted {
                near_faces: leaf.faces.len(),
                degree: leaf.degree,
            },
            None => Answer::Exact,
        }
    }

    /// Potential (m^2/s^2) and acceleration (m/s^2) at `p` (metres, body frame).
    pub fn potential_acceleration(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        if !(p.x.is_finite() && p.y.is_finite() && p.z.is_finite()) {
            return (f64::NAN, Vector3::from_element(f64::NAN));
        }
        if self.far(p) {
            let (u, a) = self
                .exterior
                .potential_acceleration(&(p - self.exact.center_of_mass_m()));
            return (self.g_rho() * u, self.g_rho() * a);
        }
        let Some(leaf) = self.leaf_at(p) else {
            return self.exact.potential_acceleration(p);
        };
        let nj = near::near(&self.geometry, leaf.faces, [p.x, p.y, p.z]);
        let fj = self.poly_jet::<false>(&leaf, p);
        let (g, h) = (self.g_rho(), leaf.half_m);
        (
            g * (nj.potential + fj.value),
            Vector3::new(
                nj.grad[0] + fj.grad[0] / h,
                nj.grad[1] + fj.grad[1] / h,
                nj.grad[2] + fj.grad[2] / h,
            ) * g,
        )
    }

    /// Potential, acceleration, gradient tensor, Laplacian and inside flag at `p`: the
    /// tensor is the Hessian of the interpolant (exact near sums plus the polynomial's), the
    /// Laplacian its trace, and the point counts as inside where `-Laplacian / (G rho)` exceeds
    /// `2 pi` (to the fit's accuracy; the exact field's rule is the same).
    pub fn evaluate(&self, p: &Point3<f64>) -> FieldSample {
        if self.far(p) || !(p.x.is_finite() && p.y.is_finite() && p.z.is_finite()) {
            return self.exact.evaluate(p);
        }
        let Some(leaf) = self.leaf_at(p) else {
            return self.exact.evaluate(p);
        };
        let nj = set_jet::<true>(&self.geometry, leaf.faces, p);
        let fj = self.poly_jet::<true>(&leaf, p);
        let (g, h) = (self.g_rho(), leaf.half_m);
        let d: [f64; 6] = std::array::from_fn(|k| g * (nj.hess[k] + fj.hess[k] / (h * h)));
        let gradient_s2 = Matrix3::new(d[0], d[1], d[2], d[1], d[3], d[4], d[2], d[4], d[5]);
        let laplacian_s2 = d[0] + d[3] + d[5];
        FieldSample {
            potential_m2_s2: g * (nj.potential + fj.value),
            acceleration_m_s2: Vector3::new(
                nj.grad[0] + fj.grad[0] / h,
                nj.grad[1] + fj.grad[1] / h,
                nj.grad[2] + fj.grad[2] / h,
            ) * g,
            gradient_s2,
            laplacian_s2,
            inside: -laplacian_s2 / g > 2.0 * std::f64::consts::PI + 1e-6,
        }
    }

    /// [`Self::potential_acceleration`] for many points, in parallel; each entry is bit-for-bit
    /// what a lone call gives.
    pub fn potential_acceleration_batch_into(
        &self,
        points: &[Point3<f64>],
        out: &mut [(f64, Vector3<f64>)],
    ) {
        use rayon::prelude::*;
        assert_eq!(points.len(), out.len(), "one output per point");
        out.par_iter_mut()
            .zip(points.par_iter())
            .with_min_len(16)
            .for_each(|(o, p)| *o = self.potential_acceleration(p));
    }

    /// [`Self::evaluate`] for many points, in parallel.
    pub fn evaluate_batch(&self, points: &[Point3<f64>]) -> Vec<FieldSample> {
        use rayon::prelude::*;
        points
            .par_iter()
            .with_min_len(16)
            .map(|p| self.evaluate(p))
            .collect()
    }
}
