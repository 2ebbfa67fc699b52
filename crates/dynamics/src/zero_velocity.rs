//! Zero-velocity surfaces of the Jacobi integral: the effective potential on a plane through the
//! body, its level curves, and where a level meets the surface.
//!
//! In the rotating body frame the Jacobi integral `C = |v|^2/2 + Phi(r)` is conserved (uniform
//! spin, no other forces), with the geopotential `Phi = -(U + |w x r|^2/2)` of the surface map.
//! Since `|v|^2/2 >= 0`, a particle of Jacobi constant `C` can only be where `Phi(r) <= C`. The
//! surface `Phi(r) = C` is its **zero-velocity surface**: there its speed in the body frame would
//! be zero, and the region `Phi(r) > C` is **forbidden** to it (Scheeres 2012, *Orbital Motion in
//! Strongly Perturbed Environments*, ch. on the Jacobi integral; the classical Hill regions of the
//! restricted three-body problem).
//!
//! This module gives:
//! - [`PlaneSlice`]: `Phi`, `|grad Phi|` and the inside flag at the centres of a square grid on a
//!   plane `x`, `y` or `z` = const of the body frame ([`plane_slice`]), evaluated in batches;
//! - [`PlaneSlice::contour`]: the level curves `Phi = C` on that plane (marching squares, joined
//!   into polylines), and [`PlaneSlice::hatch`]: segments along grid rows that cover the forbidden
//!   part `Phi > C`, for drawing it;
//! - [`vertex_geopotential`] and [`surface_contour`]: `Phi` at the mesh vertices and the curves
//!   where the zero-velocity surface meets the body surface (linear interpolation along edges);
//! - [`jacobi_constant`] of a launch state.
//!
//! The contours are linear interpolations between grid points (or vertices): their position error
//! is of the order of the grid spacing squared times the curvature of `Phi`, so refine the grid
//! (or the mesh) to resolve narrow necks near equilibrium points. With extra forces (sunlight, the
//! solar tide) `C` is not conserved and the zero-velocity surfaces only describe the motion
//! without them. Spinfall is a research and planning tool, not flight-certified.

use std::collections::HashMap;
use std::fmt;
use std::str::FromStr;
use std::sync::atomic::{AtomicBool, Ordering};

use nalgebra::{Point3, Vector3};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::launch::LaunchState;

/// Largest number of cells per side of a slice (4 million points at most).
pub const MAX_SLICE_CELLS: usize = 2000;

/// Points evaluated per batch (progress and cancel are checked between batches).
const SLICE_CHUNK: usize = 8192;

/// The geopotential `Phi = -(U + |w x r|^2/2)` at `p_body_m`, m^2/s^2.
pub fn geopotential(body: &Body, p_body_m: &Point3<f64>) -> f64 {
    let (u, _) = body.gravity.potential_acceleration(p_body_m);
    geopotential_from(body, u, p_body_m)
}

fn geopotential_from(body: &Body, u: f64, p_body_m: &Point3<f64>) -> f64 {
    let wxr = body.omega_body_rad_s().cross(&p_body_m.coords);
    -(u + 0.5 * wxr.norm_squared())
}

/// The Jacobi constant `|v|^2/2 + Phi(r)` of a launch's start state (velocity relative to the
/// rotating body), m^2/s^2. It is what the flights' drift diagnostic compares against.
pub fn jacobi_constant(body: &Body, launch: &LaunchState) -> f64 {
    0.5 * launch.vel_body_m_s.norm_squared() + geopotential(body, &launch.pos_body_m)
}

/// A body-frame coordinate axis.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Axis {
    /// Body x.
    X,
    /// Body y.
    Y,
    /// Body z.
    Z,
}

impl Axis {
    fn index(self) -> usize {
        match self {
            Axis::X => 0,
            Axis::Y => 1,
            Axis::Z => 2,
        }
    }

    fn name(self) -> &'static str {
        match self {
            Axis::X => "x",
            Axis::Y => "y",
            Axis::Z => "z",
        }
    }
}

/// A plane `axis = offset_m` of the body frame.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SlicePlane {
    /// The axis normal to the plane.
    pub axis: Axis,
    /// The plane's offset along that axis, m.
    pub offset_m: f64,
}

