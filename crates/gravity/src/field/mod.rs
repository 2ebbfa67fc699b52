//! The exact gravity field of a constant-density polyhedron (Werner & Scheeres 1997).
//!
//! [`PolyhedronGravity`] precomputes, once per shape, the face normals `n_f` (face dyads
//! `F_f = n_f n_f^T`) and the symmetric edge dyads `E_e = n_A n_A12^T + n_B n_B21^T`, stored as
//! structure-of-arrays padded to a multiple of four, then evaluates for a field point `p`
//! (with `r = vertex - p`, `omega_f` the signed solid angle of face `f`, `L_e` the edge log):
//!
//! - potential (positive, `U -> GM/r` far away):
//!   `U = G rho / 2 [ sum_e r_e.E_e.r_e L_e - sum_f r_f.F_f.r_f omega_f ]`
//! - acceleration `grad U = -G rho [ sum_e E_e r_e L_e - sum_f F_f r_f omega_f ]`
//! - gradient tensor `G rho [ sum_e E_e L_e - sum_f F_f omega_f ]`
//! - Laplacian `-G rho sum_f omega_f`: `-4 pi G rho` inside, `0` outside, `-2 pi G rho` on a
//!   face (and the interior solid-angle fraction on edges and corners).
//!
//! Points exactly on a face, an edge or a vertex give finite values equal to the limits from
//! nearby points (see the `direct` module notes); only the gradient tensor, which really
//! diverges logarithmically on an edge, is returned as a large finite number there.
//!
//! # Far field
//! Far away the face and edge terms are each of size `~r^2` while their total is `~GM/r`, so
//! the direct sum loses digits to cancellation (measured: 4e-12 relative at 16 Brillouin radii,
//! 3e-10 at 64, 1e-6 at 1000, 1e-3 at 10 000). Beyond [`PolyhedronGravity::switch_radius_m`]
//! (16 Brillouin radii about the centre of mass) the field comes instead from a degree-8
//! exterior spherical-harmonic expansion whose moments are integrated exactly from the
//! polyhedron (on first use), with a rigorous truncation bound of 1.6e-11 relative there. The
//! field is thus good to ~1e-11 relative at every distance; the measurements are tabulated in
//! [`exterior`]'s documentation.
//!
//! # Speed
//! The face and edge tables are cut into pieces of [`PIECE_FACES`] faces close together (along
//! a Morton curve through the face centroids, whatever the face order of the file), each with
//! its own vertex list, so a piece's tables and per-vertex scratch stay in a core's L2 cache.
//! Per field point and piece the vertex vectors `r_i` and `|r_i|` are computed once (one square
//! root per vertex) and gathered by faces and edges. The edge log is taken as
//! `L_e = 2 atanh(e / (a + b))` by its series (one division, no log) wherever that converges
//! fast, which is every edge not within a few edge lengths of the point.
//!
//! - Batches ([`PolyhedronGravity::potential_acceleration_batch`]) run the vector lanes over
//!   [`BATCH_BLOCK`] = 8 field points, each face and edge read once per block with its
//!   constants broadcast; groups of up to 64 points go through the mesh piece by piece, in
//!   parallel over groups with rayon. Explicit AVX-512 (eight lanes) or AVX2+FMA (two
//!   four-lane halves) intrinsics on CPUs that have them, chosen at run time with
//!   `multiversion`, else the portable `wide` crate.
//! - One point ([`PolyhedronGravity::potential_acceleration`]) runs eight (AVX-512) or four
//!   (AVX2+FMA, else `wide`) faces or edges at a time; from [`SPLIT_FACE_COUNT`] faces its
//!   pieces are shared out over rayon's threads. A scalar version is kept as the reference.
//!
//! Measured with `cargo bench -p spinfall-gravity --bench field` on icospheres, on a 2-core
//! AMD EPYC (Zen 5, AVX-512) VM shared with other builds (load 1.1-1.5; ranges span two runs),
//! ns per facet per point. Batch: criterion's time for 256 points on both threads, and CPU
//! time per core. One point: criterion's time of [`PolyhedronGravity::potential_acceleration`]
//! (split over both threads from [`SPLIT_FACE_COUNT`] faces) and of the same sums on one
//! thread:
//!
//! | faces   | batch of 256 | batch CPU per core | one point | one point, one thread |
//! |--------:|-------------:|-------------------:|----------:|----------------------:|
//! |   5 120 |      1.7-2.3 |            3.6-4.5 |   7.0-9.6 |              6.9-10.8 |
//! |  81 920 |      1.9-2.2 |            3.8-4.1 |   4.3-6.9 |                8.5-13 |
//! | 327 680 |      1.8-2.1 |                3.7 |    7.8-13 |                 14-19 |
//!
//! Under heavy load (load 5-6, about one core left to the bench) the batch figures were
//! 3.1-3.9 ns. One point on the largest mesh is bound by memory bandwidth (its 47 MB of
//! tables stream from RAM for every point); batches are the way to evaluate many points there.
//! Memory: 145 bytes per facet (all pieces, vertices repeated at piece borders). The exterior
//! expansion is integrated on first use in 0.006 s, 0.07-0.1 s and 0.21-0.23 s for these
//! meshes (adaptive face quadrature, see [`exterior`]).
//!
//! Spinfall is for research and planning, not flight-certified.

