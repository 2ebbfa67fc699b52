//! The field the search needs: `U`, its gradient and tensor, and the geopotential's gradient
//! and Hessian.

use nalgebra::{Matrix3, Point3, Vector3};

use crate::body::Body;

/// The field at one point: potential, acceleration and gradient tensor of `U`.
#[derive(Debug, Clone, Copy)]
pub(super) struct Local {
    pub u: f64,
    pub g: Vector3<f64>,
    pub hess_u: Matrix3<f64>,
}

/// `grad Phi = -(g + w^2 r_perp)` at `p`.
pub(super) fn grad_phi(w: &Vector3<f64>, p: &Point3<f64>, local: &Local) -> Vector3<f64> {
    let centrifugal = -w.cross(&w.cross(&p.coords));
    -(local.g + centrifugal)
}

/// `Hess Phi = -(Hess U + |w|^2 I - w w^T)`.
pub(super) fn hess_phi(w: &Vector3<f64>, local: &Local) -> Matrix3<f64> {
    -(local.hess_u + Matrix3::identity() * w.norm_squared() - w * w.transpose())
}

/// The field with its gradient tensor at `points`: the model's own tensor when it has one,
/// else central differences of its acceleration (step `1e-5 |p|`, error ~1e-10 relative).
pub(super) fn field_at(body: &Body, points: &[Point3<f64>]) -> Vec<Local> {
    if points.is_empty() {
        return Vec::new();
    }
    if let Some(samples) = body.gravity.evaluate_batch(points) {
        return samples
            .iter()
            .map(|s| Local {
                u: s.potential_m2_s2,
                g: s.acceleration_m_s2,
                hess_u: s.gradient_s2,
            })
            .collect();
    }
    let mut all = Vec::with_capacity(points.len() * 7);
    let steps: Vec<f64> = points
        .iter()
        .map(|p| 1e-5 * p.coords.norm().max(1e-3))
        .collect();
    for (p, &h) in points.iter().zip(&steps) {
        all.push(*p);
        for k in 0..3 {
            let mut d = Vector3::zeros();
            d[k] = h;
            all.push(p + d);
            all.push(p - d);
        }
    }
    let mut out = vec![(0.0, Vector3::zeros()); all.len()];
    body.gravity.potential_acceleration_batch(&all, &mut out);
    out.chunks(7)
        .zip(&steps)
        .map(|(c, &h)| {
            let mut hess = Matrix3::zeros();
            for k in 0..3 {
                hess.set_column(k, &((c[1 + 2 * k].1 - c[2 + 2 * k].1) / (2.0 * h)));
            }
            Local {
                u: c[0].0,
                g: c[0].1,
                hess_u: (hess + hess.transpose()) * 0.5,
            }
        })
        .collect()
}
