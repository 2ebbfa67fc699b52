//! A scenario turned into a run that is ready to fly: the shape opened, the body built, the
//! launches expanded, after the limits were checked. The command line and the app both prepare
//! runs here, so the same scenario flies the same way in both.

use std::sync::Arc;

use spinfall_dynamics::DynamicsError;
use spinfall_dynamics::launch::LaunchState;
use spinfall_dynamics::scenario::{Scenario, TargetedEntry};
use spinfall_dynamics::{Body, FlightSettings};

use crate::error::{Result, WorkflowError};
use crate::field_cache::BuildHooks;
use crate::gravity_method::{FieldUsed, GravityOptions, gravity_model};
use crate::limits::{Estimate, Limits, estimate_launches};
use crate::scenario_file::LoadedScenario;
use crate::shape::{OpenedContact, OpenedShape, open_contact_shape, open_shape};
use crate::shard::Shard;

/// What a run is prepared for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Purpose {
    /// Flying: needs at least one launch; launches are expanded.
    Fly,
    /// The body only (a surface map, the app's view): launches may be absent and are not
    /// expanded.
    BodyOnly,
}

/// How to prepare a run.
#[derive(Debug, Clone, PartialEq)]
pub struct PrepareOptions {
    /// What for.
    pub purpose: Purpose,
    /// Limits checked before anything is built.
    pub limits: Limits,
    /// How gravity is computed.
    pub gravity: GravityOptions,
    /// Fly only this shard's launches (see [`crate::shard`]); the limits and the estimate then
    /// apply to the shard's share.
    pub shard: Option<Shard>,
}

impl PrepareOptions {
    /// Options for `purpose` with default limits and gravity, every launch.
    pub fn new(purpose: Purpose) -> Self {
        PrepareOptions {
            purpose,
            limits: Limits::default(),
            gravity: GravityOptions::default(),
            shard: None,
        }
    }
}

/// The share of a sharded run that a prepared run flies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ShardPlan {
    /// The shard.
    pub shard: Shard,
    /// Launches of the whole run.
    pub launch_count: usize,
}

/// A run ready to fly.
#[derive(Debug, Clone)]
pub struct PreparedRun {
    /// The scenario and where it came from.
    pub loaded: LoadedScenario,
    /// The opened shape model.
    pub shape: OpenedShape,
    /// The body (shape, gravity, spin).
    pub body: Arc<Body>,
    /// The expanded launches (empty for [`Purpose::BodyOnly`]); with a shard, only the
    /// shard's, in launch order.
    pub launches: Vec<LaunchState>,
    /// Integrator, contact model and sampling.
    pub settings: FlightSettings,
    /// What the run needs at most.
    pub estimate: Estimate,
    /// How gravity is computed (the options).
    pub gravity: GravityOptions,
    /// How gravity was computed (the method in force, with the interpolated field's build).
    pub field: FieldUsed,
    /// The solved targeted entries (see `spinfall_dynamics::targeting`); the launches of an
    /// unreachable one are not flown and end `failed` with its reason ([`crate::run`]).
    pub targeting: Vec<TargetedEntry>,
    /// The scenario's separate contact shape, if any, as placed in the body.
    pub contact: Option<OpenedContact>,
    /// The share flown, for a shard of a run.
    pub shard: Option<ShardPlan>,
}

impl PreparedRun {
    /// The scenario.
    pub fn scenario(&self) -> &Scenario {
        &self.loaded.scenario
    }

    /// Where the launch with index `launch` of the whole run is in [`PreparedRun::launches`]
    /// (`None`: another shard flies it). [`TargetedEntry::launches`] are such indices.
    pub fn position_of(&self, launch: usize) -> Option<usize> {
        match &self.shard {
            Some(plan) => plan.shard.position_of(launch),
            None => Some(launch),
        }
        .filter(|&p| p < self.launches.len())
    }
}

/// Prepares `loaded`: checks the launch count, opens its shape model, builds the body, checks
/// the memory estimate, and expands the launches.
///
/// # Errors
/// Bad input (the scenario, its shape file, a limit) with the file and field named.
pub fn prepare(loaded: LoadedScenario, options: &PrepareOptions) -> Result<PreparedRun> {
    prepare_with_hooks(loaded, options, &BuildHooks::default())
}

/// As [`prepare`], with progress, cancel and warnings for an interpolated field's build.
///
/// # Errors
/// As [`prepare`], and [`WorkflowError::Cancelled`].
pub fn prepare_with_hooks(
    loaded: LoadedScenario,
    options: &PrepareOptions,
    hooks: &BuildHooks<'_>,
) -> Result<PreparedRun> {
    check_launch_count(&loaded, options)?;
    let shape = open_shape(&loaded.shape_request())?;
    prepare_shape_hooks(loaded, shape, options, hooks)
}

