//! The camera: a thin wrapper of three-d's CPU-side camera with this crate's conventions.
//!
//! three-d counts pixels from the bottom-left in `f32` with cgmath types; this wrapper takes and
//! returns top-left pixel coordinates and nalgebra `f64` world positions, converting once here.

use nalgebra::{Matrix4, Point3, Vector3};
use three_d::{Deg, InnerSpace, Vec3, Viewport};

/// Smallest distance between eye and target, metres (keeps the view matrix defined).
const MIN_DISTANCE_M: f64 = 1e-6;

/// A perspective or orthographic camera looking from `eye` at `target`.
#[derive(Clone, Debug)]
pub struct Camera {
    inner: three_d::Camera,
    width_px: u32,
    height_px: u32,
    kind: Kind,
}

/// The projection and its size parameter.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    Perspective { fov_y_deg: f64 },
    Orthographic { height_m: f64 },
}

/// The transforms the rasterizer needs, in `f64`, derived from a [`Camera`].
#[derive(Clone, Copy, Debug)]
pub(crate) struct Projection {
    /// World to clip space (OpenGL conventions).
    pub clip_from_world: Matrix4<f64>,
    /// World to view space (camera looks down -z).
    pub view_from_world: Matrix4<f64>,
    /// Whether the projection is perspective.
    pub perspective: bool,
    /// Nearest accepted view depth for perspective projections, metres.
    pub near_m: f64,
}

fn v3(v: &Vector3<f64>) -> Vec3 {
    Vec3::new(v.x as f32, v.y as f32, v.z as f32)
}

fn p3(p: &Point3<f64>) -> Vec3 {
    Vec3::new(p.x as f32, p.y as f32, p.z as f32)
}

fn to_point(v: Vec3) -> Point3<f64> {
    Point3::new(v.x as f64, v.y as f64, v.z as f64)
}

fn to_vector(v: Vec3) -> Vector3<f64> {
    Vector3::new(v.x as f64, v.y as f64, v.z as f64)
}

fn to_matrix(m: three_d::Mat4) -> Matrix4<f64> {
    // cgmath is column-major: m[c][r].
    let mut out = Matrix4::zeros();
    for c in 0..4 {
        for r in 0..4 {
            out[(r, c)] = m[c][r] as f64;
        }
    }
    out
}

/// Replaces a degenerate or non-finite up vector by one not parallel to the view direction.
fn sane_up(eye: &Point3<f64>, target: &Point3<f64>, up: &Vector3<f64>) -> Vector3<f64> {
    let dir = target - eye;
    let ok = up.iter().all(|c| c.is_finite()) && up.norm() > 0.0;
    if ok && dir.norm() > 0.0 && up.normalize().cross(&dir.normalize()).norm() > 1e-6 {
        return up.normalize();
    }
    for cand in [Vector3::z(), Vector3::y(), Vector3::x()] {
        if dir.norm() == 0.0 || cand.cross(&dir.normalize()).norm() > 0.1 {
            return cand;
        }
    }
    Vector3::z()
}

fn sane_eye(eye: Point3<f64>, target: &Point3<f64>) -> Point3<f64> {
    if !eye.iter().all(|c| c.is_finite()) || (eye - target).norm() < MIN_DISTANCE_M {
        target + Vector3::new(0.0, 0.0, 1.0)
    } else {
        eye
    }
}

fn sane_target(target: Point3<f64>) -> Point3<f64> {
    if target.iter().all(|c| c.is_finite()) {
        target
    } else {
        Point3::origin()
    }
}

impl Camera {
    /// A perspective camera with vertical field of view `fov_y_deg` (clamped to 1..=170 degrees).
    /// Invalid input (NaN, eye at target, up along the view) is replaced by safe defaults.
    pub fn perspective(
        width_px: u32,
        height_px: u32,
        eye: Point3<f64>,
        target: Point3<f64>,
        up: Vector3<f64>,
        fov_y_deg: f64,
    ) -> Camera {
        let target = sane_target(target);
        let eye = sane_eye(eye, &target);
        let up = sane_up(&eye, &target, &up);
        let fov = if fov_y_deg.is_finite() {
            fov_y_deg.clamp(1.0, 170.0)
        } else {
            45.0
        };
        let (w, h) = (width_px.max(1), height_px.max(1));
        let dist = (eye - target).norm();
        let inner = three_d::Camera::new_perspective(
            Viewport::new_at_origo(w, h),
            p3(&eye),
            p3(&target),
            v3(&up),
            Deg(fov as f32),
            (dist * 1e-3) as f32,
            (dist * 1e3) as f32,
        );
        Camera {
            inner,
            width_px: w,
            height_px: h,
            kind: Kind::Perspective { fov_y_deg: fov },
        }
    }

