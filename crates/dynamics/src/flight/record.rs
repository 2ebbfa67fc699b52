//! Trajectory samples for display: the states along the accepted steps, thinned evenly.

use nalgebra::{Point3, Vector3};

use super::TrajectorySample;
use crate::dop853::{Dop853, hermite_pos_vel};

pub(super) fn pack(p: &Point3<f64>, v: &Vector3<f64>) -> [f64; 6] {
    [p.x, p.y, p.z, v.x, v.y, v.z]
}
pub(super) fn pos_of(y: &[f64; 6]) -> Point3<f64> {
    Point3::new(y[0], y[1], y[2])
}
pub(super) fn vel_of(y: &[f64; 6]) -> Vector3<f64> {
    Vector3::new(y[3], y[4], y[5])
}
pub(super) fn sample(t: f64, y: &[f64; 6]) -> TrajectorySample {
    TrajectorySample {
        t_s: t,
        pos_m: [y[0], y[1], y[2]],
        vel_m_s: [y[3], y[4], y[5]],
    }
}

/// Sample recorder with even thinning beyond twice the cap.
pub(super) struct Recorder {
    pub samples: Vec<TrajectorySample>,
    pub cap: usize,
    pub max_turn_rad: f64,
    pub max_spacing_m: f64,
}

impl Recorder {
    pub fn push(&mut self, s: TrajectorySample) {
        if self.cap == 0 {
            return;
        }
        self.samples.push(s);
        if self.samples.len() > 2 * self.cap {
            let last = self.samples.len() - 1;
            let kept: Vec<_> = self
                .samples
                .iter()
                .enumerate()
                .filter(|(i, _)| i % 2 == 0 || *i == last)
                .map(|(_, s)| *s)
                .collect();
            self.samples = kept;
        }
    }

    /// Samples the step from `(t0, y0, f0)` to `(t0 + h, y1, f1)` up to fraction `s_end`.
    pub fn record_step(&mut self, ode: &Dop853<6>, s_end: f64) {
        if self.cap == 0 {
            return;
        }
        let (t0, h) = (ode.t_old(), ode.h_done());
        let (y0, f0, y1, f1) = (ode.y_old(), ode.f_old(), ode.y(), ode.f());
        let v0 = vel_of(y0);
        let v1 = vel_of(y1);
        let turn = if v0.norm() > 0.0 && v1.norm() > 0.0 {
            v0.angle(&v1)
        } else {
            0.0
        };
        let dist = (pos_of(y1) - pos_of(y0)).norm() * s_end;
        let n = ((turn * s_end / self.max_turn_rad)
            .max(dist / self.max_spacing_m)
            .ceil() as usize)
            .clamp(1, 64);
        // A partial step (ending at an impact) leaves its end point to the caller.
        let last = if s_end < 1.0 { n - 1 } else { n };
        for k in 1..=last {
            let s = s_end * k as f64 / n as f64;
            let y = if s == 1.0 {
                *y1
            } else {
                hermite_pos_vel(h, y0, f0, y1, f1, s)
            };
            self.push(sample(t0 + s * h, &y));
        }
    }

    pub fn finish(mut self) -> Vec<TrajectorySample> {
        if self.cap > 0 && self.samples.len() > self.cap {
            let n = self.samples.len();
            let stride = n.div_ceil(self.cap);
            let mut kept: Vec<_> = self.samples.iter().step_by(stride).copied().collect();
            if let Some(last) = self.samples.last()
                && kept.last() != Some(last)
            {
                if kept.len() >= self.cap {
                    kept.pop();
                }
                kept.push(*last);
            }
            self.samples = kept;
        }
        self.samples
    }
}
