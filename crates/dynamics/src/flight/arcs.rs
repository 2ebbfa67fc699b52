//! One launch as an `async` flight: ballistic arcs in the body frame (which find the impacts,
//! bounces, escapes and shadow changes) and the same arcs in the inertial frame, with every
//! gravity value awaited through a [`FieldPort`] so the driver can batch them (see `lockstep`).
//!
//! The Sun's forces ([`SunForces`]) are computed locally. Radiation pressure jumps where the grain
//! enters or leaves the body's shadow, so each step holds the lit state fixed: after a body-frame
//! step, the lit state is sampled along it; at a change, the change is located by bisection on
//! the step's dense output, the step is taken again from its start to end exactly there (the
//! discarded attempt counts as a rejected step), and the integration restarts there with the
//! other state. The inertial frame stops and switches at the same times.

use std::sync::atomic::Ordering;

use nalgebra::{Point3, Vector3};

use super::lockstep::FieldPort;
use super::record::{Recorder, pack, pos_of, sample, vel_of};
use super::{Cancel, Contact, FlightReport, FlightSettings, LandingPoint, Outcome};
use crate::body::Body;
use crate::dop853::{AsyncOdeSystem, Dop853, Tolerances, hermite_pos_vel};
use crate::launch::LaunchState;
use crate::roots::illinois;
use crate::site::lat_lon_deg;
use crate::sunlight::SunForces;

struct BodyFrameSystem<'a> {
    body: &'a Body,
    port: &'a FieldPort,
    w: Vector3<f64>,
    evals: u64,
    last_u: f64,
    /// The Sun's forces, and whether the grain is lit during the current step.
    sun: Option<SunForces>,
    lit: bool,
}

impl AsyncOdeSystem<6> for BodyFrameSystem<'_> {
    fn derivative(&mut self, t: f64, y: &[f64; 6]) -> impl Future<Output = [f64; 6]> + Send {
        let r = Point3::new(y[0], y[1], y[2]);
        let v = Vector3::new(y[3], y[4], y[5]);
        let a_sun = self
            .sun
            .map(|s| s.acceleration_body(self.body, t, &r, self.lit));
        async move {
            let (u, g) = self.port.eval(r).await;
            self.evals += 1;
            self.last_u = u;
            let mut a = g - 2.0 * self.w.cross(&v) - self.w.cross(&self.w.cross(&r.coords));
            if let Some(a_sun) = a_sun {
                a += a_sun;
            }
            [v.x, v.y, v.z, a.x, a.y, a.z]
        }
    }
}

struct InertialSystem<'a> {
    body: &'a Body,
    port: &'a FieldPort,
    evals: u64,
    sun: Option<SunForces>,
    lit: bool,
}

impl AsyncOdeSystem<6> for InertialSystem<'_> {
    fn derivative(&mut self, t: f64, y: &[f64; 6]) -> impl Future<Output = [f64; 6]> + Send {
        let rot = self.body.inertial_from_body(t);
        let r_inertial = Point3::new(y[0], y[1], y[2]);
        let r_body = rot.inverse_transform_point(&r_inertial);
        let v = [y[3], y[4], y[5]];
        let a_sun = self
            .sun
            .map(|s| s.acceleration_inertial(self.body, t, &r_inertial, self.lit));
        async move {
            let (_, g) = self.port.eval(r_body).await;
            self.evals += 1;
            let mut a = rot * g;
            if let Some(a_sun) = a_sun {
                a += a_sun;
            }
            [v[0], v[1], v[2], a.x, a.y, a.z]
        }
    }
}

/// A change of the lit state found by the body frame: time, state after it, body-frame position.
#[derive(Debug, Clone, Copy)]
struct Switch {
    t: f64,
    lit_after: bool,
    pos_body_m: [f64; 3],
}

/// Which frame a step is taken in (the step limit holds per frame).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Frame {
    Body,
    Inertial,
}

/// Limits of one launch: steps per frame, time spent (its own work and its share of the
/// batches, so a launch is not charged for waiting beside others), and the cancel flag.
struct Guard<'a> {
    port: &'a FieldPort,
    max_wall_s: f64,
    max_steps: u64,
    body_steps: u64,
    inertial_steps: u64,
    cancel: &'a Cancel,
}

