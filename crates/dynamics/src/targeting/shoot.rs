//! The shooting method: trial flights, Newton–Broyden iterations, the minimum-speed search and
//! the sensitivities (see the module docs of [`super`]).

use std::sync::atomic::Ordering;

use nalgebra::{Matrix2, Point3, Vector2, Vector3};

use super::guess::{MAX_ELEVATION_RAD, MIN_ELEVATION_RAD, SphereModel};
use super::{
    ArcChoice, Guess, LaunchVelocity, MISS_MEASURE, Sensitivity, TARGETING_NOTE, TargetMode,
    TargetRequest, TargetingReport, TargetingStatus, unit,
};
use crate::body::Body;
use crate::error::{DynamicsError, Result};
use crate::flight::{Cancel, FlightSettings, Outcome, fly_all};
use crate::launch::LaunchState;

/// Forward-difference step of the Newton Jacobian in angles, rad (0.05°).
const FD_ANGLE_RAD: f64 = 0.05 * std::f64::consts::PI / 180.0;
/// Forward-difference step of the Newton Jacobian in speed, as a fraction of the speed.
const FD_SPEED_FRACTION: f64 = 1e-3;
/// Most Newton iterations of one solve.
const MAX_ITERATIONS: usize = 30;
/// Most elevations tried by the minimum-speed search.
const MAX_ELEVATIONS: usize = 10;

/// One launch tried: speed (m/s), azimuth and elevation (rad).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Trial {
    speed_m_s: f64,
    azimuth_rad: f64,
    elevation_rad: f64,
}

/// What a trial flight did.
#[derive(Debug, Clone)]
struct Shot {
    trial: Trial,
    /// First contact point and time.
    contact: Option<(Point3<f64>, f64)>,
    /// Why there was no contact.
    why: String,
    /// Miss in the target's tangent plane (downrange, crossrange), m.
    residual: Option<Vector2<f64>>,
    /// Straight-line miss distance, m (infinite without a contact).
    miss_m: f64,
}

/// Why work stopped early.
enum Stop {
    Cancelled,
    Budget,
}

/// Which unknown goes with the azimuth.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Free {
    /// Speed free, elevation fixed (rad).
    Speed { elevation_rad: f64 },
    /// Elevation free, speed fixed (m/s).
    Elevation { speed_m_s: f64 },
}

/// The end of one Newton solve.
enum Solve {
    Converged { shot: Shot, jac: Matrix2<f64> },
    Failed { best: Option<Shot>, why: FailWhy },
}

enum FailWhy {
    NoContact(String),
    ShortAtSpeedCap,
    Stalled,
}

struct Shooter<'a> {
    body: &'a Body,
    request: &'a TargetRequest,
    settings: FlightSettings,
    progress: &'a (dyn Fn(usize, usize) + Sync),
    cancel: &'a Cancel,
    launch_m: Point3<f64>,
    target_m: Point3<f64>,
    downrange: Vector3<f64>,
    crossrange: Vector3<f64>,
    flights: usize,
    /// Closest shot of the whole search.
    best: Option<Shot>,
    /// Least speed of a trial that did not come back to the surface, m/s.
    lost_speed_m_s: f64,
}

