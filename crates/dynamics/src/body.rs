//! A body: shape, gravity and a uniform spin, with the transforms between its frames.

use std::f64::consts::PI;
use std::sync::Arc;

use nalgebra::{Point3, Rotation3, Unit, Vector3};
use serde::{Deserialize, Serialize};
use spinfall_gravity::{G_SI, MassSpec, PolyhedronGravity, ShapeModel};

use crate::error::{DynamicsError, Result, positive};
use crate::gravity_model::GravityModel;

/// How the spin axis is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum SpinAxis {
    /// The principal axis of maximum moment of inertia, signed to be closest to body +z
    /// (a relaxed rotator spins about it).
    #[default]
    MaxMoment,
    /// The body +z axis.
    PlusZ,
    /// A given direction in the body frame (normalised; must not be zero).
    Vector([f64; 3]),
}

impl SpinAxis {
    /// The unit axis for `shape`.
    pub fn resolve(&self, shape: &ShapeModel) -> Result<Unit<Vector3<f64>>> {
        match self {
            SpinAxis::PlusZ => Ok(Vector3::z_axis()),
            SpinAxis::Vector(v) => {
                let v = Vector3::from(*v);
                let n = v.norm();
                if !n.is_finite() || n < 1e-12 {
                    return Err(DynamicsError::param(
                        "spin axis",
                        format!(
                            "must be a finite, non-zero vector, got {:?}",
                            [v.x, v.y, v.z]
                        ),
                    ));
                }
                Ok(Unit::new_normalize(v))
            }
            SpinAxis::MaxMoment => {
                let axes = shape.mass_properties().principal_axes;
                let a: Vector3<f64> = axes.column(2).into_owned();
                let n = a.norm();
                if !n.is_finite() || n < 1e-12 {
                    return Ok(Vector3::z_axis());
                }
                let a = if a.z < 0.0 { -a } else { a };
                Ok(Unit::new_normalize(a))
            }
        }
    }
}

/// A uniform rotation about a fixed axis through the body-frame origin.
///
/// The sense of rotation is right-handed about `axis_body`; the period is always positive.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spin {
    /// Rotation period, s (> 0).
    pub period_s: f64,
    /// Spin axis in the body frame.
    pub axis_body: Unit<Vector3<f64>>,
    /// Rotation angle of the body at t = 0, rad.
    pub phase_rad: f64,
}

impl Spin {
    /// A spin with the period in hours, checked.
    pub fn from_hours(
        period_h: f64,
        axis_body: Unit<Vector3<f64>>,
        phase_rad: f64,
    ) -> Result<Spin> {
        positive("spin period_h", period_h)?;
        if !phase_rad.is_finite() {
            return Err(DynamicsError::param("spin phase", "must be finite"));
        }
        Ok(Spin {
            period_s: period_h * 3600.0,
            axis_body,
            phase_rad,
        })
    }

    /// Angular velocity vector in the body frame, rad/s.
    pub fn omega_body_rad_s(&self) -> Vector3<f64> {
        self.axis_body.into_inner() * (2.0 * PI / self.period_s)
    }

    /// Spin rate, rad/s.
    pub fn rate_rad_s(&self) -> f64 {
        2.0 * PI / self.period_s
    }

    /// Rotation mapping body coordinates to inertial coordinates at time `t_s`.
    pub fn inertial_from_body(&self, t_s: f64) -> Rotation3<f64> {
        Rotation3::from_axis_angle(&self.axis_body, self.phase_rad + self.rate_rad_s() * t_s)
    }
}

