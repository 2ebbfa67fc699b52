//! Blocks of [`BLOCK`] field points, and the choice of kernel instantiation that evaluates them.
//!
//! A block holds, for every vertex of a piece of the mesh, the vectors `r = v - p` from the
//! block's points to the vertex and their lengths ([`Oct`]). The kernel (`kernel::sums`) runs
//! over a block with the lanes over its points: eight at once with AVX-512, four at a time with
//! AVX2 or the portable type. A block with four points or fewer is run four lanes wide only.

use super::DirectKernel;
use super::direct::Sums;
use super::kernel;
use super::lanes::{Lanes, Portable};
use super::tables::Tables;

/// Number of field points in a block.
pub(crate) const BLOCK: usize = 8;

/// Vertex vectors `r = v - p` of one vertex for the [`BLOCK`] field points of a block:
/// `[x0, .., x7, y0, .., y7, z0, .., z7, |r0|, .., |r7|]`, metres (four cache lines).
#[derive(Debug, Clone, Copy)]
#[repr(C, align(64))]
pub(crate) struct Oct(pub [f64; 4 * BLOCK]);

/// Fills `out` with one [`Oct`] per vertex of `t` for the field points `p`, with the widest
/// lanes this CPU has, over the points (no fused operations, so every instruction set rounds
/// the same way). The blocks are written in place (`out` keeps its length from call to call
/// when the tables do).
pub(crate) fn fill_block(t: &Tables, p: &[[f64; 3]; BLOCK], out: &mut Vec<Oct>) {
    out.resize(t.vx.len(), Oct([0.0; 4 * BLOCK]));
    match best() {
        Runner::Portable => fill_lanes::<Portable>(t, p, out),
        #[cfg(target_arch = "x86_64")]
        Runner::X86(isa) => isa.fill(t, p, out),
    }
}

/// [`fill_block`] over lanes `V`, each vertex's block written a vector at a time (left to the
/// compiler, the loop was vectorised across vertices instead, with a scatter per store: 15 %
/// of the interpolated field's build at 1M facets).
#[inline(always)]
pub(crate) fn fill_lanes<V: Lanes>(t: &Tables, p: &[[f64; 3]; BLOCK], out: &mut [Oct]) {
    let px: [f64; BLOCK] = std::array::from_fn(|k| p[k][0]);
    let py: [f64; BLOCK] = std::array::from_fn(|k| p[k][1]);
    let pz: [f64; BLOCK] = std::array::from_fn(|k| p[k][2]);
    for (o, ((&x, &y), &z)) in out.iter_mut().zip(t.vx.iter().zip(&t.vy).zip(&t.vz)) {
        let (vx, vy, vz) = (V::splat(x), V::splat(y), V::splat(z));
        for base in (0..BLOCK).step_by(V::N) {
            let qx = vx - V::load(&px[base..]);
            let qy = vy - V::load(&py[base..]);
            let qz = vz - V::load(&pz[base..]);
            let r = (qx * qx + qy * qy + qz * qz).sqrt();
            qx.store(&mut o.0[base..]);
            qy.store(&mut o.0[BLOCK + base..]);
            qz.store(&mut o.0[2 * BLOCK + base..]);
            r.store(&mut o.0[3 * BLOCK + base..]);
        }
    }
}

/// A kernel instantiation that runs blocks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Runner {
    /// The four-lane portable type.
    Portable,
    /// Explicit intrinsics.
    #[cfg(target_arch = "x86_64")]
    X86(super::x86::Isa),
}

impl Runner {
    /// The instantiation a [`DirectKernel`] names (`Auto`: the widest this CPU runs), or `None`
    /// when the CPU lacks its features. `Scalar` has no block runner.
    pub fn for_kernel(kernel: DirectKernel) -> Option<Runner> {
        #[cfg(target_arch = "x86_64")]
        use super::x86::Isa;
        match kernel {
            DirectKernel::Scalar => None,
            DirectKernel::Portable => Some(Runner::Portable),
            #[cfg(target_arch = "x86_64")]
            DirectKernel::Avx512 => Isa::Avx512.detected().then_some(Runner::X86(Isa::Avx512)),
            #[cfg(target_arch = "x86_64")]
            DirectKernel::Avx2 => Isa::Avx2.detected().then_some(Runner::X86(Isa::Avx2)),
            #[cfg(not(target_arch = "x86_64"))]
            DirectKernel::Avx512 | DirectKernel::Avx2 => None,
            DirectKernel::Auto => Some(*best()),
        }
    }

    /// Sums of the first `points` (1 to [`BLOCK`]) points of the blocks `q` over the whole of
    /// `t`; the other entries of the result are left at their defaults.
    pub fn run<const GRAD: bool>(self, t: &Tables, q: &[Oct], points: usize) -> [Sums; BLOCK] {
        self.run_mode::<GRAD, false>(t, q, points)
    }

    /// As [`Runner::run`]; with `OPEN` (and `GRAD`) the open-set tensor terms too.
    pub fn run_mode<const GRAD: bool, const OPEN: bool>(
        self,
        t: &Tables,
        q: &[Oct],
        points: usize,
    ) -> [Sums; BLOCK] {
        let mut out = [Sums::default(); BLOCK];
        let halves = if points <= BLOCK / 2 { 1 } else { 2 };
        match self {
            Runner::Portable => {
                kernel::sums::<Portable, GRAD, OPEN, 0>(t, q, &mut out);
                if halves == 2 {
                    kernel::sums::<Portable, GRAD, OPEN, 4>(t, q, &mut out);
                }
            }
            #[cfg(target_arch = "x86_64")]
            Runner::X86(isa) => {
                if halves == 1 {
                    isa.sums_half::<GRAD, OPEN>(t, q, &mut out);
                } else {
                    isa.sums_block::<GRAD, OPEN>(t, q, &mut out);
                }
            }
        }
        out
    }
}