/// As [`prepare`] with the shape model already open (the app keeps it between runs). The shape
/// must have been opened with the scenario's unit and `recenter` flag.
pub fn prepare_with_shape(
    loaded: LoadedScenario,
    shape: OpenedShape,
    options: &PrepareOptions,
) -> Result<PreparedRun> {
    prepare_shape_hooks(loaded, shape, options, &BuildHooks::default())
}

/// As [`prepare_with_shape`], with hooks for an interpolated field's build.
///
/// # Errors
/// As [`prepare`], and [`WorkflowError::Cancelled`].
pub fn prepare_shape_hooks(
    loaded: LoadedScenario,
    shape: OpenedShape,
    options: &PrepareOptions,
    hooks: &BuildHooks<'_>,
) -> Result<PreparedRun> {
    prepare_shape_targeting(loaded, shape, options, hooks, &|_, _, _| {})
}

/// As [`prepare_with_hooks`], with the progress of targeted launches:
/// `targeting(id, flights, max_flights)` after each batch of trial flights of entry `id`.
/// Targeted entries are solved here, before the run, honouring `hooks.cancel`.
///
/// # Errors
/// As [`prepare`], and [`WorkflowError::Cancelled`].
pub fn prepare_with_targeting(
    loaded: LoadedScenario,
    options: &PrepareOptions,
    hooks: &BuildHooks<'_>,
    targeting: &(dyn Fn(&str, usize, usize) + Sync),
) -> Result<PreparedRun> {
    check_launch_count(&loaded, options)?;
    let shape = open_shape(&loaded.shape_request())?;
    prepare_shape_targeting(loaded, shape, options, hooks, targeting)
}

/// As [`prepare_shape_hooks`], with the progress of targeted launches (see
/// [`prepare_with_targeting`]).
///
/// # Errors
/// As [`prepare`], and [`WorkflowError::Cancelled`].
pub fn prepare_shape_targeting(
    loaded: LoadedScenario,
    shape: OpenedShape,
    options: &PrepareOptions,
    hooks: &BuildHooks<'_>,
    targeting: &(dyn Fn(&str, usize, usize) + Sync),
) -> Result<PreparedRun> {
    check_launch_count(&loaded, options)?;
    let scenario = &loaded.scenario;
    let refused = |error| WorkflowError::Scenario {
        what: loaded.describe(),
        error,
    };
    let settings = scenario.flight_settings();
    let est = estimate_launches(
        scenario,
        flown_count(scenario, options),
        shape.shape.face_count(),
        &settings,
    );
    if options.purpose == Purpose::Fly {
        options.limits.check(scenario, &est)?;
    }
    let (body, field) = build_body(scenario, &shape, &options.gravity, hooks)?;
    let contact = match loaded.contact_request() {
        Some((request, kind)) => Some(open_contact_shape(&request, kind, &shape)?),
        None => None,
    };
    let body = match &contact {
        Some(c) => body.with_contact(c.contact.clone()),
        None => body,
    };
    let body = Arc::new(body);
    let (launches, targeted, shard) = match options.purpose {
        Purpose::Fly => {
            // A shard solves only the targeted entries it flies some launches of.
            let ranges = entry_ranges(scenario);
            let solve = |entry: usize| match (options.shard, ranges.get(entry)) {
                (Some(shard), Some(range)) => shard.owns_any(range.clone()),
                _ => true,
            };
            let built = scenario
                .build_launches_targeted_for(&body, &solve, targeting, hooks.cancel)
                .map_err(|e| match e {
                    DynamicsError::Cancelled => WorkflowError::Cancelled,
                    other => refused(other),
                })?;
            match options.shard {
                Some(shard) => {
                    let launch_count = built.states.len();
                    let states = built
                        .states
                        .into_iter()
                        .enumerate()
                        .filter(|(i, _)| shard.owns(*i))
                        .map(|(_, s)| s)
                        .collect();
                    let plan = ShardPlan {
                        shard,
                        launch_count,
                    };
                    (states, built.targeting, Some(plan))
                }
                None => (built.states, built.targeting, None),
            }
        }
        Purpose::BodyOnly => (Vec::new(), Vec::new(), None),
    };
    Ok(PreparedRun {
        loaded,
        shape,
        body,
        launches,
        settings,
        estimate: est,
        gravity: options.gravity.clone(),
        field,
        targeting: targeted,
        contact,
        shard,
    })
}

/// What [`check_scenario`] found.
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioCheck {
    /// Launches of the whole run.
    pub launches: u64,
    /// The field section in force (the scenario's with the options over it).
    pub field: spinfall_dynamics::scenario::FieldSpec,
    /// Warnings of the shape models (shown; they do not stop the run).
    pub warnings: Vec<String>,
}