#[cfg(target_arch = "x86_64")]
mod avx2;
#[cfg(target_arch = "x86_64")]
mod avx512;
mod block;
mod direct;
pub mod exterior;
mod lanes;
mod mass_spec;
mod simd;
mod tables;

use nalgebra::{Matrix3, Point3, Vector3};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::error::Result;
use crate::mesh::Mesh;
pub use exterior::Exterior;
pub use mass_spec::MassSpec;
use tables::Tables;

/// Newtonian constant of gravitation, m^3 kg^-1 s^-2 (CODATA 2018).
pub const G_SI: f64 = 6.674_30e-11;

/// Everything the field gives at one point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct FieldSample {
    /// Gravitational potential, m^2/s^2, positive (`GM/r` far away).
    pub potential_m2_s2: f64,
    /// Gravitational acceleration (gradient of the potential), m/s^2.
    pub acceleration_m_s2: Vector3<f64>,
    /// Gravity-gradient tensor (second derivatives of the potential), 1/s^2.
    pub gradient_s2: Matrix3<f64>,
    /// Laplacian of the potential, 1/s^2: `-4 pi G rho` inside, 0 outside.
    pub laplacian_s2: f64,
    /// Whether the point is strictly inside the body (see [`PolyhedronGravity::is_inside`]).
    pub inside: bool,
}

/// Which way a field point is evaluated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum FieldMethod {
    /// The exact face/edge sums.
    Direct,
    /// The exterior spherical-harmonic expansion (far from the body).
    Exterior,
}

/// Implementations of the direct face/edge sums (all give the same field).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum DirectKernel {
    /// The fastest for this CPU (what the field uses).
    Auto,
    /// Portable scalar loop, the reference.
    Scalar,
    /// `wide::f64x4` explicit SIMD as compiled (SSE2 on a default x86-64 build).
    Wide,
    /// Chosen at run time by CPU features: explicit AVX-512 or AVX2+FMA intrinsics on x86-64
    /// CPUs that have them, else `wide`.
    Compiled,
}

/// Multiple of the Brillouin radius beyond which the exterior expansion replaces the direct sum.
///
/// Chosen from the measurements in [`exterior`]'s documentation.
pub const SWITCH_BRILLOUIN_MULTIPLE: f64 = 16.0;

/// Face count from which a single-point [`PolyhedronGravity::potential_acceleration`] splits
/// its sums over threads.
pub const SPLIT_FACE_COUNT: usize = 32_768;

/// Number of field points a batch evaluates together in one pass over the mesh.
pub const BATCH_BLOCK: usize = block::BLOCK;

/// Faces per piece of the mesh: the tables of a piece (~190 bytes per face) and its per-vertex
/// scratch for a block of eight points (~130 bytes per face) stay in a core's L2 cache while a
/// group of points is evaluated over it.
pub const PIECE_FACES: usize = 4096;

/// Largest number of points a batch evaluates piece by piece together.
const GROUP_POINTS: usize = 64;