impl SlicePlane {
    /// The two in-plane axes `(u, v)`, right-handed with the normal: (x, y) for z, (y, z) for x,
    /// (z, x) for y.
    pub fn in_plane_axes(&self) -> (Axis, Axis) {
        match self.axis {
            Axis::X => (Axis::Y, Axis::Z),
            Axis::Y => (Axis::Z, Axis::X),
            Axis::Z => (Axis::X, Axis::Y),
        }
    }

    /// The body-frame point at in-plane coordinates `(u_m, v_m)`.
    pub fn point(&self, u_m: f64, v_m: f64) -> Point3<f64> {
        let (a, b) = self.in_plane_axes();
        let mut p = Point3::origin();
        p[self.axis.index()] = self.offset_m;
        p[a.index()] = u_m;
        p[b.index()] = v_m;
        p
    }
}

impl fmt::Display for SlicePlane {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}={}", self.axis.name(), self.offset_m)
    }
}

impl FromStr for SlicePlane {
    type Err = DynamicsError;

    /// Parses `z=0`, `x=-1500`, `y=2.5e3` (metres; spaces allowed around `=`).
    fn from_str(s: &str) -> Result<SlicePlane> {
        let bad = |why: &str| {
            DynamicsError::param(
                "plane",
                format!("{why} in {s:?}; write it as x=OFFSET, y=OFFSET or z=OFFSET, in metres"),
            )
        };
        let (axis, offset) = s.split_once('=').ok_or_else(|| bad("no '='"))?;
        let axis = match axis.trim().to_ascii_lowercase().as_str() {
            "x" => Axis::X,
            "y" => Axis::Y,
            "z" => Axis::Z,
            _ => return Err(bad("the axis must be x, y or z")),
        };
        let offset_m: f64 = offset
            .trim()
            .parse()
            .map_err(|_| bad("the offset is not a number"))?;
        if !offset_m.is_finite() {
            return Err(bad("the offset must be finite"));
        }
        Ok(SlicePlane { axis, offset_m })
    }
}

/// A square grid on a plane, centred on the point of the plane nearest the body-frame origin.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SliceSpec {
    /// The plane.
    pub plane: SlicePlane,
    /// Full width of the square, m (> 0).
    pub extent_m: f64,
    /// Cells per side, in [2, [`MAX_SLICE_CELLS`]]; values are taken at the cell centres.
    pub cells: usize,
}

impl SliceSpec {
    /// Checks the numbers.
    pub fn validate(&self) -> Result<()> {
        if !self.plane.offset_m.is_finite() {
            return Err(DynamicsError::param("plane offset", "must be finite"));
        }
        if !(self.extent_m.is_finite() && self.extent_m > 0.0) {
            return Err(DynamicsError::param(
                "extent_m",
                format!("must be a finite width > 0 m, got {}", self.extent_m),
            ));
        }
        if !(2..=MAX_SLICE_CELLS).contains(&self.cells) {
            return Err(DynamicsError::param(
                "cells",
                format!(
                    "must be between 2 and {MAX_SLICE_CELLS} per side, got {}",
                    self.cells
                ),
            ));
        }
        Ok(())
    }

    /// Grid spacing, m.
    pub fn spacing_m(&self) -> f64 {
        self.extent_m / self.cells as f64
    }

    /// In-plane coordinate of the centre of cell `i` along either axis, m.
    pub fn centre_m(&self, i: usize) -> f64 {
        -0.5 * self.extent_m + (i as f64 + 0.5) * self.spacing_m()
    }
}

/// The geopotential on a plane grid. Cell `(i, j)` (column `i` along the plane's first in-plane
/// axis, row `j` along the second) is stored at `j * cells + i`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlaneSlice {
    /// The grid.
    pub spec: SliceSpec,
    /// Body-frame centre of each cell, m.
    pub points_m: Vec<[f64; 3]>,
    /// `Phi` at each centre, m^2/s^2.
    pub geopotential_m2_s2: Vec<f64>,
    /// `|grad Phi|`, the effective gravity (gravity plus centrifugal) at each centre, m/s^2.
    pub effective_gravity_m_s2: Vec<f64>,
    /// Whether each centre is inside the body.
    pub inside: Vec<bool>,
}

