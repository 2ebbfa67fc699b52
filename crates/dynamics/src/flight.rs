//! Flights: integration in the body frame (driving impacts, bounces and escape) and the same
//! launch in the inertial frame, with reports.
//!
//! Equations of motion (rotating body frame, spin `w`, gravity `grad U`):
//! `r'' = grad U(r) - 2 w x r' - w x (w x r)`; inertial frame: `r'' = R(t) grad U(R(t)^T r)` with
//! `R = inertial_from_body(t)`. Both are integrated with [`crate::dop853`]. The launch time is
//! `t = 0`. The body-frame run finds the events; the inertial run covers the same arcs, restarted
//! after each bounce from the mapped post-bounce state, and the distance between the two end
//! points of each arc (in the body frame) is the *frame agreement*.
//!
//! Results are for research and planning; Spinfall is not flight-certified.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::time::Instant;

use nalgebra::{Point3, Vector3};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::dop853::{Dop853, OdeSystem, Tolerances, hermite_pos_vel};
use crate::gravity_model::GravityModel;
use crate::launch::LaunchState;
use crate::roots::illinois;
use crate::site::lat_lon_deg;

/// A cancel flag: set it to `true` from another thread to stop work at the next step.
pub type Cancel = AtomicBool;

/// Integrator limits and tolerances.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct IntegratorSettings {
    /// Relative tolerance.
    pub rel_tol: f64,
    /// Absolute tolerance on positions, m.
    pub abs_tol_m: f64,
    /// Absolute tolerance on velocities, m/s; `None` = `abs_tol_m` times the body's dynamical
    /// rate `sqrt(GM / R_eq^3)`.
    pub abs_tol_m_s: Option<f64>,
    /// Flight time limit, s (outcome `StillFlying` when reached).
    pub max_time_s: f64,
    /// Step limit over both frames (outcome `Failed` when reached).
    pub max_steps: u64,
    /// Wall-clock limit per launch, s (outcome `Failed` when reached).
    pub max_wall_s: f64,
}

impl Default for IntegratorSettings {
    fn default() -> Self {
        IntegratorSettings {
            rel_tol: 1e-10,
            abs_tol_m: 1e-6,
            abs_tol_m_s: None,
            max_time_s: 172_800.0,
            max_steps: 1_000_000,
            max_wall_s: 120.0,
        }
    }
}

/// Contact model: restitution relative to the rotating surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BounceModel {
    /// Normal coefficient of restitution `e_n` (rebound `v_n' = -e_n v_n`), in [0, 1].
    pub normal_restitution: f64,
    /// Tangential coefficient `e_t` (`v_t' = e_t v_t`), in [0, 1].
    pub tangential_restitution: f64,
    /// Contacts that rebound; the next one rests (0 = stick at first contact).
    pub max_bounces: u32,
    /// Rebound speeds below this rest, m/s.
    pub rest_speed_m_s: f64,
}

impl Default for BounceModel {
    fn default() -> Self {
        BounceModel {
            normal_restitution: 0.5,
            tangential_restitution: 0.8,
            max_bounces: 20,
            rest_speed_m_s: 0.01,
        }
    }
}

/// How densely trajectories are sampled for display.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SamplingSettings {
    /// Most samples kept per frame (thinned evenly beyond that; 0 keeps none).
    pub max_samples_per_frame: usize,
    /// Largest turn of the velocity between samples, deg.
    pub max_turn_deg: f64,
    /// Largest distance between samples as a fraction of the equivalent radius.
    pub max_spacing_fraction: f64,
}

impl Default for SamplingSettings {
    fn default() -> Self {
        SamplingSettings {
            max_samples_per_frame: 3000,
            max_turn_deg: 3.0,
            max_spacing_fraction: 0.02,
        }
    }
}

/// Everything that controls a flight.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct FlightSettings {
    /// Integrator.
    pub integrator: IntegratorSettings,
    /// Contacts.
    pub bounce: BounceModel,
    /// Trajectory sampling.
    pub sampling: SamplingSettings,
}

/// How a flight ended.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Outcome {
    /// Came to rest on the surface.
    Landed,
    /// Left on an escape trajectory (positive two-body energy beyond 3 Brillouin radii, receding).
    Escaped,
    /// Still in flight at the time limit.
    StillFlying,
    /// Could not be completed.
    Failed {
        /// Why.
        reason: String,
    },
}

