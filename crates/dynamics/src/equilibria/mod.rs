//! Equilibrium points of the body-fixed dynamics: where gravity and the centrifugal
//! acceleration cancel, so a particle at rest relative to the spinning body stays at rest.
//!
//! **Conventions.** The geopotential is `Phi = -(U + |w x r|^2 / 2)` (as in
//! [`crate::surface_map`]), `U > 0` the gravitational potential with acceleration `grad U`. The
//! body-fixed equations of motion are `r'' + 2 w x r' = -grad Phi`, so the equilibria are the
//! zeros of `grad Phi`, and the Jacobi constant `C = v^2/2 + Phi` of a particle resting at one
//! is `Phi` there.
//!
//! **Method** ([`find_equilibria`]):
//! 1. A region that surely holds every equilibrium ([`SearchRegion`], proved in the source of
//!    `region.rs` from the Brillouin radius, the synchronous radius and the body's extent along
//!    the spin axis): a ball of radius `r_out` (about 1.25 `r_s` for a small body, 2 `r_s` when
//!    the Brillouin radius is half the synchronous radius), cut to the slab between the body's
//!    lowest and highest points along the spin axis, less a shell around the body where the
//!    centrifugal acceleration is too weak.
//! 2. A cylindrical grid (distance from the axis, longitude, height along the axis) over it;
//!    `|grad Phi|` at every node outside the body (through the model's batch evaluation);
//!    every node no greater than its eight neighbours in its meridian half-plane (distance
//!    from the axis x height, same longitude) is a seed (the smallest
//!    [`EquilibriumSearch::max_seeds`] of them). Not minima over all 26 neighbours: the
//!    field is stiff across the synchronous circle and soft along it (not at all for a body
//!    symmetric about its axis), so on a coarse grid the 3-D minimum next to a saddle-type
//!    equilibrium can vanish into its neighbour's longitude; a seed in every half-plane
//!    leaves the soft direction to Newton.
//! 3. Newton's method from each seed with the exact Hessian of `Phi` (the gradient tensor of
//!    the field plus the centrifugal term; by central differences of the acceleration for
//!    models without a tensor, such as [`crate::PointMass`]), all seeds in one batch per
//!    iteration. The step inverts the Hessian on its well-conditioned directions only
//!    (eigenvalues above 1e-9 of the largest; a flat direction, as along a ring, gets no
//!    step), is capped at two grid cells, taken in cylindrical coordinates about the spin
//!    axis (so that a step along the synchronous circle follows the circle: the soft valley
//!    of a nearly axisymmetric body is curved) and halved until `|grad Phi|` decreases (at
//!    most 30 halvings). A seed converges when `|grad Phi| <= residual_tolerance * |g|`, then takes two
//!    more steps while they still reduce the residual; it is abandoned after
//!    `max_iterations`, when no halving helps, inside the body or beyond twice `r_out`.
//! 4. Points closer than 1e-6 `r_out` are one; the list is sorted by longitude and cut at
//!    [`EquilibriumSearch::max_reported`] (the set says when).
//!
//! For each point: position, latitude/longitude ([`crate::site`] conventions), radius, distance
//! to the surface, `Phi` (= Jacobi constant), the residual, the Hessian's eigenvalues and the
//! six eigenvalues of the linearised motion with a [`StabilityClass`]: each of the three modes
//! is *oscillatory* (a pair `+-ib`, a centre), *hyperbolic* (a pair `+-a`, a saddle) or two
//! modes together form a *spiral quadruplet* (`+-a +-ib`). The point is linearly stable when
//! every mode is oscillatory, i.e. every eigenvalue is imaginary within
//! [`EquilibriumSearch::imaginary_tolerance`] of `max(w, max |lambda|)`.
//!
//! **Rings.** A body symmetric about its spin axis (a uniform sphere) has a continuous ring of
//! equilibria at the synchronous radius. The facets of a polyhedral sphere break it into
//! discrete points with a tiny restoring (or repelling) stiffness along the ring; the search
//! reports the ones its seeds reach (a bounded number: at most one per seed and
//! `max_reported`) and, when at least three points share a radius within 1% and each has a
//! Hessian direction flatter than 1e-3 of its stiffest, a [`RingReport`] and a note saying the
//! points are the faceting's fragments of one ring. An exactly symmetric model (a point mass)
//! gives one point per seed along the ring, cut at `max_reported`.
//!
//! **Not here.** Resting points *on* the surface (where the effective gravity presses a particle
//! into the ground) are the business of the slope map ([`crate::surface_map`]); this search
//! only reports points off the body, and drops any Newton path that ends inside it.
//!
//! Spinfall is for research and planning, **not flight-certified**.