    /// An orthographic camera whose view is `height_m` tall (at any depth).
    pub fn orthographic(
        width_px: u32,
        height_px: u32,
        eye: Point3<f64>,
        target: Point3<f64>,
        up: Vector3<f64>,
        height_m: f64,
    ) -> Camera {
        let target = sane_target(target);
        let eye = sane_eye(eye, &target);
        let up = sane_up(&eye, &target, &up);
        let dist = (eye - target).norm();
        let height_m = if height_m.is_finite() && height_m > 0.0 {
            height_m
        } else {
            1.0
        };
        let (w, h) = (width_px.max(1), height_px.max(1));
        // three-d scales the orthographic height by the eye-target distance.
        let inner = three_d::Camera::new_orthographic(
            Viewport::new_at_origo(w, h),
            p3(&eye),
            p3(&target),
            v3(&up),
            (height_m / dist) as f32,
            (-dist * 1e3) as f32,
            (dist * 1e3) as f32,
        );
        Camera {
            inner,
            width_px: w,
            height_px: h,
            kind: Kind::Orthographic { height_m },
        }
    }

    /// Whether this is a perspective camera.
    pub fn is_perspective(&self) -> bool {
        matches!(self.kind, Kind::Perspective { .. })
    }

    /// Vertical field of view in degrees (perspective), or `None` for orthographic cameras.
    pub fn fov_y_deg(&self) -> Option<f64> {
        match self.kind {
            Kind::Perspective { fov_y_deg } => Some(fov_y_deg),
            Kind::Orthographic { .. } => None,
        }
    }

    /// Height of the orthographic view in metres, or `None` for perspective cameras.
    pub fn ortho_height_m(&self) -> Option<f64> {
        match self.kind {
            Kind::Orthographic { height_m } => Some(height_m),
            Kind::Perspective { .. } => None,
        }
    }

    /// Viewport width in pixels.
    pub fn width_px(&self) -> u32 {
        self.width_px
    }

    /// Viewport height in pixels.
    pub fn height_px(&self) -> u32 {
        self.height_px
    }

    /// Changes the viewport size (the vertical extent of the view is kept).
    pub fn set_viewport(&mut self, width_px: u32, height_px: u32) {
        let (w, h) = (width_px.max(1), height_px.max(1));
        self.width_px = w;
        self.height_px = h;
        self.inner.set_viewport(Viewport::new_at_origo(w, h));
    }

    /// Changes the viewport size so the new view contains everything the old one showed (the
    /// rectangle at the target's depth, centred): a wider viewport keeps the vertical extent
    /// and shows more at the sides; a narrower one widens the view vertically instead of
    /// cutting the sides off. Exports use this to frame what the app's view shows.
    pub fn set_viewport_containing(&mut self, width_px: u32, height_px: u32) {
        let old_aspect = self.width_px as f64 / self.height_px as f64;
        let (w, h) = (width_px.max(1), height_px.max(1));
        let new_aspect = w as f64 / h as f64;
        let grow = (old_aspect / new_aspect).max(1.0);
        match &mut self.kind {
            Kind::Perspective { fov_y_deg } => {
                let half = (fov_y_deg.to_radians() / 2.0).tan() * grow;
                *fov_y_deg = (2.0 * half.atan()).to_degrees().clamp(1.0, 170.0);
            }
            Kind::Orthographic { height_m } => *height_m *= grow,
        }
        self.set_viewport(w, h);
        self.refresh_projection();
    }

    /// The eye position.
    pub fn eye(&self) -> Point3<f64> {
        to_point(self.inner.position())
    }

    /// The target (centre of the view, pivot of [`Camera::orbit`]).
    pub fn target(&self) -> Point3<f64> {
        to_point(self.inner.target())
    }

    /// The up vector as given (not necessarily orthogonal to the view direction).
    pub fn up(&self) -> Vector3<f64> {
        to_vector(self.inner.up())
    }

