//! The exact gravity field of a constant-density polyhedron (Werner & Scheeres 1997).
//!
//! [`PolyhedronGravity`] precomputes, once per shape, the face normals `n_f` (face dyads
//! `F_f = n_f n_f^T`) and the symmetric edge dyads `E_e = n_A n_A12^T + n_B n_B21^T`, stored as
//! structure-of-arrays padded to a multiple of eight, then evaluates for a field point `p`
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
//! - Batches ([`PolyhedronGravity::potential_acceleration_batch`],
//!   [`PolyhedronGravity::evaluate_batch`], with or without the gradient tensor) run the
//!   vector lanes over [`BATCH_BLOCK`] = 8 field points, each face and edge read once per block
//!   with its constants broadcast; groups of up to 64 points go through the mesh piece by piece,
//!   in parallel over groups with rayon. The kernel is written once (`kernel`), generic over the
//!   lane type: AVX-512 (eight lanes) or AVX2+FMA (four) on CPUs that have them, chosen at run
//!   time, else the portable `wide` crate (four, nothing fused). The gradient tensor is a
//!   compile-time switch of the same kernel, so the full output runs at nearly the same pace.
//! - One point ([`PolyhedronGravity::potential_acceleration`], [`PolyhedronGravity::evaluate`])
//!   runs as a block of copies of itself through the same kernel (four lanes wide), so its
//!   value is bit-for-bit its entry in any batch, whatever the batch size and thread count
//!   (flights flown alone or in a set of a thousand give the same bytes). From
//!   [`SPLIT_FACE_COUNT`] faces its pieces are shared out over rayon's threads and the parts
//!   added in a fixed order. The scalar kernel (`direct`) is kept as the reference the others
//!   are tested against.
//! - Bit-identity holds per machine. Kernels of different lane widths or with and without FMA
//!   agree to ~1e-13 relative, not bitwise, so two machines with different vector units agree to
//!   rounding.
//!
//! Measured with `cargo bench -p spinfall-gravity --bench field` (`SPINFALL_BENCH_QUICK=1`) on
//! a 2-core AMD EPYC (Zen 5, AVX-512) VM, quiet, 2026-12-02; ns per facet per point. Batch:
//! wall time on both threads; full output includes the gradient tensor; one point: CPU time of
//! a lone point on one thread (a block of copies of itself, see above):
//!
//! | faces   | batch of 256 | full output, batch of 2000 | one point |
//! |--------:|-------------:|---------------------------:|----------:|
//! |   5 120 |         3.35 |                       3.34 |        36 |
//! | 100 820 |         2.73 |                       3.33 |        39 |
//! | 327 680 |         2.82 |                       3.53 |        42 |
//!
//! The scalar reference runs at 46-51 ns and the portable `wide` kernel at 76-83 ns per facet
//! per point for a lone point. (The kernel before the generic rewrite measured 3.4-3.6 ns for
//! batches on the same machine the same day, so the single kernel lost nothing.) Memory: 145
//! bytes per facet (all pieces, vertices repeated at piece borders). The exterior expansion is
//! integrated on first use in 0.005 s, 0.11 s and 0.20 s for these meshes (adaptive face
//! quadrature, see [`exterior`]).
//!
//! Spinfall is for research and planning, not flight-certified.

mod block;
mod direct;
pub mod exterior;
mod interp;
mod kernel;
mod lanes;
mod mass_spec;
mod tables;
#[cfg(target_arch = "x86_64")]
mod x86;

use nalgebra::{Matrix3, Point3, Vector3};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::error::Result;
use crate::mesh::Mesh;
pub use exterior::Exterior;
pub use interp::{
    Answer, BuildProgress, BuildStats, InterpolatedGravity, InterpolationSettings,
    build_interpolated, cache_key,
};
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

/// Implementations of the direct face/edge sums (all give the same field to ~1e-13).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum DirectKernel {
    /// The widest vector kernel this CPU runs (what the field uses).
    Auto,
    /// Portable scalar loop, point by point: the reference.
    Scalar,
    /// The vector kernel on a portable four-lane type (vectorised for the build's target: SSE2
    /// on a default x86-64 build); no fused multiply-adds.
    Portable,
    /// The vector kernel on explicit AVX2+FMA intrinsics, four lanes (x86-64 CPUs with them).
    Avx2,
    /// The vector kernel on explicit AVX-512 intrinsics, eight lanes (x86-64 CPUs with them).
    Avx512,
}