impl Guard<'_> {
    fn check(&mut self, frame: Frame) -> Option<String> {
        let steps = match frame {
            Frame::Body => &mut self.body_steps,
            Frame::Inertial => &mut self.inertial_steps,
        };
        *steps += 1;
        if self.cancel.load(Ordering::Relaxed) {
            return Some("cancelled".into());
        }
        if *steps > self.max_steps {
            return Some(format!(
                "step limit of {} steps reached in the {} frame",
                self.max_steps,
                match frame {
                    Frame::Body => "body-fixed",
                    Frame::Inertial => "inertial",
                }
            ));
        }
        if steps.is_multiple_of(64) && self.port.busy_s() > self.max_wall_s {
            return Some(format!("wall-clock limit of {} s reached", self.max_wall_s));
        }
        None
    }

    fn cancelled(&self) -> bool {
        self.cancel.load(Ordering::Relaxed)
    }
}

enum ArcEnd {
    Impact { t: f64, y: [f64; 6], face: usize },
    Escaped,
    TimeLimit,
    Failed(String),
}

/// How a body-frame arc went.
struct BodyArc {
    end: ArcEnd,
    /// Time and state where it ended (impact, escape, time limit, or the last state reached
    /// before a failure).
    t_end: f64,
    y_end: [f64; 6],
    jacobi_drift: f64,
    max_altitude_m: f64,
    /// Lit state at the start of the arc and its changes along it.
    lit_start: bool,
    switches: Vec<Switch>,
    /// Change of the Jacobi integral over the arc (with the Sun's forces only), m^2/s^2.
    energy_added_m2_s2: f64,
}

pub(super) struct Flight<'a> {
    body: &'a Body,
    settings: &'a FlightSettings,
    port: &'a FieldPort,
    guard: Guard<'a>,
    tol: Tolerances<6>,
    h_max: f64,
    w: Vector3<f64>,
    r_escape_m: f64,
    nudge_m: f64,
    body_rec: Recorder,
    inertial_rec: Recorder,
    evals: u64,
    steps: u64,
    rejected: u64,
    /// The Sun's forces on this launch's grain, if any act.
    sun: Option<SunForces>,
}

impl<'a> Flight<'a> {
    pub fn new(
        body: &'a Body,
        settings: &'a FlightSettings,
        port: &'a FieldPort,
        cancel: &'a Cancel,
    ) -> Self {
        let mp = body.shape.mass_properties();
        let r_eq_m = mp.equivalent_radius_m.max(1e-9);
        let i = &settings.integrator;
        let rate = (body.gm_m3_s2() / r_eq_m.powi(3)).sqrt();
        let abs_v = i.abs_tol_m_s.unwrap_or(i.abs_tol_m * rate);
        let spacing = settings.sampling.max_spacing_fraction.max(1e-6) * r_eq_m;
        let rec = |cap| Recorder {
            samples: Vec::new(),
            cap,
            max_turn_rad: settings.sampling.max_turn_deg.max(0.01).to_radians(),
            max_spacing_m: spacing,
        };
        Flight {
            body,
            settings,
            port,
            guard: Guard {
                port,
                max_wall_s: i.max_wall_s,
                max_steps: i.max_steps,
                body_steps: 0,
                inertial_steps: 0,
                cancel,
            },
            tol: Tolerances {
                rel: i.rel_tol,
                abs: [i.abs_tol_m, i.abs_tol_m, i.abs_tol_m, abs_v, abs_v, abs_v],
            },
            h_max: body.spin.period_s / 8.0,
            w: body.omega_body_rad_s(),
            r_escape_m: 3.0 * body.brillouin_radius_m(),
            nudge_m: (1e-9 * r_eq_m).max(1e-6),
            body_rec: rec(settings.sampling.max_samples_per_frame),
            inertial_rec: rec(settings.sampling.max_samples_per_frame),
            evals: 0,
            steps: 0,
            rejected: 0,
            sun: None,
        }
    }

    /// First step of an arc from its time scales: an 8th-order step of length `h` errs by about
    /// `(h / T)^9`, so `h ~ T rel_tol^(1/8)` with `T` the shorter of the time to change the
    /// velocity (`|v| / |a|`, at least the time to fall 1 % of the body size) and the time to
    /// fall the body size (`sqrt(R / |a|)`). Cheaper than ramping up from a tiny step.
    fn first_step(&self, y_body: &[f64; 6], g: &Vector3<f64>) -> f64 {
        let p = pos_of(y_body);
        let a = (g - self.w.cross(&self.w.cross(&p.coords)))
            .norm()
            .max(1e-12);
        let r = self.body.shape.mass_properties().equivalent_radius_m;
        let t_fall = (r / a).sqrt();
        let t_vel = (vel_of(y_body).norm() / a).max((0.01 * r / a).sqrt());
        (0.5 * self.tol.rel.powf(1.0 / 8.0) * t_vel.min(t_fall)).min(self.h_max)
    }

