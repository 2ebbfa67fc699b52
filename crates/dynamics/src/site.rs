//! Launch sites on the surface, their local east-north-up frames and planetocentric coordinates.
//!
//! **Coordinates.** Latitude and longitude are planetocentric, measured in the body frame about
//! its origin, with the *spin axis* as the north pole. Longitude 0 is the direction of the body
//! +x axis projected on the equatorial plane (body +y if the spin axis is along x), and longitude
//! grows eastward, i.e. in the sense of rotation (right-handed about the spin axis); values are in
//! (-180, 180].
//!
//! **Local frame.** `up` is the outward normal of the face (or the area-weighted mean of the face
//! and its three neighbours, [`NormalMode::Smoothed`]), `north` is the spin axis projected on the
//! local horizontal plane, and `east = north x up`, so (east, north, up) is right-handed. Where the
//! spin axis is within 0.06 deg of `up` (a pole) north is undefined; the body +x axis projected on
//! the horizontal is used instead (+y if that fails) and [`Site::pole_fallback`] says so.

use nalgebra::{Point3, Unit, Vector3};
use serde::{Deserialize, Serialize};

use crate::body::Body;
use crate::error::{DynamicsError, Result};

/// How the local vertical of a site is taken.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum NormalMode {
    /// The outward normal of the face.
    #[default]
    Face,
    /// The area-weighted mean normal of the face and its edge neighbours.
    Smoothed,
}

/// Right-handed local frame at a surface point (unit vectors in the body frame).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LocalFrame {
    /// Local east (direction of rotation along the horizontal).
    pub east: Unit<Vector3<f64>>,
    /// Local north (toward the spin pole along the horizontal).
    pub north: Unit<Vector3<f64>>,
    /// Local up (outward surface normal).
    pub up: Unit<Vector3<f64>>,
}

impl LocalFrame {
    /// The frame with the given `up`, `north` toward `axis`; returns `(frame, pole_fallback)`.
    pub fn new(up: Unit<Vector3<f64>>, axis: &Unit<Vector3<f64>>) -> (LocalFrame, bool) {
        let project = |v: Vector3<f64>| v - up.into_inner() * v.dot(&up);
        let mut north = project(axis.into_inner());
        let mut fallback = false;
        if north.norm() < 1e-3 {
            fallback = true;
            north = project(Vector3::x());
            if north.norm() < 1e-3 {
                north = project(Vector3::y());
            }
        }
        let north = Unit::new_normalize(north);
        let east = Unit::new_normalize(north.cross(&up));
        (LocalFrame { east, north, up }, fallback)
    }

    /// Direction of a launch at `azimuth_rad` (from north toward east) and `elevation_rad`
    /// (above the horizontal).
    pub fn direction(&self, azimuth_rad: f64, elevation_rad: f64) -> Vector3<f64> {
        let (sa, ca) = azimuth_rad.sin_cos();
        let (se, ce) = elevation_rad.sin_cos();
        (self.north.into_inner() * ca + self.east.into_inner() * sa) * ce
            + self.up.into_inner() * se
    }
}

/// Planetocentric latitude and longitude (deg) of a body-frame point; see the module docs.
pub fn lat_lon_deg(body: &Body, p_body_m: &Point3<f64>) -> (f64, f64) {
    let (x, y, z) = equatorial_basis(&body.spin.axis_body);
    let r = p_body_m.coords;
    let n = r.norm();
    if n == 0.0 {
        return (0.0, 0.0);
    }
    let lat = (r.dot(&z) / n).clamp(-1.0, 1.0).asin().to_degrees();
    let lon = r.dot(&y).atan2(r.dot(&x)).to_degrees();
    (lat, lon)
}

/// Unit direction (body frame) of planetocentric latitude/longitude in degrees.
pub fn direction_from_lat_lon(body: &Body, lat_deg: f64, lon_deg: f64) -> Vector3<f64> {
    let (x, y, z) = equatorial_basis(&body.spin.axis_body);
    let (sl, cl) = lat_deg.to_radians().sin_cos();
    let (so, co) = lon_deg.to_radians().sin_cos();
    (x * co + y * so) * cl + z * sl
}

/// Unit vectors of longitude 0, longitude 90 deg east and the spin axis (see the module docs).
pub(crate) fn equatorial_basis(
    axis: &Unit<Vector3<f64>>,
) -> (Vector3<f64>, Vector3<f64>, Vector3<f64>) {
    let z = axis.into_inner();
    let mut x = Vector3::x() - z * z.x;
    if x.norm() < 1e-6 {
        x = Vector3::y() - z * z.y;
    }
    let x = x.normalize();
    let y = z.cross(&x);
    (x, y, z)
}