/// One contact with the surface.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Contact {
    /// Time of impact since launch, s.
    pub t_s: f64,
    /// Impact point, body frame, m.
    pub pos_body_m: [f64; 3],
    /// Face hit.
    pub face: usize,
    /// Latitude of the impact point, deg.
    pub lat_deg: f64,
    /// Longitude, deg.
    pub lon_deg: f64,
    /// Impact speed relative to the surface, m/s.
    pub impact_speed_m_s: f64,
    /// Impact angle above the local horizontal (face plane), deg.
    pub impact_angle_deg: f64,
    /// Rebound speed relative to the surface, m/s (0 when it rests here).
    pub rebound_speed_m_s: f64,
    /// True if the particle rests at this contact.
    pub rest: bool,
}

/// One trajectory sample.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TrajectorySample {
    /// Time since launch, s.
    pub t_s: f64,
    /// Position in the sample's frame, m.
    pub pos_m: [f64; 3],
    /// Velocity in the sample's frame (body frame: relative to the rotating body), m/s.
    pub vel_m_s: [f64; 3],
}

/// Where a particle came to rest.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LandingPoint {
    /// Body-frame position, m.
    pub pos_body_m: [f64; 3],
    /// Latitude, deg.
    pub lat_deg: f64,
    /// Longitude, deg.
    pub lon_deg: f64,
    /// Face.
    pub face: usize,
}

/// Result of one launch (serialises with units in the keys).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlightReport {
    /// Launch identifier.
    pub id: String,
    /// How it ended.
    pub outcome: Outcome,
    /// Launch position, body frame, m.
    pub launch_pos_body_m: [f64; 3],
    /// Launch velocity relative to the rotating body, body frame, m/s.
    pub launch_vel_body_m_s: [f64; 3],
    /// Time of the first contact, s.
    pub first_contact_time_s: Option<f64>,
    /// Time of coming to rest, s.
    pub rest_time_s: Option<f64>,
    /// Time at which the flight stopped (rest, escape, time limit or failure), s.
    pub end_time_s: f64,
    /// Where it rests (only for `Landed`).
    pub landing: Option<LandingPoint>,
    /// Surface distance from launch to landing, m: the arc on a sphere through both points,
    /// `0.5 (|r_launch| + |r_landing|) * angle(r_launch, r_landing)` (an along-surface
    /// approximation that ignores topography between them).
    pub downrange_m: Option<f64>,
    /// Highest altitude above the surface (distance to the nearest surface point, sampled at
    /// every step), m.
    pub max_altitude_m: f64,
    /// Every contact in order.
    pub contacts: Vec<Contact>,
    /// Largest relative drift of the Jacobi integral `|C - C0| / |C0|` over all ballistic arcs.
    pub jacobi_rel_drift: f64,
    /// Largest distance between the body-frame and the inertial-frame end points of an arc,
    /// compared in the body frame, m.
    pub frame_agreement_m: f64,
    /// Gravity evaluations, both frames.
    pub gravity_evaluations: u64,
    /// Accepted integrator steps, both frames.
    pub steps: u64,
    /// Rejected step attempts, both frames.
    pub rejected_steps: u64,
    /// Final body-frame position, m.
    pub final_pos_body_m: [f64; 3],
    /// Final velocity relative to the body, m/s.
    pub final_vel_body_m_s: [f64; 3],
    /// Sampled trajectory, body frame.
    pub trajectory_body: Vec<TrajectorySample>,
    /// Sampled trajectory, inertial frame.
    pub trajectory_inertial: Vec<TrajectorySample>,
}

struct BodyFrameSystem<'a> {
    gravity: &'a dyn GravityModel,
    w: Vector3<f64>,
    evals: u64,
    last_u: f64,
}

impl OdeSystem<6> for BodyFrameSystem<'_> {
    fn derivative(&mut self, _t: f64, y: &[f64; 6]) -> [f64; 6] {
        let r = Point3::new(y[0], y[1], y[2]);
        let v = Vector3::new(y[3], y[4], y[5]);
        let (u, g) = self.gravity.potential_acceleration(&r);
        self.evals += 1;
        self.last_u = u;
        let a = g - 2.0 * self.w.cross(&v) - self.w.cross(&self.w.cross(&r.coords));
        [y[3], y[4], y[5], a.x, a.y, a.z]
    }
}

struct InertialSystem<'a> {
    body: &'a Body,
    evals: u64,
}