    fn jacobi(&self, y: &[f64; 6], u: f64) -> f64 {
        let wxr = self.w.cross(&pos_of(y).coords);
        0.5 * vel_of(y).norm_squared() - 0.5 * wxr.norm_squared() - u
    }

    fn to_inertial(&self, t: f64, y: &[f64; 6]) -> [f64; 6] {
        let p = pos_of(y);
        let v = vel_of(y);
        pack(
            &self.body.pos_inertial_from_body(t, &p),
            &self.body.vel_inertial_from_body(t, &p, &v),
        )
    }

    /// The distance, in the body frame, between the body-frame state `y_body` and the
    /// inertial-frame state `y_inertial` at time `t`.
    fn disagreement_m(&self, t: f64, y_body: &[f64; 6], y_inertial: &[f64; 6]) -> f64 {
        let p_body = self.body.pos_body_from_inertial(t, &pos_of(y_inertial));
        (p_body - pos_of(y_body)).norm()
    }

    pub async fn run(mut self, launch: &LaunchState, mut report: FlightReport) -> FlightReport {
        self.sun = self
            .settings
            .sun
            .and_then(|sun| SunForces::new(&sun, launch.particle.as_ref(), self.body));
        if self.sun.is_some() {
            report.jacobi_rel_drift = None;
            report.energy_added_m2_s2 = Some(0.0);
        }
        let t_max = self.settings.integrator.max_time_s;
        let mut t = 0.0;
        let mut y = pack(&launch.pos_body_m, &launch.vel_body_m_s);
        self.body_rec.push(sample(t, &y));
        let yi0 = self.to_inertial(t, &y);
        self.inertial_rec.push(sample(t, &yi0));
        report.final_pos_inertial_m = [yi0[0], yi0[1], yi0[2]];
        report.final_vel_inertial_m_s = [yi0[3], yi0[4], yi0[5]];
        let outcome = loop {
            let arc = self.body_arc(t, y, t_max).await;
            if let Some(d) = &mut report.jacobi_rel_drift {
                *d = d.max(arc.jacobi_drift);
            }
            if let Some(e) = &mut report.energy_added_m2_s2 {
                *e += arc.energy_added_m2_s2;
            }
            report
                .shadow_events
                .extend(arc.switches.iter().map(|s| super::ShadowEvent {
                    t_s: s.t,
                    enters_shadow: !s.lit_after,
                    pos_body_m: s.pos_body_m,
                }));
            report.max_altitude_m = report.max_altitude_m.max(arc.max_altitude_m);
            let (t_end, y_end) = (arc.t_end, arc.y_end);
            // The true last state reached, whatever happens next.
            report.end_time_s = t_end;
            report.final_pos_body_m = [y_end[0], y_end[1], y_end[2]];
            report.final_vel_body_m_s = [y_end[3], y_end[4], y_end[5]];
            // The same arc in the inertial frame, to where the body-frame arc ended (also after
            // a failure, with a fresh allowance, so the report compares both frames there).
            if let ArcEnd::Failed(_) = arc.end {
                if self.guard.cancelled() {
                    // Cancelled: stop now; the agreement covers the arcs completed before.
                    break arc_failure(arc.end);
                }
                self.guard.inertial_steps = 0;
                self.guard.max_wall_s += self.settings.integrator.max_wall_s;
            }
            match self
                .inertial_arc(t, &y, t_end, arc.lit_start, &arc.switches)
                .await
            {
                Ok(y_in_end) => {
                    let d = self.disagreement_m(t_end, &y_end, &y_in_end);
                    report.frame_agreement_m = report.frame_agreement_m.max(d);
                    report.final_pos_inertial_m = [y_in_end[0], y_in_end[1], y_in_end[2]];
                    report.final_vel_inertial_m_s = [y_in_end[3], y_in_end[4], y_in_end[5]];
                }
                Err((reason, t_in, y_in)) => {
                    // The inertial frame stopped short of the body frame's end: report where
                    // it got to, and that time as the end of the flight.
                    report.final_pos_inertial_m = [y_in[0], y_in[1], y_in[2]];
                    report.final_vel_inertial_m_s = [y_in[3], y_in[4], y_in[5]];
                    if let ArcEnd::Failed(body_reason) = arc.end {
                        break Outcome::Failed {
                            reason: format!(
                                "{body_reason}; the inertial frame then stopped at t = {t_in} s: \
                                 {reason}"
                            ),
                        };
                    }
                    break Outcome::Failed {
                        reason: format!("inertial frame stopped at t = {t_in} s: {reason}"),
                    };
                }
            }
            match arc.end {
                ArcEnd::Escaped => break Outcome::Escaped,
                ArcEnd::TimeLimit => break Outcome::StillFlying,
                ArcEnd::Failed(reason) => break Outcome::Failed { reason },
                ArcEnd::Impact {
                    t: t_hit,
                    y: y_hit,
                    face,
                } => {
                    let n = self.body.contact_face_normal(face).into_inner();
                    let p = pos_of(&y_hit);
                    let v = vel_of(&y_hit);
                    let v_n = v.dot(&n);
                    let v_t = v - n * v_n;
                    let speed = v.norm();
                    let b = &self.settings.bounce;
                    let rebound =
                        n * (b.normal_restitution * v_n.abs()) + v_t * b.tangential_restitution;
                    let bounces_so_far = report.contacts.len() as u32;
                    let rest = bounces_so_far >= b.max_bounces || rebound.norm() < b.rest_speed_m_s;
                    let (lat_deg, lon_deg) = lat_lon_deg(self.body, &p);
                    report.first_contact_time_s.get_or_insert(t_hit);
                    report.contacts.push(Contact {
                        t_s: t_hit,
                        pos_body_m: p.coords.into(),
                        face,
                        lat_deg,
                        lon_deg,
                        impact_speed_m_s: speed,
                        impact_angle_deg: if speed > 0.0 {
                            (-v_n / speed).clamp(-1.0, 1.0).asin().to_degrees()
                        } else {
                            0.0
                        },
                        rebound_speed_m_s: if rest { 0.0 } else { rebound.norm() },
                        rest,
                    });
                    if rest {
                        report.rest_time_s = Some(t_hit);
                        report.landing = Some(LandingPoint {
                            pos_body_m: p.coords.into(),
                            lat_deg,
                            lon_deg,
                            face,
                        });
                        report.final_vel_body_m_s = [0.0; 3];
                        let yi = self.to_inertial(t_hit, &pack(&p, &Vector3::zeros()));
                        report.final_vel_inertial_m_s = [yi[3], yi[4], yi[5]];
                        let r0 = launch.pos_body_m.coords;
                        let r1 = p.coords;
                        if r0.norm() > 0.0 && r1.norm() > 0.0 {
                            report.downrange_m =
                                Some(0.5 * (r0.norm() + r1.norm()) * r0.angle(&r1));
                        }
                        break Outcome::Landed;
                    }
                    t = t_hit;
                    y = pack(&(p + n * self.nudge_m), &rebound);
                }
            }
        };
        report.outcome = outcome;
        report.gravity_evaluations = self.evals;
        report.steps = self.steps;
        report.rejected_steps = self.rejected;
        report.trajectory_body = self.body_rec.finish();
        report.trajectory_inertial = self.inertial_rec.finish();
        report
    }