/// Evaluates `Phi` on the grid of `spec`, the field in batches. `progress(done, total)` is called
/// after each batch; setting `cancel` stops the work with [`DynamicsError::Cancelled`].
pub fn plane_slice(
    body: &Body,
    spec: &SliceSpec,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &AtomicBool,
) -> Result<PlaneSlice> {
    spec.validate()?;
    let n = spec.cells;
    let total = n * n;
    let w = body.omega_body_rad_s();
    let points: Vec<Point3<f64>> = (0..total)
        .map(|k| spec.plane.point(spec.centre_m(k % n), spec.centre_m(k / n)))
        .collect();
    let mut slice = PlaneSlice {
        spec: *spec,
        points_m: points.iter().map(|p| [p.x, p.y, p.z]).collect(),
        geopotential_m2_s2: Vec::with_capacity(total),
        effective_gravity_m_s2: Vec::with_capacity(total),
        inside: Vec::with_capacity(total),
    };
    let mut field = vec![(0.0, Vector3::zeros()); SLICE_CHUNK];
    for chunk in points.chunks(SLICE_CHUNK) {
        if cancel.load(Ordering::Relaxed) {
            return Err(DynamicsError::Cancelled);
        }
        let out = &mut field[..chunk.len()];
        body.gravity.potential_acceleration_batch(chunk, out);
        for (p, &(u, g)) in chunk.iter().zip(out.iter()) {
            let centrifugal = -w.cross(&w.cross(&p.coords));
            slice.geopotential_m2_s2.push(geopotential_from(body, u, p));
            slice.effective_gravity_m_s2.push((g + centrifugal).norm());
        }
        let inside: Vec<bool> = chunk.par_iter().map(|p| body.shape.contains(p)).collect();
        slice.inside.extend(inside);
        progress(slice.inside.len(), total);
    }
    Ok(slice)
}

impl PlaneSlice {
    fn value(&self, i: usize, j: usize) -> f64 {
        self.geopotential_m2_s2[j * self.spec.cells + i]
    }

    fn node(&self, i: usize, j: usize) -> Point3<f64> {
        Point3::from(self.points_m[j * self.spec.cells + i])
    }

    /// The level curves `Phi = level_m2_s2` on the plane, as polylines of body-frame points (closed
    /// curves repeat their first point at the end). Saddle cells are resolved by the mean of
    /// their corners. Curves inside the body are included (their points are still level points
    /// of the interior potential); a view hides them behind the surface.
    pub fn contour(&self, level_m2_s2: f64) -> Vec<Vec<Point3<f64>>> {
        let n = self.spec.cells;
        if !level_m2_s2.is_finite() || n < 2 {
            return Vec::new();
        }
        // Grid edges: (i, j, 0) joins node (i, j) to (i+1, j); (i, j, 1) joins (i, j) to (i, j+1).
        let crossing = |i: usize, j: usize, dir: u8| -> Point3<f64> {
            let (i2, j2) = if dir == 0 { (i + 1, j) } else { (i, j + 1) };
            let (a, b) = (self.value(i, j), self.value(i2, j2));
            let t = ((level_m2_s2 - a) / (b - a)).clamp(0.0, 1.0);
            let (pa, pb) = (self.node(i, j), self.node(i2, j2));
            pa + (pb - pa) * t
        };
        let mut segments: Vec<(GridEdge, GridEdge)> = Vec::new();
        for j in 0..n - 1 {
            for i in 0..n - 1 {
                let c = [
                    self.value(i, j),
                    self.value(i + 1, j),
                    self.value(i + 1, j + 1),
                    self.value(i, j + 1),
                ];
                if c.iter().any(|v| !v.is_finite()) {
                    continue;
                }
                let above = c.map(|v| v > level_m2_s2);
                // The cell's edges in order: bottom, right, top, left.
                let edges = [(i, j, 0), (i + 1, j, 1), (i, j + 1, 0), (i, j, 1)];
                let cut: Vec<usize> = (0..4).filter(|&e| above[e] != above[(e + 1) % 4]).collect();
                match cut.len() {
                    2 => segments.push((edges[cut[0]], edges[cut[1]])),
                    4 => {
                        let centre_above = c.iter().sum::<f64>() / 4.0 > level_m2_s2;
                        // Join around the corners that share the centre's side's opposite.
                        if centre_above == above[0] {
                            segments.push((edges[0], edges[1]));
                            segments.push((edges[2], edges[3]));
                        } else {
                            segments.push((edges[3], edges[0]));
                            segments.push((edges[1], edges[2]));
                        }
                    }
                    _ => {}
                }
            }
        }
        chain(&segments)
            .into_iter()
            .map(|keys| {
                keys.into_iter()
                    .map(|(i, j, d)| crossing(i, j, d))
                    .collect()
            })
            .collect()
    }