    /// Unit view direction (from eye to target).
    pub fn view_direction(&self) -> Vector3<f64> {
        (self.target() - self.eye()).normalize()
    }

    /// Unit vector pointing right on screen.
    pub fn right_direction(&self) -> Vector3<f64> {
        self.view_direction().cross(&self.up()).normalize()
    }

    /// Unit vector pointing up on screen (orthogonal to the view direction).
    pub fn up_on_screen(&self) -> Vector3<f64> {
        self.right_direction().cross(&self.view_direction())
    }

    /// Distance from eye to target, metres.
    pub fn distance_m(&self) -> f64 {
        (self.target() - self.eye()).norm()
    }

    fn set_view(&mut self, eye: Point3<f64>, target: Point3<f64>, up: Vector3<f64>) {
        if !eye.iter().chain(target.iter()).all(|c| c.is_finite())
            || (eye - target).norm() < MIN_DISTANCE_M
        {
            return;
        }
        let up = sane_up(&eye, &target, &up);
        self.inner.set_view(p3(&eye), p3(&target), v3(&up));
        self.refresh_projection();
    }

    /// Re-applies the projection after the eye-target distance or the kind changed.
    fn refresh_projection(&mut self) {
        let dist = self.distance_m().max(MIN_DISTANCE_M);
        match self.kind {
            Kind::Orthographic { height_m } => self.inner.set_orthographic_projection(
                (height_m / dist) as f32,
                (-dist * 1e3) as f32,
                (dist * 1e3) as f32,
            ),
            Kind::Perspective { fov_y_deg } => self.inner.set_perspective_projection(
                Deg(fov_y_deg as f32),
                (dist * 1e-3) as f32,
                (dist * 1e3) as f32,
            ),
        }
    }

    /// Sets eye, target and up at once (invalid input is ignored).
    pub fn look_at(&mut self, eye: Point3<f64>, target: Point3<f64>, up: Vector3<f64>) {
        self.set_view(eye, target, up);
    }

    /// Rotates the eye about the target by a mouse drag of `(dx_px, dy_px)` (screen pixels, y
    /// down), keeping the up vector fixed and the distance to the target: the near side of the
    /// scene follows the drag (as three-d's orbit control does). A drag across the viewport
    /// height turns by about 180 degrees; the view never flips over the poles of `up`.
    pub fn orbit(&mut self, dx_px: f64, dy_px: f64) {
        if !(dx_px.is_finite() && dy_px.is_finite()) {
            return;
        }
        let rad_per_px = std::f64::consts::PI / self.height_px as f64;
        let target = self.inner.target();
        let dist = self.distance_m();
        let up = self.up();
        self.inner.rotate_around_with_fixed_up(
            target,
            (dx_px * rad_per_px) as f32,
            (dy_px * rad_per_px) as f32,
        );
        // Re-impose the exact distance (f32 round-off) and the up vector.
        let t = self.target();
        let dir = self.eye() - t;
        if dir.norm() > 0.0 && dir.iter().all(|c| c.is_finite()) {
            self.set_view(t + dir.normalize() * dist, t, up);
        }
    }

    /// Moves eye and target together so that the scene follows a drag of `(dx_px, dy_px)`.
    pub fn pan(&mut self, dx_px: f64, dy_px: f64) {
        if !(dx_px.is_finite() && dy_px.is_finite()) {
            return;
        }
        let mpp = self.metres_per_pixel_at_target();
        let shift = -self.right_direction() * dx_px * mpp + self.up_on_screen() * dy_px * mpp;
        let (eye, target) = (self.eye() + shift, self.target() + shift);
        self.set_view(eye, target, self.up());
    }

    /// Zooms by `factor` (> 1 magnifies): a perspective camera moves towards the target, dividing
    /// the distance by `factor`; an orthographic one divides its view height by `factor`.
    pub fn zoom(&mut self, factor: f64) {
        if !(factor.is_finite() && factor > 0.0) {
            return;
        }
        match &mut self.kind {
            Kind::Orthographic { height_m } => {
                *height_m = (*height_m / factor).max(MIN_DISTANCE_M);
                self.refresh_projection();
            }
            Kind::Perspective { .. } => {
                let t = self.target();
                let dist = (self.distance_m() / factor).max(MIN_DISTANCE_M * 10.0);
                let eye = t - self.view_direction() * dist;
                let up = self.inner.up();
                self.inner.set_view(p3(&eye), p3(&t), up);
                self.refresh_projection();
            }
        }
    }

