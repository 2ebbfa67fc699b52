//! Newton's method from many seeds at once, with steps along circles about the spin axis.

use std::sync::atomic::{AtomicBool, Ordering};

use nalgebra::{Point3, SymmetricEigen, Vector3};

use super::EquilibriumSearch;
use super::field::{Local, field_at, grad_phi, hess_phi};
use crate::body::Body;
use crate::error::{DynamicsError, Result};

/// How a Newton path ended.
#[derive(Debug, Clone, Copy)]
pub(super) enum WalkEnd {
    Converged(Point3<f64>),
    Inside,
    Left,
    Stuck,
}

/// Bounds of a Newton path.
#[derive(Debug, Clone, Copy)]
pub(super) struct NewtonLimits {
    pub step_cap_m: f64,
    pub far_m: f64,
}

/// A Newton path in progress.
struct Walker {
    p: Point3<f64>,
    local: Local,
    residual: f64,
    polish: u8,
    end: Option<WalkEnd>,
}

/// Most halvings of a Newton step.
const MAX_HALVINGS: usize = 30;
/// Steps after convergence that may still reduce the residual.
const POLISH_STEPS: u8 = 2;

/// Newton's method from every seed, the field of all active paths in one batch per trial.
pub(super) fn newton(
    body: &Body,
    w: &Vector3<f64>,
    seeds: &[Point3<f64>],
    search: &EquilibriumSearch,
    limits: NewtonLimits,
    progress: &dyn Fn(usize),
    cancel: &AtomicBool,
) -> Result<Vec<WalkEnd>> {
    let axis = body.spin.axis_body.into_inner();
    let locals = field_at(body, seeds);
    let mut walkers: Vec<Walker> = seeds
        .iter()
        .zip(locals)
        .map(|(p, local)| Walker {
            p: *p,
            residual: grad_phi(w, p, &local).norm(),
            local,
            polish: 0,
            end: None,
        })
        .collect();
    for iter in 0..search.max_iterations {
        if cancel.load(Ordering::Relaxed) {
            return Err(DynamicsError::Cancelled);
        }
        let active: Vec<usize> = (0..walkers.len())
            .filter(|&i| walkers[i].end.is_none())
            .collect();
        if active.is_empty() {
            break;
        }
        let steps: Vec<Vector3<f64>> = active
            .iter()
            .map(|&i| newton_step(w, &walkers[i], limits.step_cap_m))
            .collect();
        let mut pending: Vec<(usize, Vector3<f64>)> = active.into_iter().zip(steps).collect();
        for _ in 0..=MAX_HALVINGS {
            if pending.is_empty() {
                break;
            }
            let trial: Vec<Point3<f64>> = pending
                .iter()
                .map(|(i, d)| along_circles(&walkers[*i].p, d, &axis))
                .collect();
            let locals = field_at(body, &trial);
            let mut again = Vec::new();
            for (((i, d), p), local) in pending.iter().zip(&trial).zip(locals) {
                let r = grad_phi(w, p, &local).norm();
                let wk = &mut walkers[*i];
                if r < wk.residual && r.is_finite() {
                    wk.p = *p;
                    wk.local = local;
                    wk.residual = r;
                    if r <= search.residual_tolerance * local.g.norm() {
                        wk.polish += 1;
                        if wk.polish > POLISH_STEPS {
                            wk.end = Some(WalkEnd::Converged(wk.p));
                        }
                    }
                } else if wk.polish > 0 {
                    // Converged already: round-off is all that is left.
                    wk.end = Some(WalkEnd::Converged(wk.p));
                } else if d.norm() > 1e-15 * wk.p.coords.norm() {
                    again.push((*i, d * 0.5));
                } else {
                    wk.end = Some(settled(wk, search));
                }
            }
            pending = again;
        }
        for (i, _) in pending {
            let wk = &mut walkers[i];
            wk.end = Some(settled(wk, search));
        }
        for wk in walkers.iter_mut().filter(|w| w.end.is_none()) {
            let r = wk.p.coords.norm();
            if r.is_nan() || r > limits.far_m {
                wk.end = Some(WalkEnd::Left);
            } else if body.shape.contains(&wk.p) {
                wk.end = Some(WalkEnd::Inside);
            }
        }
        progress(iter + 1);
    }
    Ok(walkers
        .iter()
        .map(|wk| wk.end.unwrap_or_else(|| settled(wk, search)))
        .collect())
}

/// The end of a path that can make no more progress: converged if its residual is small
/// enough, else stuck.
fn settled(wk: &Walker, search: &EquilibriumSearch) -> WalkEnd {
    if wk.residual <= search.residual_tolerance * wk.local.g.norm() {
        WalkEnd::Converged(wk.p)
    } else {
        WalkEnd::Stuck
    }
}

/// `p` moved by the step `d` in cylindrical coordinates about the spin axis: the step's
/// components along the local radial, azimuthal and axial directions change the distance from
/// the axis, the longitude (by the arc over the distance) and the height. To first order this
/// is `p + d`; along the synchronous circle, where the field is soft, it follows the circle
/// instead of leaving it along the tangent (which, on the stiff radial direction, would undo
/// the step's gain and stall the line search). Near the axis it is `p + d`.
fn along_circles(p: &Point3<f64>, d: &Vector3<f64>, axis: &Vector3<f64>) -> Point3<f64> {
    let z = p.coords.dot(axis);
    let radial = p.coords - axis * z;
    let rho = radial.norm();
    if rho <= 1e-6 * p.coords.norm() || rho <= d.norm() {
        return p + d;
    }
    let e_rho = radial / rho;
    let e_phi = axis.cross(&e_rho);
    let (dr, dphi) = (d.dot(&e_rho), d.dot(&e_phi) / rho);
    let (s, c) = dphi.sin_cos();
    let dir = e_rho * c + e_phi * s;
    Point3::from(dir * (rho + dr) + axis * (z + d.dot(axis)))
}

/// The Newton step `-H^+ grad Phi` on the Hessian's well-conditioned directions, capped.
fn newton_step(w: &Vector3<f64>, wk: &Walker, cap_m: f64) -> Vector3<f64> {
    let grad = grad_phi(w, &wk.p, &wk.local);
    let hess = hess_phi(w, &wk.local);
    let Some(eig) = SymmetricEigen::try_new(hess, f64::EPSILON, 1000) else {
        return Vector3::zeros();
    };
    let big = eig.eigenvalues.amax();
    let mut d = Vector3::zeros();
    for k in 0..3 {
        let mu = eig.eigenvalues[k];
        if mu.abs() > 1e-9 * big {
            let v = eig.eigenvectors.column(k);
            d -= v * (v.dot(&grad) / mu);
        }
    }
    let n = d.norm();
    if !n.is_finite() {
        return Vector3::zeros();
    }
    if n > cap_m { d * (cap_m / n) } else { d }
}
