//! Fitting the smooth part of the field in one cell: least squares in the biharmonic space
//! (cells with faces near) or the harmonic space (cells with none) on a fixed pattern of
//! points.
//!
//! Cell coordinates `xi = (x - centre) / half_width` put every cell on the cube `[-1, 1]^3`.
//! The data at each fit point are the first and second derivatives of the smooth part with
//! respect to `xi` (`h grad`, `h^2 Hessian`: nine numbers); they fix every coefficient but the
//! constant, which the potential values fix. Because the pattern is the same in every cell, the
//! least-squares solution is one matrix per degree, computed once (by SVD) and applied to many
//! cells at once as a matrix product.
//!
//! The bases are ordered by degree (see `basis`), so a lower degree's basis is a prefix of a
//! higher one's: the checks of every degree come from one set of basis gradients. Fits up to
//! [`MONOMIAL_MAX_DEGREE`] are converted to monomials for fast evaluation (leaf cells); higher
//! ones stay in the basis and are evaluated by the recurrences of `solid` (cells the build fits
//! only to feed their children).

use std::sync::OnceLock;

use nalgebra::DMatrix;
use serde::{Deserialize, Serialize};

use super::basis::{biharmonic_basis, harmonic_basis};
use super::poly3::{Jet, Layout, eval};
use super::solid::basis_jets;

/// Data per fit point: gradient (3) and Hessian (6) in cell coordinates.
pub(crate) const ROWS_PER_POINT: usize = 9;

/// Highest degree kept as monomials (leaf cells); higher degrees lose digits in that form.
pub(crate) const MONOMIAL_MAX_DEGREE: usize = 16;

/// Points per axis of the biharmonic fit grid (Chebyshev–Lobatto, corners included):
/// `9 * 5^3 = 1125` data, at least twice the unknowns up to the highest degree. (With values,
/// first and second derivatives at five nodes per axis a degree-`p` polynomial is fixed along
/// the grid lines up to `p = 14`; degree 16 fits the smooth fields met here as well, as the
/// checks show, but a higher degree would need a finer grid.)
const BIHARMONIC_GRID: usize = 5;

/// Points per axis of the harmonic fit grid: `9 * 4^3 = 576` data, twice the 288 non-constant
/// solid harmonics up to degree 16. The cells with no faces near, away from the body, are fitted
/// from exact evaluations over the whole mesh; a smaller grid halves what each costs (with the
/// points shared with neighbours, about 27 new points a cell against 64), and their fits stay
/// far inside the bound (degrees 10 to 12 at 1e-11 to 1e-13 of the local gravity on the demo
/// body), as the checks, on their own grid, confirm cell by cell.
const HARMONIC_GRID: usize = 4;

/// The function space of a fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub(crate) enum Space {
    /// `2 p^2 + 2` biharmonic polynomials, up to degree 16; checked on a 4 x 4 x 4 grid.
    Biharmonic,
    /// `(p+1)^2` solid harmonics, up to degree 16, for cells with no faces near; checked on a
    /// 3 x 3 x 3 grid.
    Harmonic,
}

impl Space {
    /// Highest degree fitted.
    pub fn max_degree(self) -> usize {
        match self {
            Space::Biharmonic | Space::Harmonic => MONOMIAL_MAX_DEGREE,
        }
    }

    /// Number of basis functions of degree `p`, the constant included.
    pub fn unknowns(self, p: usize) -> usize {
        match self {
            Space::Biharmonic if p >= 1 => (p + 1) * (p + 1) + (p - 1) * (p - 1),
            Space::Biharmonic => 1,
            Space::Harmonic => (p + 1) * (p + 1),
        }
    }

    /// Index of the space in per-space tables.
    fn slot(self) -> usize {
        match self {
            Space::Biharmonic => 0,
            Space::Harmonic => 1,
        }
    }

    /// Points per axis of the fit grid.
    fn grid(self) -> usize {
        match self {
            Space::Biharmonic => BIHARMONIC_GRID,
            Space::Harmonic => HARMONIC_GRID,
        }
    }

    fn check_grid(self) -> usize {
        match self {
            Space::Biharmonic => 4,
            Space::Harmonic => 3,
        }
    }
}

/// The fit and check points of a space, with the basis at them.
#[derive(Debug)]
pub(crate) struct Pattern {
    /// Fit points in cell coordinates (Chebyshev–Lobatto grid, corners included).
    pub fit_points: Vec<[f64; 3]>,
    /// Node indices of the fit points per axis (`0..grid`): a fit point of the cell with
    /// lattice index `i` has the lattice key `key_stride * i + fit_keys[k]` per axis, and the
    /// last node of a cell is the first of its neighbour's (within one space: the spaces'
    /// grids differ).
    pub fit_keys: Vec<[i64; 3]>,
    /// `grid - 1`.
    pub key_stride: i64,
    /// Points used only to check a fit (none of them a fit point).
    pub check_points: Vec<[f64; 3]>,
    /// Values of the non-constant basis functions (highest degree) at the fit points.
    fit_values: DMatrix<f64>,
    /// Gradients (cell units) of the non-constant basis functions at the check points: rows
    /// `3 k + axis` for check point `k`.
    check_grads: DMatrix<f64>,
    /// The data matrix of the highest degree (rows: data, columns: non-constant functions).
    design: DMatrix<f64>,
}