impl Shooter<'_> {
    fn state(&self, t: &Trial) -> LaunchState {
        let dir = self
            .request
            .site
            .frame
            .direction(t.azimuth_rad, t.elevation_rad);
        LaunchState {
            id: "targeting trial".into(),
            pos_body_m: self.launch_m,
            vel_body_m_s: dir * t.speed_m_s,
            site: Some(self.request.site.clone()),
            particle: self.request.particle,
        }
    }

    /// Escape speed along the direction of `t`, m/s (zero two-body energy in the body's
    /// potential, for a launch relative to the rotating surface).
    fn escape_speed(&self, t: &Trial) -> f64 {
        let d = self
            .request
            .site
            .frame
            .direction(t.azimuth_rad, t.elevation_rad);
        let (u, _) = self.body.gravity.potential_acceleration(&self.launch_m);
        let s = self.body.omega_body_rad_s().cross(&self.launch_m.coords);
        let b = d.dot(&s);
        let disc = b * b - s.norm_squared() + 2.0 * u;
        if disc > 0.0 { -b + disc.sqrt() } else { 0.0 }
    }

    fn fly(&mut self, trials: &[Trial]) -> std::result::Result<Vec<Shot>, Stop> {
        if self.cancel.load(Ordering::Relaxed) {
            return Err(Stop::Cancelled);
        }
        if self.flights + trials.len() > self.request.max_flights {
            return Err(Stop::Budget);
        }
        let states: Vec<LaunchState> = trials.iter().map(|t| self.state(t)).collect();
        let reports = fly_all(self.body, &states, &self.settings, &|_, _| {}, self.cancel);
        if self.cancel.load(Ordering::Relaxed) {
            return Err(Stop::Cancelled);
        }
        self.flights += trials.len();
        (self.progress)(self.flights, self.request.max_flights);
        let shots: Vec<Shot> = trials
            .iter()
            .zip(reports)
            .map(|(trial, r)| {
                let contact = r
                    .contacts
                    .first()
                    .map(|c| (Point3::from(c.pos_body_m), c.t_s));
                let why = match &r.outcome {
                    Outcome::Escaped => "escaped".to_string(),
                    Outcome::StillFlying => format!(
                        "still flying at the trial time limit of {:.0} s",
                        self.settings.integrator.max_time_s
                    ),
                    Outcome::Failed { reason } => format!("failed: {reason}"),
                    Outcome::Landed => String::new(),
                };
                let (residual, miss_m) = match contact {
                    Some((p, _)) => {
                        let m = p - self.target_m;
                        (
                            Some(Vector2::new(
                                m.dot(&self.downrange),
                                m.dot(&self.crossrange),
                            )),
                            m.norm(),
                        )
                    }
                    None => (None, f64::INFINITY),
                };
                Shot {
                    trial: *trial,
                    contact,
                    why,
                    residual,
                    miss_m,
                }
            })
            .collect();
        for s in &shots {
            if s.contact.is_none() {
                self.lost_speed_m_s = self.lost_speed_m_s.min(s.trial.speed_m_s);
            }
            if s.miss_m < self.best.as_ref().map_or(f64::INFINITY, |b| b.miss_m) {
                self.best = Some(s.clone());
            }
        }
        Ok(shots)
    }

    fn fly1(&mut self, t: Trial) -> std::result::Result<Shot, Stop> {
        let mut v = self.fly(&[t])?;
        v.pop().ok_or(Stop::Budget)
    }

    /// The trial of unknowns `x` = (azimuth, free value).
    fn trial(free: Free, x: Vector2<f64>) -> Trial {
        match free {
            Free::Speed { elevation_rad } => Trial {
                speed_m_s: x[1],
                azimuth_rad: x[0],
                elevation_rad,
            },
            Free::Elevation { speed_m_s } => Trial {
                speed_m_s,
                azimuth_rad: x[0],
                elevation_rad: x[1],
            },
        }
    }

    /// `x` with the free value inside its bounds; also whether the speed sits at the escape cap.
    fn clamp(&self, free: Free, mut x: Vector2<f64>) -> (Vector2<f64>, bool) {
        match free {
            Free::Speed { .. } => {
                let cap = self.escape_speed(&Self::trial(free, x)) * (1.0 - 1e-6);
                let lo = 1e-9 * cap.max(1e-12);
                let capped = x[1] >= cap;
                x[1] = x[1].clamp(lo, cap.max(lo));
                (x, capped)
            }
            Free::Elevation { .. } => {
                x[1] = x[1].clamp(MIN_ELEVATION_RAD, MAX_ELEVATION_RAD);
                (x, false)
            }
        }
    }

    /// Forward-difference Jacobian of the residual at `x` (whose shot is `at`).
    fn jacobian(
        &mut self,
        free: Free,
        x: Vector2<f64>,
        at: &Shot,
    ) -> std::result::Result<Option<Matrix2<f64>>, Stop> {
        let Some(r0) = at.residual else {
            return Ok(None);
        };
        let h = [
            FD_ANGLE_RAD,
            match free {
                Free::Speed { .. } => FD_SPEED_FRACTION * x[1],
                Free::Elevation { .. } => FD_ANGLE_RAD,
            },
        ];
        let mut jac = Matrix2::zeros();
        let mut trials = Vec::new();
        let mut steps = [0.0; 2];
        for k in 0..2 {
            let mut xs = x;
            xs[k] += h[k];
            let (xc, _) = self.clamp(free, xs);
            // At a bound, difference backwards.
            steps[k] = if (xc[k] - x[k]).abs() < 0.5 * h[k] {
                -h[k]
            } else {
                h[k]
            };
            let mut xs = x;
            xs[k] += steps[k];
            trials.push(Self::trial(free, xs));
        }
        let shots = self.fly(&trials)?;
        for k in 0..2 {
            let r = match shots[k].residual {
                Some(r) => r,
                None => {
                    // No contact one way: try the other way once.
                    steps[k] = -steps[k];
                    let mut xs = x;
                    xs[k] += steps[k];
                    match self.fly1(Self::trial(free, xs))?.residual {
                        Some(r) => r,
                        None => return Ok(None),
                    }
                }
            };
            jac.set_column(k, &((r - r0) / steps[k]));
        }
        Ok(Some(jac))
    }

    /// Newton–Broyden iterations from `x0`; when they fail, a scan of 12 azimuths at two
    /// values of the free unknown picks the closest trial and the iterations start once more
    /// from there.
    fn solve(
        &mut self,
        free: Free,
        x0: Vector2<f64>,
        jac0: Option<Matrix2<f64>>,
    ) -> std::result::Result<Solve, Stop> {
        let first = self.solve_once(free, x0, jac0)?;
        let Solve::Failed { .. } = first else {
            return Ok(first);
        };
        let (x0, _) = self.clamp(free, x0);
        let other = match free {
            Free::Speed { .. } => 1.3 * x0[1],
            Free::Elevation { .. } => {
                if x0[1] > std::f64::consts::FRAC_PI_4 {
                    x0[1] - 0.3
                } else {
                    x0[1] + 0.3
                }
            }
        };
        let trials: Vec<Trial> = (0..12)
            .flat_map(|k| {
                let az = x0[0] + k as f64 * std::f64::consts::PI / 6.0;
                [x0[1], other].map(|q| Self::trial(free, self.clamp(free, Vector2::new(az, q)).0))
            })
            .collect();
        let shots = self.fly(&trials)?;
        let Some(best) = shots.iter().min_by(|a, b| a.miss_m.total_cmp(&b.miss_m)) else {
            return Ok(first);
        };
        if !best.miss_m.is_finite() {
            return Ok(first);
        }
        let q = match free {
            Free::Speed { .. } => best.trial.speed_m_s,
            Free::Elevation { .. } => best.trial.elevation_rad,
        };
        match self.solve_once(free, Vector2::new(best.trial.azimuth_rad, q), None)? {
            Solve::Converged { shot, jac } => Ok(Solve::Converged { shot, jac }),
            Solve::Failed { .. } => Ok(first),
        }
    }

    /// Newton–Broyden iterations from `x0` until the miss is within the tolerance.
    fn solve_once(
        &mut self,
        free: Free,
        x0: Vector2<f64>,
        jac0: Option<Matrix2<f64>>,
    ) -> std::result::Result<Solve, Stop> {
        let tol = self.request.miss_tolerance_m;
        let (mut x, _) = self.clamp(free, x0);
        let mut cur = self.fly1(Self::trial(free, x))?;
        // No contact at the start: come down in speed, or toward 45° in elevation.
        let mut tries = 0;
        while cur.residual.is_none() && tries < 6 {
            match free {
                Free::Speed { .. } => x[1] *= 0.7,
                Free::Elevation { .. } => x[1] = 0.5 * (x[1] + std::f64::consts::FRAC_PI_4),
            }
            cur = self.fly1(Self::trial(free, x))?;
            tries += 1;
        }
        if cur.residual.is_none() {
            return Ok(Solve::Failed {
                best: None,
                why: FailWhy::NoContact(cur.why),
            });
        }
        let mut best = cur.clone();
        let mut jac = jac0;
        let mut fresh = false;
        let mut cap_hits = 0;
        for _ in 0..MAX_ITERATIONS {
            let r = cur.residual.unwrap_or_else(Vector2::zeros);
            if cur.miss_m <= tol {
                let jac = match jac {
                    Some(j) => j,
                    None => self.jacobian(free, x, &cur)?.unwrap_or_else(Matrix2::zeros),
                };
                return Ok(Solve::Converged { shot: cur, jac });
            }
            let j = match jac {
                Some(j) => j,
                None => match self.jacobian(free, x, &cur)? {
                    Some(j) => {
                        fresh = true;
                        j
                    }
                    None => break,
                },
            };
            let Some(inv) = j.try_inverse() else {
                if fresh {
                    break;
                }
                jac = None;
                continue;
            };
            let mut dx = -(inv * r);
            // Limit the step: 20° in azimuth, half the speed or 15° in elevation.
            let limit = Vector2::new(
                20f64.to_radians(),
                match free {
                    Free::Speed { .. } => 0.5 * x[1],
                    Free::Elevation { .. } => 15f64.to_radians(),
                },
            );
            let scale = (0..2)
                .map(|k| {
                    if dx[k].abs() > limit[k] {
                        limit[k] / dx[k].abs()
                    } else {
                        1.0
                    }
                })
                .fold(1.0, f64::min);
            dx *= scale;
            let mut accepted = None;
            let mut lambda = 1.0;
            for _ in 0..if fresh { 6 } else { 1 } {
                let (xn, capped) = self.clamp(free, x + dx * lambda);
                let shot = self.fly1(Self::trial(free, xn))?;
                if shot.residual.is_some() && shot.miss_m < cur.miss_m {
                    accepted = Some((xn, shot, capped));
                    break;
                }
                if capped && shot.residual.is_none_or(|r| r[0] < 0.0) {
                    cap_hits += 1;
                }
                lambda *= 0.5;
            }
            match accepted {
                Some((xn, shot, capped)) => {
                    let (dxa, dr) = (xn - x, shot.residual.unwrap_or_else(Vector2::zeros) - r);
                    let n2 = dxa.norm_squared();
                    if n2 > 0.0 {
                        jac = Some(j + (dr - j * dxa) * dxa.transpose() / n2);
                    }
                    fresh = false;
                    x = xn;
                    cur = shot;
                    if cur.miss_m < best.miss_m {
                        best = cur.clone();
                    }
                    if capped && cur.residual.is_some_and(|r| r[0] < 0.0) {
                        cap_hits += 1;
                    }
                }
                None if fresh => break,
                None => jac = None,
            }
            if cap_hits >= 2 {
                return Ok(Solve::Failed {
                    best: Some(best),
                    why: FailWhy::ShortAtSpeedCap,
                });
            }
        }
        let at_cap = matches!(free, Free::Speed { .. }) && self.clamp(free, x * 1.0001).1;
        Ok(Solve::Failed {
            best: Some(best),
            why: if at_cap {
                FailWhy::ShortAtSpeedCap
            } else {
                FailWhy::Stalled
            },
        })
    }
}

