//! How a prepared run computes gravity: the one place a body's gravity model is chosen.
//!
//! Two methods: **direct**, the exact constant-density polyhedron (Werner & Scheeres 1997,
//! summed over faces and edges by the vector kernel; the default), and **interpolated**, built
//! once per body to a relative error bound (see `spinfall_gravity::InterpolatedGravity`) and
//! kept in an on-disk store ([`crate::field_cache`]). The scenario's `field` section chooses;
//! [`GravityOptions`] (command-line options) override it. The [`spinfall_dynamics::Body`] holds
//! the model as an `Arc<dyn GravityModel>`, so nothing downstream changes; what was used is
//! recorded ([`FieldUsed`]) with the results.

use std::path::PathBuf;
use std::sync::Arc;

use serde::{Deserialize, Serialize};
use spinfall_dynamics::GravityModel;
use spinfall_dynamics::scenario::{FieldMethodSpec, FieldSpec};
use spinfall_gravity::{
    BuildStats, InterpolationSettings, MassSpec, PolyhedronGravity, ShapeModel,
};

use crate::error::{Result, WorkflowError};
use crate::field_cache::{BuildHooks, StoreOutcome, default_cache_dir, load_or_build};

/// Default memory limit of an interpolated field, MB.
pub const DEFAULT_FIELD_MEMORY_MB: u64 = 4096;

/// Settings of the gravity computation of a run that override the scenario's `field` section.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct GravityOptions {
    /// The method (`None`: the scenario's).
    pub method: Option<FieldMethodSpec>,
    /// The interpolated field's bound (`None`: the scenario's).
    pub max_rel_error: Option<f64>,
    /// The interpolated field's memory limit, MB (`None`: the scenario's, else 4096).
    pub max_memory_mb: Option<u64>,
    /// Folder of stored interpolated fields (`None`: [`default_cache_dir`]).
    pub cache_dir: Option<PathBuf>,
}

impl GravityOptions {
    /// The folder of stored fields (and surface maps): the option's, else
    /// [`default_cache_dir`].
    pub fn cache_folder(&self) -> Option<PathBuf> {
        self.cache_dir.clone().or_else(default_cache_dir)
    }

    /// The field section in force: the scenario's, with these options applied over it.
    pub fn resolve(&self, scenario: Option<&FieldSpec>) -> FieldSpec {
        let mut spec = scenario.copied().unwrap_or_default();
        if let Some(m) = self.method {
            spec.method = m;
        }
        if let Some(e) = self.max_rel_error {
            spec.max_rel_error = e;
        }
        if let Some(mb) = self.max_memory_mb {
            spec.max_memory_mb = Some(mb);
        }
        spec
    }
}

/// Checks a field section: the bound in [1e-12, 1e-3], a positive memory limit.
///
/// # Errors
/// [`WorkflowError::Invalid`] naming the value.
pub fn check_field(spec: &FieldSpec) -> Result<()> {
    // Checked whatever the method: a value out of range is a mistake even while unused, and
    // would surface only when the method is switched.
    let e = spec.max_rel_error;
    if !(1e-12..=1e-3).contains(&e) {
        return Err(WorkflowError::Invalid(format!(
            "field: max_rel_error {e} is outside [1e-12, 1e-3] (the interpolated field's \
             relative acceleration error)"
        )));
    }
    if spec.max_memory_mb == Some(0) {
        return Err(WorkflowError::Invalid(
            "field: max_memory_mb must be at least 1".into(),
        ));
    }
    Ok(())
}

/// How the gravity of a run was computed, recorded with its results.
///
/// Serialised into results.json without what belongs to one process rather than to the
/// results: the store outcome (a path, "read" or "built") and the time this process spent
/// building the field are left out there (and `build.build_s` is never serialised) and
/// written into the run's manifest instead (`field_store`, `field_build_s`), so results flown
/// in one process or in shards are byte-identical. Read back (for a merge), those are absent.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FieldUsed {
    /// `"direct"` or `"interpolated"`.
    pub method: String,
    /// The interpolated field's bound of the relative acceleration error.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_rel_error: Option<f64>,
    /// The vector kernel of the direct sums on this machine.
    pub kernel: String,
    /// How the interpolated field was built, and what it takes.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub build: Option<BuildStats>,
    /// Whether it was read from the store, built and stored, or built without one (not
    /// serialised; see above).
    #[serde(skip)]
    pub store: Option<String>,
    /// Wall-clock time this process spent building the field, s (`None`: read from the store,
    /// or the direct method; not serialised, see above).
    #[serde(skip)]
    pub build_s: Option<f64>,
}