impl OdeSystem<6> for InertialSystem<'_> {
    fn derivative(&mut self, t: f64, y: &[f64; 6]) -> [f64; 6] {
        let rot = self.body.inertial_from_body(t);
        let r_body = rot.inverse_transform_point(&Point3::new(y[0], y[1], y[2]));
        let (_, g) = self.body.gravity.potential_acceleration(&r_body);
        self.evals += 1;
        let a = rot * g;
        [y[3], y[4], y[5], a.x, a.y, a.z]
    }
}

fn pack(p: &Point3<f64>, v: &Vector3<f64>) -> [f64; 6] {
    [p.x, p.y, p.z, v.x, v.y, v.z]
}
fn pos_of(y: &[f64; 6]) -> Point3<f64> {
    Point3::new(y[0], y[1], y[2])
}
fn vel_of(y: &[f64; 6]) -> Vector3<f64> {
    Vector3::new(y[3], y[4], y[5])
}
fn sample(t: f64, y: &[f64; 6]) -> TrajectorySample {
    TrajectorySample {
        t_s: t,
        pos_m: [y[0], y[1], y[2]],
        vel_m_s: [y[3], y[4], y[5]],
    }
}

/// Shared limits of one launch.
struct Guard<'a> {
    start: Instant,
    max_wall_s: f64,
    max_steps: u64,
    steps: u64,
    cancel: &'a Cancel,
}

impl Guard<'_> {
    fn check(&mut self) -> Option<String> {
        self.steps += 1;
        if self.cancel.load(Ordering::Relaxed) {
            return Some("cancelled".into());
        }
        if self.steps > self.max_steps {
            return Some(format!("step limit of {} steps reached", self.max_steps));
        }
        if self.steps.is_multiple_of(64) && self.start.elapsed().as_secs_f64() > self.max_wall_s {
            return Some(format!("wall-clock limit of {} s reached", self.max_wall_s));
        }
        None
    }
}

/// Sample recorder with even thinning beyond twice the cap.
struct Recorder {
    samples: Vec<TrajectorySample>,
    cap: usize,
    max_turn_rad: f64,
    max_spacing_m: f64,
}