/// The gravity field of a homogeneous polyhedron.
///
/// Field points are in metres in the body frame of the mesh. Any finite point gives finite
/// values (on the surface too); a point with a NaN or infinite coordinate gives NaN values,
/// since the evaluation functions are the integrator's hot path and return no `Result`.
///
/// ```
/// use nalgebra::Point3;
/// use spinfall_gravity::{MassSpec, PolyhedronGravity, generate};
/// let field = PolyhedronGravity::from_mesh(
///     &generate::box_mesh(2000.0, 1000.0, 800.0),
///     MassSpec::DensityKgM3(1900.0),
/// )?;
/// let sample = field.evaluate(&Point3::new(0.0, 0.0, 400.0)); // on the top face
/// assert!(!sample.inside && sample.potential_m2_s2 > 0.0 && sample.acceleration_m_s2.z < 0.0);
/// # Ok::<(), spinfall_gravity::GravityError>(())
/// ```
#[derive(Debug, Clone)]
pub struct PolyhedronGravity {
    /// The face and edge tables cut into cache-sized pieces (see `Tables::pieces`); every sum
    /// runs piece by piece, in this order.
    pieces: Vec<Tables>,
    face_count: usize,
    edge_count: usize,
    density_kg_m3: f64,
    volume_m3: f64,
    center_of_mass_m: Point3<f64>,
    brillouin_radius_m: f64,
    switch_radius_m: f64,
    /// Built on first use (integrating the degree-8 moments costs about as much as a few
    /// hundred direct evaluations: ~0.2 s at 330k faces).
    exterior: std::sync::OnceLock<Exterior>,
}

impl PolyhedronGravity {
    /// Builds the field of a validated shape model (see [`Self::from_mesh`]).
    pub fn new(shape: &crate::ShapeModel, mass: MassSpec) -> Result<Self> {
        Self::from_mesh(shape.mesh(), mass)
    }

    /// Builds the field straight from a closed, outward-oriented mesh in metres.
    ///
    /// Checks what the field needs (indices in range, no degenerate face, every edge shared by
    /// two faces in opposite directions, positive volume) and computes the volume, centre of
    /// mass and exterior moments itself.
    pub fn from_mesh(mesh: &Mesh, mass: MassSpec) -> Result<Self> {
        let (tables, bulk) = Tables::build(mesh)?;
        let density_kg_m3 = mass.density_kg_m3(bulk.volume_m3)?;
        let com = bulk.center_of_mass_m;
        let brillouin_radius_m = mesh
            .vertices_m
            .iter()
            .map(|v| (v - com).norm())
            .fold(0.0, f64::max);
        Ok(Self {
            pieces: tables.pieces(PIECE_FACES),
            face_count: tables.face_count,
            edge_count: tables.edge_count,
            density_kg_m3,
            volume_m3: bulk.volume_m3,
            center_of_mass_m: com,
            brillouin_radius_m,
            switch_radius_m: SWITCH_BRILLOUIN_MULTIPLE * brillouin_radius_m,
            exterior: std::sync::OnceLock::new(),
        })
    }

    /// Bulk density, kg/m^3.
    pub fn density_kg_m3(&self) -> f64 {
        self.density_kg_m3
    }

    /// Volume of the polyhedron, m^3.
    pub fn volume_m3(&self) -> f64 {
        self.volume_m3
    }

    /// Total mass, kg.
    pub fn mass_kg(&self) -> f64 {
        self.density_kg_m3 * self.volume_m3
    }

    /// Gravitational parameter G*M, m^3/s^2.
    pub fn gm_m3_s2(&self) -> f64 {
        G_SI * self.mass_kg()
    }

    /// Centre of mass of the homogeneous polyhedron, metres.
    pub fn center_of_mass_m(&self) -> Point3<f64> {
        self.center_of_mass_m
    }

    /// Largest vertex distance from the centre of mass, metres.
    pub fn brillouin_radius_m(&self) -> f64 {
        self.brillouin_radius_m
    }

    /// Distance from the centre of mass beyond which the exterior expansion is used, metres.
    pub fn switch_radius_m(&self) -> f64 {
        self.switch_radius_m
    }

    /// The exterior expansion used far away (integrated on first use, then kept).
    pub fn exterior(&self) -> &Exterior {
        self.exterior.get_or_init(|| {
            let vertex = |t: &Tables, i: u32| {
                let i = i as usize;
                Point3::new(t.vx[i], t.vy[i], t.vz[i])
            };
            Exterior::integrate(
                self.face_count,
                &|f| {
                    let t = &self.pieces[f / PIECE_FACES];
                    let k = f % PIECE_FACES;
                    [vertex(t, t.f0[k]), vertex(t, t.f1[k]), vertex(t, t.f2[k])]
                },
                self.center_of_mass_m,
                self.brillouin_radius_m,
                exterior::DEFAULT_DEGREE,
            )
        })
    }

    /// Number of faces.
    pub fn face_count(&self) -> usize {
        self.face_count
    }

    /// Number of undirected edges.
    pub fn edge_count(&self) -> usize {
        self.edge_count
    }

