//! A validated shape model: the mesh, its per-face geometry, mass properties and BVH.

use std::fmt;
use std::sync::Arc;

use nalgebra::{Point3, Unit, Vector3};

use crate::error::Result;
use crate::mass::MassProperties;
use crate::mesh::{LengthUnit, Mesh};
use crate::query::{FaceBvh, SurfaceHit};
use crate::validate::{Warning, validate};

/// A closed, outward-oriented triangle mesh in metres with everything the rest of Spinfall asks
/// of it: face normals, centroids and areas, area-weighted vertex normals, edge neighbours, mass
/// properties and a BVH for ray, segment, nearest-point and inside queries.
///
/// Cheap to clone (the data sit behind an `Arc`); `Send + Sync`.
#[derive(Clone)]
pub struct ShapeModel {
    inner: Arc<Inner>,
}

struct Inner {
    mesh: Mesh,
    normals: Vec<Unit<Vector3<f64>>>,
    centroids_m: Vec<Point3<f64>>,
    areas_m2: Vec<f64>,
    vertex_normals: Vec<Unit<Vector3<f64>>>,
    neighbours: Vec<[usize; 3]>,
    mass: MassProperties,
    bvh: FaceBvh,
    bounding_radius_m: f64,
    /// An open terrain patch rather than a closed body.
    patch: bool,
}

impl fmt::Debug for ShapeModel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("ShapeModel")
            .field("vertex_count", &self.vertex_count())
            .field("face_count", &self.face_count())
            .field("volume_m3", &self.inner.mass.volume_m3)
            .field("bounding_radius_m", &self.inner.bounding_radius_m)
            .finish()
    }
}

impl ShapeModel {
    /// Validates `mesh` (closed, manifold, consistently oriented, non-degenerate), repairs what
    /// can be repaired (merges duplicate vertices, drops zero-area faces, flips faces that
    /// disagree with their neighbours, flips an inward mesh, removes unused vertices — each
    /// reported as a [`Warning`]) and builds the model: normals, neighbours, mass properties
    /// and the BVH.
    ///
    /// Faces that cross each other (a self-intersecting surface, e.g. two overlapping boxes
    /// glued into one file) are refused too, naming the first crossing pair: such a mesh
    /// double-counts the mass of the overlap. The test uses the BVH (pairs of faces whose boxes
    /// overlap, then exact segment–triangle tests); faces that share an edge are not tested
    /// against each other, and coplanar overlaps are not detected.
    ///
    /// # Errors
    /// [`crate::GravityError::InvalidMesh`] naming the problem and one face, edge or vertex.
    pub fn new(mesh: Mesh) -> Result<(ShapeModel, Vec<Warning>)> {
        let validated = validate(mesh)?;
        let shape = ShapeModel::build(validated.mesh, validated.neighbours);
        if let Some((a, b)) = shape.inner.bvh.first_crossing_pair(&shape.inner.mesh) {
            let name = |f: usize| validated.original_face.get(f).copied().unwrap_or(f);
            return Err(crate::GravityError::InvalidMesh(format!(
                "self-intersecting surface: face {} and face {} (0-based) cross each other; a \
                 shape model must be one closed surface that does not pass through itself",
                name(a),
                name(b)
            )));
        }
        crate::validate::check_single_shell(&shape.inner.neighbours, &validated.original_face)?;
        Ok((shape, validated.warnings))
    }

    /// Validates an open terrain patch and builds it: a manifold, consistently oriented surface
    /// with at least one boundary edge, one connected piece, no crossing faces, turned to face
    /// away from `centre_m` (the body's centre of mass in the file's frame). Repairs are those
    /// of [`ShapeModel::new`].
    ///
    /// A patch answers ray, segment and nearest-point queries like a body; it encloses nothing,
    /// so [`ShapeModel::contains`] is always false and its [`ShapeModel::mass_properties`] are
    /// those of the cones from the origin over its faces (not a body's). Neighbour slots across
    /// boundary edges hold `usize::MAX`.
    ///
    /// # Errors
    /// [`crate::GravityError::InvalidMesh`] naming the problem: a closed surface (no boundary),
    /// an edge shared by more than two faces, a one-sided surface, several pieces, crossing
    /// faces, a patch seen edge-on from `centre_m`.
    pub fn new_patch(mesh: Mesh, centre_m: Point3<f64>) -> Result<(ShapeModel, Vec<Warning>)> {
        if !centre_m.coords.iter().all(|c| c.is_finite()) {
            return Err(crate::GravityError::InvalidMesh(
                "the centre a terrain patch faces away from is not finite".into(),
            ));
        }
        let validated = crate::validate::validate_patch(mesh, centre_m)?;
        let mut shape = ShapeModel::build(validated.mesh, validated.neighbours);
        if let Some((a, b)) = shape.inner.bvh.first_crossing_pair(&shape.inner.mesh) {
            let name = |f: usize| validated.original_face.get(f).copied().unwrap_or(f);
            return Err(crate::GravityError::InvalidMesh(format!(
                "self-intersecting terrain patch: face {} and face {} (0-based) cross each other",
                name(a),
                name(b)
            )));
        }
        crate::validate::check_single_shell(&shape.inner.neighbours, &validated.original_face)
            .map_err(|_| {
                crate::GravityError::InvalidMesh(
                    "the terrain patch is several separate pieces; a patch must be one connected \
                     surface"
                        .into(),
                )
            })?;
        if let Some(inner) = Arc::get_mut(&mut shape.inner) {
            inner.patch = true;
        }
        Ok((shape, validated.warnings))
    }

