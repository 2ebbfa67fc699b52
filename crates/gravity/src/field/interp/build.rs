//! Building the octree of the interpolated field, level by level (see the parent module).

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::time::Instant;

use nalgebra::{Point3, Vector3};
use rayon::prelude::*;

use super::face_set::{FaceGeometry, FaceSet, SetJet, set_jets};
use super::far_field::FarField;
use super::fit::{MONOMIAL_MAX_DEGREE, Pattern, ROWS_PER_POINT, Solver, Space};
use super::{BuildStats, InterpolatedGravity, InterpolationSettings, Node, lattice_point};
use super::{poly3, solid};
use crate::error::{GravityError, Result};
use crate::field::exterior::Exterior;
use crate::field::{MassSpec, PolyhedronGravity};
use crate::mesh::Mesh;

/// Where a build has got to (for progress bars).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BuildProgress {
    /// Octree level being fitted (0 = the root).
    pub level: usize,
    /// Cells of that level done.
    pub cells_done: usize,
    /// Cells in that level.
    pub cells_in_level: usize,
    /// Leaf cells so far.
    pub leaves: usize,
    /// Seconds since the build started.
    pub elapsed_s: f64,
}

/// Polynomial degrees tried, lowest first (the lowest that meets the budget is kept): leaves
/// use those up to `MONOMIAL_MAX_DEGREE`, cells that only feed their children any.
fn degrees(space: Space) -> impl Iterator<Item = usize> {
    (4..=space.max_degree()).step_by(2)
}

/// Cells fitted from the exact field only once their near set is at most this share of the
/// faces: above, a fit costs two sums over most of the mesh per sample and its children's
/// rings would be nearly as costly; the cell is split without one.
const TOP_FRACTION: f64 = 0.25;

/// Meshes from this many faces fit their top cells (those with no source) to the tree of
/// face clusters (`far_field`) instead of sums over every face: each such sample costs a
/// few hundred expansions and the exact sums over the faces around it instead of a term per
/// face of the mesh. Measured on the demo body at 1e-7: 20,480 faces 7.7 s with the tree, 7.8 s
/// without; 100,820 faces 34.6 s against 41.2 s; 1,003,520 faces 388 s against 645 s (README,
/// Performance).
const FAR_FIELD_MIN_FACES: usize = 50_000;

/// Share of the error bound the cluster tree's error may take (its acceleration error is at
/// most this share of the bound times the gravity floor, and is added to the errors measured at
/// the check points of the cells fitted to it).
const FAR_SHARE: f64 = 0.05;

/// Cells fitted together (their data, fits of every degree, and checks), a level at a time in
/// chunks of this many: ~50 kB each, so ~200 MB in flight. Neighbours lend each other fit
/// points within a chunk.
const FIT_CHUNK_CELLS: usize = 4096;

/// Memory of one cell being fitted, bytes: its data at the template points (~21 kB, kept
/// while its neighbours borrow them), the data it is fitted to (~12 kB) and its fits of every
/// degree (~13 kB), rounded up.
const FIT_CELL_BYTES: usize = 50_000;

/// Memory of a ring's tables per face, bytes (vertices, face and edge data, edge dyads),
/// rounded up.
const RING_FACE_BYTES: usize = 160;

/// Deepest level of the octree.
const MAX_DEPTH: usize = 24;

/// Share of the error bound left by its sources that a leaf's fit may use (the errors measured
/// at the check points are the largest seen there, not the largest anywhere: the rest is the
/// margin for that).
const LEAF_SHARE: f64 = 0.5;

/// Share of the error bound left by its sources that a cell whose children will be fitted
/// from it may use (leaving the rest to them).
const SOURCE_SHARE: f64 = 0.2;

/// Degrees of the exterior expansion tried, lowest first: the lowest whose switch radius for
/// the bound is within [`SWITCH_TARGET`] Brillouin radii is used (else the highest).
const EXTERIOR_DEGREES: [usize; 5] = [12, 16, 20, 24, 28];

/// Switch radius aimed at, Brillouin radii: beyond it the octree would hold many cells far from
/// the body that the expansion covers more cheaply.
const SWITCH_TARGET: f64 = 3.0;

/// The near-set radius of a leaf, in cell half-widths, for a bound: larger for tighter bounds
/// (the fit's error falls like `(corner distance / near radius)^p`), small for fast leaves.
fn leaf_kappa(max_rel_error: f64) -> f64 {
    if max_rel_error >= 1e-7 {
        3.0
    } else if max_rel_error >= 2e-9 {
        4.0
    } else {
        5.0
    }
}

/// The near-set radius of a cell that feeds its children, in half-widths: large enough that
/// its fit leaves room in the bound for theirs (a source's error is in all its descendants'),
/// no larger than that, since the rings its children sum grow with its square (a child's ring
/// is the faces between its own near set and its source's). The radius only moves cost between
/// fits and rings: every fit is still checked against the bound. On the demo body at 100,820
/// facets and 1e-7, 4 half-widths instead of 5 cut the ring terms from 1.0e10 to 7.0e9 and the
/// whole-mesh evaluations from 138k to 103k (same leaves); at 5,120 facets and 1e-9, 4 left too
/// few sources and was slower than 6 (README, Performance).
fn source_kappa(max_rel_error: f64) -> f64 {
    if max_rel_error >= 1e-8 {
        4.0
    } else if max_rel_error >= 2e-9 {
        5.0
    } else {
        6.0
    }
}

/// Rigorous bound of the exterior expansion's acceleration error, relative to `GM / r^2`, at
/// `q = R_B / r` truncated after degree `n`: the degree-`k` term of any mass inside the
/// Brillouin sphere is at most `(k+1) q^k` of `GM / r^2` (its potential is at most `q^k` of
/// `GM / r` since `|P_k| <= 1`, and the gradient adds the factor `k+1` since
/// `(k+1)^2 P_k^2 + sin^2 P_k'^2 <= (k+1)^2`), so the tail is `sum_(k>n) (k+1) q^k`.
pub(crate) fn exterior_tail(q: f64, n: usize) -> f64 {
    ((n + 1)..2000)
        .map(|k| (k + 1) as f64 * q.powi(k as i32))
        .take_while(|t| *t > 1e-300)
        .sum()
}