/// Every check [`prepare`] makes of a scenario to fly, without its costly work: the launch
/// count and limits (of `options.shard`'s share when given), the shape model and contact
/// shape opened, the body built, the field settings checked, and the launches expanded with
/// their sites and targets placed; no interpolated field is built and no target is solved.
/// For checking a scenario where it will not run (a cluster's login node): the memory estimate
/// is left to the machine that flies it.
///
/// # Errors
/// As [`prepare`].
pub fn check_scenario(loaded: &LoadedScenario, options: &PrepareOptions) -> Result<ScenarioCheck> {
    let options = PrepareOptions {
        purpose: Purpose::Fly,
        limits: Limits {
            memory_bytes: Some(u64::MAX),
            ..options.limits
        },
        ..options.clone()
    };
    check_launch_count(loaded, &options)?;
    let scenario = &loaded.scenario;
    let field = options.gravity.resolve(scenario.field.as_ref());
    crate::gravity_method::check_field(&field)?;
    let shape = open_shape(&loaded.shape_request())?;
    let settings = scenario.flight_settings();
    let est = estimate_launches(
        scenario,
        flown_count(scenario, &options),
        shape.shape.face_count(),
        &settings,
    );
    options.limits.check(scenario, &est)?;
    let direct = GravityOptions {
        method: Some(spinfall_dynamics::scenario::FieldMethodSpec::Direct),
        ..options.gravity.clone()
    };
    let (body, _) = build_body(scenario, &shape, &direct, &BuildHooks::default())?;
    let mut warnings: Vec<String> = shape
        .warnings
        .iter()
        .map(|w| format!("shape model: {w}"))
        .collect();
    let body = match loaded.contact_request() {
        Some((request, kind)) => {
            let c = open_contact_shape(&request, kind, &shape)?;
            warnings.extend(c.warnings.iter().map(|w| format!("contact shape: {w}")));
            body.with_contact(c.contact.clone())
        }
        None => body,
    };
    scenario
        .build_launches_targeted_for(
            &body,
            &|_| false,
            &|_, _, _| {},
            &std::sync::atomic::AtomicBool::new(false),
        )
        .map_err(|error| WorkflowError::Scenario {
            what: loaded.describe(),
            error,
        })?;
    Ok(ScenarioCheck {
        launches: scenario.launch_count(),
        field,
        warnings,
    })
}

/// The launches (indices in launch order) of each entry of `scenario`, counted without
/// building them.
fn entry_ranges(scenario: &Scenario) -> Vec<std::ops::Range<usize>> {
    let mut start = 0usize;
    scenario
        .launches
        .iter()
        .map(|l| {
            let count = usize::try_from(l.member_count()).unwrap_or(usize::MAX);
            let range = start..start.saturating_add(count);
            start = range.end;
            range
        })
        .collect()
}

/// How many launches a run prepared with `options` flies: every launch, or a shard's share.
fn flown_count(scenario: &Scenario, options: &PrepareOptions) -> u64 {
    let total = scenario.launch_count();
    match options.shard {
        Some(shard) => shard.share(total),
        None => total,
    }
}

/// Fails early: no launches to fly, or more than the limit (counted without building them;
/// for a shard, its share).
///
/// # Errors
/// [`WorkflowError::TooManyLaunches`], or no launches.
pub fn check_launch_limit(loaded: &LoadedScenario, options: &PrepareOptions) -> Result<()> {
    check_launch_count(loaded, options)
}

/// See [`check_launch_limit`].
fn check_launch_count(loaded: &LoadedScenario, options: &PrepareOptions) -> Result<()> {
    if options.purpose != Purpose::Fly {
        return Ok(());
    }
    let scenario = &loaded.scenario;
    if scenario.launches.is_empty() {
        return Err(WorkflowError::Invalid(format!(
            "scenario {}: launches: nothing to fly (the scenario has no launches)",
            loaded.describe()
        )));
    }
    // The body's size is not known yet: count launches only.
    let est = estimate_launches(
        scenario,
        flown_count(scenario, options),
        0,
        &scenario.flight_settings(),
    );
    let limit = options
        .limits
        .max_launches
        .unwrap_or_else(|| scenario.max_launches());
    if est.launches > limit {
        return Err(WorkflowError::TooManyLaunches {
            launches: est.launches,
            limit,
            estimate: est,
        });
    }
    Ok(())
}

/// The body of `scenario` on the opened shape, with the gravity method of its `field` section
/// and `gravity` (which overrides it), and what that method was.
///
/// # Errors
/// The scenario's mass or spin is refused (field named), the field settings are invalid, or
/// the build of an interpolated field was cancelled.
pub fn build_body(
    scenario: &Scenario,
    shape: &OpenedShape,
    gravity: &GravityOptions,
    hooks: &BuildHooks<'_>,
) -> Result<(Body, FieldUsed)> {
    let refused = |error| WorkflowError::Scenario {
        what: scenario.body_name(),
        error,
    };
    let mass = scenario.mass_spec().map_err(refused)?;
    let spec = gravity.resolve(scenario.field.as_ref());
    let (model, used) = gravity_model(&shape.shape, mass, &spec, gravity, hooks)?;
    let body = Body::with_gravity(
        scenario.body_name(),
        shape.shape.clone(),
        model,
        scenario.spin_on(&shape.shape).map_err(refused)?,
    )
    .map_err(refused)?;
    Ok((body, used))
}