    /// Whether this is an open terrain patch ([`ShapeModel::new_patch`]) rather than a body.
    pub fn is_patch(&self) -> bool {
        self.inner.patch
    }

    /// The same surface moved by `offset_m` (a patch stays a patch).
    pub fn translated(&self, offset_m: &Vector3<f64>) -> ShapeModel {
        let mesh = Mesh {
            vertices_m: self
                .inner
                .mesh
                .vertices_m
                .iter()
                .map(|p| p + offset_m)
                .collect(),
            faces: self.inner.mesh.faces.clone(),
        };
        let mut moved = ShapeModel::build(mesh, self.inner.neighbours.clone());
        if let Some(inner) = Arc::get_mut(&mut moved.inner) {
            inner.patch = self.inner.patch;
        }
        moved
    }

    /// Parses OBJ text in `unit` ([`crate::parse_obj`]) and builds the model; the warnings of
    /// both steps are returned together.
    ///
    /// # Errors
    /// Parse errors with their line, then the errors of [`ShapeModel::new`].
    pub fn from_obj(
        reader: impl std::io::BufRead,
        unit: LengthUnit,
    ) -> Result<(ShapeModel, Vec<Warning>)> {
        let (mesh, mut warnings) = crate::obj::parse_obj(reader, unit)?;
        let (shape, more) = ShapeModel::new(mesh)?;
        warnings.extend(more);
        Ok((shape, warnings))
    }

    /// Reads a shape model in any supported format ([`crate::parse_shape`]) and builds it. The
    /// format comes from `name`'s extension, confirmed by the content
    /// ([`crate::ShapeFormat::resolve`]).
    ///
    /// # Errors
    /// A format that disagrees with the name, parse errors with their line or byte offset, then
    /// the errors of [`ShapeModel::new`].
    pub fn from_named_bytes(
        name: &str,
        bytes: &[u8],
        unit: LengthUnit,
    ) -> Result<(ShapeModel, Vec<Warning>)> {
        let format = crate::ShapeFormat::resolve(name, bytes)?;
        let (mesh, mut warnings) = crate::parse_shape(bytes, format, unit)?;
        let (shape, more) = ShapeModel::new(mesh)?;
        warnings.extend(more);
        Ok((shape, warnings))
    }

    fn build(mesh: Mesh, neighbours: Vec<[usize; 3]>) -> ShapeModel {
        let mut normals = Vec::with_capacity(mesh.faces.len());
        let mut centroids_m = Vec::with_capacity(mesh.faces.len());
        let mut areas_m2 = Vec::with_capacity(mesh.faces.len());
        let mut vertex_sums = vec![Vector3::zeros(); mesh.vertices_m.len()];
        for (f, face) in mesh.faces.iter().enumerate() {
            let [a, b, c] = mesh.triangle(f);
            let cross = (b - a).cross(&(c - a));
            // Validation guarantees non-zero area, so the normal exists.
            normals.push(Unit::new_normalize(cross));
            centroids_m.push(Point3::from((a.coords + b.coords + c.coords) / 3.0));
            areas_m2.push(cross.norm() / 2.0);
            for &v in face {
                // |cross| = 2 area: area-weighted sum of face normals.
                vertex_sums[v as usize] += cross;
            }
        }
        let vertex_normals = vertex_sums
            .iter()
            .map(|s| Unit::try_new(*s, 0.0).unwrap_or_else(|| Unit::new_unchecked(Vector3::z())))
            .collect();
        let mass = MassProperties::of_mesh(&mesh);
        let bvh = FaceBvh::build(&mesh);
        let bounding_radius_m = mesh
            .vertices_m
            .iter()
            .map(|p| p.coords.norm())
            .fold(0.0, f64::max);
        ShapeModel {
            inner: Arc::new(Inner {
                mesh,
                normals,
                centroids_m,
                areas_m2,
                vertex_normals,
                neighbours,
                mass,
                bvh,
                bounding_radius_m,
                patch: false,
            }),
        }
    }

