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
//! With a Sun ([`FlightSettings::sun`], see [`crate::sunlight`]) both frames add its radiation
//! pressure and tide; the body's shadow is an event located in the body frame (the step is
//! redone to end exactly there), and the inertial frame switches the force at the same times.
//! The Jacobi integral is then not conserved: [`FlightReport::jacobi_rel_drift`] is `None` and
//! [`FlightReport::energy_added_m2_s2`] says how much energy the Sun's forces added.
//!
//! Results are for research and planning; Spinfall is not flight-certified.

mod arcs;
mod lockstep;
mod record;

use std::sync::atomic::AtomicBool;

use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::launch::LaunchState;
use crate::sunlight::Sun;

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
    /// Step limit per frame (outcome `Failed` when reached).
    pub max_steps: u64,
    /// Time limit per launch, s (outcome `Failed` when reached): the time spent on this
    /// launch, its own work plus its share of each batched gravity evaluation, so a launch is
    /// not charged for waiting beside others in a large set.
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
    /// The Sun's forces (radiation pressure on grains that have a particle, shadow, tide);
    /// `None`: gravity and spin only.
    #[serde(default)]
    pub sun: Option<Sun>,
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

/// The grain entering or leaving the body's shadow (radiation pressure off or on again).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ShadowEvent {
    /// Time since launch, s.
    pub t_s: f64,
    /// True when the grain enters the shadow, false when it comes back into sunlight.
    pub enters_shadow: bool,
    /// Body-frame position, m.
    pub pos_body_m: [f64; 3],
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
    /// Largest relative drift of the Jacobi integral `|C - C0| / |C0|` over all ballistic arcs;
    /// `None` (not applicable) when the Sun's forces act, since they change the integral.
    pub jacobi_rel_drift: Option<f64>,
    /// With the Sun's forces: the energy per unit mass they added over the ballistic arcs, m²/s²
    /// (the change of the Jacobi integral `v²/2 - |w x r|²/2 - U` from the start to the end of
    /// each arc, summed; bounces left out). `None` without them.
    #[serde(default)]
    pub energy_added_m2_s2: Option<f64>,
    /// Every entry into and exit from the body's shadow, in order (empty without shadow).
    #[serde(default)]
    pub shadow_events: Vec<ShadowEvent>,
    /// Largest distance between the body-frame and the inertial-frame end points of an arc,
    /// compared in the body frame, m. After a failure the inertial frame is still integrated to
    /// where the body frame stopped, so the last comparison is made there (unless cancelled:
    /// then it covers the arcs completed before).
    pub frame_agreement_m: f64,
    /// Gravity evaluations, both frames.
    pub gravity_evaluations: u64,
    /// Accepted integrator steps, both frames.
    pub steps: u64,
    /// Rejected step attempts, both frames.
    pub rejected_steps: u64,
    /// Body-frame position at `end_time_s` (where it rests, escaped, stopped at the time limit,
    /// or the last state reached before a failure), m.
    pub final_pos_body_m: [f64; 3],
    /// Velocity relative to the body at `end_time_s`, m/s (zero at rest).
    pub final_vel_body_m_s: [f64; 3],
    /// Inertial-frame position reached by the inertial integration, m: at `end_time_s`, or where
    /// that integration stopped if it failed first (the failure reason says when).
    #[serde(default)]
    pub final_pos_inertial_m: [f64; 3],
    /// Inertial-frame velocity with `final_pos_inertial_m`, m/s.
    #[serde(default)]
    pub final_vel_inertial_m_s: [f64; 3],
    /// Sampled trajectory, body frame.
    #[serde(default)]
    pub trajectory_body: Vec<TrajectorySample>,
    /// Sampled trajectory, inertial frame.
    #[serde(default)]
    pub trajectory_inertial: Vec<TrajectorySample>,
    /// For a launch of a targeted scenario entry: the targeting solution, or why the target is
    /// unreachable (set by the caller that solved it; `fly` leaves it `None`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub targeting: Option<Box<crate::targeting::TargetingReport>>,
}