    /// Approximate heap use of the precomputed tables and expansion, bytes.
    pub fn memory_bytes(&self) -> usize {
        self.pieces.iter().map(Tables::heap_bytes).sum::<usize>()
            + self.exterior.get().map_or(0, Exterior::heap_bytes)
    }

    /// The method used at `p`.
    pub fn method_at(&self, p: &Point3<f64>) -> FieldMethod {
        if (p - self.center_of_mass_m).norm() > self.switch_radius_m {
            FieldMethod::Exterior
        } else {
            FieldMethod::Direct
        }
    }

    fn g_rho(&self) -> f64 {
        G_SI * self.density_kg_m3
    }

    /// Potential (m^2/s^2) and acceleration (m/s^2) at `p` (metres, body frame): the hot path.
    ///
    /// On meshes of [`SPLIT_FACE_COUNT`] faces or more the face and edge sums of this one point
    /// are split over rayon's threads (by pieces of [`PIECE_FACES`] faces, added in a fixed
    /// order, so the result does not depend on the thread count); batches parallelise over
    /// points instead.
    pub fn potential_acceleration(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        if self.face_count() >= SPLIT_FACE_COUNT && self.method_at(p) == FieldMethod::Direct {
            let parts: Vec<direct::Sums> = self
                .pieces
                .par_iter()
                .map_init(Vec::new, |scratch, piece| {
                    direct::fill_vertices(piece, [p.x, p.y, p.z], scratch);
                    simd::sums(piece, scratch)
                })
                .collect();
            let s = parts
                .iter()
                .fold(direct::Sums::default(), |acc, s| acc.merged(s));
            return self.combine(&s);
        }
        let mut scratch = Vec::new();
        self.potential_acceleration_with(p, &mut scratch)
    }

    fn potential_acceleration_with(
        &self,
        p: &Point3<f64>,
        scratch: &mut Vec<[f64; 4]>,
    ) -> (f64, Vector3<f64>) {
        match self.method_at(p) {
            FieldMethod::Exterior => self.exterior_potential_acceleration(p),
            FieldMethod::Direct => self.direct_simd(p, scratch),
        }
    }

    fn exterior_potential_acceleration(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        let (u, a) = self
            .exterior()
            .potential_acceleration(&(p - self.center_of_mass_m));
        (self.g_rho() * u, self.g_rho() * a)
    }

    fn direct_simd(&self, p: &Point3<f64>, scratch: &mut Vec<[f64; 4]>) -> (f64, Vector3<f64>) {
        let s = self.piece_sums(p, scratch, simd::sums);
        self.combine(&s)
    }

    fn combine(&self, s: &direct::Sums) -> (f64, Vector3<f64>) {
        let g = self.g_rho();
        let u = 0.5 * g * (s.edge_u - s.face_u);
        let a = Vector3::new(
            s.edge_a[0] - s.face_a[0],
            s.edge_a[1] - s.face_a[1],
            s.edge_a[2] - s.face_a[2],
        ) * -g;
        (u, a)
    }

    /// Potential and acceleration from the direct face/edge sums at any distance, using the
    /// vectorised kernel (for verification and accuracy studies; [`Self::potential_acceleration`]
    /// picks the better method).
    pub fn potential_acceleration_direct(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        let mut scratch = Vec::new();
        self.direct_simd(p, &mut scratch)
    }

    /// As [`Self::potential_acceleration_direct`] with a chosen kernel (for tests and
    /// benchmarks; all kernels agree to ~1e-14 relative).
    pub fn potential_acceleration_with_kernel(
        &self,
        p: &Point3<f64>,
        kernel: DirectKernel,
    ) -> (f64, Vector3<f64>) {
        let mut scratch = Vec::new();
        let s = match kernel {
            DirectKernel::Auto => self.piece_sums(p, &mut scratch, simd::sums),
            DirectKernel::Scalar => self.piece_sums(p, &mut scratch, direct::sums_scalar::<false>),
            DirectKernel::Wide => self.piece_sums(p, &mut scratch, |t, rv| {
                simd::sums_wide(t, rv, &simd::Span::all(t))
            }),
            DirectKernel::Compiled => self.piece_sums(p, &mut scratch, |t, rv| {
                simd::sums_compiled(t, rv, &simd::Span::all(t))
            }),
        };
        self.combine(&s)
    }