/// Solves one targeting problem on `body` with the run's `settings`.
///
/// `progress(flights, max_flights)` is called after each batch of trial flights. Every trial is
/// a full flight in both frames (see [`crate::fly_all`]) stopped at its first contact.
///
/// # Errors
/// Bad input (tolerance, altitude, budget, mode values, a target at the launch site), each
/// naming the value, and [`DynamicsError::Cancelled`]. An unreachable target is not an error:
/// it is a report with [`TargetingStatus::Unreachable`] and a reason.
pub fn solve_target(
    body: &Body,
    request: &TargetRequest,
    settings: &FlightSettings,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Result<TargetingReport> {
    let tol = request.miss_tolerance_m;
    if !(tol.is_finite() && tol > 0.0) {
        return Err(DynamicsError::param(
            "miss_tolerance_m",
            format!("must be a finite number > 0, got {tol}"),
        ));
    }
    let alt = request.start_altitude_m;
    if !(alt.is_finite() && alt >= 0.0) {
        return Err(DynamicsError::param(
            "start altitude (m)",
            format!("must be a finite number >= 0, got {alt}"),
        ));
    }
    if request.max_flights < 10 {
        return Err(DynamicsError::param(
            "max_flights",
            format!("must be at least 10, got {}", request.max_flights),
        ));
    }
    request.mode.check()?;
    let site = &request.site;
    let up = site.frame.up.into_inner();
    let launch_m = site.point_body_m + up * alt;
    let target_m = Point3::from(request.target.point_body_m);
    let gap = (target_m - launch_m).norm();
    if gap <= tol {
        return Err(DynamicsError::param(
            "target",
            format!("lies {gap:.3} m from the launch point, within the miss tolerance of {tol} m"),
        ));
    }

    // The sphere model and the great-circle azimuth.
    let r1 = launch_m.coords.norm();
    let r2 = target_m.coords.norm();
    let cos_psi = (launch_m.coords.dot(&target_m.coords) / (r1 * r2)).clamp(-1.0, 1.0);
    let psi = cos_psi.acos();
    let radial = unit(launch_m.coords).unwrap_or(up);
    let along = unit(target_m.coords - radial * target_m.coords.dot(&radial))
        .or_else(|| unit(target_m - launch_m))
        .unwrap_or_else(|| site.frame.north.into_inner());
    let azimuth0 = along
        .dot(&site.frame.east)
        .atan2(along.dot(&site.frame.north));
    let (_, g) = body.gravity.potential_acceleration(&launch_m);
    let w = body.omega_body_rad_s();
    let centrifugal = -w.cross(&w.cross(&launch_m.coords));
    let g_radial = -(g + centrifugal).dot(&radial);
    let g_floor = 0.1 * body.gm_m3_s2() / (r1 * r1);
    let model = SphereModel {
        r1_m: r1,
        r2_m: r2,
        psi_rad: psi,
        mu_m3_s2: g_radial.max(g_floor) * r1 * r1,
    };
    let (guess_el, guess_v) = match request.mode {
        TargetMode::MinSpeed => match model.min_speed() {
            Some((e, v)) => (Some(e), Some(v)),
            None => (None, None),
        },
        TargetMode::FixedElevation { elevation_deg } => {
            let e = elevation_deg.to_radians();
            (Some(e), model.speed_for_elevation(e))
        }
        TargetMode::FixedSpeed { speed_m_s, arc } => (
            model.elevation_for_speed(speed_m_s, arc == ArcChoice::High),
            Some(speed_m_s),
        ),
    };
    let guess = Guess {
        speed_m_s: guess_v,
        azimuth_deg: azimuth0.to_degrees().rem_euclid(360.0),
        elevation_deg: guess_el.map(f64::to_degrees),
        range_angle_deg: psi.to_degrees(),
        effective_gm_m3_s2: model.mu_m3_s2,
    };

    // Trial flights: stop at the first contact, keep no samples, bounded time.
    let mut trial_settings = *settings;
    trial_settings.bounce.max_bounces = 0;
    trial_settings.sampling.max_samples_per_frame = 0;
    let orbit_s = 2.0 * std::f64::consts::PI * (r1.powi(3) / body.gm_m3_s2()).sqrt();
    let guess_t = match (guess_v, guess_el) {
        (Some(v), Some(e)) => model.flight_time_s(v, e).unwrap_or(orbit_s),
        _ => orbit_s,
    };
    trial_settings.integrator.max_time_s = settings
        .integrator
        .max_time_s
        .min((10.0 * guess_t).max(2.0 * orbit_s));

    let n_t = body.shape.face_normal(request.target.face).into_inner();
    let downrange =
        unit((target_m - launch_m) - n_t * n_t.dot(&(target_m - launch_m))).unwrap_or(along);
    let crossrange = n_t.cross(&downrange);
    let mut sh = Shooter {
        body,
        request,
        settings: trial_settings,
        progress,
        cancel,
        launch_m,
        target_m,
        downrange,
        crossrange,
        flights: 0,
        best: None,
        lost_speed_m_s: f64::INFINITY,
    };

    let search = run_mode(&mut sh, request.mode, &model, azimuth0, guess_v, guess_el);
    let (status, reason, shot) = match search {
        Err(Stop::Cancelled) => return Err(DynamicsError::Cancelled),
        Err(Stop::Budget) => (
            TargetingStatus::Unreachable,
            Some(format!(
                "iteration budget exhausted: {} flights used{}",
                request.max_flights,
                closest(&sh.best)
            )),
            sh.best.clone(),
        ),
        Ok(Ok(shot)) => (TargetingStatus::Solved, None, Some(shot)),
        Ok(Err(reason)) => (TargetingStatus::Unreachable, Some(reason), sh.best.clone()),
    };
    let sensitivity = match (&status, &shot) {
        (TargetingStatus::Solved, Some(s)) => match sensitivities(&mut sh, s) {
            Ok(v) => Some(v),
            Err(Stop::Cancelled) => return Err(DynamicsError::Cancelled),
            Err(Stop::Budget) => None,
        },
        _ => None,
    };
    let launch = shot.as_ref().map(|s| velocity(&sh, &s.trial));
    Ok(TargetingReport {
        status,
        reason,
        mode: request.mode,
        target: request.target.clone(),
        miss_tolerance_m: tol,
        miss_measure: MISS_MEASURE.into(),
        launch,
        flight_time_s: shot.as_ref().and_then(|s| s.contact.map(|c| c.1)),
        miss_m: shot
            .as_ref()
            .and_then(|s| s.miss_m.is_finite().then_some(s.miss_m)),
        first_contact_body_m: shot
            .as_ref()
            .and_then(|s| s.contact.map(|c| c.0.coords.into())),
        sensitivity,
        guess,
        flights: sh.flights,
        note: TARGETING_NOTE.into(),
    })
}

fn closest(best: &Option<Shot>) -> String {
    match best {
        Some(b) if b.miss_m.is_finite() => {
            format!(
                "; the closest first contact was {:.3} m from the target",
                b.miss_m
            )
        }
        _ => String::new(),
    }
}

type ModeEnd = std::result::Result<std::result::Result<Shot, String>, Stop>;

fn run_mode(
    sh: &mut Shooter<'_>,
    mode: TargetMode,
    model: &SphereModel,
    azimuth0: f64,
    guess_v: Option<f64>,
    guess_el: Option<f64>,
) -> ModeEnd {
    match mode {
        TargetMode::FixedElevation { elevation_deg } => {
            let el = elevation_deg.to_radians();
            let free = Free::Speed { elevation_rad: el };
            let cap = sh.escape_speed(&Shooter::trial(free, Vector2::new(azimuth0, 0.0)));
            let v0 = guess_v.unwrap_or(0.9 * cap).min(0.95 * cap);
            match sh.solve(free, Vector2::new(azimuth0, v0), None)? {
                Solve::Converged { shot, .. } => Ok(Ok(shot)),
                Solve::Failed { best, why } => Ok(Err(explain(sh, why, &best, mode))),
            }
        }
        TargetMode::FixedSpeed { speed_m_s, arc } => {
            let free = Free::Elevation { speed_m_s };
            let max_range_el = model.min_speed().map_or(0.7, |m| m.0);
            let mut el0 = guess_el.unwrap_or(max_range_el);
            for attempt in 0..2 {
                match sh.solve(free, Vector2::new(azimuth0, el0), None)? {
                    Solve::Converged { shot, jac } => {
                        // Downrange motion per elevation: > 0 on the low arc, < 0 on the high.
                        let slope = jac[(0, 1)];
                        let right = match arc {
                            ArcChoice::Low => slope > 0.0,
                            ArcChoice::High => slope < 0.0,
                        };
                        if right {
                            return Ok(Ok(shot));
                        }
                        if attempt == 1 {
                            return Ok(Err(format!(
                                "only the other arc was found (elevation {:.2} deg); no {} arc \
                                 reaches the target at {speed_m_s} m/s",
                                shot.trial.elevation_rad.to_degrees(),
                                arc_name(arc)
                            )));
                        }
                        let e = shot.trial.elevation_rad;
                        el0 = match arc {
                            ArcChoice::Low => 0.5 * e,
                            ArcChoice::High => 0.5 * (e + std::f64::consts::FRAC_PI_2),
                        };
                    }
                    Solve::Failed { best, why } => return Ok(Err(explain(sh, why, &best, mode))),
                }
            }
            Ok(Err("no solution on the requested arc".into()))
        }
        TargetMode::MinSpeed => min_speed(sh, model, azimuth0, guess_v, guess_el),
    }
}

fn arc_name(arc: ArcChoice) -> &'static str {
    match arc {
        ArcChoice::Low => "low",
        ArcChoice::High => "high",
    }
}