mod field;
mod grid;
mod linear;
mod newton;
mod region;

use std::sync::atomic::AtomicBool;

use nalgebra::{Point3, SymmetricEigen, Vector3};
use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::site::lat_lon_deg;
use field::{Local, field_at, grad_phi, hess_phi};
use grid::Grid;
use newton::{NewtonLimits, WalkEnd, newton};

pub use linear::StabilityClass;
pub use region::SearchRegion;

/// Settings of the equilibrium search, with defaults ([`EquilibriumSearch::default`]) and
/// checks ([`EquilibriumSearch::check`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EquilibriumSearch {
    /// Grid cells in distance from the spin axis, over `[0, r_out]` (4 to 2000).
    pub radial_cells: usize,
    /// Grid cells in longitude (8 to 3600).
    pub azimuth_cells: usize,
    /// Grid cells along the spin axis, over the body's extent (1 to 2000; odd counts put a
    /// layer in the plane through the origin).
    pub axial_cells: usize,
    /// Most seeds refined (the smallest `|grad Phi|` first; 1 to 100 000).
    pub max_seeds: usize,
    /// Most Newton iterations per seed (1 to 1000).
    pub max_iterations: usize,
    /// Convergence: `|grad Phi| <= residual_tolerance * |gravity|` (1e-15 to 1e-3).
    pub residual_tolerance: f64,
    /// An eigenvalue counts as imaginary when `|Re| <= imaginary_tolerance * max(w, max
    /// |lambda|)` (1e-12 to 0.1).
    pub imaginary_tolerance: f64,
    /// Most equilibria reported (1 to 10 000).
    pub max_reported: usize,
}

impl Default for EquilibriumSearch {
    fn default() -> Self {
        EquilibriumSearch {
            radial_cells: 40,
            azimuth_cells: 72,
            axial_cells: 7,
            max_seeds: 512,
            max_iterations: 60,
            residual_tolerance: 1e-10,
            imaginary_tolerance: 1e-6,
            max_reported: 64,
        }
    }
}

/// Most grid nodes of a search (memory and time stay bounded).
const MAX_GRID_NODES: usize = 20_000_000;

impl EquilibriumSearch {
    /// Checks every setting; the error names the first one out of range.
    pub fn check(&self) -> Result<()> {
        let count = |name: &str, v: usize, lo: usize, hi: usize| {
            if (lo..=hi).contains(&v) {
                Ok(())
            } else {
                Err(DynamicsError::param(
                    format!("equilibrium search {name}"),
                    format!("must be between {lo} and {hi}, got {v}"),
                ))
            }
        };
        let real = |name: &str, v: f64, lo: f64, hi: f64| {
            if v.is_finite() && (lo..=hi).contains(&v) {
                Ok(())
            } else {
                Err(DynamicsError::param(
                    format!("equilibrium search {name}"),
                    format!("must be between {lo:e} and {hi:e}, got {v}"),
                ))
            }
        };
        count("radial_cells", self.radial_cells, 4, 2000)?;
        count("azimuth_cells", self.azimuth_cells, 8, 3600)?;
        count("axial_cells", self.axial_cells, 1, 2000)?;
        count("max_seeds", self.max_seeds, 1, 100_000)?;
        count("max_iterations", self.max_iterations, 1, 1000)?;
        count("max_reported", self.max_reported, 1, 10_000)?;
        real("residual_tolerance", self.residual_tolerance, 1e-15, 1e-3)?;
        real("imaginary_tolerance", self.imaginary_tolerance, 1e-12, 0.1)?;
        let nodes = self
            .radial_cells
            .saturating_mul(self.azimuth_cells)
            .saturating_mul(self.axial_cells);
        if nodes > MAX_GRID_NODES {
            return Err(DynamicsError::param(
                "equilibrium search grid",
                format!(
                    "{} x {} x {} = {nodes} nodes is more than the limit of {MAX_GRID_NODES}",
                    self.radial_cells, self.azimuth_cells, self.axial_cells
                ),
            ));
        }
        Ok(())
    }
}