    /// `sums` of every piece of the mesh for the field point `p`, added in piece order.
    fn piece_sums(
        &self,
        p: &Point3<f64>,
        scratch: &mut Vec<[f64; 4]>,
        sums: impl Fn(&Tables, &[[f64; 4]]) -> direct::Sums,
    ) -> direct::Sums {
        self.pieces
            .iter()
            .fold(direct::Sums::default(), |acc, piece| {
                direct::fill_vertices(piece, [p.x, p.y, p.z], scratch);
                acc.merged(&sums(piece, scratch))
            })
    }

    /// Potential and acceleration from the exterior expansion at any distance (for
    /// verification; meaningless inside the Brillouin sphere).
    pub fn potential_acceleration_exterior(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        self.exterior_potential_acceleration(p)
    }

    /// Potential, acceleration, gradient tensor, Laplacian and inside flag at `p`.
    ///
    /// Beyond [`Self::switch_radius_m`] everything comes from the exterior expansion: the
    /// gradient tensor by fourth-order central differences of its acceleration (step `1e-3 r`,
    /// relative error ~1e-11), the Laplacian is 0 and the point is outside.
    pub fn evaluate(&self, p: &Point3<f64>) -> FieldSample {
        let mut scratch = Vec::new();
        self.evaluate_with(p, &mut scratch)
    }

    fn evaluate_with(&self, p: &Point3<f64>, scratch: &mut Vec<[f64; 4]>) -> FieldSample {
        if self.method_at(p) == FieldMethod::Exterior {
            return self.evaluate_exterior(p);
        }
        let s = self.piece_sums(p, scratch, direct::sums_scalar::<true>);
        let g = self.g_rho();
        let (u, a) = self.combine(&s);
        let d: [f64; 6] = std::array::from_fn(|k| g * (s.edge_grad[k] - s.face_grad[k]));
        let gradient_s2 = Matrix3::new(d[0], d[1], d[2], d[1], d[3], d[4], d[2], d[4], d[5]);
        FieldSample {
            potential_m2_s2: u,
            acceleration_m_s2: a,
            gradient_s2,
            laplacian_s2: -g * s.omega,
            inside: is_inside_omega(s.omega),
        }
    }

    fn evaluate_exterior(&self, p: &Point3<f64>) -> FieldSample {
        let (u, a) = self.exterior_potential_acceleration(p);
        let h = 1e-3 * (p - self.center_of_mass_m).norm();
        let mut gradient_s2 = Matrix3::zeros();
        for k in 0..3 {
            let mut dp = Vector3::zeros();
            dp[k] = h;
            let acc = |s: f64| self.exterior_potential_acceleration(&(p + dp * s)).1;
            // Five-point stencil: f' = (-f(2h) + 8 f(h) - 8 f(-h) + f(-2h)) / 12h.
            let col = (acc(-2.0) - acc(2.0) + (acc(1.0) - acc(-1.0)) * 8.0) / (12.0 * h);
            gradient_s2.set_column(k, &col);
        }
        let gradient_s2 = (gradient_s2 + gradient_s2.transpose()) * 0.5;
        FieldSample {
            potential_m2_s2: u,
            acceleration_m_s2: a,
            gradient_s2,
            laplacian_s2: 0.0,
            inside: false,
        }
    }

    /// Whether `p` is strictly inside the body: the face solid angles sum to `4 pi` inside and
    /// 0 outside; the test is `sum > 2 pi + 1e-9`. Points on flat parts of the surface (sum `2
    /// pi`) and on convex edges and corners count as outside; on concave edges or corners, where
    /// the body fills more than half the view, as inside.
    pub fn is_inside(&self, p: &Point3<f64>) -> bool {
        if self.method_at(p) == FieldMethod::Exterior {
            return false;
        }
        let mut scratch = Vec::new();
        let s = self.piece_sums(p, &mut scratch, |t, rv| direct::Sums {
            omega: direct::omega_sum(t, rv),
            ..direct::Sums::default()
        });
        is_inside_omega(s.omega)
    }

    /// [`Self::potential_acceleration`] for many points, in parallel over points.
    ///
    /// Points needing the direct sums are evaluated [`BATCH_BLOCK`] at a time (one pass over
    /// the face and edge tables per block, the vector lanes running over points), so the
    /// results agree with single-point calls to rounding (~1e-14 relative), not bit for bit.
    pub fn potential_acceleration_batch(&self, points: &[Point3<f64>]) -> Vec<(f64, Vector3<f64>)> {
        self.batch_with(points, DirectKernel::Auto, true)
    }