/// The exterior degree and switch radius (Brillouin radii) for relative acceleration error
/// `eps`, given `g_ratio(r)`: the smallest `|g| r^2 / GM` on the sphere of `r` Brillouin
/// radii. At the switch radius the tail bound is a quarter of the budget.
fn exterior_choice(eps: f64, g_ratio: &dyn Fn(f64) -> f64) -> (usize, f64) {
    let mut choice = (EXTERIOR_DEGREES[0], f64::INFINITY);
    for &n in &EXTERIOR_DEGREES {
        // Smallest r (largest q) meeting the bound, by bisection on q in (0, 0.95).
        let ok = |q: f64| exterior_tail(q, n) <= 0.25 * eps * g_ratio(1.0 / q);
        let (mut lo, mut hi) = (0.01, 0.95);
        if !ok(lo) {
            continue;
        }
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if ok(mid) {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        choice = (n, 1.0 / lo);
        if choice.1 <= SWITCH_TARGET {
            break;
        }
    }
    choice
}

/// The representation a cell's data come from: the polynomial of an ancestor (none: the
/// exact field) and that ancestor's near set.
struct Source {
    poly: Option<Poly>,
    near: Arc<Vec<u32>>,
    error: f64,
}

struct Poly {
    /// Basis coefficients (constant first), evaluated by the recurrences of `solid` when
    /// `monomials` is `None` (degrees above `MONOMIAL_MAX_DEGREE`).
    coef: Vec<f64>,
    /// The same polynomial in monomials, for fast evaluation.
    monomials: Option<Vec<f64>>,
    space: Space,
    degree: usize,
    center: [f64; 3],
    half_m: f64,
}

impl Poly {
    /// [`Poly::jet`] at each of `points`, eight at a time (the same bits as one at a time).
    fn jets(&self, points: &[Point3<f64>]) -> Vec<SetJet> {
        let solver = Solver::get(self.space, self.degree);
        let (Some(m), Some(layout)) = (&self.monomials, solver.layout()) else {
            return points.iter().map(|p| self.jet(p)).collect();
        };
        let h = self.half_m;
        let mut out = Vec::with_capacity(points.len());
        for block in points.chunks(poly3::LANES) {
            let at = |a: usize| -> [f64; poly3::LANES] {
                std::array::from_fn(|l| {
                    let p = block[l.min(block.len() - 1)];
                    (p[a] - self.center[a]) / h
                })
            };
            let jets = poly3::eval_lanes(layout, m, &at(0), &at(1), &at(2));
            out.extend(jets[..block.len()].iter().map(|j| SetJet {
                potential: j.value,
                grad: j.grad.map(|g| g / h),
                hess: j.hess.map(|v| v / (h * h)),
                omega: 0.0,
            }));
        }
        out
    }

    /// Value, gradient and Hessian per unit `G rho` at `p`.
    fn jet(&self, p: &Point3<f64>) -> SetJet {
        let h = self.half_m;
        let xi = [
            (p.x - self.center[0]) / h,
            (p.y - self.center[1]) / h,
            (p.z - self.center[2]) / h,
        ];
        let solver = Solver::get(self.space, self.degree);
        let j = match (&self.monomials, solver.layout()) {
            (Some(m), Some(layout)) => super::fit::monomial_jet::<true>(layout, m, xi),
            _ => solid::eval::<true>(self.space, self.degree, &self.coef, xi),
        };
        SetJet {
            potential: j.value,
            grad: j.grad.map(|g| g / h),
            hess: j.hess.map(|v| v / (h * h)),
            omega: 0.0,
        }
    }
}

/// A cell waiting to be fitted.
struct Pending {
    node: usize,
    /// Lattice index of the cell among those of its depth (see [`lattice_point`]).
    index: [i64; 3],
    center: [f64; 3],
    half_m: f64,
    depth: usize,
    /// Faces within the source radius (a superset of every descendant's near sets).
    near: Arc<Vec<u32>>,
    /// The faces summed exactly in this cell's fit: those within the leaf radius when the cell
    /// may be a leaf (few enough of them), else `near`.
    fit_near: Arc<Vec<u32>>,
    /// Whether the cell may become a leaf.
    leaf_candidate: bool,
    /// Whether the cell is known to lie wholly outside the body (a part of a cell that is).
    clear_outside: bool,
    source: Arc<Source>,
}

impl Pending {
    /// The function space of the cell's fit: harmonic where no face is near.
    fn space(&self) -> Space {
        if self.fit_near.is_empty() {
            Space::Harmonic
        } else {
            Space::Biharmonic
        }
    }

    /// The cell's fit and check points, in metres, placed on the lattice so that the fit
    /// points on a side shared with a neighbour are the same to the bit in both cells.
    fn template_points(&self, b: &Builder<'_>) -> Vec<Point3<f64>> {
        let t = Pattern::get(self.space());
        t.fit_points
            .iter()
            .chain(&t.check_points)
            .map(|xi| {
                // The root cell: the cube of half-width the switch radius about the centre of
                // mass.
                let p = lattice_point(
                    b.com,
                    b.switch_radius_m,
                    self.half_m,
                    self.index,
                    xi.map(|x| 0.5 * (1.0 + x)),
                );
                Point3::new(p[0], p[1], p[2])
            })
            .collect()
    }

    /// Lattice keys of the fit points (same order as [`Pending::template_points`]): equal
    /// keys, equal points, within one depth.
    fn fit_keys(&self) -> Vec<[i64; 3]> {
        let t = Pattern::get(self.space());
        t.fit_keys
            .iter()
            .map(|k| std::array::from_fn(|a| self.index[a] * t.key_stride + k[a]))
            .collect()
    }
}

/// What fitting one cell gave.
enum Outcome {
    Leaf {
        coef: Coef,
        space: Space,
        degree: usize,
        error: f64,
    },
    Exact,
    Split {
        source: Arc<Source>,
    },
}

/// A leaf's polynomial: its coefficients until they are copied into the field's array, then
/// where they are there (a deep level's leaves would otherwise hold ~1 GB of coefficients at
/// 1M facets until the level ends).
enum Coef {
    /// Basis coefficients (constant first) of a fit, until converted to monomials by `conv`
    /// with the other leaves of their chunk (one matrix product per degree).
    Basis {
        coef: Vec<f64>,
        conv: &'static nalgebra::DMatrix<f64>,
    },
    /// Monomial coefficients.
    Owned(Vec<f64>),
    At(usize),
}

impl Coef {
    /// Copies owned coefficients to the end of `field` (once) and says where they are.
    fn place(&mut self, field: &mut Vec<f64>) -> usize {
        let at = field.len();
        match self {
            Coef::Owned(c) => field.extend_from_slice(c),
            // Converted alone (leaves normally arrive converted, see `convert_leaves`).
            Coef::Basis { coef, conv } => {
                field.extend_from_slice(
                    (*conv * nalgebra::DVector::from_column_slice(coef)).as_slice(),
                );
            }
            Coef::At(at) => return *at,
        }
        *self = Coef::At(at);
        at
    }
}

/// `n` unit vectors spread over the sphere (a Fibonacci lattice).
fn sphere_directions(n: usize) -> Vec<Vector3<f64>> {
    (0..n)
        .map(|i| {
            let z = 1.0 - 2.0 * (i as f64 + 0.5) / n as f64;
            let phi = i as f64 * 2.399_963_229_728_653;
            let s = (1.0 - z * z).sqrt();
            Vector3::new(s * phi.cos(), s * phi.sin(), z)
        })
        .collect()
}

/// Elements of `a` not in `b` (both sorted).
fn difference(a: &[u32], b: &[u32]) -> Vec<u32> {
    let mut out = Vec::with_capacity(a.len().saturating_sub(b.len()));
    let mut j = 0;
    for &x in a {
        while j < b.len() && b[j] < x {
            j += 1;
        }
        if j < b.len() && b[j] == x {
            continue;
        }
        out.push(x);
    }
    out
}

struct Builder<'a> {
    exact: &'a PolyhedronGravity,
    geometry: &'a FaceGeometry,
    settings: InterpolationSettings,
    leaf_kappa: f64,
    source_kappa: f64,
    com: [f64; 3],
    switch_radius_m: f64,
    all_faces: Arc<Vec<u32>>,
    full_evaluations: AtomicU64,
    /// Error allowed the data of cells fitted to the cluster tree, relative to the gravity
    /// floor (0 without the tree: their data are then the exact sums).
    far_share: f64,
    ring_face_terms: AtomicU64,
    /// Whether each cell's fit is printed (`SPINFALL_TRACE`).
    trace_cells: bool,
    /// Whether neighbours lend fit points (see [`lend`]).
    lend: bool,
    /// Where lent data are counted when they are checked against the cell's own (tests).
    verify_loans: Option<&'static AtomicU64>,
    /// Floor of the gravity that errors are relative to, per unit `G rho`: a tenth of
    /// `GM / R_B^2`, below every surface value, so that points deep inside the body (where
    /// gravity vanishes at the centre, and no particle flies) do not dictate the fits.
    g_floor: f64,
}