/// The reason of an unreachable target.
fn explain(sh: &Shooter<'_>, why: FailWhy, best: &Option<Shot>, mode: TargetMode) -> String {
    let best = best.as_ref().or(sh.best.as_ref());
    let short = best
        .and_then(|b| b.residual)
        .map(|r| -r[0])
        .filter(|s| *s > 0.0);
    // Short, and faster launches did not come back: beyond every speed that returns.
    let why = match (why, mode, short, best) {
        (FailWhy::Stalled, TargetMode::FixedElevation { .. }, Some(_), Some(b))
            if b.trial.speed_m_s < sh.lost_speed_m_s && sh.lost_speed_m_s.is_finite() =>
        {
            FailWhy::ShortAtSpeedCap
        }
        (why, ..) => why,
    };
    match why {
        FailWhy::NoContact(last) => format!(
            "no trial launch came back to the surface (the last one {last}); the target is \
             beyond the reach of this mode"
        ),
        FailWhy::ShortAtSpeedCap => format!(
            "the target lies beyond the reach of every speed below the local escape speed{} \
             (faster launches did not come back to the surface within the trial time limit of \
             {:.0} s){}",
            match mode {
                TargetMode::FixedElevation { elevation_deg } =>
                    format!(" at elevation {elevation_deg} deg"),
                _ => String::new(),
            },
            sh.settings.integrator.max_time_s,
            match short {
                Some(s) => format!(": the farthest first contact found falls {s:.1} m short"),
                None => String::new(),
            }
        ),
        FailWhy::Stalled => match (mode, short) {
            (TargetMode::FixedSpeed { speed_m_s, .. }, Some(s)) => format!(
                "the target lies beyond the reach of {speed_m_s} m/s: the closest first \
                 contact found is {:.1} m from it, {s:.1} m short downrange",
                best.map_or(f64::NAN, |b| b.miss_m)
            ),
            _ => format!(
                "no first contact near the target (terrain in the way, or the iterations did \
                 not converge){}",
                closest(&best.cloned())
            ),
        },
    }
}