    /// Integrates one ballistic arc in the body frame.
    async fn body_arc(&mut self, t0: f64, y0: [f64; 6], t_max: f64) -> BodyArc {
        let lit_start = self
            .sun
            .is_none_or(|s| s.lit_body(self.body, t0, &pos_of(&y0)));
        let mut sys = BodyFrameSystem {
            body: self.body,
            port: self.port,
            w: self.w,
            evals: 0,
            last_u: 0.0,
            sun: self.sun,
            lit: lit_start,
        };
        let (u0, g0) = self.port.eval(pos_of(&y0)).await;
        self.evals += 1;
        let h0 = self.first_step(&y0, &g0);
        let mut ode = Dop853::with_first_step_async(&mut sys, t0, y0, self.tol, h0).await;
        let c0 = self.jacobi(&y0, u0);
        let c_scale = c0.abs().max(f64::MIN_POSITIVE);
        let mut drift: f64 = 0.0;
        let mut max_alt: f64 = 0.0;
        let gm = self.body.gm_m3_s2();
        let shadow = self.sun.is_some_and(|s| s.has_shadow());
        let mut switches: Vec<Switch> = Vec::new();
        // A located change of the lit state that the integration is stepping to.
        let mut pending: Option<f64> = None;
        // Steps and rejections of integrators replaced at a change of the lit state.
        let (mut done_steps, mut done_rejected) = (0u64, 0u64);
        let end = loop {
            if let Some(reason) = self.guard.check(Frame::Body) {
                break ArcEnd::Failed(reason);
            }
            self.end_step_at_predicted_impact(&mut ode);
            let before = (shadow && pending.is_none()).then(|| ode.clone());
            let t_stop = pending.map_or(t_max, |t_sw| t_sw.min(t_max));
            if let Err(e) = ode.step_async(&mut sys, t_stop).await {
                break ArcEnd::Failed(e.to_string());
            }
            if let Some(before) = before
                && let Some(t_sw) = self.shadow_change(&mut ode, &mut sys).await
            {
                // The step crossed a change of the lit state: take it again, to end there.
                done_rejected += 1;
                ode = before;
                ode.set_h_next(t_sw - ode.t());
                pending = Some(t_sw);
                continue;
            }
            let y = *ode.y();
            if self.sun.is_none() {
                drift = drift.max((self.jacobi(&y, sys.last_u) - c0).abs() / c_scale);
            }
            if let Some((t_hit, y_hit, face, s_hit)) = self.find_impact(&mut ode, &mut sys).await {
                self.body_rec.record_step(&ode, s_hit);
                self.body_rec.push(sample(t_hit, &y_hit));
                break ArcEnd::Impact {
                    t: t_hit,
                    y: y_hit,
                    face,
                };
            }
            self.body_rec.record_step(&ode, 1.0);
            if pending.is_some_and(|t_sw| ode.t() >= t_sw) {
                // At the change: switch the force and restart from here.
                pending = None;
                sys.lit = !sys.lit;
                switches.push(Switch {
                    t: ode.t(),
                    lit_after: sys.lit,
                    pos_body_m: [y[0], y[1], y[2]],
                });
                done_steps += ode.steps;
                done_rejected += ode.rejected;
                let h = ode.h_next();
                ode = Dop853::with_first_step_async(&mut sys, ode.t(), y, self.tol, h).await;
            }
            let p = pos_of(&y);
            let r = p.coords.norm();
            max_alt = max_alt.max(if r > 2.0 * self.r_escape_m {
                r - self.r_escape_m / 3.0
            } else {
                self.body.shape.nearest_surface_point(&p).t
            });
            let v_in = vel_of(&y) + self.w.cross(&p.coords);
            if r > self.r_escape_m
                && p.coords.dot(&v_in) > 0.0
                && 0.5 * v_in.norm_squared() - gm / r > 0.0
            {
                break ArcEnd::Escaped;
            }
            if ode.t() >= t_max {
                break ArcEnd::TimeLimit;
            }
        };
        self.evals += sys.evals;
        self.steps += ode.steps + done_steps;
        self.rejected += ode.rejected + done_rejected;
        let (t_end, y_end) = match end {
            ArcEnd::Impact { t, y, .. } => (t, y),
            _ => (ode.t(), *ode.y()),
        };
        // The work of the Sun's forces: the change of the Jacobi integral over the arc.
        let energy_added_m2_s2 = if self.sun.is_some() {
            let (u_end, _) = self.port.eval(pos_of(&y_end)).await;
            self.evals += 1;
            self.jacobi(&y_end, u_end) - c0
        } else {
            0.0
        };
        BodyArc {
            end,
            t_end,
            y_end,
            jacobi_drift: drift,
            max_altitude_m: max_alt,
            lit_start,
            switches,
            energy_added_m2_s2,
        }
    }