impl Builder<'_> {
    /// The source-radius and fit near sets of a cell (sorted) from its parent's source-radius
    /// set, and whether the cell may be a leaf.
    fn near_sets(
        &self,
        parent_near: &[u32],
        center: [f64; 3],
        half_m: f64,
    ) -> (Vec<u32>, Vec<u32>, bool) {
        let (rs, rl) = (self.source_kappa * half_m, self.leaf_kappa * half_m);
        let mut near = Vec::new();
        let mut leaf = Vec::new();
        for &f in parent_near {
            let d = self.geometry.distance_to_face(f as usize, center);
            if d <= rs {
                near.push(f);
                if d <= rl {
                    leaf.push(f);
                }
            }
        }
        let candidate = leaf.len() <= self.settings.leaf_near_faces;
        (near, leaf, candidate)
    }

    /// Whether the cell box meets the ball where the octree is used.
    fn in_region(&self, center: [f64; 3], half_m: f64) -> bool {
        let d2: f64 = (0..3)
            .map(|a| {
                let d = ((center[a] - self.com[a]).abs() - half_m).max(0.0);
                d * d
            })
            .sum();
        d2.sqrt() <= self.switch_radius_m
    }

    /// The data of one cell, from its source, at its template `points` (fit points first, then
    /// check points): `F` (per unit `G rho`) and, at the check points, the gradient of the total
    /// field. `exact_at` holds the exact field (per unit `G rho`) at the template points when the
    /// source is the exact field. Fit points marked in `borrowed` are left at zero (a neighbour
    /// lends them, see [`lend`]).
    fn source_data(
        &self,
        cell: &Pending,
        points: &[Point3<f64>],
        exact_at: Option<&[SetJet]>,
        borrowed: &[bool],
    ) -> (Vec<SetJet>, Vec<[f64; 3]>) {
        let t = Pattern::get(cell.space());
        let mut scratch = Vec::new();
        let near_tables = FaceSet::new(self.geometry, &cell.fit_near);
        let nfit = t.fit_points.len();
        let own: Vec<usize> = (0..points.len())
            .filter(|&k| !borrowed.get(k).copied().unwrap_or(false))
            .collect();
        let own_fit = own.partition_point(|&k| k < nfit);
        let own_points: Vec<Point3<f64>> = own.iter().map(|&k| points[k]).collect();
        match (&cell.source.poly, exact_at) {
            (None, Some(exact)) => {
                // The check points need no Hessian (nor have one in `exact`).
                let mut near = set_jets::<true>(&near_tables, &own_points[..own_fit], &mut scratch);
                near.extend(set_jets::<false>(
                    &near_tables,
                    &own_points[own_fit..],
                    &mut scratch,
                ));
                let mut data = vec![SetJet::default(); points.len()];
                let mut total = vec![[0.0; 3]; points.len()];
                for (&k, n) in own.iter().zip(&near) {
                    let mut f = exact[k];
                    f.add(n, -1.0);
                    data[k] = f;
                    total[k] = exact[k].grad;
                }
                (data, total)
            }
            (source_poly, _) => {
                // The near sums are needed for the total gravity at the check points only
                // (the size errors are relative to); a point's sums do not depend on the
                // other points evaluated with it.
                let near_at_checks = set_jets::<false>(&near_tables, &points[nfit..], &mut scratch);
                // F_cell = F_source + (faces near the source but not here) - (faces near here
                // but not near the source), at the fit points not borrowed and the check
                // points.
                let plus = difference(&cell.source.near, &cell.fit_near);
                let minus = difference(&cell.fit_near, &cell.source.near);
                self.ring_face_terms.fetch_add(
                    ((plus.len() + minus.len()) * own.len()) as u64,
                    Ordering::Relaxed,
                );
                // The fit points need the Hessian, the check points only the gradient.
                let mut ring = |faces: &[u32]| {
                    let set = FaceSet::new(self.geometry, faces);
                    let mut jets = set_jets::<true>(&set, &own_points[..own_fit], &mut scratch);
                    jets.extend(set_jets::<false>(
                        &set,
                        &own_points[own_fit..],
                        &mut scratch,
                    ));
                    jets
                };
                let plus = ring(&plus);
                let minus = ring(&minus);
                let mut data = vec![SetJet::default(); points.len()];
                let mut total = vec![[0.0; 3]; points.len()];
                let from_source = source_poly.as_ref().map(|s| s.jets(&own_points));
                for (i, &k) in own.iter().enumerate() {
                    let mut f = from_source.as_ref().map(|j| j[i]).unwrap_or_default();
                    f.add(&plus[i], 1.0);
                    f.add(&minus[i], -1.0);
                    let mut tot = f;
                    if let Some(n) = k.checked_sub(nfit).map(|c| &near_at_checks[c]) {
                        tot.add(n, 1.0);
                    }
                    data[k] = f;
                    total[k] = tot.grad;
                }
                (data, total)
            }
        }
    }

    /// What a cell is fitted to, from its data at the template points (see
    /// [`Builder::source_data`]); `source_error` bounds the error of those data.
    fn prepared(
        &self,
        cell: &Pending,
        data: &[SetJet],
        total: &[[f64; 3]],
        source_error: f64,
    ) -> Prepared {
        let nfit = Pattern::get(cell.space()).fit_points.len();
        let h = cell.half_m;
        let mut derivs = Vec::with_capacity(nfit * ROWS_PER_POINT);
        let mut values = Vec::with_capacity(nfit);
        for f in &data[..nfit] {
            derivs.extend(f.grad.iter().map(|g| g * h));
            derivs.extend(f.hess.iter().map(|v| v * h * h));
            values.push(f.potential);
        }
        let checks = data[nfit..]
            .iter()
            .zip(&total[nfit..])
            .map(|(f, g)| {
                let g = (g[0] * g[0] + g[1] * g[1] + g[2] * g[2]).sqrt();
                (f.grad, g.max(self.g_floor))
            })
            .collect();
        Prepared {
            space: cell.space(),
            derivs,
            values,
            checks,
            source_error,
        }
    }

    /// Chooses the lowest degree whose fit meets the budget and what the cell becomes;
    /// `fits[d]` holds the non-constant basis coefficients of the `d`-th degree of
    /// [`degrees`] and their gradients at the check points.
    fn decide(&self, cell: &Pending, prep: &Prepared, fits: &[Fit]) -> Outcome {
        let space = prep.space;
        let pattern = Pattern::get(space);
        let h = cell.half_m;
        let remaining = (self.settings.max_rel_error - prep.source_error).max(0.0);
        let small = cell.leaf_candidate;
        let leaf_budget = remaining * LEAF_SHARE;
        let source_budget = remaining * SOURCE_SHARE;
        // Error of each degree at the check points (data from the cluster tree may be off by
        // up to its share of the bound).
        let far_error = if cell.source.poly.is_none() {
            self.far_share * self.settings.max_rel_error
        } else {
            0.0
        };
        let errors: Vec<(usize, f64)> = degrees(space)
            .zip(fits)
            .map(|(p, fit)| {
                let g = &fit.check_gradients;
                let err = prep
                    .checks
                    .iter()
                    .enumerate()
                    .map(|(k, (grad_f, gn))| {
                        let d = Vector3::new(
                            g[3 * k] / h - grad_f[0],
                            g[3 * k + 1] / h - grad_f[1],
                            g[3 * k + 2] / h - grad_f[2],
                        );
                        d.norm() / gn
                    })
                    .fold(0.0, f64::max)
                    + far_error;
                (p, err)
            })
            .collect();
        let full = |i: usize| -> Vec<f64> {
            let mut v = vec![pattern.constant(&fits[i].coef, &prep.values)];
            v.extend_from_slice(&fits[i].coef);
            v
        };
        let leaf = errors
            .iter()
            .position(|&(p, e)| p <= MONOMIAL_MAX_DEGREE && e <= leaf_budget);
        let source = errors.iter().position(|&(_, e)| e <= source_budget);
        if self.trace_cells {
            let best = errors.iter().fold(f64::INFINITY, |m, e| m.min(e.1));
            eprintln!(
                "depth {} h {:.0} near {} src {} srcerr {:.1e} leaf {:?} source {:?} best {best:.2e} r {:.2}",
                cell.depth,
                h,
                cell.fit_near.len(),
                if cell.source.poly.is_some() {
                    "poly"
                } else {
                    "exact"
                },
                prep.source_error,
                leaf.map(|i| errors[i].0),
                source.map(|i| errors[i].0),
                ((cell.center[0] - self.com[0]).powi(2)
                    + (cell.center[1] - self.com[1]).powi(2)
                    + (cell.center[2] - self.com[2]).powi(2))
                .sqrt()
                    / self.exact.brillouin_radius_m()
            );
        }
        if let Some(i) = leaf
            && (small || cell.depth >= MAX_DEPTH)
        {
            let (p, err) = errors[i];
            if let Some(conv) = Solver::get(space, p).to_monomials() {
                return Outcome::Leaf {
                    coef: Coef::Basis {
                        coef: full(i),
                        conv,
                    },
                    space,
                    degree: p,
                    error: prep.source_error + err,
                };
            }
        }
        if cell.depth >= MAX_DEPTH {
            return Outcome::Exact;
        }
        let source = if let Some(i) = source {
            let (p, err) = errors[i];
            let coef = full(i);
            let monomials = Solver::get(space, p).monomials(&coef);
            Arc::new(Source {
                poly: Some(Poly {
                    monomials,
                    coef,
                    space,
                    degree: p,
                    center: cell.center,
                    half_m: h,
                }),
                near: Arc::clone(&cell.fit_near),
                error: prep.source_error + err,
            })
        } else if remaining < 0.25 * self.settings.max_rel_error && cell.source.poly.is_some() {
            // The chain of sources has used up most of the bound: start again from the exact
            // field.
            Arc::new(Source {
                poly: None,
                near: Arc::clone(&self.all_faces),
                error: 0.0,
            })
        } else {
            Arc::clone(&cell.source)
        };
        Outcome::Split { source }
    }
}

/// The data one cell is fitted to.
struct Prepared {
    space: Space,
    derivs: Vec<f64>,
    values: Vec<f64>,
    /// At each check point: the gradient of the smooth part and the size of the total gravity,
    /// per unit `G rho`.
    checks: Vec<([f64; 3], f64)>,
    /// Bound of the error of the data (relative to the gravity floor): their source's (a
    /// neighbour lends only from a source no less accurate).
    source_error: f64,
}

/// One degree's fit of one cell.
struct Fit {
    /// Non-constant basis coefficients.
    coef: Vec<f64>,
    /// The fit's gradients (cell units) at the check points, rows `3 k + axis`.
    check_gradients: Vec<f64>,
}

/// Fits of every degree of [`degrees`] for cells whose data are `preps` (one matrix product
/// per degree, in chunks of cells), with their gradients at the check points (another).
fn fit_all(preps: &[&Prepared]) -> Vec<Vec<Fit>> {
    // Chunks of up to 256 cells of one space, fitted in parallel (each chunk's product is the
    // same whichever thread computes it).
    let mut chunks: Vec<(Space, Vec<usize>)> = Vec::new();
    for space in [Space::Biharmonic, Space::Harmonic] {
        let idx: Vec<usize> = (0..preps.len())
            .filter(|&k| preps[k].space == space)
            .collect();
        chunks.extend(idx.chunks(256).map(|c| (space, c.to_vec())));
    }
    let fitted: Vec<Vec<Vec<Fit>>> = chunks
        .par_iter()
        .map(|(space, chunk)| {
            let data_len = chunk.first().map_or(0, |&i| preps[i].derivs.len());
            let mut data = nalgebra::DMatrix::<f64>::zeros(data_len, chunk.len());
            for (k, &i) in chunk.iter().enumerate() {
                data.column_mut(k).copy_from_slice(&preps[i].derivs);
            }
            let pattern = Pattern::get(*space);
            let mut per_cell: Vec<Vec<Fit>> = (0..chunk.len()).map(|_| Vec::new()).collect();
            for p in degrees(*space) {
                let coefs = Solver::get(*space, p).fit_many(&data);
                let grads = pattern.check_gradients_many(&coefs);
                for (k, cell) in per_cell.iter_mut().enumerate() {
                    cell.push(Fit {
                        coef: coefs.column(k).as_slice().to_vec(),
                        check_gradients: grads.column(k).as_slice().to_vec(),
                    });
                }
            }
            per_cell
        })
        .collect();
    let mut out: Vec<Vec<Fit>> = (0..preps.len()).map(|_| Vec::new()).collect();
    for ((_, chunk), cells) in chunks.iter().zip(fitted) {
        for (&i, fits) in chunk.iter().zip(cells) {
            out[i] = fits;
        }
    }
    out
}