    /// Segments covering the forbidden region `Phi > level_m2_s2`, along every `every_rows`-th
    /// grid row (from row `every_rows / 2`), with their ends interpolated to the level: a hatch
    /// for drawing the region. Rows are in the plane's first in-plane direction.
    pub fn hatch(&self, level_m2_s2: f64, every_rows: usize) -> Vec<[Point3<f64>; 2]> {
        let n = self.spec.cells;
        let step = every_rows.max(1);
        let mut out = Vec::new();
        if !level_m2_s2.is_finite() {
            return out;
        }
        let edge_point = |i: usize, j: usize| -> Point3<f64> {
            let (a, b) = (self.value(i, j), self.value(i + 1, j));
            let t = ((level_m2_s2 - a) / (b - a)).clamp(0.0, 1.0);
            let (pa, pb) = (self.node(i, j), self.node(i + 1, j));
            pa + (pb - pa) * t
        };
        for j in (step / 2..n).step_by(step) {
            let mut start: Option<Point3<f64>> = None;
            for i in 0..n {
                let forbidden = self.value(i, j) > level_m2_s2;
                match (forbidden, start) {
                    (true, None) => {
                        start = Some(if i == 0 {
                            self.node(0, j)
                        } else {
                            edge_point(i - 1, j)
                        })
                    }
                    (false, Some(s)) => {
                        out.push([s, edge_point(i - 1, j)]);
                        start = None;
                    }
                    _ => {}
                }
            }
            if let Some(s) = start {
                out.push([s, self.node(n - 1, j)]);
            }
        }
        out
    }
}

/// A grid edge: `(i, j, 0)` joins node `(i, j)` to `(i + 1, j)`, `(i, j, 1)` to `(i, j + 1)`.
type GridEdge = (usize, usize, u8);

/// Joins segments given by the keys of their end points into polylines of keys. Each key is
/// shared by at most two segments (one grid or mesh edge between two cells or faces).
fn chain<K: Copy + Eq + std::hash::Hash>(segments: &[(K, K)]) -> Vec<Vec<K>> {
    let mut at: HashMap<K, Vec<usize>> = HashMap::with_capacity(segments.len() * 2);
    for (s, (a, b)) in segments.iter().enumerate() {
        at.entry(*a).or_default().push(s);
        at.entry(*b).or_default().push(s);
    }
    let mut used = vec![false; segments.len()];
    let mut lines = Vec::new();
    let next_from = |key: K, used: &[bool]| -> Option<usize> {
        at.get(&key)?.iter().copied().find(|&s| !used[s])
    };
    // Open chains first (start at keys with one segment), then the closed loops left.
    let mut starts: Vec<usize> = (0..segments.len()).collect();
    starts.sort_by_key(|&s| {
        let (a, b) = segments[s];
        let ends = at
            .get(&a)
            .map_or(0, Vec::len)
            .min(at.get(&b).map_or(0, Vec::len));
        ends != 1
    });
    for s0 in starts {
        if used[s0] {
            continue;
        }
        used[s0] = true;
        let (a, b) = segments[s0];
        // Start from the end with a single segment, if any, so an open chain is walked whole.
        let (first, mut key) = if at.get(&b).map_or(0, Vec::len) == 1 {
            (b, a)
        } else {
            (a, b)
        };
        let mut line = vec![first, key];
        while let Some(s) = next_from(key, &used) {
            used[s] = true;
            let (a, b) = segments[s];
            key = if a == key { b } else { a };
            line.push(key);
        }
        lines.push(line);
    }
    lines
}