/// Flies one launch; never panics or hangs (limits in [`IntegratorSettings`], `cancel`).
///
/// The same report, byte for byte, as the launch gets inside any set flown by [`fly_all`].
pub fn fly(
    body: &Body,
    launch: &LaunchState,
    settings: &FlightSettings,
    cancel: &Cancel,
) -> FlightReport {
    fly_all(
        body,
        std::slice::from_ref(launch),
        settings,
        &|_, _| {},
        cancel,
    )
    .pop()
    .unwrap_or_else(|| blank_report(launch))
}

/// Flies every launch, advancing them together so that their gravity evaluations are made in
/// batches by the vector kernel (see the `lockstep` module); each launch keeps its own steps,
/// events and bounces, and its report does not depend on the other launches.
/// `progress(done, total)` is called after each launch ends. After `cancel` is set, the
/// launches still flying end as `Failed` with the reason "cancelled".
pub fn fly_all(
    body: &Body,
    launches: &[LaunchState],
    settings: &FlightSettings,
    progress: &(dyn Fn(usize, usize) + Sync),
    cancel: &Cancel,
) -> Vec<FlightReport> {
    let ports = lockstep::ports_for(launches.len());
    lockstep::run_all(
        body,
        launches.len(),
        &ports,
        |k, port| {
            let launch = &launches[k];
            Box::pin(async move {
                let mut report = blank_report(launch);
                if let Err(reason) = check_settings(launch, settings) {
                    report.outcome = Outcome::Failed { reason };
                    return report;
                }
                // Points on the surface may test either way; only a point clearly inside is
                // refused.
                // Within a terrain patch's footprint the patch is the ground, wherever the body
                // shape lies.
                if body.shape.contains(&launch.pos_body_m)
                    && body.shape.nearest_surface_point(&launch.pos_body_m).t > 1e-6
                    && !body.in_patch_footprint(&launch.pos_body_m)
                {
                    report.outcome = Outcome::Failed {
                        reason: format!(
                            "launch point {:?} m is inside the body",
                            launch.pos_body_m.coords.as_slice()
                        ),
                    };
                    return report;
                }
                arcs::Flight::new(body, settings, port, cancel)
                    .run(launch, report)
                    .await
            })
        },
        progress,
    )
}

/// The report of a launch before it flies.
fn blank_report(launch: &LaunchState) -> FlightReport {
    FlightReport {
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
        jacobi_rel_drift: Some(0.0),
        energy_added_m2_s2: None,
        shadow_events: Vec::new(),
        frame_agreement_m: 0.0,
        gravity_evaluations: 0,
        steps: 0,
        rejected_steps: 0,
        final_pos_body_m: launch.pos_body_m.coords.into(),
        final_vel_body_m_s: launch.vel_body_m_s.into(),
        final_pos_inertial_m: launch.pos_body_m.coords.into(),
        final_vel_inertial_m_s: launch.vel_body_m_s.into(),
        trajectory_body: Vec::new(),
        trajectory_inertial: Vec::new(),
        targeting: None,
    }
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
    if let Some(sun) = &s.sun {
        sun.check().map_err(|e| e.to_string())?;
    }
    if let Some(p) = &launch.particle {
        p.check().map_err(|e| e.to_string())?;
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

impl FlightReport {
    /// The report of a launch that is not flown: `Failed` with `reason`, at its start state
    /// (e.g. a targeted launch whose target is unreachable).
    pub fn not_flown(launch: &LaunchState, reason: impl Into<String>) -> FlightReport {
        let mut r = blank_report(launch);
        r.outcome = Outcome::Failed {
            reason: reason.into(),
        };
        r
    }

    /// True if the flight came to rest.
    pub fn landed(&self) -> bool {
        matches!(self.outcome, Outcome::Landed)
    }
}