/// What `cells` become, each fitted to its data (made with the exact field at its template
/// points when given, see [`Builder::source_data`], some fit points lent by neighbours, see
/// [`lend`]); `prepared` is called as each cell's data are made.
fn fit_cells(
    b: &Builder<'_>,
    cells: &[(&Pending, Option<&[SetJet]>)],
    prepared: &(dyn Fn() + Sync),
) -> Vec<Outcome> {
    let loans = lend(cells, b.lend);
    let points: Vec<Vec<Point3<f64>>> = cells
        .par_iter()
        .map(|(cell, _)| cell.template_points(b))
        .collect();
    let own: Vec<(Vec<SetJet>, Vec<[f64; 3]>)> = cells
        .par_iter()
        .zip(&loans)
        .zip(&points)
        .map(|(((cell, exact), loans), points)| {
            let mut borrowed = vec![false; loans.iter().map(|l| l.point + 1).max().unwrap_or(0)];
            for l in loans {
                borrowed[l.point] = true;
            }
            b.source_data(cell, points, *exact, &borrowed)
        })
        .collect();
    let preps: Vec<Prepared> = cells
        .par_iter()
        .zip(&loans)
        .zip(points.par_iter().zip(&own))
        .map(|(((cell, _), loans), (points, (data, total)))| {
            let error = cell.source.error;
            let p = if loans.is_empty() {
                b.prepared(cell, data, total, error)
            } else {
                let mut data = data.clone();
                b.borrow(cell, points, cells, &own, loans, &mut data);
                b.prepared(cell, &data, total, error)
            };
            prepared();
            p
        })
        .collect();
    drop((own, points));
    let refs: Vec<&Prepared> = preps.iter().collect();
    let fits = fit_all(&refs);
    let mut outcomes: Vec<Outcome> = cells
        .par_iter()
        .zip(preps.par_iter().zip(fits.par_iter()))
        .map(|((cell, _), (prep, coefs))| b.decide(cell, prep, coefs))
        .collect();
    convert_leaves(&mut outcomes);
    outcomes
}

/// Converts the leaves' basis coefficients to monomials, one matrix product per space and
/// degree (that is, per conversion matrix) and 256 leaves, instead of a product with a vector
/// per leaf.
fn convert_leaves(outcomes: &mut [Outcome]) {
    let mut groups: std::collections::BTreeMap<usize, Vec<usize>> =
        std::collections::BTreeMap::new();
    for (k, out) in outcomes.iter().enumerate() {
        if let Outcome::Leaf {
            coef: Coef::Basis { conv, .. },
            ..
        } = out
        {
            groups
                .entry(std::ptr::from_ref(*conv) as usize)
                .or_default()
                .push(k);
        }
    }
    let chunks: Vec<&[usize]> = groups.values().flat_map(|idx| idx.chunks(256)).collect();
    let basis_of = |k: usize| match &outcomes[k] {
        Outcome::Leaf {
            coef: Coef::Basis { coef, conv },
            ..
        } => Some((coef.as_slice(), *conv)),
        _ => None,
    };
    let converted: Vec<Option<nalgebra::DMatrix<f64>>> = chunks
        .par_iter()
        .map(|chunk| {
            let columns: Vec<(&[f64], &nalgebra::DMatrix<f64>)> =
                chunk.iter().filter_map(|&k| basis_of(k)).collect();
            let (first, conv) = columns.first()?;
            let m = nalgebra::DMatrix::from_fn(first.len(), columns.len(), |r, c| columns[c].0[r]);
            Some(*conv * m)
        })
        .collect();
    for (chunk, monomials) in chunks.iter().zip(converted) {
        let Some(monomials) = monomials else {
            continue;
        };
        for (c, &k) in chunk.iter().enumerate() {
            if let Outcome::Leaf { coef, .. } = &mut outcomes[k] {
                *coef = Coef::Owned(monomials.column(c).as_slice().to_vec());
            }
        }
    }
}

/// A fit point whose data a cell takes from a neighbour: the neighbour's `F` there, plus the
/// faces near the neighbour but not near the cell, less those near the cell but not near the
/// neighbour.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Loan {
    /// The fit point (index in the cell's pattern).
    point: usize,
    /// The neighbour (index among the cells fitted together) and its fit point there.
    lender: usize,
    lender_point: usize,
}

/// Which fit points each of `cells` borrows. Neighbours share the fit points on their common
/// side (the patterns are placed on one lattice); the first cell to reach a point computes it
/// from its source, and a later cell sharing a side with it borrows it, paying for the faces
/// near one of the two and not the other (about a seventh of a ring for cells side by side)
/// instead of its whole ring (cells fitted from the exact field share the whole mesh's sums at
/// a shared point already, and lend their subtraction of the near faces: a lent point costs
/// the difference of two near sets instead of a near set). A cell borrows from a side
/// neighbour of its own space and kind whose source is no less accurate than its own; cells meeting at an edge or a corner
/// share too few points to be worth it (on the demo body at 100,820 facets and 1e-7, lending
/// across edges too cut the ring terms by another 5 % but made no faster build). With
/// `enabled` false nothing is lent.
fn lend(cells: &[(&Pending, Option<&[SetJet]>)], enabled: bool) -> Vec<Vec<Loan>> {
    if !enabled {
        return vec![Vec::new(); cells.len()];
    }
    let mut owner: std::collections::HashMap<(bool, Space, [i64; 3]), (usize, usize)> =
        std::collections::HashMap::new();
    let mut loans = vec![Vec::new(); cells.len()];
    for (i, (cell, exact)) in cells.iter().enumerate() {
        // Cells fitted from the exact field lend to their kind only (their data carry the
        // cluster tree's error, which the others' budgets leave out).
        let from_exact = cell.source.poly.is_none();
        if from_exact && exact.is_none() {
            continue;
        }
        let space = cell.space();
        for (j, key) in cell.fit_keys().into_iter().enumerate() {
            match owner.entry((from_exact, space, key)) {
                std::collections::hash_map::Entry::Vacant(v) => {
                    v.insert((i, j));
                }
                std::collections::hash_map::Entry::Occupied(o) => {
                    let (a, ja) = *o.get();
                    let apart: i64 = (0..3)
                        .map(|k| (cells[a].0.index[k] - cell.index[k]).abs())
                        .sum();
                    // The lent data carry the error of the lender's source: no more than the
                    // cell's own, so its budget stays as it was.
                    if apart == 1 && cells[a].0.source.error <= cell.source.error {
                        loans[i].push(Loan {
                            point: j,
                            lender: a,
                            lender_point: ja,
                        });
                    }
                }
            }
        }
    }
    for l in &mut loans {
        l.sort_unstable_by_key(|l| (l.lender, l.point));
    }
    loans
}

impl Builder<'_> {
    /// Fills the fit points `cell` (template `points`) borrows (`loans`) in its `data` from the
    /// lenders' data (`own`, indexed like `cells`).
    fn borrow(
        &self,
        cell: &Pending,
        points: &[Point3<f64>],
        cells: &[(&Pending, Option<&[SetJet]>)],
        own: &[(Vec<SetJet>, Vec<[f64; 3]>)],
        loans: &[Loan],
        data: &mut [SetJet],
    ) {
        let mut scratch = Vec::new();
        let mut start = 0;
        while start < loans.len() {
            let lender = loans[start].lender;
            let end = start
                + loans[start..]
                    .iter()
                    .take_while(|l| l.lender == lender)
                    .count();
            let group = &loans[start..end];
            start = end;
            let other = cells[lender].0;
            let pts: Vec<Point3<f64>> = group.iter().map(|l| points[l.point]).collect();
            let plus = difference(&other.fit_near, &cell.fit_near);
            let minus = difference(&cell.fit_near, &other.fit_near);
            self.ring_face_terms.fetch_add(
                ((plus.len() + minus.len()) * pts.len()) as u64,
                Ordering::Relaxed,
            );
            let plus = set_jets::<true>(&FaceSet::new(self.geometry, &plus), &pts, &mut scratch);
            let minus = set_jets::<true>(&FaceSet::new(self.geometry, &minus), &pts, &mut scratch);
            for (k, l) in group.iter().enumerate() {
                let mut f = own[lender].0[l.lender_point];
                f.add(&plus[k], 1.0);
                f.add(&minus[k], -1.0);
                data[l.point] = f;
            }
            if let Some(count) = self.verify_loans
                && Arc::ptr_eq(&other.source, &cell.source)
                && self.verify_loan(cell, group, &pts, data)
            {
                count.fetch_add(group.len() as u64, Ordering::Relaxed);
            }
        }
    }

    /// Checks lent data against the cell's own (from its own source and ring) where lender
    /// and borrower share a source, so the two differ only by rounding (tests only: it costs
    /// the ring lending saves). Panics on a mismatch; says whether it checked (cells fitted
    /// from the exact field are not).
    fn verify_loan(
        &self,
        cell: &Pending,
        group: &[Loan],
        pts: &[Point3<f64>],
        data: &[SetJet],
    ) -> bool {
        let Some(poly) = &cell.source.poly else {
            return false;
        };
        let mut scratch = Vec::new();
        let plus = difference(&cell.source.near, &cell.fit_near);
        let minus = difference(&cell.fit_near, &cell.source.near);
        let plus = set_jets::<true>(&FaceSet::new(self.geometry, &plus), pts, &mut scratch);
        let minus = set_jets::<true>(&FaceSet::new(self.geometry, &minus), pts, &mut scratch);
        let h = cell.half_m;
        for (k, l) in group.iter().enumerate() {
            let mut want = poly.jet(&pts[k]);
            want.add(&plus[k], 1.0);
            want.add(&minus[k], -1.0);
            let got = &data[l.point];
            let g = self.g_floor;
            let off = |a: &[f64], b: &[f64], scale: f64| {
                a.iter().zip(b).all(|(x, y)| (x - y).abs() <= 1e-9 * scale)
            };
            assert!(
                (got.potential - want.potential).abs() <= 1e-9 * g * h
                    && off(&got.grad, &want.grad, g)
                    && off(&got.hess, &want.hess, g / h),
                "lent data {got:?} differ from the cell's own {want:?}"
            );
        }
        true
    }
}