    /// Looks for a change of the lit state in the last accepted step: samples it (quintic
    /// Hermite, no evaluations), and at a change locates it by bisection on the dense output.
    /// Returns the first time on the other side, within `1e-9` of the step (or `None`).
    async fn shadow_change(
        &self,
        ode: &mut Dop853<6>,
        sys: &mut BodyFrameSystem<'_>,
    ) -> Option<f64> {
        let sun = self.sun?;
        let mode = sys.lit;
        let (t0, h) = (ode.t_old(), ode.h_done());
        let (y0, f0, y1, f1) = (*ode.y_old(), *ode.f_old(), *ode.y(), *ode.f());
        // Samples no further apart than 2 % of the body's size along the path, nor 1 degree of
        // the Sun's turn in the body frame.
        let r_eq = self
            .body
            .shape
            .mass_properties()
            .equivalent_radius_m
            .max(1e-9);
        let path = (pos_of(&y1) - pos_of(&y0)).norm() / (0.02 * r_eq);
        let turn = self.w.norm() * h / 1f64.to_radians();
        let n = (path.max(turn).ceil() as usize).clamp(4, 256);
        let lit_at = |t: f64, y: &[f64; 6]| sun.lit_body(self.body, t, &pos_of(y));
        let hermite_change = (1..=n).any(|k| {
            let s = k as f64 / n as f64;
            let y = if k == n {
                y1
            } else {
                hermite_pos_vel(h, &y0, &f0, &y1, &f1, s)
            };
            lit_at(t0 + s * h, &y) != mode
        });
        if !hermite_change {
            return None;
        }
        ode.prepare_dense_async(sys).await;
        let dense_lit = |t: f64| ode.dense_output(t).map(|y| lit_at(t, &y));
        let mut bracket = None;
        for k in 1..=n {
            let t_b = if k == n {
                t0 + h
            } else {
                t0 + h * k as f64 / n as f64
            };
            if dense_lit(t_b)? != mode {
                bracket = Some((t0 + h * (k - 1) as f64 / n as f64, t_b));
                break;
            }
        }
        let (mut lo, mut hi) = bracket?;
        let tol = 1e-9 * h;
        for _ in 0..200 {
            if hi - lo <= tol {
                break;
            }
            let mid = 0.5 * (lo + hi);
            if dense_lit(mid)? == mode {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        Some(hi)
    }

    /// Shortens the proposed step so it ends just past a predicted surface crossing.
    ///
    /// The field's gradient jumps at the surface (Poisson inside, Laplace outside), so a step
    /// that goes deep into the body has a large error estimate and is rejected again and again.
    /// A quadratic prediction from the current position, velocity and acceleration, tested
    /// against the shape, lets the step end 2 % past the crossing instead.
    fn end_step_at_predicted_impact(&self, ode: &mut Dop853<6>) {
        let h = ode.h_next();
        let (y, f) = (ode.y(), ode.f());
        let (p0, v, a) = (pos_of(y), vel_of(y), Vector3::new(f[3], f[4], f[5]));
        let at = |tau: f64| p0 + v * tau + a * (0.5 * tau * tau);
        const PIECES: usize = 4;
        let mut pa = p0;
        for k in 1..=PIECES {
            let tau_b = h * k as f64 / PIECES as f64;
            let pb = at(tau_b);
            if let Some(hit) = self.body.contact_segment_hit(&pa, &pb)
                && hit.front_face
            {
                let tau_a = h * (k - 1) as f64 / PIECES as f64;
                let tau_c = tau_a + hit.t.clamp(0.0, 1.0) * (tau_b - tau_a);
                ode.set_h_next((tau_c * 1.02).max(h * 1e-3));
                return;
            }
            pa = pb;
        }
    }

    /// Looks for a surface crossing in the last accepted step; returns the impact time, state,
    /// face and step fraction.
    async fn find_impact(
        &self,
        ode: &mut Dop853<6>,
        sys: &mut BodyFrameSystem<'_>,
    ) -> Option<(f64, [f64; 6], usize, f64)> {
        let h = ode.h_done();
        let (y0, f0, y1, f1) = (*ode.y_old(), *ode.f_old(), *ode.y(), *ode.f());
        // Sub-segments so the chords stay within ~1 cm of the curved path: the sagitta of a step
        // is about |dv| h / 8.
        let sagitta = (vel_of(&y1) - vel_of(&y0)).norm() * h / 8.0;
        let n = ((sagitta / 0.01).sqrt().ceil() as usize).clamp(1, 32);
        let mut pa = pos_of(&y0);
        for k in 0..n {
            let sb = (k + 1) as f64 / n as f64;
            let pb = if k + 1 == n {
                pos_of(&y1)
            } else {
                pos_of(&hermite_pos_vel(h, &y0, &f0, &y1, &f1, sb))
            };
            let mut found = self.body.contact_segment_hit(&pa, &pb);
            // A path that starts on the surface and leaves it crosses a face from behind right
            // at its start: that is the launch, not an impact; look further along.
            if let Some(h0) = found
                && !h0.front_face
                && (h0.point_m - pa).norm() < 1e-3
            {
                let d = pb - pa;
                let len = d.norm();
                found = if len > 2e-3 {
                    self.body
                        .contact_segment_hit(&(h0.point_m + d * (1e-3 / len)), &pb)
                        .filter(|h| h.front_face)
                } else {
                    None
                };
            }
            if let Some(hit) = found {
                let sa = k as f64 / n as f64;
                let t_a = ode.t_old() + sa * h;
                let t_b = ode.t_old() + sb * h;
                ode.prepare_dense_async(sys).await;
                let normal = self.body.contact_face_normal(hit.face).into_inner();
                let plane = |t: f64| {
                    ode.dense_output(t)
                        .map(|y| (pos_of(&y) - hit.point_m).dot(&normal))
                        .unwrap_or(f64::NAN)
                };
                let seg = pb - pa;
                let frac = ((hit.point_m - pa).dot(&seg)
                    / seg.norm_squared().max(f64::MIN_POSITIVE))
                .clamp(0.0, 1.0);
                let t_lin = t_a + frac * (t_b - t_a);
                let t_hit = illinois(plane, t_a, t_b, 1e-9).unwrap_or(t_lin);
                let y_hit = ode.dense_output(t_hit).unwrap_or_else(|| {
                    hermite_pos_vel(h, &y0, &f0, &y1, &f1, (t_hit - ode.t_old()) / h)
                });
                return Some((t_hit, y_hit, hit.face, (t_hit - ode.t_old()) / h));
            }
            pa = pb;
        }
        None
    }

    /// Integrates the same arc in the inertial frame from the body-frame start state to `t_end`,
    /// lit as `lit_start` says and switched at the body frame's `switches` (each step ends there);
    /// returns the inertial end state, or why it stopped with the time and state it reached.
    async fn inertial_arc(
        &mut self,
        t0: f64,
        y0_body: &[f64; 6],
        t_end: f64,
        lit_start: bool,
        switches: &[Switch],
    ) -> Result<[f64; 6], (String, f64, [f64; 6])> {
        let y0 = self.to_inertial(t0, y0_body);
        if t_end <= t0 {
            return Ok(y0);
        }
        let mut sys = InertialSystem {
            body: self.body,
            port: self.port,
            evals: 0,
            sun: self.sun,
            lit: lit_start,
        };
        let (_, g0) = self.port.eval(pos_of(y0_body)).await;
        self.evals += 1;
        let h0 = self.first_step(y0_body, &g0);
        let mut ode = Dop853::with_first_step_async(&mut sys, t0, y0, self.tol, h0).await;
        let mut next = 0;
        let (mut done_steps, mut done_rejected) = (0u64, 0u64);
        let result = loop {
            if ode.t() >= t_end {
                break Ok(*ode.y());
            }
            if let Some(sw) = switches.get(next)
                && ode.t() >= sw.t
            {
                next += 1;
                sys.lit = sw.lit_after;
                done_steps += ode.steps;
                done_rejected += ode.rejected;
                let (t, y, h) = (ode.t(), *ode.y(), ode.h_next());
                ode = Dop853::with_first_step_async(&mut sys, t, y, self.tol, h).await;
                continue;
            }
            if let Some(reason) = self.guard.check(Frame::Inertial) {
                break Err((reason, ode.t(), *ode.y()));
            }
            let t_stop = switches.get(next).map_or(t_end, |sw| sw.t.min(t_end));
            if let Err(e) = ode.step_async(&mut sys, t_stop).await {
                break Err((e.to_string(), ode.t(), *ode.y()));
            }
            self.inertial_rec.record_step(&ode, 1.0);
        };
        self.evals += sys.evals;
        self.steps += ode.steps + done_steps;
        self.rejected += ode.rejected + done_rejected;
        result
    }
}

fn arc_failure(end: ArcEnd) -> Outcome {
    match end {
        ArcEnd::Failed(reason) => Outcome::Failed { reason },
        _ => Outcome::Failed {
            reason: "stopped".into(),
        },
    }
}
