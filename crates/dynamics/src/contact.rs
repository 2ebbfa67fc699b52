//! A separate contact shape: the surface particles hit, bounce on and are launched from, while
//! gravity comes from the gravity shape.
//!
//! Two kinds ([`ContactShape`]):
//!
//! - **Global**: a closed model of the whole body (e.g. finer than the gravity shape). It
//!   replaces the gravity shape for every geometric use: impacts, bounces, sites, shadows,
//!   pictures, surface maps. It should describe the same body: [`check_same_body`] compares
//!   volume and centre of mass with the gravity shape and returns a warning beyond
//!   [`SAME_BODY_TOLERANCE`].
//! - **Patch**: an open terrain surface over part of the body ([`ShapeModel::new_patch`]).
//!   Contacts within its *footprint* use the patch; elsewhere the gravity (or global) shape.
//!
//! **Footprint.** A body-frame point `p` lies within the patch's footprint when the ray from the
//! body-frame origin (the gravity shape's centre of mass after recentring) through `p`, going
//! outward without end, meets the patch. So the footprint is the cone of directions the patch
//! covers as seen from the centre of mass; a patch that folds over itself radially (an overhang)
//! covers those directions once, by its outermost sheet first. A hit on the body shape counts
//! only outside the footprint; inside it, only the patch counts (above or below the body shape).
//!
//! Both kinds are placed in the body frame with the gravity shape's recentring offset, so the
//! files share one frame. Face numbers of the contact surface: `0 .. shape.face_count()` are the
//! body shape's, then the patch's faces follow (`shape.face_count() + k` is patch face `k`).

use std::sync::Arc;

use nalgebra::{Point3, Unit, Vector3};
use spinfall_gravity::{MassProperties, ShapeModel, SurfaceHit};

use crate::body::Body;

/// Relative tolerance of [`check_same_body`]: the volumes may differ by this fraction of the
/// gravity shape's volume, and the centres of mass by this fraction of its equivalent radius.
/// 1 % is a rule of thumb (common practice for models of one body at different resolutions;
/// a 1 % volume change is about a 0.3 % change of the mean radius).
pub const SAME_BODY_TOLERANCE: f64 = 0.01;

/// A contact shape and how it is used.
#[derive(Debug, Clone)]
pub enum ContactShape {
    /// A closed model of the whole body, used for all geometry.
    Global(Arc<ShapeModel>),
    /// An open terrain patch, used within its footprint.
    Patch(Arc<ShapeModel>),
}

/// A warning when a global contact shape does not describe the same body as the gravity shape
/// (volume or centre of mass beyond [`SAME_BODY_TOLERANCE`]); `None` when it does.
pub fn check_same_body(gravity: &MassProperties, contact: &MassProperties) -> Option<String> {
    let dv = (contact.volume_m3 - gravity.volume_m3) / gravity.volume_m3;
    let dc_m = (contact.center_of_mass_m - gravity.center_of_mass_m).norm();
    let r = gravity.equivalent_radius_m;
    let tol = SAME_BODY_TOLERANCE;
    if dv.abs() <= tol && dc_m <= tol * r && dv.is_finite() && dc_m.is_finite() {
        return None;
    }
    Some(format!(
        "the contact shape may not describe the same body as the gravity shape: its volume \
         differs by {:+.2} % and its centre of mass lies {dc_m:.3} m ({:.2} % of the \
         equivalent radius {r:.1} m) from the gravity shape's; the tolerance is {:.0} % for \
         both. Contacts use the contact shape, gravity the gravity shape.",
        100.0 * dv,
        100.0 * dc_m / r,
        100.0 * tol
    ))
}

impl Body {
    /// This body with `contact` as its contact shape (already placed in the body frame).
    pub fn with_contact(mut self, contact: ContactShape) -> Body {
        match contact {
            ContactShape::Global(shape) => {
                let gravity_shape = std::mem::replace(&mut self.shape, shape);
                self.gravity_shape.get_or_insert(gravity_shape);
                self.patch = None;
            }
            ContactShape::Patch(patch) => self.patch = Some(patch),
        }
        self
    }