/// One equilibrium point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Equilibrium {
    /// Position in the body frame, m.
    pub position_m: [f64; 3],
    /// Planetocentric latitude (spin axis north), deg.
    pub lat_deg: f64,
    /// Planetocentric longitude, deg east, in (-180, 180].
    pub lon_deg: f64,
    /// Distance from the body-frame origin, m.
    pub radius_m: f64,
    /// Distance to the nearest point of the surface, m.
    pub surface_distance_m: f64,
    /// Geopotential `Phi = -(U + |w x r|^2/2)` there, m^2/s^2.
    pub geopotential_m2_s2: f64,
    /// Jacobi constant of a particle at rest there (`= Phi`), m^2/s^2.
    pub jacobi_m2_s2: f64,
    /// The six eigenvalues of the linearised motion `[re, im]`, 1/s, sorted by imaginary then
    /// real part.
    pub eigenvalues: [[f64; 2]; 6],
    /// Whether every eigenvalue is imaginary within the stated tolerance.
    pub linearly_stable: bool,
    /// The modes of the linearised motion.
    pub stability: StabilityClass,
    /// Eigenvalues of the Hessian of `Phi`, ascending, 1/s^2.
    pub hessian_eigenvalues_s2: [f64; 3],
    /// `|grad Phi|` at the reported point, m/s^2.
    pub residual_m_s2: f64,
    /// `|gravity|` there (equal to the centrifugal acceleration), m/s^2.
    pub gravity_m_s2: f64,
    /// Seeds whose Newton path ended here.
    pub seeds: usize,
}

/// Equilibria that lie on one near-circle about the spin axis (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RingReport {
    /// Median distance of the points from the origin, m.
    pub radius_m: f64,
    /// Largest minus smallest distance, m.
    pub radius_spread_m: f64,
    /// Points on it.
    pub points: usize,
    /// Largest ratio of the flattest to the stiffest Hessian eigenvalue among them.
    pub flatness: f64,
}

/// Counts of the search, for the record.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct SearchCounts {
    /// Grid nodes in the cylinder.
    pub grid_nodes: usize,
    /// Nodes evaluated (allowed by the bounds and outside the body).
    pub evaluated_nodes: usize,
    /// Local minima of `|grad Phi|` in the meridian half-planes of the grid.
    pub minima: usize,
    /// Seeds refined (at most `max_seeds`).
    pub seeds: usize,
    /// Seeds that converged outside the body.
    pub converged: usize,
    /// Seeds whose path entered the body.
    pub ended_inside: usize,
    /// Seeds whose path left the region.
    pub left_region: usize,
    /// Seeds that did not converge (iteration limit, or no decrease).
    pub not_converged: usize,
    /// Distinct equilibria before the cap.
    pub distinct: usize,
}

/// The outcome of a search.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EquilibriumSet {
    /// The equilibria, sorted by longitude.
    pub equilibria: Vec<Equilibrium>,
    /// The settings used.
    pub search: EquilibriumSearch,
    /// The region searched.
    pub region: SearchRegion,
    /// What the search did.
    pub counts: SearchCounts,
    /// Whether the list was cut at `max_reported`.
    pub truncated: bool,
    /// A ring of equilibria, if the points form one.
    pub ring: Option<RingReport>,
    /// Remarks for the reader (empty result, ring, cut list, ...).
    pub notes: Vec<String>,
}