/// The minimum-speed search over elevations (see the module docs of [`super`]).
fn min_speed(
    sh: &mut Shooter<'_>,
    model: &SphereModel,
    azimuth0: f64,
    guess_v: Option<f64>,
    guess_el: Option<f64>,
) -> ModeEnd {
    let lo = 2f64.to_radians();
    let hi = 88f64.to_radians();
    let step = 5f64.to_radians();
    let e0 = guess_el
        .unwrap_or(std::f64::consts::FRAC_PI_4)
        .clamp(lo, hi);
    // (elevation, speed, shot, jacobian), sorted by elevation.
    let mut pts: Vec<(f64, f64, Shot, Matrix2<f64>)> = Vec::new();
    let mut first_failure: Option<String> = None;
    let mut tried: Vec<f64> = Vec::new();
    let mut next = Some(e0);
    while let Some(e) = next.take() {
        if tried.len() >= MAX_ELEVATIONS {
            break;
        }
        tried.push(e);
        // Start from the nearest solved elevation, the speed scaled by the sphere model.
        let near = pts
            .iter()
            .min_by(|a, b| (a.0 - e).abs().total_cmp(&(b.0 - e).abs()));
        let (x0, jac0) = match near {
            Some((en, vn, shot, jac)) => {
                let ratio = match (model.speed_for_elevation(e), model.speed_for_elevation(*en)) {
                    (Some(a), Some(b)) => a / b,
                    _ => 1.0,
                };
                (Vector2::new(shot.trial.azimuth_rad, vn * ratio), Some(*jac))
            }
            None => (
                Vector2::new(
                    azimuth0,
                    guess_v.unwrap_or(0.5 * sh.escape_speed_at(azimuth0, e)),
                ),
                None,
            ),
        };
        match sh.solve(Free::Speed { elevation_rad: e }, x0, jac0)? {
            Solve::Converged { shot, jac } => {
                let v = shot.trial.speed_m_s;
                let at = pts.partition_point(|p| p.0 < e);
                pts.insert(at, (e, v, shot, jac));
            }
            Solve::Failed { best, why } => {
                if first_failure.is_none() {
                    first_failure = Some(explain(sh, why, &best, TargetMode::MinSpeed));
                }
            }
        }
        if pts.is_empty() {
            // Try the other side of the first guess once or twice.
            next = [e0 + step, e0 - step]
                .into_iter()
                .find(|c| *c >= lo && *c <= hi && !tried.iter().any(|t| (t - c).abs() < 1e-9));
            continue;
        }
        let i = pts
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.1.total_cmp(&b.1.1))
            .map_or(0, |(i, _)| i);
        let n = pts.len();
        let fresh = |c: f64| !tried.iter().any(|t| (t - c).abs() < 1e-3_f64.to_radians());
        next = if i == 0 && pts[0].0 > lo + 1e-9 {
            Some((pts[0].0 - step).max(lo)).filter(|c| fresh(*c))
        } else if i + 1 == n && pts[n - 1].0 < hi - 1e-9 {
            Some((pts[n - 1].0 + step).min(hi)).filter(|c| fresh(*c))
        } else if i > 0 && i + 1 < n {
            let (a, b, c) = (&pts[i - 1], &pts[i], &pts[i + 1]);
            let spread = (a.1.max(c.1) - b.1) / b.1;
            if c.0 - a.0 < 0.5f64.to_radians() || spread < 1e-5 {
                None
            } else {
                // Vertex of the parabola through the three.
                let (x1, x2, x3, y1, y2, y3) = (a.0, b.0, c.0, a.1, b.1, c.1);
                let num = (x2 - x1).powi(2) * (y2 - y3) - (x2 - x3).powi(2) * (y2 - y1);
                let den = (x2 - x1) * (y2 - y3) - (x2 - x3) * (y2 - y1);
                let mut v = if den != 0.0 { x2 - 0.5 * num / den } else { x2 };
                if !(v > x1 && v < x3) || (v - x2).abs() < 0.02f64.to_radians() {
                    // Golden step into the larger side.
                    v = if x3 - x2 > x2 - x1 {
                        x2 + 0.382 * (x3 - x2)
                    } else {
                        x2 - 0.382 * (x2 - x1)
                    };
                }
                Some(v).filter(|c| fresh(*c))
            }
        } else {
            None
        };
    }
    match pts.into_iter().min_by(|a, b| a.1.total_cmp(&b.1)) {
        Some((_, _, shot, _)) => Ok(Ok(shot)),
        None => Ok(Err(first_failure.unwrap_or_else(|| {
            "no elevation gave a launch reaching the target".into()
        }))),
    }
}