impl FieldUsed {
    /// The direct method.
    pub fn direct() -> FieldUsed {
        FieldUsed {
            method: "direct".into(),
            max_rel_error: None,
            kernel: cpu_kernel().into(),
            build: None,
            store: None,
            build_s: None,
        }
    }

    /// The method without the machine's kernel (for figures, which must not depend on the
    /// machine).
    pub fn describe_method(&self) -> String {
        describe_method(self.max_rel_error)
    }

    /// One line for manifests and status bars.
    pub fn describe(&self) -> String {
        match self.max_rel_error {
            Some(e) => format!(
                "polyhedron, interpolated to a relative acceleration error of {e:e} (exact near \
                 faces summed by the {}; Werner & Scheeres 1997)",
                self.kernel
            ),
            None => format!(
                "polyhedron, direct sum (Werner & Scheeres 1997); {}",
                self.kernel
            ),
        }
    }
}

/// A gravity method without the machine's kernel: the interpolated field to the bound
/// `max_rel_error`, or the direct sum (`None`).
pub fn describe_method(max_rel_error: Option<f64>) -> String {
    match max_rel_error {
        Some(e) => format!(
            "polyhedron, interpolated to a relative acceleration error of {e:e} (Werner & \
             Scheeres 1997)"
        ),
        None => "polyhedron, direct sum (Werner & Scheeres 1997)".into(),
    }
}

/// [`describe_method`] of the field section in force (see [`GravityOptions::resolve`]): what
/// [`FieldUsed::describe_method`] will say once the model is built.
pub fn describe_spec(spec: &FieldSpec) -> String {
    describe_method(match spec.method {
        FieldMethodSpec::Interpolated => Some(spec.max_rel_error),
        FieldMethodSpec::Direct => None,
    })
}

/// The gravity model of `shape` (already placed in the body frame) with `mass`, by the method
/// of `spec` (see [`GravityOptions::resolve`]). An interpolated field is read from the store
/// or built there, with `hooks` for progress, cancel and warnings.
///
/// # Errors
/// The mass refused, invalid field settings, a memory limit too small for the bound, or
/// cancellation.
pub fn gravity_model(
    shape: &ShapeModel,
    mass: MassSpec,
    spec: &FieldSpec,
    options: &GravityOptions,
    hooks: &BuildHooks<'_>,
) -> Result<(Arc<dyn GravityModel>, FieldUsed)> {
    check_field(spec)?;
    match spec.method {
        FieldMethodSpec::Direct => {
            let field = PolyhedronGravity::new(shape, mass)
                .map_err(|e| WorkflowError::Invalid(format!("gravity field: {e}")))?;
            Ok((Arc::new(field), FieldUsed::direct()))
        }
        FieldMethodSpec::Interpolated => {
            let settings = InterpolationSettings {
                max_rel_error: spec.max_rel_error,
                max_memory_bytes: (spec.max_memory_mb.unwrap_or(DEFAULT_FIELD_MEMORY_MB) as usize)
                    .saturating_mul(1 << 20),
                ..InterpolationSettings::default()
            };
            let folder = options.cache_folder();
            let (field, outcome) =
                load_or_build(shape.mesh(), mass, settings, folder.as_deref(), hooks)?;
            let built_s = Some(field.stats().build_s);
            let (store, build_s) = match outcome {
                StoreOutcome::Read(p) => (format!("read from {}", p.display()), None),
                StoreOutcome::Built(p) => (format!("built and stored as {}", p.display()), built_s),
                StoreOutcome::BuiltWithoutStore(why) => {
                    (format!("built, not stored: {why}"), built_s)
                }
            };
            let used = FieldUsed {
                method: "interpolated".into(),
                max_rel_error: Some(spec.max_rel_error),
                kernel: cpu_kernel().into(),
                build: Some(field.stats().clone()),
                store: Some(store),
                build_s,
            };
            Ok((Arc::new(field), used))
        }
    }
}

/// Which vectorised kernel the CPU's features select.
fn cpu_kernel() -> &'static str {
    match spinfall_gravity::field::DirectKernel::auto_resolved() {
        spinfall_gravity::field::DirectKernel::Avx512 => "AVX-512 kernel",
        spinfall_gravity::field::DirectKernel::Avx2 => "AVX2+FMA kernel",
        _ => "portable SIMD kernel",
    }
}