impl DirectKernel {
    /// Whether this CPU runs the kernel.
    pub fn available(self) -> bool {
        self == DirectKernel::Scalar || block::Runner::for_kernel(self).is_some()
    }

    /// Every kernel this CPU runs.
    pub fn all_available() -> Vec<DirectKernel> {
        [
            DirectKernel::Auto,
            DirectKernel::Scalar,
            DirectKernel::Portable,
            DirectKernel::Avx2,
            DirectKernel::Avx512,
        ]
        .into_iter()
        .filter(|k| k.available())
        .collect()
    }

    /// The vector kernel [`DirectKernel::Auto`] stands for on this CPU.
    pub fn auto_resolved() -> DirectKernel {
        match block::Runner::for_kernel(DirectKernel::Auto) {
            #[cfg(target_arch = "x86_64")]
            Some(block::Runner::X86(x86::Isa::Avx512)) => DirectKernel::Avx512,
            #[cfg(target_arch = "x86_64")]
            Some(block::Runner::X86(x86::Isa::Avx2)) => DirectKernel::Avx2,
            _ => DirectKernel::Portable,
        }
    }
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

/// Lanes a lone point is copied to (the kernel then runs its narrowest width, four lanes).
const BLOCK_POINTS: usize = block::BLOCK;

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
                SWITCH_BRILLOUIN_MULTIPLE,
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

    /// Potential (m^2/s^2) and acceleration (m/s^2) at `p` (metres, body frame).
    ///
    /// Bit-for-bit equal to the same point's entry in any batch
    /// ([`Self::potential_acceleration_batch`]): every path runs the same vector kernel with
    /// the lanes over points (a lone point runs four lanes wide). On meshes of
    /// [`SPLIT_FACE_COUNT`] faces or more the sums of a lone point are split over rayon's
    /// threads by pieces of [`PIECE_FACES`] faces, added in a fixed order.
    pub fn potential_acceleration(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        match self.method_at(p) {
            FieldMethod::Exterior => self.exterior_potential_acceleration(p),
            FieldMethod::Direct => self.combine(&self.point_sums::<false>(p, DirectKernel::Auto)),
        }
    }