/// Builds the interpolated field of the closed, outward-oriented `mesh` (metres) with `mass`
/// (see the parent module). `progress` is called after each batch of cells; setting `cancel`
/// stops the build with [`GravityError::Cancelled`].
pub fn build_interpolated(
    mesh: &Mesh,
    mass: MassSpec,
    settings: InterpolationSettings,
    progress: &(dyn Fn(&BuildProgress) + Sync),
    cancel: &AtomicBool,
) -> Result<InterpolatedGravity> {
    build_with(mesh, mass, settings, progress, cancel, Knobs::default())
}

/// How the build shares out its work (tests vary them; the field must not change, or only
/// within its bound).
#[derive(Debug, Clone, Copy)]
struct Knobs {
    /// Meshes from this many faces fit their top cells to the cluster tree.
    tree_min_faces: usize,
    /// Cells fitted together.
    fit_chunk_cells: usize,
    /// Whether neighbours lend fit points (see [`lend`]).
    lend: bool,
    /// Checks lent data against the cell's own (panics on a mismatch), counting them here.
    verify_loans: Option<&'static AtomicU64>,
}

impl Default for Knobs {
    fn default() -> Self {
        Knobs {
            tree_min_faces: FAR_FIELD_MIN_FACES,
            fit_chunk_cells: FIT_CHUNK_CELLS,
            lend: true,
            verify_loans: None,
        }
    }
}

