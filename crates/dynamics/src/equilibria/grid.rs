//! The seed grid: cylindrical about the spin axis, `|grad Phi|` at its nodes and the minima in
//! its meridian half-planes.

use std::sync::atomic::{AtomicBool, Ordering};

use nalgebra::{Point3, Vector3};

use super::{EquilibriumSearch, SearchRegion};
use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::site::equatorial_basis;

/// The seed grid: cylindrical about the spin axis (see the module docs).
pub(super) struct Grid {
    nr: usize,
    na: usize,
    nz: usize,
    dr: f64,
    dz: f64,
    zlo: f64,
    basis: (Vector3<f64>, Vector3<f64>, Vector3<f64>),
}

/// Nodes evaluated per batch of the field (progress and cancel are checked between batches).
const GRID_CHUNK: usize = 4096;

impl Grid {
    pub(super) fn new(region: &SearchRegion, s: &EquilibriumSearch, body: &Body) -> Grid {
        let [zlo, zhi] = region.axial_range_m;
        Grid {
            nr: s.radial_cells,
            na: s.azimuth_cells,
            nz: s.axial_cells,
            dr: region.outer_radius_m / s.radial_cells as f64,
            dz: (zhi - zlo) / s.axial_cells as f64,
            zlo,
            basis: equatorial_basis(&body.spin.axis_body),
        }
    }

    pub(super) fn nodes(&self) -> usize {
        self.nr * self.na * self.nz
    }

    /// The largest cell edge, m.
    pub(super) fn cell_size_m(&self) -> f64 {
        let outer = self.dr * self.nr as f64;
        self.dr
            .max(self.dz)
            .max(outer * std::f64::consts::TAU / self.na as f64)
    }

    fn index(&self, i: usize, j: usize, k: usize) -> usize {
        (i * self.na + j) * self.nz + k
    }

    pub(super) fn point(&self, n: usize) -> Point3<f64> {
        let k = n % self.nz;
        let j = (n / self.nz) % self.na;
        let i = n / (self.nz * self.na);
        let rho = (i as f64 + 0.5) * self.dr;
        let phi = std::f64::consts::TAU * j as f64 / self.na as f64;
        let z = self.zlo + (k as f64 + 0.5) * self.dz;
        let (ex, ey, ez) = &self.basis;
        Point3::from((ex * phi.cos() + ey * phi.sin()) * rho + ez * z)
    }

    /// `|grad Phi|` at every node the bounds allow outside the body, infinity elsewhere.
    pub(super) fn values(
        &self,
        body: &Body,
        region: &SearchRegion,
        w: &Vector3<f64>,
        progress: &(dyn Fn(usize, usize) + Sync),
        total: usize,
        cancel: &AtomicBool,
    ) -> Result<Vec<f64>> {
        let n = self.nodes();
        let mut values = vec![f64::INFINITY; n];
        let axis = self.basis.2;
        let mut idx = Vec::with_capacity(GRID_CHUNK);
        let mut pts = Vec::with_capacity(GRID_CHUNK);
        let mut field = vec![(0.0, Vector3::zeros()); GRID_CHUNK];
        for start in (0..n).step_by(GRID_CHUNK) {
            if cancel.load(Ordering::Relaxed) {
                return Err(DynamicsError::Cancelled);
            }
            idx.clear();
            pts.clear();
            for m in start..(start + GRID_CHUNK).min(n) {
                let p = self.point(m);
                if region.allows(&p, &axis) && !body.shape.contains(&p) {
                    idx.push(m);
                    pts.push(p);
                }
            }
            let out = &mut field[..pts.len()];
            body.gravity.potential_acceleration_batch(&pts, out);
            for ((m, p), (_, g)) in idx.iter().zip(&pts).zip(out.iter()) {
                let centrifugal = -w.cross(&w.cross(&p.coords));
                let v = (g + centrifugal).norm();
                if v.is_finite() {
                    values[*m] = v;
                }
            }
            progress((start + GRID_CHUNK).min(n), total);
        }
        Ok(values)
    }

    /// Nodes with a finite value no greater than any of their eight neighbours in their
    /// meridian half-plane (distance from the axis x height, at the same longitude).
    pub(super) fn local_minima(&self, values: &[f64]) -> Vec<usize> {
        let mut out = Vec::new();
        for i in 0..self.nr {
            for j in 0..self.na {
                for k in 0..self.nz {
                    let m = self.index(i, j, k);
                    let v = values[m];
                    if v.is_finite() && self.no_smaller_neighbour(values, i, j, k, v) {
                        out.push(m);
                    }
                }
            }
        }
        out
    }

    fn no_smaller_neighbour(&self, values: &[f64], i: usize, j: usize, k: usize, v: f64) -> bool {
        for di in -1i64..=1 {
            for dk in -1i64..=1 {
                if di == 0 && dk == 0 {
                    continue;
                }
                let (ii, kk) = (i as i64 + di, k as i64 + dk);
                if ii < 0 || ii >= self.nr as i64 || kk < 0 || kk >= self.nz as i64 {
                    continue;
                }
                if values[self.index(ii as usize, j, kk as usize)] < v {
                    return false;
                }
            }
        }
        true
    }
}