/// `Phi` at every vertex of the body's mesh, m^2/s^2, the field in batches (progress and cancel
/// as in [`plane_slice`]).
pub fn vertex_geopotential(
    body: &Body,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &AtomicBool,
) -> Result<Vec<f64>> {
    let vertices = &body.shape.mesh().vertices_m;
    let mut out = Vec::with_capacity(vertices.len());
    let mut field = vec![(0.0, Vector3::zeros()); SLICE_CHUNK];
    for chunk in vertices.chunks(SLICE_CHUNK) {
        if cancel.load(Ordering::Relaxed) {
            return Err(DynamicsError::Cancelled);
        }
        let f = &mut field[..chunk.len()];
        body.gravity.potential_acceleration_batch(chunk, f);
        out.extend(
            chunk
                .iter()
                .zip(f.iter())
                .map(|(p, &(u, _))| geopotential_from(body, u, p)),
        );
        progress(out.len(), vertices.len());
    }
    Ok(out)
}

/// Where the zero-velocity surface `Phi = level_m2_s2` meets the body surface: polylines of
/// surface points, interpolated linearly along the mesh edges between the vertex values
/// `vertex_phi` (from [`vertex_geopotential`]). Empty when the level does not cross the surface
/// or the values do not match the mesh.
pub fn surface_contour(body: &Body, vertex_phi: &[f64], level_m2_s2: f64) -> Vec<Vec<Point3<f64>>> {
    let mesh = body.shape.mesh();
    if vertex_phi.len() != mesh.vertices_m.len() || !level_m2_s2.is_finite() {
        return Vec::new();
    }
    let key = |a: usize, b: usize| (a.min(b), a.max(b));
    let mut segments = Vec::new();
    for t in &mesh.faces {
        let v = t.map(|k| k as usize);
        let above = v.map(|k| vertex_phi[k] > level_m2_s2);
        let cut: Vec<(usize, usize)> = (0..3)
            .filter(|&e| above[e] != above[(e + 1) % 3])
            .map(|e| key(v[e], v[(e + 1) % 3]))
            .collect();
        if cut.len() == 2 {
            segments.push((cut[0], cut[1]));
        }
    }
    let point = |(a, b): (usize, usize)| -> Point3<f64> {
        let (fa, fb) = (vertex_phi[a], vertex_phi[b]);
        let t = ((level_m2_s2 - fa) / (fb - fa)).clamp(0.0, 1.0);
        let (pa, pb) = (mesh.vertices_m[a], mesh.vertices_m[b]);
        pa + (pb - pa) * t
    };
    chain(&segments)
        .into_iter()
        .map(|keys| keys.into_iter().map(point).collect())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn planes_parse_and_refuse() {
        let p: SlicePlane = "z=0".parse().unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((p.axis, p.offset_m), (Axis::Z, 0.0));
        let p: SlicePlane = " X = -1.5e3 ".parse().unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((p.axis, p.offset_m), (Axis::X, -1500.0));
        for bad in ["z", "w=0", "z=abc", "z=nan", "z=inf", ""] {
            let err = bad.parse::<SlicePlane>().err();
            assert!(err.is_some(), "{bad:?} accepted");
        }
    }

    #[test]
    fn in_plane_axes_are_right_handed() {
        for axis in [Axis::X, Axis::Y, Axis::Z] {
            let plane = SlicePlane {
                axis,
                offset_m: 0.0,
            };
            let (a, b) = plane.in_plane_axes();
            let unit = |ax: Axis| {
                let mut v = Vector3::zeros();
                v[ax.index()] = 1.0;
                v
            };
            assert_eq!(unit(a).cross(&unit(b)), unit(axis));
        }
    }

    #[test]
    fn chain_joins_open_and_closed_runs() {
        // An open run 1-2-3-4 given out of order, and a closed triangle 10-11-12.
        let segs = [(3, 4), (1, 2), (11, 12), (2, 3), (10, 11), (12, 10)];
        let mut lines = chain(&segs);
        lines.sort_by_key(Vec::len);
        assert_eq!(lines.len(), 2);
        let open = &lines[0];
        assert!(
            open == &vec![1, 2, 3, 4] || open == &vec![4, 3, 2, 1],
            "{open:?}"
        );
        let closed = &lines[1];
        assert_eq!(closed.len(), 4);
        assert_eq!(closed.first(), closed.last());
    }
}