/// A small body: shape, homogeneous gravity and uniform spin.
///
/// The body frame is the shape frame (the app recentres it on the centre of mass); the inertial
/// frame shares its origin and coincides with it when the spin angle is zero.
#[derive(Clone)]
pub struct Body {
    /// Display name.
    pub name: String,
    /// The closed surface for geometry: impacts, bounces, sites, shadows, pictures. The gravity
    /// shape, or a separate closed contact model ([`crate::contact`]).
    pub shape: Arc<ShapeModel>,
    /// An open terrain patch used for contacts within its footprint, if any
    /// ([`crate::contact`]); faces of the patch follow the faces of `shape` in the contact
    /// surface's numbering.
    pub patch: Option<Arc<ShapeModel>>,
    /// The gravity shape when a global contact model has taken its place in `shape`
    /// ([`crate::contact`]); `None` when `shape` is the gravity shape.
    pub gravity_shape: Option<Arc<ShapeModel>>,
    /// The gravity field in the body frame.
    pub gravity: Arc<dyn GravityModel>,
    /// The spin.
    pub spin: Spin,
}

impl std::fmt::Debug for Body {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Body")
            .field("name", &self.name)
            .field("faces", &self.shape.face_count())
            .field("gm_m3_s2", &self.gm_m3_s2())
            .field("spin", &self.spin)
            .finish()
    }
}

/// Derived figures of a body, for display and reports.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BodyFigures {
    /// Mass, kg.
    pub mass_kg: f64,
    /// Bulk density, kg/m^3.
    pub density_kg_m3: f64,
    /// Gravitational parameter, m^3/s^2.
    pub gm_m3_s2: f64,
    /// Volume, m^3.
    pub volume_m3: f64,
    /// Radius of the sphere of equal volume, m.
    pub equivalent_radius_m: f64,
    /// Radius of the smallest origin-centred sphere enclosing the body, m.
    pub brillouin_radius_m: f64,
    /// Spin period, s.
    pub period_s: f64,
    /// Spin period at which a homogeneous sphere of this density sheds its equator,
    /// sqrt(3 pi / (G rho)), s.
    pub critical_period_s: f64,
    /// Radius of the synchronous (co-rotating) orbit (GM / w^2)^(1/3), m.
    pub synchronous_radius_m: f64,
}

impl Body {
    /// A body with the exact polyhedron gravity of `shape`.
    pub fn new(
        name: impl Into<String>,
        shape: Arc<ShapeModel>,
        mass: MassSpec,
        spin: Spin,
    ) -> Result<Body> {
        let gravity = PolyhedronGravity::from_mesh(shape.mesh(), mass)?;
        Body::with_gravity(name, shape, Arc::new(gravity), spin)
    }

    /// A body with any gravity model (e.g. [`crate::PointMass`]).
    pub fn with_gravity(
        name: impl Into<String>,
        shape: Arc<ShapeModel>,
        gravity: Arc<dyn GravityModel>,
        spin: Spin,
    ) -> Result<Body> {
        positive("spin period_s", spin.period_s)?;
        positive("GM (m^3/s^2)", gravity.gm_m3_s2())?;
        if !spin.phase_rad.is_finite() {
            return Err(DynamicsError::param("spin phase_rad", "must be finite"));
        }
        if shape.face_count() == 0 {
            return Err(DynamicsError::param("shape", "has no faces"));
        }
        Ok(Body {
            name: name.into(),
            shape,
            patch: None,
            gravity_shape: None,
            gravity,
            spin,
        })
    }

    /// Gravitational parameter, m^3/s^2.
    pub fn gm_m3_s2(&self) -> f64 {
        self.gravity.gm_m3_s2()
    }

    /// Angular velocity in the body frame, rad/s.
    pub fn omega_body_rad_s(&self) -> Vector3<f64> {
        self.spin.omega_body_rad_s()
    }

    /// Derived figures (mass, density, critical period, ...).
    pub fn figures(&self) -> BodyFigures {
        let mp = self.shape.mass_properties();
        let gm = self.gm_m3_s2();
        let mass_kg = gm / G_SI;
        let density = mass_kg / mp.volume_m3;
        let w = self.spin.rate_rad_s();
        BodyFigures {
            mass_kg,
            density_kg_m3: density,
            gm_m3_s2: gm,
            volume_m3: mp.volume_m3,
            equivalent_radius_m: mp.equivalent_radius_m,
            brillouin_radius_m: self.brillouin_radius_m(),
            period_s: self.spin.period_s,
            critical_period_s: (3.0 * PI / (G_SI * density)).sqrt(),
            synchronous_radius_m: (gm / (w * w)).cbrt(),
        }
    }