/// Finds the equilibria of `body` outside it (see the module docs). `progress(done, total)` is
/// called after each batch (grid nodes, then Newton iterations); setting `cancel` stops the
/// work with [`DynamicsError::Cancelled`].
///
/// # Errors
/// A setting out of range ([`EquilibriumSearch::check`]), a body whose figures are not finite,
/// and [`DynamicsError::Cancelled`].
pub fn find_equilibria(
    body: &Body,
    search: &EquilibriumSearch,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &AtomicBool,
) -> Result<EquilibriumSet> {
    search.check()?;
    let w = body.omega_body_rad_s();
    let axis = body.spin.axis_body.into_inner();
    let figures = body.figures();
    let rb = figures.brillouin_radius_m;
    let rs = figures.synchronous_radius_m;
    if !(rb.is_finite() && rb > 0.0 && rs.is_finite() && rs > 0.0) {
        return Err(DynamicsError::param(
            "body",
            format!(
                "the Brillouin radius ({rb} m) and the synchronous radius ({rs} m) must be \
                 finite and positive"
            ),
        ));
    }
    let (zlo, zhi) = body
        .shape
        .mesh()
        .vertices_m
        .iter()
        .map(|v| v.coords.dot(&axis))
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), z| {
            (lo.min(z), hi.max(z))
        });
    let region = SearchRegion::new(rb, rs, [zlo, zhi]);
    let grid = Grid::new(&region, search, body);
    let total_hint = grid.nodes() + search.max_seeds * search.max_iterations;

    // 1-2: |grad Phi| over the grid, and its local minima.
    let values = grid.values(body, &region, &w, progress, total_hint, cancel)?;
    let mut minima = grid.local_minima(&values);
    let mut counts = SearchCounts {
        grid_nodes: grid.nodes(),
        evaluated_nodes: values.iter().filter(|v| v.is_finite()).count(),
        minima: minima.len(),
        ..SearchCounts::default()
    };
    minima.sort_by(|a, b| values[*a].total_cmp(&values[*b]));
    minima.truncate(search.max_seeds);
    counts.seeds = minima.len();
    let seeds: Vec<Point3<f64>> = minima.iter().map(|&k| grid.point(k)).collect();

    // 3: Newton.
    let step_cap_m = 2.0 * grid.cell_size_m();
    let done = grid.nodes();
    let ends = newton(
        body,
        &w,
        &seeds,
        search,
        NewtonLimits {
            step_cap_m,
            far_m: 2.0 * region.outer_radius_m,
        },
        &|iter| progress(done + iter * seeds.len(), total_hint),
        cancel,
    )?;

    // 4: keep, merge, describe.
    let merge_m = 1e-6 * region.outer_radius_m;
    let mut kept: Vec<(Point3<f64>, usize)> = Vec::new();
    for end in &ends {
        match end {
            WalkEnd::Converged(p) => {
                if body.shape.contains(p) {
                    counts.ended_inside += 1;
                    continue;
                }
                counts.converged += 1;
                match kept.iter_mut().find(|(q, _)| (q - p).norm() <= merge_m) {
                    Some((_, n)) => *n += 1,
                    None => kept.push((*p, 1)),
                }
            }
            WalkEnd::Inside => counts.ended_inside += 1,
            WalkEnd::Left => counts.left_region += 1,
            WalkEnd::Stuck => counts.not_converged += 1,
        }
    }
    counts.distinct = kept.len();
    let points: Vec<Point3<f64>> = kept.iter().map(|(p, _)| *p).collect();
    let locals = field_at(body, &points);
    let mut notes = Vec::new();
    let mut equilibria = Vec::with_capacity(kept.len());
    for ((p, n), local) in kept.iter().zip(&locals) {
        match describe(body, &w, p, local, *n, search.imaginary_tolerance) {
            Some(e) => equilibria.push(e),
            None => notes.push(format!(
                "the eigenvalues at {:?} m did not converge; the point is left out",
                p.coords.as_slice()
            )),
        }
    }
    equilibria.sort_by(|a, b| a.lon_deg.total_cmp(&b.lon_deg));
    let ring = ring_of(&equilibria);
    let truncated = equilibria.len() > search.max_reported;
    equilibria.truncate(search.max_reported);
    write_notes(&mut notes, &counts, search, truncated, ring.as_ref());
    progress(total_hint, total_hint);
    Ok(EquilibriumSet {
        equilibria,
        search: *search,
        region,
        counts,
        truncated,
        ring,
        notes,
    })
}