/// A launch site on the surface.
#[derive(Debug, Clone, PartialEq)]
pub struct Site {
    /// Face the site lies on.
    pub face: usize,
    /// Surface point, body frame, m.
    pub point_body_m: Point3<f64>,
    /// Local east-north-up frame.
    pub frame: LocalFrame,
    /// True where the site is at a pole and north was replaced by projected body +x.
    pub pole_fallback: bool,
    /// Planetocentric latitude, deg.
    pub lat_deg: f64,
    /// Planetocentric longitude, deg east.
    pub lon_deg: f64,
    /// Launch speed (relative to the surface) along `up` that gives zero two-body energy with the
    /// polyhedron potential, m/s (see [`crate::surface_map`]).
    pub escape_speed_normal_m_s: f64,
    /// Smallest such speed over all launch directions, m/s.
    pub escape_speed_min_m_s: f64,
}

impl Site {
    /// The site at the centroid of `face`.
    pub fn from_face(body: &Body, face: usize, normal: NormalMode) -> Result<Site> {
        check_face(body, face)?;
        let p = body.contact_face_centroid(face);
        Site::from_surface_point(body, p, face, normal)
    }

    /// The site at `point_body_m` on `face` (e.g. from a picked ray's [`spinfall_gravity::SurfaceHit`]).
    pub fn from_surface_point(
        body: &Body,
        point_body_m: Point3<f64>,
        face: usize,
        normal: NormalMode,
    ) -> Result<Site> {
        check_face(body, face)?;
        if !point_body_m.coords.iter().all(|c| c.is_finite()) {
            return Err(DynamicsError::Site(format!(
                "point {:?} is not finite",
                point_body_m.coords.as_slice()
            )));
        }
        let up = match normal {
            NormalMode::Face => body.contact_face_normal(face),
            NormalMode::Smoothed => {
                let mut n =
                    body.contact_face_normal(face).into_inner() * body.contact_face_area_m2(face);
                for nb in body.contact_face_neighbours(face) {
                    if nb < body.contact_face_count() {
                        n += body.contact_face_normal(nb).into_inner()
                            * body.contact_face_area_m2(nb);
                    }
                }
                Unit::try_new(n, 1e-300).unwrap_or_else(|| body.contact_face_normal(face))
            }
        };
        let (frame, pole_fallback) = LocalFrame::new(up, &body.spin.axis_body);
        let (lat_deg, lon_deg) = lat_lon_deg(body, &point_body_m);
        let (escape_speed_normal_m_s, escape_speed_min_m_s) =
            crate::surface_map::escape_speeds(body, &point_body_m, &up);
        Ok(Site {
            face,
            point_body_m,
            frame,
            pole_fallback,
            lat_deg,
            lon_deg,
            escape_speed_normal_m_s,
            escape_speed_min_m_s,
        })
    }

    /// The site at planetocentric `lat_deg`, `lon_deg`: the first surface crossed coming in from
    /// outside along the radial line, so on a non-convex body it is the outermost surface.
    pub fn from_lat_lon(
        body: &Body,
        lat_deg: f64,
        lon_deg: f64,
        normal: NormalMode,
    ) -> Result<Site> {
        if !lat_deg.is_finite() || !(-90.0..=90.0).contains(&lat_deg) {
            return Err(DynamicsError::Site(format!(
                "latitude {lat_deg} deg is outside [-90, 90]"
            )));
        }
        if !lon_deg.is_finite() {
            return Err(DynamicsError::Site(format!(
                "longitude {lon_deg} deg is not finite"
            )));
        }
        let d = direction_from_lat_lon(body, lat_deg, lon_deg);
        let reach = body
            .patch
            .as_ref()
            .map_or(0.0, |p| p.bounding_radius_m())
            .max(body.brillouin_radius_m());
        let far = 2.0 * reach + 1.0;
        let origin = Point3::from(d * far);
        let hit = body
            .contact_ray_hit(&origin, &(-d), far)
            .ok_or_else(|| {
                DynamicsError::Site(format!(
                    "no surface along the radial line at latitude {lat_deg} deg, longitude {lon_deg} deg"
                ))
            })?;
        Site::from_surface_point(body, hit.point_m, hit.face, normal)
    }
}

fn check_face(body: &Body, face: usize) -> Result<()> {
    if face >= body.contact_face_count() {
        return Err(DynamicsError::Site(format!(
            "face {face} does not exist (the contact surface has {} faces)",
            body.contact_face_count()
        )));
    }
    Ok(())
}