    /// Number of faces of the contact surface (body shape, then patch).
    pub fn contact_face_count(&self) -> usize {
        self.shape.face_count() + self.patch.as_ref().map_or(0, |p| p.face_count())
    }

    /// Which surface face `face` of the contact surface is on, and its index there.
    fn locate(&self, face: usize) -> (&ShapeModel, usize) {
        let n = self.shape.face_count();
        match &self.patch {
            Some(patch) if face >= n => (patch, face - n),
            _ => (&self.shape, face),
        }
    }

    /// Outward normal of contact face `face`. Panics if `face >= contact_face_count()`.
    pub fn contact_face_normal(&self, face: usize) -> Unit<Vector3<f64>> {
        let (s, f) = self.locate(face);
        s.face_normal(f)
    }

    /// Centroid of contact face `face`, m. Panics if out of range.
    pub fn contact_face_centroid(&self, face: usize) -> Point3<f64> {
        let (s, f) = self.locate(face);
        s.face_centroid(f)
    }

    /// Area of contact face `face`, m². Panics if out of range.
    pub fn contact_face_area_m2(&self, face: usize) -> f64 {
        let (s, f) = self.locate(face);
        s.face_area_m2(f)
    }

    /// Neighbours of contact face `face` in the contact numbering (`usize::MAX` across a
    /// patch's boundary). Panics if out of range.
    pub fn contact_face_neighbours(&self, face: usize) -> [usize; 3] {
        let n = self.shape.face_count();
        let (s, f) = self.locate(face);
        let shift = if face >= n { n } else { 0 };
        s.face_neighbours(f)
            .map(|g| if g == usize::MAX { g } else { g + shift })
    }

    /// Whether `p_body_m` lies within the patch's footprint (see the module documentation);
    /// false without a patch.
    pub fn in_patch_footprint(&self, p_body_m: &Point3<f64>) -> bool {
        let Some(patch) = &self.patch else {
            return false;
        };
        let r = p_body_m.coords.norm();
        if !(r > 0.0 && r.is_finite()) {
            return false;
        }
        let dir = p_body_m.coords / r;
        let reach = patch.bounding_radius_m() + 1.0;
        patch
            .ray_first_hit(&Point3::origin(), &dir, reach)
            .is_some()
    }

    /// First point where the ray `origin + t dir`, `0 <= t <= max_t`, meets the contact
    /// surface: the patch, or the body shape outside the patch's footprint. The face is in the
    /// contact numbering. As [`ShapeModel::ray_first_hit`] otherwise.
    pub fn contact_ray_hit(
        &self,
        origin: &Point3<f64>,
        dir: &Vector3<f64>,
        max_t: f64,
    ) -> Option<SurfaceHit> {
        let Some(patch) = &self.patch else {
            return self.shape.ray_first_hit(origin, dir, max_t);
        };
        let on_patch = patch.ray_first_hit(origin, dir, max_t).map(|mut h| {
            h.face += self.shape.face_count();
            h
        });
        // The first body-shape hit outside the footprint, stepping past those inside it.
        let len = dir.norm();
        let mut t0 = 0.0;
        let mut on_body = None;
        for _ in 0..64 {
            let start = origin + dir * t0;
            let Some(mut h) = self.shape.ray_first_hit(&start, dir, max_t - t0) else {
                break;
            };
            h.t += t0;
            if !self.in_patch_footprint(&h.point_m) {
                on_body = Some(h);
                break;
            }
            // Step a micrometre past the hit (in units of dir).
            t0 = h.t + 1e-6 / len.max(f64::MIN_POSITIVE);
            if t0 > max_t {
                break;
            }
        }
        match (on_patch, on_body) {
            (Some(a), Some(b)) => Some(if a.t <= b.t { a } else { b }),
            (a, b) => a.or(b),
        }
    }

    /// First point where the segment `a -> b` meets the contact surface, `t` in [0, 1].
    pub fn contact_segment_hit(&self, a: &Point3<f64>, b: &Point3<f64>) -> Option<SurfaceHit> {
        self.contact_ray_hit(a, &(b - a), 1.0)
    }
}