impl Pattern {
    fn new(space: Space) -> Pattern {
        let grid = space.grid();
        let nodes: Vec<f64> = (0..grid)
            .map(|k| -(std::f64::consts::PI * k as f64 / (grid - 1) as f64).cos())
            .collect();
        let mut fit_points = Vec::with_capacity(grid * grid * grid);
        let mut fit_keys = Vec::with_capacity(grid * grid * grid);
        for (i, &x) in nodes.iter().enumerate() {
            for (j, &y) in nodes.iter().enumerate() {
                for (k, &z) in nodes.iter().enumerate() {
                    fit_points.push([x, y, z]);
                    fit_keys.push([i as i64, j as i64, k as i64]);
                }
            }
        }
        let check_points = check_pattern(space.check_grid());
        let p = space.max_degree();
        let k = space.unknowns(p) - 1;
        let mut fit_values = DMatrix::zeros(fit_points.len(), k);
        let mut design = DMatrix::zeros(fit_points.len() * ROWS_PER_POINT, k);
        for (i, pt) in fit_points.iter().enumerate() {
            let jets = basis_jets::<true>(space, p, *pt);
            for (c, j) in jets[1..].iter().enumerate() {
                fit_values[(i, c)] = j.value;
                for (r, v) in j.grad.iter().chain(&j.hess).enumerate() {
                    design[(i * ROWS_PER_POINT + r, c)] = *v;
                }
            }
        }
        let mut check_grads = DMatrix::zeros(check_points.len() * 3, k);
        for (i, pt) in check_points.iter().enumerate() {
            let jets = basis_jets::<false>(space, p, *pt);
            for (c, j) in jets[1..].iter().enumerate() {
                for a in 0..3 {
                    check_grads[(3 * i + a, c)] = j.grad[a];
                }
            }
        }
        Pattern {
            fit_points,
            fit_keys,
            key_stride: grid as i64 - 1,
            check_points,
            fit_values,
            check_grads,
            design,
        }
    }

    /// The pattern of `space` (built once per process; no lock once built).
    pub fn get(space: Space) -> &'static Pattern {
        static CACHE: [OnceLock<Pattern>; 2] = [const { OnceLock::new() }; 2];
        CACHE[space.slot()].get_or_init(|| Pattern::new(space))
    }

    /// The gradients (cell units) at the check points of fits with non-constant basis
    /// coefficients `coefs` (a column per fit, any degree: a prefix of the basis), a column
    /// per fit with rows `3 k + axis`.
    pub fn check_gradients_many(&self, coefs: &DMatrix<f64>) -> DMatrix<f64> {
        self.check_grads.columns(0, coefs.nrows()) * coefs
    }

    /// The constant making the fit's mean value at the fit points equal `values`' mean.
    pub fn constant(&self, coef: &[f64], values: &[f64]) -> f64 {
        let cols = self.fit_values.columns(0, coef.len());
        let fitted = cols * nalgebra::DVector::from_column_slice(coef);
        values
            .iter()
            .zip(fitted.iter())
            .map(|(v, f)| v - f)
            .sum::<f64>()
            / values.len().max(1) as f64
    }
}

/// The least-squares solution of one degree, and its conversion to monomials.
#[derive(Debug)]
pub(crate) struct Solver {
    /// Non-constant basis coefficients from the data.
    solve: DMatrix<f64>,
    /// Monomial coefficients from the basis coefficients (constant included), up to
    /// [`MONOMIAL_MAX_DEGREE`].
    to_monomials: Option<(Layout, DMatrix<f64>)>,
}