/// [`build_interpolated`] with the work shared out as `knobs` say.
fn build_with(
    mesh: &Mesh,
    mass: MassSpec,
    settings: InterpolationSettings,
    progress: &(dyn Fn(&BuildProgress) + Sync),
    cancel: &AtomicBool,
    knobs: Knobs,
) -> Result<InterpolatedGravity> {
    let Knobs {
        tree_min_faces,
        fit_chunk_cells,
        ..
    } = knobs;
    let start = Instant::now();
    if !(settings.max_rel_error >= 1e-12 && settings.max_rel_error <= 1e-3) {
        return Err(GravityError::InvalidParameter {
            name: "max_rel_error",
            message: format!(
                "{} is outside [1e-12, 1e-3] (relative acceleration error of the interpolated \
                 field)",
                settings.max_rel_error
            ),
        });
    }
    if settings.leaf_near_faces == 0 {
        return Err(GravityError::InvalidParameter {
            name: "leaf_near_faces",
            message: "must be at least 1".into(),
        });
    }
    let exact = Arc::new(PolyhedronGravity::from_mesh(mesh, mass)?);
    let geometry = Arc::new(FaceGeometry::new(mesh));
    let com = exact.center_of_mass_m();
    let r_b = exact.brillouin_radius_m();
    // From `tree_min_faces` faces, the tree of face clusters that the top cells (and the
    // spheres below) are evaluated with.
    let nf = geometry.face_count();
    let far = (nf >= tree_min_faces).then(|| FarField::new(&geometry));
    let g_floor = 0.1 * exact.volume_m3() / (r_b * r_b);
    let far_tolerance = FAR_SHARE * settings.max_rel_error * g_floor;
    // Diagnostics on stderr: each level's work and memory, and each cell's fit.
    let trace_levels = std::env::var("SPINFALL_TRACE_LEVELS").is_ok();
    if trace_levels && let Some(f) = &far {
        eprintln!(
            "cluster tree: {:.1} s, {:.0} MB",
            start.elapsed().as_secs_f64(),
            f.memory_bytes() as f64 / 1e6
        );
    }
    // Switch radius and exterior degree: where the expansion's rigorous bound is a quarter of
    // the budget, relative to the smallest gravity on that sphere. That smallest gravity is
    // sampled once, with the exact field (or the tree, to 1e-6 of the gravity floor) in 128
    // directions on spheres of 1 to 12 Brillouin radii (a tenth taken off for the directions
    // between); between two spheres the smaller of their values is used.
    let dirs = sphere_directions(128);
    let gm_per = exact.gm_m3_s2();
    let radii: Vec<f64> = (0..=24).map(|k| 12f64.powf(k as f64 / 24.0)).collect();
    let sample_points: Vec<Point3<f64>> = radii
        .iter()
        .flat_map(|m| dirs.iter().map(move |d| com + d * (m * r_b)))
        .collect();
    let g_rho = crate::field::G_SI * exact.density_kg_m3();
    let sampled: Vec<f64> = match &far {
        Some(far) => far
            .jets::<false>(&sample_points, 1e-6 * g_floor)
            .iter()
            .map(|j| g_rho * (j.grad[0].powi(2) + j.grad[1].powi(2) + j.grad[2].powi(2)).sqrt())
            .collect(),
        None => exact
            .potential_acceleration_batch(&sample_points)
            .iter()
            .map(|(_, a)| a.norm())
            .collect(),
    };
    if trace_levels {
        eprintln!(
            "gravity on the spheres: {:.1} s",
            start.elapsed().as_secs_f64()
        );
    }
    let ratios: Vec<f64> = radii
        .iter()
        .enumerate()
        .map(|(k, m)| {
            let r = m * r_b;
            let min = sampled[k * dirs.len()..(k + 1) * dirs.len()]
                .iter()
                .fold(f64::INFINITY, |m, a| m.min(*a));
            0.9 * min * r * r / gm_per
        })
        .collect();
    let g_ratio = |r_multiple: f64| -> f64 {
        match radii.iter().position(|m| *m >= r_multiple) {
            Some(0) => ratios[0],
            Some(k) => ratios[k].min(ratios[k - 1]),
            // Beyond the last sphere gravity is within a few per cent of a point mass's.
            None => ratios[radii.len() - 1].min(0.9),
        }
    };
    let (exterior_degree, switch_multiple) = exterior_choice(settings.max_rel_error, &g_ratio);
    let switch_radius_m = switch_multiple * r_b;
    let exterior = Exterior::from_mesh_for_switch(mesh, com, exterior_degree, switch_multiple);
    if trace_levels {
        eprintln!(
            "switch radius {switch_radius_m:?} m and exterior expansion: {:.1} s",
            start.elapsed().as_secs_f64()
        );
    }
    let all_faces = Arc::new((0..nf as u32).collect::<Vec<u32>>());
    let builder = Builder {
        exact: &exact,
        geometry: &geometry,
        settings,
        leaf_kappa: leaf_kappa(settings.max_rel_error),
        source_kappa: source_kappa(settings.max_rel_error),
        com: [com.x, com.y, com.z],
        switch_radius_m,
        all_faces: Arc::clone(&all_faces),
        full_evaluations: AtomicU64::new(0),
        far_share: if far.is_some() { FAR_SHARE } else { 0.0 },
        ring_face_terms: AtomicU64::new(0),
        trace_cells: std::env::var("SPINFALL_TRACE").is_ok(),
        lend: knobs.lend,
        verify_loans: knobs.verify_loans,
        g_floor,
    };
    // Memory held beyond the field: the cluster tree, and the near sets and sources of the
    // level's cells (see `Held`).
    let tree_bytes = far.as_ref().map_or(0, FarField::memory_bytes);
    let mut held_bytes = tree_bytes;
    let mut nodes = vec![Node::Exact];
    let mut coefs: Vec<f64> = Vec::new();
    let mut near_faces: Vec<u32> = Vec::new();
    let mut stats = BuildStats::default();
    let mut near_total = 0usize;
    let root_source = Arc::new(Source {
        poly: None,
        near: Arc::clone(&all_faces),
        error: 0.0,
    });
    let root_center = [com.x, com.y, com.z];
    let mut level = vec![Pending {
        node: 0,
        index: [0; 3],
        center: lattice_point(
            root_center,
            switch_radius_m,
            switch_radius_m,
            [0; 3],
            [0.5; 3],
        ),
        half_m: switch_radius_m,
        depth: 0,
        near: Arc::clone(&all_faces),
        fit_near: Arc::clone(&all_faces),
        leaf_candidate: nf <= settings.leaf_near_faces,
        clear_outside: false,
        source: root_source,
    }];
    let fixed_bytes = geometry.memory_bytes() + exact.memory_bytes();
    while !level.is_empty() {
        if cancel.load(Ordering::Relaxed) {
            return Err(GravityError::Cancelled);
        }
        let depth = level[0].depth;
        stats.depth = stats.depth.max(depth);
        // Cells clear of the surface are wholly inside or outside. The children of such a
        // cell (an outside one: inside cells are not split) inherit its side; other cells learn
        // it from the face nearest their centre when the perpendicular foot is inside that
        // face (see `FaceGeometry::side_by_nearest_face`), and only the rest from the exact
        // field's solid angle, in one batch (at 1M facets these whole-mesh sums cost about
        // as much as the fits' samples).
        let sides: Vec<Side> = level.par_iter().map(|c| side_of(&builder, c)).collect();
        let unknown: Vec<Point3<f64>> = level
            .iter()
            .zip(&sides)
            .filter(|(_, s)| matches!(s, Side::Unknown))
            .map(|(c, _)| Point3::new(c.center[0], c.center[1], c.center[2]))
            .collect();
        if trace_levels {
            eprintln!(
                "level {depth}: {} cells clear of the surface, {} of them tested with the exact field",
                sides.iter().filter(|s| !matches!(s, Side::Touches)).count(),
                unknown.len()
            );
        }
        let mut unknown_inside = exact.is_inside_batch(&unknown).into_iter();
        let inside: Vec<bool> = sides
            .iter()
            .map(|s| match s {
                Side::Touches => false,
                Side::Clear { inside } => *inside,
                Side::Unknown => unknown_inside.next().unwrap_or(false),
            })
            .collect();
        let clear_outside: Vec<bool> = sides
            .iter()
            .zip(&inside)
            .map(|(s, i)| !matches!(s, Side::Touches) && !i)
            .collect();
        let kinds: Vec<Option<Outcome>> = level
            .par_iter()
            .zip(&inside)
            .map(|(c, &inside)| classify(&builder, c, inside))
            .collect();
        // Cells fitted from the exact field: their template points in one batch.
        let exact_cells: Vec<usize> = (0..level.len())
            .filter(|&k| kinds[k].is_none() && level[k].source.poly.is_none())
            .collect();
        // Fit points on sides shared by two such cells of one space are evaluated once. The
        // fit points need the gradient tensor, the check points only the acceleration (the
        // kernel without the tensor is ~18 % cheaper): two lists.
        enum Slot {
            Fit(usize),
            Check(usize),
        }
        let mut fit_points = Vec::new();
        let mut check_points = Vec::new();
        let mut point_of_key: std::collections::HashMap<(Space, [i64; 3]), usize> =
            std::collections::HashMap::new();
        let mut gather: Vec<Vec<Slot>> = Vec::with_capacity(exact_cells.len());
        for &k in &exact_cells {
            let cell = &level[k];
            let points = cell.template_points(&builder);
            let keys = cell.fit_keys();
            let space = cell.space();
            let mut idx = Vec::with_capacity(points.len());
            for (j, p) in points.iter().enumerate() {
                idx.push(match keys.get(j) {
                    Some(key) => {
                        Slot::Fit(*point_of_key.entry((space, *key)).or_insert_with(|| {
                            fit_points.push(*p);
                            fit_points.len() - 1
                        }))
                    }
                    None => {
                        check_points.push(*p);
                        Slot::Check(check_points.len() - 1)
                    }
                });
            }
            gather.push(idx);
        }
        drop(point_of_key);
        let per_g_rho = |a: &Vector3<f64>| [a.x / g_rho, a.y / g_rho, a.z / g_rho];
        // In chunks, so that a cancel is seen within a second or so on large meshes; large
        // enough (~1e8 face terms) to keep both threads busy to the end of each chunk (each
        // point's value does not depend on the chunk).
        let chunk = if far.is_some() {
            4096
        } else {
            (100_000_000 / nf.max(1)).clamp(256, 8192)
        };
        let in_chunks = |points: &[Point3<f64>],
                         eval: &dyn Fn(&[Point3<f64>]) -> Vec<SetJet>|
         -> Result<Vec<SetJet>> {
            let mut out = Vec::with_capacity(points.len());
            for part in points.chunks(chunk) {
                if cancel.load(Ordering::Relaxed) {
                    return Err(GravityError::Cancelled);
                }
                out.extend(eval(part));
            }
            Ok(out)
        };
        let fit_jets = in_chunks(&fit_points, &|points| {
            if let Some(far) = &far {
                return far.jets::<true>(points, far_tolerance);
            }
            exact
                .evaluate_batch(points)
                .iter()
                .map(|s| {
                    let g = s.gradient_s2 / g_rho;
                    SetJet {
                        potential: s.potential_m2_s2 / g_rho,
                        grad: per_g_rho(&s.acceleration_m_s2),
                        hess: [
                            g[(0, 0)],
                            g[(0, 1)],
                            g[(0, 2)],
                            g[(1, 1)],
                            g[(1, 2)],
                            g[(2, 2)],
                        ],
                        omega: 0.0,
                    }
                })
                .collect()
        })?;
        let check_jets = in_chunks(&check_points, &|points| {
            if let Some(far) = &far {
                return far.jets::<false>(points, far_tolerance);
            }
            exact
                .potential_acceleration_batch(points)
                .iter()
                .map(|(u, a)| SetJet {
                    potential: u / g_rho,
                    grad: per_g_rho(a),
                    hess: [0.0; 6],
                    omega: 0.0,
                })
                .collect()
        })?;
        builder.full_evaluations.fetch_add(
            (fit_points.len() + check_points.len()) as u64,
            Ordering::Relaxed,
        );
        let mut exact_of: Vec<Option<Vec<SetJet>>> = vec![None; level.len()];
        for (idx, &k) in gather.iter().zip(&exact_cells) {
            exact_of[k] = Some(
                idx.iter()
                    .map(|slot| match *slot {
                        Slot::Fit(i) => fit_jets[i],
                        Slot::Check(i) => check_jets[i],
                    })
                    .collect(),
            );
        }
        drop((fit_jets, check_jets));
        if cancel.load(Ordering::Relaxed) {
            return Err(GravityError::Cancelled);
        }
        let exact_bytes: usize = exact_of
            .iter()
            .flatten()
            .map(|e| e.capacity() * std::mem::size_of::<SetJet>())
            .sum();
        // What the level holds besides the field, the same until it ends.
        let level_bytes = held_bytes + exact_bytes + fitting_bytes(&level, fit_chunk_cells);
        check_memory(
            &mut stats,
            &settings,
            field_bytes(fixed_bytes, &coefs, &near_faces, &nodes) + level_bytes,
        )?;
        let done = std::sync::atomic::AtomicUsize::new(0);
        let total = level.len();
        let leaves_before = stats.leaves;
        let report = |n: usize| {
            let k = done.fetch_add(n, Ordering::Relaxed) + n;
            progress(&BuildProgress {
                level: depth,
                cells_done: k.min(total),
                cells_in_level: total,
                leaves: leaves_before,
                elapsed_s: start.elapsed().as_secs_f64(),
            });
        };
        // Cells settled without a fit (inside, or split unfitted) count as done at once, so a
        // level's progress reaches its cell count (and a level of such cells alone reports).
        report(kinds.iter().filter(|k| k.is_some()).count());
        let mut outcomes = kinds;
        // The cells to fit, a chunk at a time: a cell's data and its fits of every degree
        // (~30 kB) live only while its chunk is decided, so the build's transient memory does
        // not grow with the level (a deep level at 1M facets has ~400,000 cells). Each cell's
        // outcome depends on its own data alone, whatever chunk it is in.
        let to_fit: Vec<usize> = (0..level.len())
            .filter(|&k| outcomes[k].is_none())
            .collect();
        let mut retried = 0;
        for chunk in to_fit.chunks(fit_chunk_cells) {
            if cancel.load(Ordering::Relaxed) {
                return Err(GravityError::Cancelled);
            }
            let cells: Vec<(&Pending, Option<&[SetJet]>)> = chunk
                .iter()
                .map(|&k| (&level[k], exact_of[k].as_deref()))
                .collect();
            let decided = fit_cells(&builder, &cells, &|| report(1));
            // Cells that failed as leaves feed their children from the same source unless they
            // become one: fitted again without the faces out to the source radius (a smoother
            // remainder), a pass that lets their children sum those faces instead of the whole
            // mesh.
            let mut retry = Vec::new();
            for (&k, mut out) in chunk.iter().zip(decided) {
                let cell = &level[k];
                if matches!(&out, Outcome::Split { source } if Arc::ptr_eq(source, &cell.source))
                    && cell.leaf_candidate
                    && cell.near.len() > cell.fit_near.len()
                    // Fitted again in the biharmonic space: the exact data at the template
                    // points of a harmonic cell (another grid) would not serve.
                    && (cell.source.poly.is_some() || !cell.fit_near.is_empty())
                {
                    retry.push(k);
                }
                // A leaf is final: its coefficients go to the field now.
                if let Outcome::Leaf { coef, .. } = &mut out {
                    coef.place(&mut coefs);
                }
                outcomes[k] = Some(out);
            }
            // The field grows by the chunk's leaves while the level's near sets are all still
            // held: the build's largest footprint comes at the end of a deep level.
            check_memory(
                &mut stats,
                &settings,
                field_bytes(fixed_bytes, &coefs, &near_faces, &nodes) + level_bytes,
            )?;
            if retry.is_empty() {
                continue;
            }
            retried += retry.len();
            let cells: Vec<Pending> = retry
                .iter()
                .map(|&k| {
                    let c = &level[k];
                    Pending {
                        node: c.node,
                        index: c.index,
                        center: c.center,
                        half_m: c.half_m,
                        depth: c.depth,
                        near: Arc::clone(&c.near),
                        fit_near: Arc::clone(&c.near),
                        leaf_candidate: false,
                        clear_outside: c.clear_outside,
                        source: Arc::clone(&c.source),
                    }
                })
                .collect();
            let with_exact: Vec<(&Pending, Option<&[SetJet]>)> = cells
                .iter()
                .zip(&retry)
                .map(|(cell, &k)| (cell, exact_of[k].as_deref()))
                .collect();
            let decided = fit_cells(&builder, &with_exact, &|| {});
            for (&k, out) in retry.iter().zip(decided) {
                if let Outcome::Split { source } = out {
                    outcomes[k] = Some(Outcome::Split { source });
                }
            }
        }
        drop(exact_of);
        if trace_levels {
            let fitted = outcomes.iter().flatten().count();
            eprintln!(
                "level {depth}: {} cells ({} from the exact field, {} from a source, {} fitted again), {:.1} s, {} full evaluations, {:.2e} ring terms so far",
                level.len(),
                exact_cells.len(),
                fitted.saturating_sub(exact_cells.len()),
                retried,
                start.elapsed().as_secs_f64(),
                builder.full_evaluations.load(Ordering::Relaxed),
                builder.ring_face_terms.load(Ordering::Relaxed) as f64
            );
        }
        let mut next = Vec::new();
        for ((cell, out), clear_outside) in level.into_iter().zip(outcomes).zip(clear_outside) {
            let Some(out) = out else {
                return Err(GravityError::Cancelled);
            };
            match out {
                Outcome::Exact => {
                    nodes[cell.node] = Node::Exact;
                    stats.exact_cells += 1;
                }
                Outcome::Leaf {
                    mut coef,
                    space,
                    degree,
                    error,
                } => {
                    nodes[cell.node] = Node::Leaf {
                        coef: coef.place(&mut coefs) as u32,
                        space,
                        degree: degree as u8,
                        near: near_faces.len() as u32,
                        near_len: cell.fit_near.len() as u32,
                    };
                    near_faces.extend_from_slice(&cell.fit_near);
                    near_total += cell.fit_near.len();
                    stats.leaves += 1;
                    stats.worst_leaf_bound = stats.worst_leaf_bound.max(error);
                    stats.max_degree = stats.max_degree.max(degree);
                }
                Outcome::Split { source } => {
                    let first = nodes.len();
                    nodes[cell.node] = Node::Branch {
                        first_child: first as u32,
                    };
                    let h = 0.5 * cell.half_m;
                    for k in 0..8 {
                        nodes.push(Node::Exact);
                        let index: [i64; 3] =
                            std::array::from_fn(|a| 2 * cell.index[a] + ((k >> a) & 1) as i64);
                        let center =
                            lattice_point(root_center, switch_radius_m, h, index, [0.5; 3]);
                        if !builder.in_region(center, h) {
                            continue;
                        }
                        next.push((
                            first + k,
                            index,
                            center,
                            h,
                            cell.depth + 1,
                            Arc::clone(&cell.near),
                            Arc::clone(&source),
                            clear_outside,
                        ));
                    }
                }
            }
        }
        // What the build holds beyond the field while it makes the next level: the parents'
        // near sets and the children's, and the sources' polynomials (each shared one once).
        let mut held = Held::default();
        for (_, _, _, _, _, parent_near, _, _) in &next {
            held.near_set(parent_near);
        }
        // Near sets of the next level, in parallel (each from its parent's).
        level = next
            .into_par_iter()
            .map(
                |(node, index, center, half_m, depth, parent_near, source, clear_outside)| {
                    let (near, fit, leaf_candidate) =
                        builder.near_sets(&parent_near, center, half_m);
                    let near = Arc::new(near);
                    let fit_near = if leaf_candidate {
                        Arc::new(fit)
                    } else {
                        Arc::clone(&near)
                    };
                    Pending {
                        node,
                        index,
                        center,
                        half_m,
                        depth,
                        near,
                        fit_near,
                        leaf_candidate,
                        clear_outside,
                        source,
                    }
                },
            )
            .collect();
        for cell in &level {
            held.cell(cell);
        }
        held_bytes = held.bytes + tree_bytes;
        let field = field_bytes(fixed_bytes, &coefs, &near_faces, &nodes);
        if trace_levels {
            eprintln!(
                "next level: {} cells, field {:.0} MB, near sets and sources {:.0} MB",
                level.len(),
                field as f64 / 1e6,
                held.bytes as f64 / 1e6
            );
        }
        // The next level's fits add a chunk of cells' data.
        check_memory(
            &mut stats,
            &settings,
            field + held_bytes + fitting_bytes(&level, fit_chunk_cells),
        )?;
    }
    stats.cells = nodes.len();
    stats.mean_leaf_near_faces = near_total as f64 / stats.leaves.max(1) as f64;
    stats.full_evaluations = builder.full_evaluations.load(Ordering::Relaxed);
    stats.ring_face_terms = builder.ring_face_terms.load(Ordering::Relaxed);
    stats.exterior_degree = exterior_degree;
    stats.switch_brillouin_multiple = switch_radius_m / r_b;
    stats.memory_bytes =
        field_bytes(fixed_bytes, &coefs, &near_faces, &nodes) - exact.memory_bytes();
    stats.build_s = start.elapsed().as_secs_f64();
    coefs.shrink_to_fit();
    near_faces.shrink_to_fit();
    Ok(InterpolatedGravity {
        exact,
        geometry,
        root_center: [com.x, com.y, com.z],
        root_half_m: switch_radius_m,
        nodes,
        coefs,
        near_faces,
        exterior,
        switch_radius_m,
        settings,
        stats,
    })
}