/// The notes of a finished search.
fn write_notes(
    notes: &mut Vec<String>,
    counts: &SearchCounts,
    search: &EquilibriumSearch,
    truncated: bool,
    ring: Option<&RingReport>,
) {
    if counts.distinct == 0 {
        notes.push(format!(
            "no equilibrium found outside the body ({} seeds from {} grid nodes)",
            counts.seeds, counts.evaluated_nodes
        ));
    }
    if counts.minima > counts.seeds {
        notes.push(format!(
            "{} grid minima, only the best {} refined (max_seeds)",
            counts.minima, counts.seeds
        ));
    }
    if let Some(r) = ring {
        notes.push(format!(
            "{} points lie on a near-circle of radius {:.6e} m (spread {:.3e} m) with a flat \
             direction along it: the body is nearly symmetric about its spin axis, whose exact \
             form has a continuous ring of equilibria there; the discrete points are what the \
             facets (or round-off) make of it, and their number and stability depend on them",
            r.points, r.radius_m, r.radius_spread_m
        ));
    }
    if truncated {
        notes.push(format!(
            "{} distinct equilibria, only the first {} reported (max_reported)",
            counts.distinct, search.max_reported
        ));
    }
    if counts.not_converged > 0 {
        notes.push(format!(
            "{} seeds did not converge within {} iterations",
            counts.not_converged, search.max_iterations
        ));
    }
}

/// The description of the equilibrium at `p` from the field there.
fn describe(
    body: &Body,
    w: &Vector3<f64>,
    p: &Point3<f64>,
    local: &Local,
    seeds: usize,
    imaginary_tolerance: f64,
) -> Option<Equilibrium> {
    let wxr = w.cross(&p.coords);
    let phi = -(local.u + 0.5 * wxr.norm_squared());
    let grad = grad_phi(w, p, local);
    let hess = hess_phi(w, local);
    let (ev, stability) = linear::linear_modes(&hess, w, imaginary_tolerance)?;
    let mut he: Vec<f64> = SymmetricEigen::try_new(hess, f64::EPSILON, 1000)?
        .eigenvalues
        .iter()
        .copied()
        .collect();
    he.sort_by(f64::total_cmp);
    let (lat_deg, lon_deg) = lat_lon_deg(body, p);
    let surface = body.shape.nearest_surface_point(p);
    Some(Equilibrium {
        position_m: [p.x, p.y, p.z],
        lat_deg,
        lon_deg,
        radius_m: p.coords.norm(),
        surface_distance_m: (surface.point_m - p).norm(),
        geopotential_m2_s2: phi,
        jacobi_m2_s2: phi,
        eigenvalues: ev.map(|z| [z.re, z.im]),
        linearly_stable: stability.is_stable(),
        stability,
        hessian_eigenvalues_s2: [he[0], he[1], he[2]],
        residual_m_s2: grad.norm(),
        gravity_m_s2: local.g.norm(),
        seeds,
    })
}

/// A ring: at least three points within 1% of their median radius, each with a Hessian
/// direction flatter than 1e-3 of its stiffest.
fn ring_of(eqs: &[Equilibrium]) -> Option<RingReport> {
    let flat = |e: &Equilibrium| {
        let h = e.hessian_eigenvalues_s2.map(f64::abs);
        h[0].min(h[1]).min(h[2]) / h[0].max(h[1]).max(h[2]).max(f64::MIN_POSITIVE)
    };
    let mut radii: Vec<f64> = eqs
        .iter()
        .filter(|e| flat(e) <= 1e-3)
        .map(|e| e.radius_m)
        .collect();
    if radii.len() < 3 {
        return None;
    }
    radii.sort_by(f64::total_cmp);
    let median = radii[radii.len() / 2];
    let on: Vec<&Equilibrium> = eqs
        .iter()
        .filter(|e| flat(e) <= 1e-3 && (e.radius_m - median).abs() <= 0.01 * median)
        .collect();
    if on.len() < 3 {
        return None;
    }
    let (lo, hi) = on
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), e| {
            (lo.min(e.radius_m), hi.max(e.radius_m))
        });
    Some(RingReport {
        radius_m: median,
        radius_spread_m: hi - lo,
        points: on.len(),
        flatness: on.iter().map(|e| flat(e)).fold(0.0, f64::max),
    })
}