impl Solver {
    fn new(space: Space, p: usize) -> Solver {
        let pattern = Pattern::get(space);
        let k = space.unknowns(p) - 1;
        let mut a = pattern.design.columns(0, k).into_owned();
        // Equilibrate the columns (the basis functions differ in size by orders of magnitude
        // over the cube), solve, and undo the scaling.
        let norms: Vec<f64> = (0..k)
            .map(|c| a.column(c).norm().max(f64::MIN_POSITIVE))
            .collect();
        for (c, n) in norms.iter().enumerate() {
            a.column_mut(c).scale_mut(1.0 / n);
        }
        let svd = a.svd(true, true);
        let s_max = svd.singular_values.max();
        let mut solve = svd
            .pseudo_inverse(1e-14 * s_max)
            .unwrap_or_else(|_| DMatrix::zeros(k, pattern.design.nrows()));
        for (r, n) in norms.iter().enumerate() {
            solve.row_mut(r).scale_mut(1.0 / n);
        }
        let to_monomials = (p <= MONOMIAL_MAX_DEGREE).then(|| {
            let layout = Layout::new(p);
            let basis = match space {
                Space::Biharmonic => biharmonic_basis(&layout),
                Space::Harmonic => harmonic_basis(&layout),
            };
            let mut conv = DMatrix::zeros(layout.len(), basis.len());
            for (c, b) in basis.iter().enumerate() {
                for (r, v) in b.coef.iter().enumerate() {
                    conv[(r, c)] = *v;
                }
            }
            (layout, conv)
        });
        Solver {
            solve,
            to_monomials,
        }
    }

    /// The solver of `space` at degree `p` (built once per process; no lock once built, as
    /// every query of a fitted cell asks for one).
    pub fn get(space: Space, p: usize) -> &'static Solver {
        const DEGREES: usize = MONOMIAL_MAX_DEGREE + 1;
        static CACHE: [OnceLock<Solver>; 2 * DEGREES] = [const { OnceLock::new() }; 2 * DEGREES];
        let p = p.min(space.max_degree());
        CACHE[space.slot() * DEGREES + p].get_or_init(|| Solver::new(space, p))
    }

    /// Non-constant basis coefficients for many cells: column `k` of `data` holds cell `k`'s
    /// derivatives (`ROWS_PER_POINT` per fit point, cell units).
    pub fn fit_many(&self, data: &DMatrix<f64>) -> DMatrix<f64> {
        &self.solve * data
    }

    /// Monomial coefficients of the fit with basis coefficients `basis` (constant first).
    pub fn monomials(&self, basis: &[f64]) -> Option<Vec<f64>> {
        let (_, conv) = self.to_monomials.as_ref()?;
        Some(
            (conv * nalgebra::DVector::from_column_slice(basis))
                .as_slice()
                .to_vec(),
        )
    }

    /// The matrix taking basis coefficients (constant first, a column per fit) to monomial
    /// ones, for degrees up to [`MONOMIAL_MAX_DEGREE`].
    pub fn to_monomials(&self) -> Option<&DMatrix<f64>> {
        self.to_monomials.as_ref().map(|(_, conv)| conv)
    }

    /// The monomial layout (degrees up to [`MONOMIAL_MAX_DEGREE`]).
    pub fn layout(&self) -> Option<&Layout> {
        self.to_monomials.as_ref().map(|(l, _)| l)
    }
}

/// A leaf's monomial polynomial at a point in cell coordinates.
pub(crate) fn monomial_jet<const HESS: bool>(layout: &Layout, coef: &[f64], xi: [f64; 3]) -> Jet {
    eval::<HESS>(layout, coef, xi[0], xi[1], xi[2])
}

