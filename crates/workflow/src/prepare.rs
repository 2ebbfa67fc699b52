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
use crate::limits::{Estimate, Limits, estimate};
use crate::scenario_file::LoadedScenario;
use crate::shape::{OpenedContact, OpenedShape, open_contact_shape, open_shape};

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
}

impl PrepareOptions {
    /// Options for `purpose` with default limits and gravity.
    pub fn new(purpose: Purpose) -> Self {
        PrepareOptions {
            purpose,
            limits: Limits::default(),
            gravity: GravityOptions::default(),
        }
    }
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
    /// The expanded launches (empty for [`Purpose::BodyOnly`]).
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
}

impl PreparedRun {
    /// The scenario.
    pub fn scenario(&self) -> &Scenario {
        &self.loaded.scenario
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
    let est = estimate(scenario, shape.shape.face_count(), &settings);
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
    let (launches, targeted) = match options.purpose {
        Purpose::Fly => {
            let built = scenario
                .build_launches_targeted(&body, targeting, hooks.cancel)
                .map_err(|e| match e {
                    DynamicsError::Cancelled => WorkflowError::Cancelled,
                    other => refused(other),
                })?;
            (built.states, built.targeting)
        }
        Purpose::BodyOnly => (Vec::new(), Vec::new()),
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
    })
}

/// Fails early: no launches to fly, or more than the limit (counted without building them).
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
    let est = estimate(scenario, 0, &scenario.flight_settings());
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