    /// The validated mesh (metres, outward-oriented).
    pub fn mesh(&self) -> &Mesh {
        &self.inner.mesh
    }

    /// Number of triangles.
    pub fn face_count(&self) -> usize {
        self.inner.mesh.faces.len()
    }

    /// Number of vertices.
    pub fn vertex_count(&self) -> usize {
        self.inner.mesh.vertices_m.len()
    }

    /// Outward unit normal of face `face`. Panics if `face >= face_count()`.
    pub fn face_normal(&self, face: usize) -> Unit<Vector3<f64>> {
        self.inner.normals[face]
    }

    /// Centroid of face `face`, m. Panics if `face >= face_count()`.
    pub fn face_centroid(&self, face: usize) -> Point3<f64> {
        self.inner.centroids_m[face]
    }

    /// Area of face `face`, m^2. Panics if `face >= face_count()`.
    pub fn face_area_m2(&self, face: usize) -> f64 {
        self.inner.areas_m2[face]
    }

    /// Area-weighted outward vertex normals, one per vertex.
    pub fn vertex_normals(&self) -> &[Unit<Vector3<f64>>] {
        &self.inner.vertex_normals
    }

    /// The faces across the edges a-b, b-c and c-a of face `face`. Panics if out of range.
    pub fn face_neighbours(&self, face: usize) -> [usize; 3] {
        self.inner.neighbours[face]
    }

    /// Mass properties of the homogeneous body (per unit density).
    pub fn mass_properties(&self) -> &MassProperties {
        &self.inner.mass
    }

    /// The same shape translated so its centre of mass is at the origin.
    pub fn recentered(&self) -> ShapeModel {
        let com = self.inner.mass.center_of_mass_m.coords;
        let mesh = Mesh {
            vertices_m: self.inner.mesh.vertices_m.iter().map(|p| p - com).collect(),
            faces: self.inner.mesh.faces.clone(),
        };
        let mut moved = ShapeModel::build(mesh, self.inner.neighbours.clone());
        if let Some(inner) = Arc::get_mut(&mut moved.inner) {
            inner.patch = self.inner.patch;
        }
        moved
    }

    /// Largest distance of a vertex from the origin, m.
    pub fn bounding_radius_m(&self) -> f64 {
        self.inner.bounding_radius_m
    }

    /// First point where the ray `origin + t dir`, `0 <= t <= max_t`, meets the surface; `t` is
    /// in units of `dir` (which need not be unit). None for a miss, a zero or non-finite
    /// direction, or a negative `max_t`.
    ///
    /// A ray that starts on the surface (a launch site) may report that face at `t ≈ 0`:
    /// start a hair off the surface, or skip hits with `front_face == false`, when that matters.
    /// Edges and vertices are hit by at least one of their faces (barycentric slack 1e-10).
    pub fn ray_first_hit(
        &self,
        origin: &Point3<f64>,
        dir: &Vector3<f64>,
        max_t: f64,
    ) -> Option<SurfaceHit> {
        let inner = &self.inner;
        inner
            .bvh
            .first_hit(&inner.mesh, &inner.normals, origin, dir, max_t)
    }

    /// First point where the segment `a -> b` meets the surface, `t` in [0, 1] along it.
    pub fn segment_first_hit(&self, a: &Point3<f64>, b: &Point3<f64>) -> Option<SurfaceHit> {
        self.ray_first_hit(a, &(b - a), 1.0)
    }

    /// The closest point of the surface to `p`; `t` is the distance in metres. For a
    /// non-finite `p` the hit has `t = NaN` and face 0.
    pub fn nearest_surface_point(&self, p: &Point3<f64>) -> SurfaceHit {
        let inner = &self.inner;
        inner
            .bvh
            .nearest(&inner.mesh, &inner.normals, p)
            .unwrap_or(SurfaceHit {
                t: f64::NAN,
                point_m: *p,
                face: 0,
                front_face: false,
            })
    }

    /// Whether `p` is inside the body. Points on the surface may go either way; a non-finite
    /// point is outside.
    pub fn contains(&self, p: &Point3<f64>) -> bool {
        !self.inner.patch && self.inner.bvh.contains(&self.inner.mesh, p)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shape_model_is_send_sync_clone() {
        fn check<T: Send + Sync + Clone>() {}
        check::<ShapeModel>();
    }
}