/// The check points: the `m x m x m` grid of Chebyshev points of the first kind
/// (`cos((2k+1) pi / 2m)`; for m = 4: +-0.924, +-0.383 per axis; for m = 3: +-0.866, 0), none
/// of them on the fit grid of their space (five Chebyshev–Lobatto nodes per axis with m = 4,
/// four with m = 3: -1, -0.5, 0.5, 1), reaching near the corners, edges and faces of the cell
/// as well as inside it.
fn check_pattern(m: usize) -> Vec<[f64; 3]> {
    let nodes: Vec<f64> = (0..m)
        .map(|k| (std::f64::consts::PI * (2 * k + 1) as f64 / (2 * m) as f64).cos())
        .collect();
    let mut out = Vec::with_capacity(m * m * m);
    for &x in &nodes {
        for &y in &nodes {
            for &z in &nodes {
                out.push([x, y, z]);
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::super::solid;
    use super::*;

    /// Fits data taken from `target` (basis coefficients of degree `p`) and returns the fit's
    /// basis coefficients (constant first).
    fn refit(space: Space, p: usize, target: &[f64]) -> Vec<f64> {
        let pattern = Pattern::get(space);
        let mut data = DMatrix::zeros(pattern.fit_points.len() * ROWS_PER_POINT, 1);
        let mut values = Vec::new();
        for (i, pt) in pattern.fit_points.iter().enumerate() {
            let j = solid::eval::<true>(space, p, target, *pt);
            for (r, v) in j.grad.iter().chain(&j.hess).enumerate() {
                data[(i * ROWS_PER_POINT + r, 0)] = *v;
            }
            values.push(j.value);
        }
        let solver = Solver::get(space, p);
        let c = solver.fit_many(&data);
        let c: Vec<f64> = c.column(0).iter().copied().collect();
        let mut out = vec![pattern.constant(&c, &values)];
        out.extend(c);
        out
    }

    #[test]
    fn members_of_each_space_are_fitted_exactly_in_both_forms() {
        // Data taken from a member of the space: the fit must return it to rounding at the
        // check points, in the basis form and (degree <= 16) in the monomial form.
        // Degree 16 is the highest fitted: the harmonic space's smaller grid must fix all of
        // its 288 non-constant members too.
        for (space, p) in [
            (Space::Biharmonic, 6),
            (Space::Biharmonic, 12),
            (Space::Biharmonic, 16),
            (Space::Harmonic, 12),
            (Space::Harmonic, 16),
        ] {
            let k = space.unknowns(p);
            let target: Vec<f64> = (0..k).map(|i| ((i * 37) % 11) as f64 / 5.0 - 1.0).collect();
            let got = refit(space, p, &target);
            let solver = Solver::get(space, p);
            let mono = solver.monomials(&got);
            let pattern = Pattern::get(space);
            // Errors relative to the largest value and gradient component over the cell (the
            // high-degree members of this made-up function are largest at the corners).
            let scale = pattern
                .check_points
                .iter()
                .chain(&pattern.fit_points)
                .map(|pt| {
                    let j = solid::eval::<false>(space, p, &target, *pt);
                    j.grad.iter().fold(j.value.abs(), |m, g| m.max(g.abs()))
                })
                .fold(1.0, f64::max);
            let tol = 1e-11 * scale;
            for pt in &pattern.check_points {
                let (a, b) = (
                    solid::eval::<false>(space, p, &got, *pt),
                    solid::eval::<false>(space, p, &target, *pt),
                );
                assert!(
                    (a.value - b.value).abs() < tol,
                    "{space:?} {p}: {} vs {}",
                    a.value,
                    b.value
                );
                for i in 0..3 {
                    assert!((a.grad[i] - b.grad[i]).abs() < tol, "{space:?} {p}");
                }
                if let (Some(m), Some(layout)) = (&mono, solver.layout()) {
                    let c = monomial_jet::<false>(layout, m, *pt);
                    assert!((c.value - b.value).abs() < tol && (c.grad[0] - b.grad[0]).abs() < tol);
                }
            }
        }
    }

    #[test]
    fn check_points_are_never_fit_points_and_grids_share_their_sides() {
        // A check point on the fit grid would check the fit where it was made to agree.
        for space in [Space::Biharmonic, Space::Harmonic] {
            let pattern = Pattern::get(space);
            for c in &pattern.check_points {
                for f in &pattern.fit_points {
                    let d = (0..3).map(|a| (c[a] - f[a]).abs()).fold(0.0, f64::max);
                    assert!(d > 0.05, "{space:?}: check {c:?} on fit point {f:?}");
                }
            }
            // The first and last node per axis are the cell's sides (-1 and 1 exactly), so a
            // side's fit points are those of the neighbour's opposite side.
            let g = pattern.key_stride;
            for (f, k) in pattern.fit_points.iter().zip(&pattern.fit_keys) {
                for a in 0..3 {
                    if k[a] == 0 {
                        assert_eq!(f[a], -1.0);
                    }
                    if k[a] == g {
                        assert_eq!(f[a], 1.0);
                    }
                }
            }
        }
    }

    #[test]
    fn a_function_outside_the_space_is_not_reproduced() {
        // x^2 y^2 z^2 is not biharmonic: the fit must miss it somewhere.
        let pattern = Pattern::get(Space::Biharmonic);
        let mut data = DMatrix::zeros(pattern.fit_points.len() * ROWS_PER_POINT, 1);
        let f = |x: [f64; 3]| -> [f64; 9] {
            let (a, b, c) = (x[0], x[1], x[2]);
            [
                2.0 * a * b * b * c * c,
                2.0 * a * a * b * c * c,
                2.0 * a * a * b * b * c,
                2.0 * b * b * c * c,
                4.0 * a * b * c * c,
                4.0 * a * b * b * c,
                2.0 * a * a * c * c,
                4.0 * a * a * b * c,
                2.0 * a * a * b * b,
            ]
        };
        for (i, pt) in pattern.fit_points.iter().enumerate() {
            for (r, v) in f(*pt).iter().enumerate() {
                data[(i * ROWS_PER_POINT + r, 0)] = *v;
            }
        }
        let c = Solver::get(Space::Biharmonic, 6).fit_many(&data);
        let g = pattern.check_gradients_many(&c);
        let worst = pattern
            .check_points
            .iter()
            .enumerate()
            .map(|(k, pt)| (g[3 * k] - f(*pt)[0]).abs())
            .fold(0.0, f64::max);
        assert!(worst > 1e-3, "{worst}");
    }
}
