//! Shape models of small bodies and the exact gravity of the constant-density polyhedron.
//!
//! What it is: the numeric core of Spinfall. It parses and validates shape models in Wavefront
//! OBJ, PLY and STL ([`parse_shape`], [`ShapeFormat`], [`parse_obj`], [`ShapeModel::new`]: closed, manifold, consistently and outward oriented;
//! repairs come back as [`Warning`]s), computes the mass properties of the homogeneous polyhedron
//! ([`MassProperties`]), answers geometry queries through a BVH ([`ShapeModel`]: ray and segment
//! first hit as a [`SurfaceHit`], nearest surface point, inside test), generates test bodies
//! ([`generate`]: icosphere, ellipsoid, box, the invented demo body "Quillon") and evaluates the
//! Werner & Scheeres (1997) gravity field ([`PolyhedronGravity`]): potential, acceleration,
//! gravity-gradient tensor and Laplacian, with an exterior expansion far from the body.
//!
//! What it is not: no GUI, no rendering, no file system access, no logging set-up. Parsers take
//! readers; the caller opens files. SI units inside (m, kg, s). Spinfall is for research and
//! planning; it is not flight-certified.
//!
//! ```
//! use spinfall_gravity::{generate, MassSpec, PolyhedronGravity, ShapeModel};
//! use nalgebra::{Point3, Vector3};
//! let (shape, _warnings) = ShapeModel::new(generate::icosphere(1000.0, 3)).unwrap();
//! let gravity = PolyhedronGravity::new(&shape, MassSpec::DensityKgM3(2000.0)).unwrap();
//! let (u_m2_s2, a_m_s2) = gravity.potential_acceleration(&Point3::new(5000.0, 0.0, 0.0));
//! assert!(u_m2_s2 > 0.0 && a_m_s2.x < 0.0);
//! // Geometry: where does a ray from outside meet the surface?
//! let hit = shape
//!     .ray_first_hit(&Point3::new(5000.0, 0.0, 0.0), &Vector3::new(-1.0, 0.0, 0.0), 1e4)
//!     .unwrap();
//! assert!(hit.front_face && (hit.point_m.x - 1000.0).abs() < 1.0);
//! assert!(shape.contains(&Point3::origin()));
//! ```
#![warn(missing_docs)]

mod error;
pub mod field;
mod format;
pub mod generate;
mod mass;
mod mesh;
mod obj;
mod ply;
mod query;
mod shape;
mod stl;
pub mod text;
mod validate;

pub use error::{GravityError, Result};
pub use field::{
    Answer, BuildProgress, BuildStats, FieldSample, G_SI, InterpolatedGravity,
    InterpolationSettings, MassSpec, PolyhedronGravity, build_interpolated, cache_key,
};
pub use format::{ShapeFormat, parse_shape};
pub use mass::MassProperties;
pub use mesh::{LengthUnit, Mesh};
pub use obj::parse_obj;
pub use query::SurfaceHit;
pub use shape::ShapeModel;
pub use validate::Warning;

/// The built-in demo body, embedded so the binary needs no file.
pub mod demo {
    /// Name of the invented demo body.
    pub const NAME: &str = "Quillon";
    /// Its shape model as OBJ text, in kilometres.
    pub const OBJ_KM: &str = include_str!("../../../shapes/quillon.obj");
    /// Suggested bulk density of the demo body, kg/m^3 (invented).
    pub const DENSITY_KG_M3: f64 = 2100.0;
    /// Suggested spin period of the demo body, hours (invented).
    pub const PERIOD_H: f64 = 5.0;
}