impl Shooter<'_> {
    fn escape_speed_at(&self, azimuth_rad: f64, elevation_rad: f64) -> f64 {
        self.escape_speed(&Trial {
            speed_m_s: 0.0,
            azimuth_rad,
            elevation_rad,
        })
    }
}

/// Central-difference sensitivities of the first contact point at `at`.
fn sensitivities(sh: &mut Shooter<'_>, at: &Shot) -> std::result::Result<Sensitivity, Stop> {
    let t = at.trial;
    let hv = (1e-3 * t.speed_m_s).max(1e-9);
    let ha = FD_ANGLE_RAD;
    let el_hi = (t.elevation_rad + ha).min(std::f64::consts::FRAC_PI_2);
    let el_lo = (t.elevation_rad - ha).max(0.0);
    let trials = [
        Trial {
            speed_m_s: t.speed_m_s + hv,
            ..t
        },
        Trial {
            speed_m_s: t.speed_m_s - hv,
            ..t
        },
        Trial {
            azimuth_rad: t.azimuth_rad + ha,
            ..t
        },
        Trial {
            azimuth_rad: t.azimuth_rad - ha,
            ..t
        },
        Trial {
            elevation_rad: el_hi,
            ..t
        },
        Trial {
            elevation_rad: el_lo,
            ..t
        },
    ];
    let shots = sh.fly(&trials)?;
    let per = |a: &Shot, b: &Shot, span: f64| match (a.contact, b.contact) {
        (Some(pa), Some(pb)) => Some((pa.0 - pb.0).norm() / span),
        _ => None,
    };
    let dt = match (shots[0].contact, shots[1].contact) {
        (Some(a), Some(b)) => Some((a.1 - b.1) / (2.0 * hv) * 0.01),
        _ => None,
    };
    let deg = std::f64::consts::PI / 180.0;
    Ok(Sensitivity {
        m_per_cm_s: per(&shots[0], &shots[1], 2.0 * hv).map(|v| v * 0.01),
        m_per_deg_azimuth: per(&shots[2], &shots[3], 2.0 * ha).map(|v| v * deg),
        m_per_deg_elevation: per(&shots[4], &shots[5], el_hi - el_lo).map(|v| v * deg),
        flight_time_s_per_cm_s: dt,
        speed_step_m_s: hv,
        angle_step_deg: ha.to_degrees(),
    })
}

fn velocity(sh: &Shooter<'_>, t: &Trial) -> LaunchVelocity {
    let (sa, ca) = t.azimuth_rad.sin_cos();
    let (se, ce) = t.elevation_rad.sin_cos();
    let v = t.speed_m_s;
    let body = sh
        .request
        .site
        .frame
        .direction(t.azimuth_rad, t.elevation_rad)
        * v;
    LaunchVelocity {
        speed_m_s: v,
        azimuth_deg: t.azimuth_rad.to_degrees().rem_euclid(360.0),
        elevation_deg: t.elevation_rad.to_degrees(),
        enu_m_s: [v * ce * sa, v * ce * ca, v * se],
        body_m_s: body.into(),
    }
}