    /// Radius of the smallest sphere about the body-frame origin that encloses every vertex, m.
    pub fn brillouin_radius_m(&self) -> f64 {
        self.shape
            .mesh()
            .vertices_m
            .iter()
            .map(|v| v.coords.norm())
            .fold(0.0, f64::max)
    }

    /// Rotation mapping body coordinates to inertial coordinates at `t_s`.
    pub fn inertial_from_body(&self, t_s: f64) -> Rotation3<f64> {
        self.spin.inertial_from_body(t_s)
    }

    /// Rotation mapping inertial coordinates to body coordinates at `t_s`.
    pub fn body_from_inertial(&self, t_s: f64) -> Rotation3<f64> {
        self.spin.inertial_from_body(t_s).inverse()
    }

    /// A body-frame position in the inertial frame at `t_s`.
    pub fn pos_inertial_from_body(&self, t_s: f64, pos_body_m: &Point3<f64>) -> Point3<f64> {
        self.inertial_from_body(t_s) * pos_body_m
    }

    /// An inertial position in the body frame at `t_s`.
    pub fn pos_body_from_inertial(&self, t_s: f64, pos_inertial_m: &Point3<f64>) -> Point3<f64> {
        self.body_from_inertial(t_s) * pos_inertial_m
    }

    /// Inertial velocity of a particle at `pos_body_m` moving at `vel_body_m_s` relative to the
    /// rotating body: `R (v_body + w x r_body)`.
    pub fn vel_inertial_from_body(
        &self,
        t_s: f64,
        pos_body_m: &Point3<f64>,
        vel_body_m_s: &Vector3<f64>,
    ) -> Vector3<f64> {
        self.inertial_from_body(t_s)
            * (vel_body_m_s + self.omega_body_rad_s().cross(&pos_body_m.coords))
    }

    /// Velocity relative to the rotating body (body coordinates) of a particle with inertial
    /// position and velocity: `R^T v_inertial - w x r_body`.
    pub fn vel_body_from_inertial(
        &self,
        t_s: f64,
        pos_inertial_m: &Point3<f64>,
        vel_inertial_m_s: &Vector3<f64>,
    ) -> Vector3<f64> {
        let r = self.body_from_inertial(t_s);
        let pos_body = r * pos_inertial_m;
        r * vel_inertial_m_s - self.omega_body_rad_s().cross(&pos_body.coords)
    }
}

impl Serialize for SpinAxis {
    fn serialize<S: serde::Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        match self {
            SpinAxis::MaxMoment => s.serialize_str("max-moment"),
            SpinAxis::PlusZ => s.serialize_str("+z"),
            SpinAxis::Vector(v) => v.serialize(s),
        }
    }
}

impl<'de> Deserialize<'de> for SpinAxis {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        struct AxisVisitor;
        impl<'de> serde::de::Visitor<'de> for AxisVisitor {
            type Value = SpinAxis;
            fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str("\"max-moment\", \"+z\" or a vector [x, y, z]")
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> std::result::Result<SpinAxis, E> {
                match v {
                    "max-moment" => Ok(SpinAxis::MaxMoment),
                    "+z" => Ok(SpinAxis::PlusZ),
                    other => Err(E::invalid_value(serde::de::Unexpected::Str(other), &self)),
                }
            }
            fn visit_seq<A: serde::de::SeqAccess<'de>>(
                self,
                mut seq: A,
            ) -> std::result::Result<SpinAxis, A::Error> {
                let mut v = [0.0; 3];
                for (i, c) in v.iter_mut().enumerate() {
                    *c = seq
                        .next_element()?
                        .ok_or_else(|| serde::de::Error::invalid_length(i, &self))?;
                }
                if seq.next_element::<serde::de::IgnoredAny>()?.is_some() {
                    return Err(serde::de::Error::invalid_length(4, &self));
                }
                Ok(SpinAxis::Vector(v))
            }
        }
        d.deserialize_any(AxisVisitor)
    }
}