    /// As [`Self::potential_acceleration_batch`], with the direct sums at every distance and a
    /// chosen kernel (for tests and benchmarks): [`DirectKernel::Scalar`] runs point by point,
    /// [`DirectKernel::Wide`] the block kernel on `wide`, the others the fastest block kernel.
    pub fn potential_acceleration_batch_direct(
        &self,
        points: &[Point3<f64>],
        kernel: DirectKernel,
    ) -> Vec<(f64, Vector3<f64>)> {
        self.batch_with(points, kernel, false)
    }

    fn batch_with(
        &self,
        points: &[Point3<f64>],
        kernel: DirectKernel,
        far_by_expansion: bool,
    ) -> Vec<(f64, Vector3<f64>)> {
        let far = |p: &Point3<f64>| far_by_expansion && self.method_at(p) == FieldMethod::Exterior;
        let direct: Vec<usize> = (0..points.len()).filter(|&k| !far(&points[k])).collect();
        let mut out: Vec<(f64, Vector3<f64>)> = points
            .par_iter()
            .map(|p| {
                if far(p) {
                    self.exterior_potential_acceleration(p)
                } else {
                    (0.0, Vector3::zeros())
                }
            })
            .collect();
        if kernel == DirectKernel::Scalar || (direct.len() == 1 && far_by_expansion) {
            let single: Vec<_> = direct
                .par_iter()
                .map(|&k| match kernel {
                    DirectKernel::Scalar => {
                        self.potential_acceleration_with_kernel(&points[k], kernel)
                    }
                    _ => self.potential_acceleration(&points[k]),
                })
                .collect();
            for (&k, v) in direct.iter().zip(single) {
                out[k] = v;
            }
            return out;
        }
        // Groups of points small enough to keep both threads busy, large enough that each
        // piece of the mesh is read from memory once for many points.
        let threads = rayon::current_num_threads().max(1);
        let group = (direct.len().div_ceil(2 * threads))
            .clamp(BATCH_BLOCK, GROUP_POINTS)
            .next_multiple_of(BATCH_BLOCK);
        let sums: Vec<direct::Sums> = direct
            .par_chunks(group)
            .map_init(Vec::new, |scratch, idx| {
                self.group_sums(points, idx, kernel, scratch)
            })
            .flat_map_iter(|v| v)
            .collect();
        for (&k, s) in direct.iter().zip(&sums) {
            out[k] = self.combine(s);
        }
        out
    }

    /// Direct sums of the points `points[idx]`, piece by piece of the mesh, [`BATCH_BLOCK`]
    /// points at a time (the lanes of the last block that have no point repeat its first one).
    fn group_sums(
        &self,
        points: &[Point3<f64>],
        idx: &[usize],
        kernel: DirectKernel,
        scratch: &mut Vec<block::Oct>,
    ) -> Vec<direct::Sums> {
        let mut sums = vec![direct::Sums::default(); idx.len()];
        for piece in &self.pieces {
            for (b, block_idx) in idx.chunks(BATCH_BLOCK).enumerate() {
                let pts: [[f64; 3]; BATCH_BLOCK] = std::array::from_fn(|j| {
                    let p = points[block_idx[j.min(block_idx.len() - 1)]];
                    [p.x, p.y, p.z]
                });
                block::fill_block(piece, &pts, scratch);
                let part = if kernel == DirectKernel::Wide {
                    block::sums_block_wide(piece, scratch)
                } else {
                    block::sums_block(piece, scratch)
                };
                let base = b * BATCH_BLOCK;
                for (j, s) in part.iter().take(block_idx.len()).enumerate() {
                    sums[base + j] = sums[base + j].merged(s);
                }
            }
        }
        sums
    }

    /// [`Self::evaluate`] for many points, in parallel over points.
    pub fn evaluate_batch(&self, points: &[Point3<f64>]) -> Vec<FieldSample> {
        points
            .par_iter()
            .with_min_len(batch_min_len(self.face_count()))
            .map_init(Vec::new, |scratch, p| self.evaluate_with(p, scratch))
            .collect()
    }
}

/// The inside rule shared by [`PolyhedronGravity::evaluate`] and
/// [`PolyhedronGravity::is_inside`].
fn is_inside_omega(omega_sum_sr: f64) -> bool {
    omega_sum_sr > 2.0 * std::f64::consts::PI + 1e-9
}

/// Smallest number of points per rayon task: enough work (~50k face evaluations) to pay for
/// the task.
fn batch_min_len(face_count: usize) -> usize {
    (50_000 / face_count.max(1)).clamp(1, 1024)
}