/// The widest instantiation this CPU runs (detected once).
fn best() -> &'static Runner {
    static BEST: std::sync::OnceLock<Runner> = std::sync::OnceLock::new();
    BEST.get_or_init(|| {
        #[cfg(target_arch = "x86_64")]
        for isa in [super::x86::Isa::Avx512, super::x86::Isa::Avx2] {
            if isa.detected() {
                return Runner::X86(isa);
            }
        }
        Runner::Portable
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::direct;

    fn test_points(mesh: &crate::Mesh) -> [[f64; 3]; BLOCK] {
        let [a, b, _] = mesh.triangle(5);
        let mid = (a.coords + b.coords) * 0.5;
        [
            [3000.0, 100.0, -200.0],
            [a.x, a.y, a.z],
            [mid.x, mid.y, mid.z],
            [0.0, 0.0, 0.0],
            [-900.0, 700.0, 2500.0],
            [150.0, -4000.0, 60.0],
            [2500.0, 2000.0, -3000.0],
            [500.0, 500.0, 500.0],
        ]
    }

    fn runners() -> Vec<Runner> {
        [
            DirectKernel::Portable,
            DirectKernel::Avx2,
            DirectKernel::Avx512,
        ]
        .into_iter()
        .filter_map(Runner::for_kernel)
        .collect()
    }

    #[test]
    fn every_instantiation_matches_the_scalar_kernel() {
        // Each instantiation this CPU can run against the portable scalar reference, point by
        // point; a vertex and an edge midpoint exercise the surface rules.
        let mesh = crate::generate::demo_body(2);
        let (t, _) = Tables::build(&mesh).expect("valid");
        let pts = test_points(&mesh);
        let mut q = Vec::new();
        fill_block(&t, &pts, &mut q);
        let mut rv = Vec::new();
        for runner in runners() {
            let got = runner.run::<true>(&t, &q, BLOCK);
            for (k, p) in pts.iter().enumerate() {
                direct::fill_vertices(&t, *p, &mut rv);
                let want = direct::sums_scalar::<true>(&t, &rv);
                let got = &got[k];
                let scale_u = want.edge_u.abs().max(want.face_u.abs());
                let scale_a = want
                    .edge_a
                    .iter()
                    .chain(&want.face_a)
                    .fold(0.0f64, |m, v| m.max(v.abs()));
                let scale_g = want
                    .edge_grad
                    .iter()
                    .chain(&want.face_grad)
                    .fold(0.0f64, |m, v| m.max(v.abs()));
                let close = |a: f64, b: f64, scale: f64| (a - b).abs() <= 1e-13 * scale;
                assert!(close(got.edge_u, want.edge_u, scale_u), "{runner:?} {p:?}");
                assert!(close(got.face_u, want.face_u, scale_u), "{runner:?} {p:?}");
                assert!(close(got.omega, want.omega, 1.0), "{runner:?} {p:?}");
                for j in 0..3 {
                    assert!(close(got.edge_a[j], want.edge_a[j], scale_a), "{p:?}");
                    assert!(close(got.face_a[j], want.face_a[j], scale_a), "{p:?}");
                }
                for j in 0..6 {
                    assert!(close(got.edge_grad[j], want.edge_grad[j], scale_g), "{p:?}");
                    assert!(close(got.face_grad[j], want.face_grad[j], scale_g), "{p:?}");
                }
            }
        }
    }

    #[test]
    fn a_point_gets_the_same_bits_in_any_lane_width_and_any_neighbours() {
        // The reproducibility promise of the kernel: a point's sums are identical whether it
        // runs eight or four lanes wide, in any lane, beside any other points.
        let mesh = crate::generate::demo_body(2);
        let (t, _) = Tables::build(&mesh).expect("valid");
        let pts = test_points(&mesh);
        let mut q = Vec::new();
        for runner in runners() {
            fill_block(&t, &pts, &mut q);
            let full = runner.run::<true>(&t, &q, BLOCK);
            for (k, p) in pts.iter().enumerate() {
                // The same point alone, in lane 0 of a four-lane pass, neighbours all itself.
                fill_block(&t, &[*p; BLOCK], &mut q);
                let alone = runner.run::<true>(&t, &q, 1);
                assert_eq!(full[k], alone[0], "{runner:?} point {k}");
            }
            let mut shuffled = pts;
            shuffled.reverse();
            fill_block(&t, &shuffled, &mut q);
            let rev = runner.run::<true>(&t, &q, BLOCK);
            for k in 0..BLOCK {
                assert_eq!(full[k], rev[BLOCK - 1 - k], "{runner:?} point {k}");
            }
        }
        // Across instantiations that fuse the same way (AVX2 and AVX-512) too.
        let fused: Vec<_> = runners()
            .into_iter()
            .filter(|r| *r != Runner::Portable)
            .collect();
        fill_block(&t, &pts, &mut q);
        if let [a, b, ..] = fused[..] {
            assert_eq!(a.run::<true>(&t, &q, BLOCK), b.run::<true>(&t, &q, BLOCK));
        }
    }
}