    fn exterior_potential_acceleration(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        let (u, a) = self
            .exterior()
            .potential_acceleration(&(p - self.center_of_mass_m));
        (self.g_rho() * u, self.g_rho() * a)
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

    fn sample_from(&self, s: &direct::Sums) -> FieldSample {
        let g = self.g_rho();
        let (u, a) = self.combine(s);
        let d: [f64; 6] = std::array::from_fn(|k| g * (s.edge_grad[k] - s.face_grad[k]));
        FieldSample {
            potential_m2_s2: u,
            acceleration_m_s2: a,
            gradient_s2: Matrix3::new(d[0], d[1], d[2], d[1], d[3], d[4], d[2], d[4], d[5]),
            laplacian_s2: -g * s.omega,
            inside: is_inside_omega(s.omega),
        }
    }

    /// The direct sums at one point with `kernel`, piece by piece in piece order (pieces shared
    /// out over threads on big meshes; the order of the additions stays the same).
    fn point_sums<const GRAD: bool>(&self, p: &Point3<f64>, kernel: DirectKernel) -> direct::Sums {
        let piece = |piece: &Tables, rv: &mut Vec<[f64; 4]>, q: &mut Vec<block::Oct>| {
            match block::Runner::for_kernel(kernel) {
                Some(runner) => {
                    block::fill_block(piece, &[[p.x, p.y, p.z]; BLOCK_POINTS], q);
                    runner.run::<GRAD>(piece, q, 1)[0]
                }
                None => {
                    direct::fill_vertices(piece, [p.x, p.y, p.z], rv);
                    direct::sums_scalar::<GRAD>(piece, rv)
                }
            }
        };
        let parts: Vec<direct::Sums> = if self.face_count >= SPLIT_FACE_COUNT {
            self.pieces
                .par_iter()
                .map_init(|| (Vec::new(), Vec::new()), |(rv, q), t| piece(t, rv, q))
                .collect()
        } else {
            let (mut rv, mut q) = (Vec::new(), Vec::new());
            self.pieces
                .iter()
                .map(|t| piece(t, &mut rv, &mut q))
                .collect()
        };
        parts
            .iter()
            .fold(direct::Sums::default(), |acc, s| acc.merged(s))
    }

    /// Potential and acceleration from the direct face/edge sums at any distance (for
    /// verification and accuracy studies; [`Self::potential_acceleration`] picks the better
    /// method).
    pub fn potential_acceleration_direct(&self, p: &Point3<f64>) -> (f64, Vector3<f64>) {
        self.combine(&self.point_sums::<false>(p, DirectKernel::Auto))
    }

    /// As [`Self::potential_acceleration_direct`] with a chosen kernel (for tests and
    /// benchmarks). Falls back to [`DirectKernel::Auto`] if this CPU lacks the kernel's
    /// features (see [`DirectKernel::available`]).
    pub fn potential_acceleration_with_kernel(
        &self,
        p: &Point3<f64>,
        kernel: DirectKernel,
    ) -> (f64, Vector3<f64>) {
        let kernel = if kernel.available() {
            kernel
        } else {
            DirectKernel::Auto
        };
        self.combine(&self.point_sums::<false>(p, kernel))
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
    /// relative error ~1e-11), the Laplacian is 0 and the point is outside. Bit-for-bit equal
    /// to the point's entry in [`Self::evaluate_batch`].
    pub fn evaluate(&self, p: &Point3<f64>) -> FieldSample {
        match self.method_at(p) {
            FieldMethod::Exterior => self.evaluate_exterior(p),
            FieldMethod::Direct => {
                self.sample_from(&self.point_sums::<true>(p, DirectKernel::Auto))
            }
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
    /// the body fills more than half the view, as inside. The same rule (and the same sums) as
    /// [`FieldSample::inside`].
    pub fn is_inside(&self, p: &Point3<f64>) -> bool {
        if self.method_at(p) == FieldMethod::Exterior {
            return false;
        }
        is_inside_omega(self.point_sums::<false>(p, DirectKernel::Auto).omega)
    }

    /// [`Self::is_inside`] for many points, in parallel over points through the batch kernel;
    /// each answer is the one a lone call gives (the same sums to the bit).
    pub fn is_inside_batch(&self, points: &[Point3<f64>]) -> Vec<bool> {
        let mut out = vec![false; points.len()];
        self.batch_with::<false, _>(
            points,
            DirectKernel::Auto,
            true,
            &mut out,
            |_, s| is_inside_omega(s.omega),
            |_, _| false,
        );
        out
    }

    /// [`Self::potential_acceleration`] for many points, in parallel over points; each entry is
    /// bit-for-bit what a lone call gives, whatever the batch and the thread count.
    pub fn potential_acceleration_batch(&self, points: &[Point3<f64>]) -> Vec<(f64, Vector3<f64>)> {
        let mut out = vec![(0.0, Vector3::zeros()); points.len()];
        self.potential_acceleration_batch_into(points, &mut out);
        out
    }

    /// [`Self::potential_acceleration_batch`] into a caller's buffer (`out.len()` must equal
    /// `points.len()`).
    ///
    /// # Panics
    /// If the lengths differ.
    pub fn potential_acceleration_batch_into(
        &self,
        points: &[Point3<f64>],
        out: &mut [(f64, Vector3<f64>)],
    ) {
        assert_eq!(points.len(), out.len(), "one output per point");
        self.batch_with::<false, _>(
            points,
            DirectKernel::Auto,
            true,
            out,
            |me, s| me.combine(s),
            |me, p| me.exterior_potential_acceleration(p),
        );
    }

    /// As [`Self::potential_acceleration_batch`], with the direct sums at every distance and a
    /// chosen kernel (for tests and benchmarks; [`DirectKernel::Scalar`] runs point by point).
    /// Falls back to [`DirectKernel::Auto`] if this CPU lacks the kernel.
    pub fn potential_acceleration_batch_direct(
        &self,
        points: &[Point3<f64>],
        kernel: DirectKernel,
    ) -> Vec<(f64, Vector3<f64>)> {
        let kernel = if kernel.available() {
            kernel
        } else {
            DirectKernel::Auto
        };
        let mut out = vec![(0.0, Vector3::zeros()); points.len()];
        self.batch_with::<false, _>(
            points,
            kernel,
            false,
            &mut out,
            |me, s| me.combine(s),
            |me, p| me.exterior_potential_acceleration(p),
        );
        out
    }

    /// [`Self::evaluate`] for many points (gradient tensor, Laplacian and inside flag with the
    /// vector kernel), in parallel over points; bit-for-bit what lone calls give.
    pub fn evaluate_batch(&self, points: &[Point3<f64>]) -> Vec<FieldSample> {
        let blank = FieldSample {
            potential_m2_s2: 0.0,
            acceleration_m_s2: Vector3::zeros(),
            gradient_s2: Matrix3::zeros(),
            laplacian_s2: 0.0,
            inside: false,
        };
        let mut out = vec![blank; points.len()];
        self.batch_with::<true, _>(
            points,
            DirectKernel::Auto,
            true,
            &mut out,
            |me, s| me.sample_from(s),
            |me, p| me.evaluate_exterior(p),
        );
        out
    }

    /// Runs a batch: points beyond the switch radius (with `far_by_expansion`) through `far`,
    /// the others through the direct sums in groups, converted by `finish`.
    fn batch_with<const GRAD: bool, T: Send>(
        &self,
        points: &[Point3<f64>],
        kernel: DirectKernel,
        far_by_expansion: bool,
        out: &mut [T],
        finish: impl Fn(&Self, &direct::Sums) -> T + Sync,
        far: impl Fn(&Self, &Point3<f64>) -> T + Sync,
    ) {
        let is_far =
            |p: &Point3<f64>| far_by_expansion && self.method_at(p) == FieldMethod::Exterior;
        let direct_idx: Vec<usize> = (0..points.len()).filter(|&k| !is_far(&points[k])).collect();
        out.par_iter_mut()
            .zip(points.par_iter())
            .filter(|(_, p)| is_far(p))
            .for_each(|(o, p)| *o = far(self, p));
        if direct_idx.is_empty() {
            return;
        }
        let runner = block::Runner::for_kernel(kernel);
        let sums: Vec<direct::Sums> = if direct_idx.len() == 1 || runner.is_none() {
            // A lone point: its sums split over the threads by pieces (same bits as in a
            // group); the scalar reference runs point by point.
            direct_idx
                .par_iter()
                .map(|&k| self.point_sums::<GRAD>(&points[k], kernel))
                .collect()
        } else {
            // Groups of points small enough to keep every thread busy, large enough that each
            // piece of the mesh is read from memory once for many points.
            let threads = rayon::current_num_threads().max(1);
            let group = (direct_idx.len().div_ceil(2 * threads))
                .clamp(BATCH_BLOCK, GROUP_POINTS)
                .next_multiple_of(BATCH_BLOCK);
            let runner = runner.unwrap_or(block::Runner::Portable);
            direct_idx
                .par_chunks(group)
                .map_init(Vec::new, |scratch, idx| {
                    self.group_sums::<GRAD>(points, idx, runner, scratch)
                })
                .flat_map_iter(|v| v)
                .collect()
        };
        // Scatter the results back to their points.
        let mut slots: Vec<Option<&mut T>> = out.iter_mut().map(Some).collect();
        let targets: Vec<&mut T> = direct_idx
            .iter()
            .map(|&k| slots[k].take().expect("each index once"))
            .collect();
        targets
            .into_par_iter()
            .zip(sums.par_iter())
            .for_each(|(o, s)| *o = finish(self, s));
    }

    /// Direct sums of the points `points[idx]`, piece by piece of the mesh, [`BATCH_BLOCK`]
    /// points at a time (the lanes of the last block that have no point repeat its first one).
    fn group_sums<const GRAD: bool>(
        &self,
        points: &[Point3<f64>],
        idx: &[usize],
        runner: block::Runner,
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
                let part = runner.run::<GRAD>(piece, scratch, block_idx.len());
                let base = b * BATCH_BLOCK;
                for (j, s) in part.iter().take(block_idx.len()).enumerate() {
                    sums[base + j] = sums[base + j].merged(s);
                }
            }
        }
        sums
    }
}

/// The inside rule shared by [`PolyhedronGravity::evaluate`] and
/// [`PolyhedronGravity::is_inside`].
fn is_inside_omega(omega_sum_sr: f64) -> bool {
    omega_sum_sr > 2.0 * std::f64::consts::PI + 1e-9
}