    /// Aims at `center` and sets the distance (perspective) or view height (orthographic) so that
    /// a sphere of `radius_m` fits inside the view with a small margin, keeping the direction.
    pub fn fit_to_bounds(&mut self, center: Point3<f64>, radius_m: f64) {
        if !(center.iter().all(|c| c.is_finite()) && radius_m.is_finite() && radius_m > 0.0) {
            return;
        }
        let dir = self.view_direction();
        let aspect = self.width_px as f64 / self.height_px as f64;
        let margin = 1.08;
        match self.fov_y_deg() {
            Some(fov_y) => {
                let half_y = (fov_y.to_radians() / 2.0).tan();
                let half_min = half_y.min(half_y * aspect);
                // A sphere at distance d subtends asin(r/d): need r/d <= sin(atan(half_min)).
                let sin_half = half_min / (1.0 + half_min * half_min).sqrt();
                let dist = radius_m * margin / sin_half;
                let up = self.inner.up();
                self.inner
                    .set_view(p3(&(center - dir * dist)), p3(&center), up);
                self.refresh_projection();
            }
            None => {
                let height_m = 2.0 * radius_m * margin / aspect.min(1.0);
                let dist = 3.0 * radius_m;
                let up = self.inner.up();
                self.inner
                    .set_view(p3(&(center - dir * dist)), p3(&center), up);
                self.kind = Kind::Orthographic { height_m };
                self.refresh_projection();
            }
        }
    }

    /// The size of one pixel at the target's depth, metres.
    pub fn metres_per_pixel_at_target(&self) -> f64 {
        match self.fov_y_deg() {
            Some(fov) => {
                2.0 * self.distance_m() * (fov.to_radians() / 2.0).tan() / self.height_px as f64
            }
            None => self.ortho_height_m().unwrap_or(1.0) / self.height_px as f64,
        }
    }

    /// The ray through a point of the image, in top-left pixel coordinates (fractional allowed;
    /// pixel `(i, j)` covers `[i, i+1) x [j, j+1)`, so its centre is `(i + 0.5, j + 0.5)`).
    /// Returns the ray origin and unit direction in world coordinates.
    pub fn ray_at_pixel(&self, x_px: f64, y_px: f64) -> (Point3<f64>, Vector3<f64>) {
        // three-d counts from the bottom-left.
        let pixel = (x_px as f32, (self.height_px as f64 - y_px) as f32);
        let origin = to_point(self.inner.position_at_pixel(pixel));
        let dir = self.inner.view_direction_at_pixel(pixel);
        let dir = if dir.magnitude() > 0.0 {
            to_vector(dir.normalize())
        } else {
            self.view_direction()
        };
        (origin, dir)
    }

    pub(crate) fn projection(&self) -> Projection {
        Projection {
            clip_from_world: to_matrix(self.inner.projection()) * to_matrix(self.inner.view()),
            view_from_world: to_matrix(self.inner.view()),
            perspective: self.is_perspective(),
            near_m: self.distance_m() * 1e-3,
        }
    }

    /// The clip-space transform (OpenGL conventions) `projection * view`, in `f64`.
    pub fn view_projection(&self) -> Matrix4<f64> {
        self.projection().clip_from_world
    }

    /// Projects a world point to top-left pixel coordinates and its depth in metres along the
    /// view direction from the eye. `None` if the point is at or behind the eye of a perspective
    /// camera (or not finite).
    pub fn project(&self, p: &Point3<f64>) -> Option<(f64, f64, f64)> {
        let proj = self.projection();
        let c = proj.clip_from_world * p.to_homogeneous();
        let depth = (p - self.eye()).dot(&self.view_direction());
        if proj.perspective && c.w <= 0.0 {
            return None;
        }
        let w = if proj.perspective { c.w } else { 1.0 };
        let x = (c.x / w * 0.5 + 0.5) * self.width_px as f64;
        let y = (0.5 - c.y / w * 0.5) * self.height_px as f64;
        (x.is_finite() && y.is_finite() && depth.is_finite()).then_some((x, y, depth))
    }

    /// The wrapped three-d camera (bottom-left pixel conventions, `f32`).
    pub fn three_d(&self) -> &three_d::Camera {
        &self.inner
    }
}
