//! How a prepared run computes gravity: the one place a body's gravity model is chosen.
//!
//! Today there is one method, the exact constant-density polyhedron (Werner & Scheeres 1997,
//! summed directly over faces and edges). Other methods (an interpolated field with an on-disk
//! cache) plug in here: [`GravityOptions`] carries their settings, [`gravity_model`] builds the
//! model, and the [`spinfall_dynamics::Body`] holds it as an `Arc<dyn GravityModel>`, so
//! nothing downstream changes.

use std::path::PathBuf;
use std::sync::Arc;

use spinfall_dynamics::GravityModel;
use spinfall_gravity::{MassSpec, PolyhedronGravity, ShapeModel};

/// Settings of the gravity computation of a run.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct GravityOptions {
    /// Folder for cached gravity fields, for methods that precompute one (none yet: the direct
    /// method needs no cache and ignores it).
    pub cache_dir: Option<PathBuf>,
}

/// The gravity model of `shape` (already placed in the body frame) with `mass`.
///
/// # Errors
/// The gravity core's refusal of the mass (non-positive, not finite).
pub fn gravity_model(
    shape: &ShapeModel,
    mass: MassSpec,
    _options: &GravityOptions,
) -> spinfall_gravity::Result<Arc<dyn GravityModel>> {
    Ok(Arc::new(PolyhedronGravity::new(shape, mass)?))
}

/// The method and the kernel it runs on this machine, for manifests.
pub fn kernel_description(_options: &GravityOptions) -> String {
    format!(
        "polyhedron, direct sum (Werner & Scheeres 1997); {}",
        cpu_kernel()
    )
}

/// Which vectorised kernel the CPU's features select.
fn cpu_kernel() -> &'static str {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            return "AVX-512 kernel";
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            return "AVX2+FMA kernel";
        }
    }
    "portable SIMD kernel"
}