/// Memory taken by a field of `nodes`, `coefs` and `near_faces` whose fixed part (face data
/// and exact field) takes `fixed` bytes.
fn field_bytes(fixed: usize, coefs: &[f64], near_faces: &[u32], nodes: &[Node]) -> usize {
    fixed + coefs.len() * 8 + near_faces.len() * 4 + std::mem::size_of_val(nodes)
}

/// Records the build's memory `bytes` in `stats` and stops the build when it exceeds the
/// limit.
fn check_memory(
    stats: &mut BuildStats,
    settings: &InterpolationSettings,
    bytes: usize,
) -> Result<()> {
    stats.build_peak_bytes = stats.build_peak_bytes.max(bytes);
    if bytes > settings.max_memory_bytes {
        return Err(GravityError::MemoryLimit {
            what: format!(
                "the interpolated field for a relative error of {:e} (with its build's working \
                 memory)",
                settings.max_rel_error
            ),
            needed_mb: bytes.div_ceil(1 << 20),
            limit_mb: settings.max_memory_bytes >> 20,
        });
    }
    Ok(())
}

/// Memory the fits of `level`'s cells take at once, bytes: a chunk of cells' data and fits,
/// and on each thread the tables of a ring (at most its source's near set).
fn fitting_bytes(level: &[Pending], fit_chunk_cells: usize) -> usize {
    let ring = level.iter().map(|c| c.source.near.len()).max().unwrap_or(0);
    level.len().min(fit_chunk_cells) * FIT_CELL_BYTES
        + rayon::current_num_threads() * ring * RING_FACE_BYTES
}

/// Memory the build holds for its cells beyond the field: near sets and sources, each
/// counted once however many cells share it.
#[derive(Default)]
struct Held {
    seen: std::collections::HashSet<usize>,
    bytes: usize,
}

impl Held {
    fn near_set(&mut self, set: &Arc<Vec<u32>>) {
        if self.seen.insert(Arc::as_ptr(set) as usize) {
            self.bytes += set.capacity() * 4 + 32;
        }
    }

    fn cell(&mut self, cell: &Pending) {
        self.bytes += std::mem::size_of::<Pending>();
        self.near_set(&cell.near);
        self.near_set(&cell.fit_near);
        let source = &cell.source;
        if self.seen.insert(Arc::as_ptr(source) as usize) {
            self.near_set(&source.near);
            if let Some(poly) = &source.poly {
                self.bytes += std::mem::size_of::<Source>()
                    + poly.coef.capacity() * 8
                    + poly.monomials.as_ref().map_or(0, |m| m.capacity() * 8);
            }
        }
    }
}

/// Where a cell lies with respect to the surface.
enum Side {
    /// A face comes within the cell's circumscribed sphere.
    Touches,
    /// Clear of the surface, wholly inside or outside.
    Clear { inside: bool },
    /// Clear of the surface, the side to be found with the exact field.
    Unknown,
}