impl Recorder {
    fn push(&mut self, s: TrajectorySample) {
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
    fn record_step(&mut self, ode: &Dop853<6>, s_end: f64) {
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

    fn finish(mut self) -> Vec<TrajectorySample> {
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

enum ArcEnd {
    Impact { t: f64, y: [f64; 6], face: usize },
    Escaped,
    TimeLimit,
    Failed(String),
}

/// Flies one launch; never panics or hangs (limits in [`IntegratorSettings`], `cancel`).
pub fn fly(
    body: &Body,
    launch: &LaunchState,
    settings: &FlightSettings,
    cancel: &Cancel,
) -> FlightReport {
    let mut report = FlightReport {
        id: launch.id.clone(),
        outcome: Outcome::StillFlying,
        launch_pos_body_m: launch.pos_body_m.coords.into(),
        launch_vel_body_m_s: launch.vel_body_m_s.into(),
        first_contact_time_s: None,
        rest_time_s: None,
        end_time_s: 0.0,
        landing: None,
        downrange_m: None,
        max_altitude_m: 0.0,
        contacts: Vec::new(),
        jacobi_rel_drift: 0.0,
        frame_agreement_m: 0.0,
        gravity_evaluations: 0,
        steps: 0,
        rejected_steps: 0,
        final_pos_body_m: launch.pos_body_m.coords.into(),
        final_vel_body_m_s: launch.vel_body_m_s.into(),
        trajectory_body: Vec::new(),
        trajectory_inertial: Vec::new(),
    };
    if let Err(reason) = check_settings(launch, settings) {
        report.outcome = Outcome::Failed { reason };
        return report;
    }
    // Points on the surface may test either way; only a point clearly inside is refused.
    if body.shape.contains(&launch.pos_body_m)
        && body.shape.nearest_surface_point(&launch.pos_body_m).t > 1e-6
    {
        report.outcome = Outcome::Failed {
            reason: format!(
                "launch point {:?} m is inside the body",
                launch.pos_body_m.coords.as_slice()
            ),
        };
        return report;
    }
    Flight::new(body, settings, cancel).run(launch, report)
}

fn check_settings(launch: &LaunchState, s: &FlightSettings) -> Result<(), String> {
    let i = &s.integrator;
    let finite = launch
        .pos_body_m
        .coords
        .iter()
        .chain(launch.vel_body_m_s.iter())
        .all(|v| v.is_finite());
    if !finite {
        return Err("launch state is not finite".into());
    }
    if !(i.rel_tol > 0.0 && i.rel_tol < 1.0) {
        return Err(format!("rel_tol {} is outside (0, 1)", i.rel_tol));
    }
    if !(i.abs_tol_m > 0.0 && i.abs_tol_m.is_finite()) {
        return Err(format!("abs_tol_m {} must be > 0", i.abs_tol_m));
    }
    if let Some(v) = i.abs_tol_m_s
        && !(v > 0.0 && v.is_finite())
    {
        return Err(format!("abs_tol_m_s {v} must be > 0"));
    }
    if !(i.max_time_s > 0.0 && i.max_time_s.is_finite()) {
        return Err(format!("max_time_s {} must be > 0", i.max_time_s));
    }
    if i.max_wall_s.is_nan() || i.max_wall_s <= 0.0 {
        return Err(format!("max_wall_s {} must be > 0", i.max_wall_s));
    }
    let b = &s.bounce;
    if !(0.0..=1.0).contains(&b.normal_restitution)
        || !(0.0..=1.0).contains(&b.tangential_restitution)
    {
        return Err("restitution coefficients must be in [0, 1]".into());
    }
    if !(b.rest_speed_m_s >= 0.0 && b.rest_speed_m_s.is_finite()) {
        return Err(format!("rest_speed_m_s {} must be >= 0", b.rest_speed_m_s));
    }
    Ok(())
}

struct Flight<'a> {
    body: &'a Body,
    settings: &'a FlightSettings,
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
}

impl<'a> Flight<'a> {
    fn new(body: &'a Body, settings: &'a FlightSettings, cancel: &'a Cancel) -> Self {
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
            guard: Guard {
                start: Instant::now(),
                max_wall_s: i.max_wall_s,
                max_steps: i.max_steps,
                steps: 0,
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

    fn run(mut self, launch: &LaunchState, mut report: FlightReport) -> FlightReport {
        let t_max = self.settings.integrator.max_time_s;
        let mut t = 0.0;
        let mut y = pack(&launch.pos_body_m, &launch.vel_body_m_s);
        self.body_rec.push(sample(t, &y));
        {
            let yi = self.to_inertial(t, &y);
            self.inertial_rec.push(sample(t, &yi));
        }
        let outcome = loop {
            let (end, t_end, y_end, drift, max_alt) = self.body_arc(t, y, t_max);
            report.jacobi_rel_drift = report.jacobi_rel_drift.max(drift);
            report.max_altitude_m = report.max_altitude_m.max(max_alt);
            if let ArcEnd::Failed(reason) = end {
                report.end_time_s = t_end;
                break Outcome::Failed { reason };
            }
            // Same arc in the inertial frame.
            match self.inertial_arc(t, &y, t_end) {
                Ok(y_in_end) => {
                    let p_body = self.body.pos_body_from_inertial(t_end, &pos_of(&y_in_end));
                    let d = (p_body - pos_of(&y_end)).norm();
                    report.frame_agreement_m = report.frame_agreement_m.max(d);
                }
                Err(reason) => {
                    break Outcome::Failed {
                        reason: format!("inertial frame: {reason}"),
                    };
                }
            }
            report.end_time_s = t_end;
            report.final_pos_body_m = [y_end[0], y_end[1], y_end[2]];
            report.final_vel_body_m_s = [y_end[3], y_end[4], y_end[5]];
            match end {
                ArcEnd::Escaped => break Outcome::Escaped,
                ArcEnd::TimeLimit => break Outcome::StillFlying,
                ArcEnd::Failed(reason) => break Outcome::Failed { reason },
                ArcEnd::Impact {
                    t: t_hit,
                    y: y_hit,
                    face,
                } => {
                    let n = self.body.shape.face_normal(face).into_inner();
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

    fn to_inertial(&self, t: f64, y: &[f64; 6]) -> [f64; 6] {
        let p = pos_of(y);
        let v = vel_of(y);
        pack(
            &self.body.pos_inertial_from_body(t, &p),
            &self.body.vel_inertial_from_body(t, &p, &v),
        )
    }

    /// Integrates one ballistic arc in the body frame. Returns the end, its time and state,
    /// the Jacobi drift over the arc and the highest altitude seen.
    fn body_arc(&mut self, t0: f64, y0: [f64; 6], t_max: f64) -> (ArcEnd, f64, [f64; 6], f64, f64) {
        let mut sys = BodyFrameSystem {
            gravity: self.body.gravity.as_ref(),
            w: self.w,
            evals: 0,
            last_u: 0.0,
        };
        let (u0, g0) = self.body.gravity.potential_acceleration(&pos_of(&y0));
        let h0 = self.first_step(&y0, &g0);
        let mut ode = Dop853::with_first_step(&mut sys, t0, y0, self.tol, h0);
        let c0 = self.jacobi(&y0, u0);
        let c_scale = c0.abs().max(f64::MIN_POSITIVE);
        let mut drift: f64 = 0.0;
        let mut max_alt: f64 = 0.0;
        let gm = self.body.gm_m3_s2();
        let end = loop {
            if let Some(reason) = self.guard.check() {
                break ArcEnd::Failed(reason);
            }
            self.end_step_at_predicted_impact(&mut ode);
            if let Err(e) = ode.step(&mut sys, t_max) {
                break ArcEnd::Failed(e.to_string());
            }
            let y = *ode.y();
            drift = drift.max((self.jacobi(&y, sys.last_u) - c0).abs() / c_scale);
            if let Some((t_hit, y_hit, face, s_hit)) = self.find_impact(&mut ode, &mut sys) {
                self.body_rec.record_step(&ode, s_hit);
                self.body_rec.push(sample(t_hit, &y_hit));
                break ArcEnd::Impact {
                    t: t_hit,
                    y: y_hit,
                    face,
                };
            }
            self.body_rec.record_step(&ode, 1.0);
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
        self.steps += ode.steps;
        self.rejected += ode.rejected;
        match end {
            ArcEnd::Impact { t, y, .. } => (end, t, y, drift, max_alt),
            _ => (end, ode.t(), *ode.y(), drift, max_alt),
        }
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
            if let Some(hit) = self.body.shape.segment_first_hit(&pa, &pb)
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
    fn find_impact(
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
            let mut found = self.body.shape.segment_first_hit(&pa, &pb);
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
                        .shape
                        .segment_first_hit(&(h0.point_m + d * (1e-3 / len)), &pb)
                        .filter(|h| h.front_face)
                } else {
                    None
                };
            }
            if let Some(hit) = found {
                let sa = k as f64 / n as f64;
                let t_a = ode.t_old() + sa * h;
                let t_b = ode.t_old() + sb * h;
                ode.prepare_dense(sys);
                let normal = self.body.shape.face_normal(hit.face).into_inner();
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

    /// Integrates the same arc in the inertial frame from the body-frame start state to `t_end`;
    /// returns the inertial end state.
    fn inertial_arc(
        &mut self,
        t0: f64,
        y0_body: &[f64; 6],
        t_end: f64,
    ) -> Result<[f64; 6], String> {
        let y0 = self.to_inertial(t0, y0_body);
        if t_end <= t0 {
            return Ok(y0);
        }
        let mut sys = InertialSystem {
            body: self.body,
            evals: 0,
        };
        let (_, g0) = self.body.gravity.potential_acceleration(&pos_of(y0_body));
        let h0 = self.first_step(y0_body, &g0);
        let mut ode = Dop853::with_first_step(&mut sys, t0, y0, self.tol, h0);
        let result = loop {
            if ode.t() >= t_end {
                break Ok(*ode.y());
            }
            if let Some(reason) = self.guard.check() {
                break Err(reason);
            }
            if let Err(e) = ode.step(&mut sys, t_end) {
                break Err(e.to_string());
            }
            self.inertial_rec.record_step(&ode, 1.0);
        };
        self.evals += sys.evals;
        self.steps += ode.steps;
        self.rejected += ode.rejected;
        result
    }
}

/// Flies every launch in parallel (rayon). `progress(done, total)` is called after each launch
/// from worker threads. After `cancel` is set, the remaining launches end as `Failed`.
pub fn fly_all(
    body: &Body,
    launches: &[LaunchState],
    settings: &FlightSettings,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Vec<FlightReport> {
    let done = AtomicUsize::new(0);
    let total = launches.len();
    launches
        .par_iter()
        .with_max_len(1)
        .map(|l| {
            let r = fly(body, l, settings, cancel);
            let k = done.fetch_add(1, Ordering::Relaxed) + 1;
            progress(k, total);
            r
        })
        .collect()
}

impl FlightReport {
    /// True if the flight came to rest.
    pub fn landed(&self) -> bool {
        matches!(self.outcome, Outcome::Landed)
    }
}