/// Whether a face comes within the cell's circumscribed sphere and, if none does, which side
/// of the surface the cell is on when that is known without the exact field (see the caller).
fn side_of(b: &Builder<'_>, cell: &Pending) -> Side {
    if cell.clear_outside {
        return Side::Clear { inside: false };
    }
    let circum = 3f64.sqrt() * cell.half_m;
    let nearest_to = |p: [f64; 3]| {
        let mut nearest: Option<(f64, u32)> = None;
        for &f in cell.near.iter() {
            let d = b.geometry.distance_to_face(f as usize, p);
            if nearest.is_none_or(|(best, _)| d < best) {
                nearest = Some((d, f));
            }
        }
        nearest
    };
    let Some((d, f)) = nearest_to(cell.center) else {
        return Side::Unknown;
    };
    if d <= circum {
        return Side::Touches;
    }
    // `near` holds every face within the source radius of the centre, so the nearest face it
    // holds to a point `s` from the centre is the mesh's if it is within the radius less `s`.
    if let Some(inside) = b.geometry.side_by_nearest_face(f as usize, cell.center) {
        return Side::Clear { inside };
    }
    // The whole circumscribed sphere is on one side: when the centre's nearest point is on an
    // edge or a vertex (common away from convex parts), the corners are tried.
    let radius = b.source_kappa * cell.half_m;
    for k in 0..8 {
        let corner: [f64; 3] = std::array::from_fn(|a| {
            cell.center[a]
                + if (k >> a) & 1 == 1 {
                    cell.half_m
                } else {
                    -cell.half_m
                }
        });
        if let Some((d, f)) = nearest_to(corner)
            && d <= radius - circum
            && let Some(inside) = b.geometry.side_by_nearest_face(f as usize, corner)
        {
            return Side::Clear { inside };
        }
    }
    Side::Unknown
}

/// What a cell is before fitting: `None` when it needs a fit. `inside`: the cell is clear of
/// the surface and its centre inside the body.
fn classify(b: &Builder<'_>, cell: &Pending, inside: bool) -> Option<Outcome> {
    let nf = b.all_faces.len();
    if inside {
        return Some(Outcome::Exact);
    }
    let fit = cell.fit_near.len();
    let top = cell.source.poly.is_none() && fit as f64 > TOP_FRACTION * nf as f64;
    if fit == nf || (top && fit > b.settings.leaf_near_faces) {
        // Every face (or most) is near: nothing worth fitting; split unless the whole mesh is
        // small enough to sum in a leaf.
        if nf <= b.settings.leaf_near_faces || cell.depth >= MAX_DEPTH {
            return Some(Outcome::Leaf {
                coef: Coef::Owned(vec![0.0]),
                space: Space::Biharmonic,
                degree: 0,
                error: 0.0,
            });
        }
        return Some(Outcome::Split {
            source: Arc::clone(&cell.source),
        });
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::generate;

    #[test]
    fn top_cells_fitted_to_the_cluster_tree_keep_the_bound() {
        // The tree's error is part of each such cell's error, so the field still meets its
        // bound at points the build never saw (surface, just above it, the volume), checked
        // against the exact sums.
        let mesh = generate::demo_body(2);
        let bound = loose().max_rel_error;
        let field = build_demo(
            loose(),
            Knobs {
                tree_min_faces: 0,
                ..Default::default()
            },
        )
        .map_err(|e| e.to_string());
        let field = match field {
            Ok(f) => f,
            Err(e) => panic!("{e}"),
        };
        assert!(field.stats().full_evaluations > 0);
        let exact = field.exact();
        let mut points = Vec::new();
        for f in (0..mesh.faces.len()).step_by(7) {
            let [a, b, c] = mesh.triangle(f);
            let n = (b - a).cross(&(c - a)).normalize();
            let centre = Point3::from((a.coords + b.coords + c.coords) / 3.0);
            for alt in [0.0, 1.0, 40.0, 400.0] {
                points.push(centre + n * alt);
            }
            points.push(a + n * 1e-3);
        }
        let want = exact.potential_acceleration_batch(&points);
        for (p, w) in points.iter().zip(&want) {
            let (_, a) = field.potential_acceleration(p);
            let e = (a - w.1).norm() / w.1.norm();
            assert!(e <= bound, "{e:e} at {p}");
        }
    }

    fn build_demo(
        settings: InterpolationSettings,
        knobs: Knobs,
    ) -> std::result::Result<InterpolatedGravity, GravityError> {
        build_with(
            &generate::demo_body(2),
            MassSpec::DensityKgM3(2100.0),
            settings,
            &|_| {},
            &AtomicBool::new(false),
            knobs,
        )
    }

    fn loose() -> InterpolationSettings {
        InterpolationSettings {
            max_rel_error: 1e-7,
            leaf_near_faces: 120,
            ..Default::default()
        }
    }

    #[test]
    fn fitting_a_level_in_chunks_leaves_the_field_alone() {
        // Each cell's outcome depends on its own data alone: fitted five cells at a time, the
        // field has the same cells and near sets as fitted a whole level at once, and values
        // equal to rounding (the fits' matrix products group their columns differently).
        // Without lending: which neighbours lend depends on the chunk, and lent data differ
        // from a cell's own by rounding, enough to tip a fit's degree now and then.
        let build = |fit_chunk_cells| {
            build_demo(
                loose(),
                Knobs {
                    fit_chunk_cells,
                    lend: false,
                    ..Default::default()
                },
            )
            .map_err(|e| e.to_string())
        };
        let (a, b) = match (build(5), build(1 << 20)) {
            (Ok(a), Ok(b)) => (a, b),
            (a, b) => panic!("{:?} {:?}", a.err(), b.err()),
        };
        assert!(a.stats().leaves > 100, "{}", a.stats());
        assert_eq!(a.nodes.len(), b.nodes.len());
        assert_eq!(a.near_faces, b.near_faces);
        assert_eq!(a.coefs.len(), b.coefs.len());
        let worst = worst_difference_above_faces(&a, &b);
        assert!(worst <= 1e-12, "{worst:e}");
    }

    /// Largest difference of two fields of the demo body's mesh in acceleration, relative to
    /// the second's, 5 m above each face's centroid.
    fn worst_difference_above_faces(a: &InterpolatedGravity, b: &InterpolatedGravity) -> f64 {
        let mesh = generate::demo_body(2);
        (0..mesh.faces.len())
            .map(|f| {
                let [p, q, r] = mesh.triangle(f);
                let n = (q - p).cross(&(r - p)).normalize();
                let x = Point3::from((p.coords + q.coords + r.coords) / 3.0) + n * 5.0;
                let (ga, gb) = (
                    a.potential_acceleration(&x).1,
                    b.potential_acceleration(&x).1,
                );
                (ga - gb).norm() / gb.norm()
            })
            .fold(0.0, f64::max)
    }

    #[test]
    fn lent_fit_points_carry_the_data_the_cell_would_compute_itself() {
        // F_B = F_A + (faces near A, not B) - (faces near B, not A) is an identity: where two
        // side neighbours share a source, the lent data equal the borrower's own to rounding
        // (checked inside the build), and lending takes ring terms off the build without
        // changing what it builds.
        static VERIFIED: AtomicU64 = AtomicU64::new(0);
        let build = |lend, verify_loans| {
            build_demo(
                loose(),
                Knobs {
                    lend,
                    verify_loans,
                    ..Default::default()
                },
            )
            .map_err(|e| e.to_string())
        };
        let (lent, alone) = match (build(true, Some(&VERIFIED)), build(false, None)) {
            (Ok(a), Ok(b)) => (a, b),
            (a, b) => panic!("{:?} {:?}", a.err(), b.err()),
        };
        assert!(VERIFIED.load(Ordering::Relaxed) > 1000, "{VERIFIED:?}");
        let (a, b) = (lent.stats(), alone.stats());
        assert!(
            (a.ring_face_terms as f64) < 0.9 * b.ring_face_terms as f64,
            "{a} against {b}"
        );
        assert_eq!(lent.nodes.len(), alone.nodes.len());
        assert_eq!(lent.near_faces, alone.near_faces);
        // A lender's source may be another polynomial (no less accurate) than the cell's own:
        // the data differ within the sources' errors, a small part of the bound.
        let worst = worst_difference_above_faces(&lent, &alone);
        assert!(worst <= 0.1 * loose().max_rel_error, "{worst:e}");
    }

    #[test]
    fn the_working_memory_of_the_build_counts_against_the_limit() {
        let built = build_demo(loose(), Knobs::default()).map_err(|e| e.to_string());
        let field = match built {
            Ok(f) => f,
            Err(e) => panic!("{e}"),
        };
        let s = field.stats();
        let finished = s.memory_bytes + field.exact().memory_bytes();
        assert!(s.build_peak_bytes > finished, "{s}");
        // A limit the finished field keeps but its build did not: refused, with the figure.
        let limit = finished + (s.build_peak_bytes - finished) / 2;
        let settings = InterpolationSettings {
            max_memory_bytes: limit,
            ..loose()
        };
        match build_demo(settings, Knobs::default()) {
            Err(GravityError::MemoryLimit {
                needed_mb,
                limit_mb,
                ..
            }) => assert!(needed_mb > limit_mb),
            other => panic!("{:?}", other.map(|f| f.stats().to_string())),
        }
    }
}
