//! Several field points at once: the face and edge sums with the vector lanes running over
//! [`BLOCK`] field points instead of over faces.
//!
//! Each face and edge is then read once per block of points (its constants broadcast to all
//! lanes), so the tables stream from memory once per [`BLOCK`] points, and the per-vertex vectors
//! of the points sit side by side in one [`Oct`] per vertex: a face reads its three corners as
//! whole vectors with no shuffles. Same formulas and surface rules as the scalar kernel in
//! `direct`; batches of points use this (see [`super::PolyhedronGravity::potential_acceleration_batch`]).

use multiversion::multiversion;
use multiversion::target::match_target;
use wide::f64x4;

use super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::lanes::Lanes;
use super::tables::Tables;

/// Number of field points evaluated together.
pub(crate) const BLOCK: usize = 8;

/// Vertex vectors `r = v - p` of one vertex for the [`BLOCK`] field points of a block:
/// `[x0, .., x7, y0, .., y7, z0, .., z7, |r0|, .., |r7|]`, metres (four cache lines).
#[derive(Debug, Clone, Copy)]
#[repr(C, align(64))]
pub(crate) struct Oct(pub [f64; 4 * BLOCK]);

/// Fills `out` with one [`Oct`] per vertex of `t` for the field points `p` (same rounding as
/// `direct::fill_vertices`: no fused operations).
#[multiversion(targets("x86_64+avx512f+avx512dq+avx2+fma+avx", "x86_64+avx2+fma+avx"))]
pub(crate) fn fill_block(t: &Tables, p: &[[f64; 3]; BLOCK], out: &mut Vec<Oct>) {
    out.clear();
    out.extend(t.vx.iter().zip(&t.vy).zip(&t.vz).map(|((&x, &y), &z)| {
        let mut q = [0.0; 4 * BLOCK];
        for (k, pk) in p.iter().enumerate() {
            let (rx, ry, rz) = (x - pk[0], y - pk[1], z - pk[2]);
            q[k] = rx;
            q[BLOCK + k] = ry;
            q[2 * BLOCK + k] = rz;
            q[3 * BLOCK + k] = (rx * rx + ry * ry + rz * rz).sqrt();
        }
        Oct(q)
    }));
}

/// Lanes `4 half .. 4 half + 4` of the vertex `i`'s block.
#[inline(always)]
fn vertex<L: Lanes>(q: &[Oct], i: u32, half: usize) -> [L; 4] {
    let q = &q[i as usize].0;
    std::array::from_fn(|k| {
        let o = BLOCK * k + 4 * half;
        let s = &q[o..o + 4];
        L::from_array([s[0], s[1], s[2], s[3]])
    })
}

#[inline(always)]
fn dot3<L: Lanes>(a: &[L], b: &[L]) -> L {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// The block kernel over any [`Lanes`] type, for the points in lanes `4 half .. 4 half + 4`.
#[inline(always)]
fn kernel<L: Lanes>(t: &Tables, q: &[Oct], half: usize) -> [Sums; 4] {
    let zero = L::splat(0.0);
    let two = L::splat(2.0);
    let plane_tol = L::splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    for f in 0..t.face_count {
        let r1: [L; 4] = vertex(q, t.f0[f], half);
        let r2: [L; 4] = vertex(q, t.f1[f], half);
        let r3: [L; 4] = vertex(q, t.f2[f], half);
        let cx = r2[1] * r3[2] - r2[2] * r3[1];
        let cy = r2[2] * r3[0] - r2[0] * r3[2];
        let cz = r2[0] * r3[1] - r2[1] * r3[0];
        let num = dot3(&r1, &[cx, cy, cz]);
        let d12 = dot3(&r1, &r2);
        let d23 = dot3(&r2, &r3);
        let d31 = dot3(&r3, &r1);
        let prod = r1[3] * r2[3] * r3[3];
        let den = prod + r1[3] * d23 + r2[3] * d31 + r3[3] * d12;
        let tol = plane_tol * prod;
        let omega = L::zero_where_both_le(num.abs(), tol, den, tol, two * num.atan2(den));
        let n = [L::splat(t.nx[f]), L::splat(t.ny[f]), L::splat(t.nz[f])];
        let h = dot3(&n, &r1);
        let h_omega = h * omega;
        omega_acc += omega;
        face_u += h * h_omega;
        for k in 0..3 {
            face_a[k] += n[k] * h_omega;
        }
    }
    let floor = L::splat(EDGE_FLOOR);
    let mut edge_u = zero;
    let mut edge_a = [zero; 3];
    let d = &t.edge_dyad;
    for e in 0..t.edge_count {
        let ra: [L; 4] = vertex(q, t.e0[e], half);
        let rb: [L; 4] = vertex(q, t.e1[e], half);
        let len = L::splat(t.edge_len_m[e]);
        let sum = ra[3] + rb[3];
        let l = L::edge_log(sum, len, floor);
        let m = d.get(e).map(L::splat);
        let er = [
            dot3(&[m[0], m[1], m[2]], &ra),
            dot3(&[m[1], m[3], m[4]], &ra),
            dot3(&[m[2], m[4], m[5]], &ra),
        ];
        edge_u += dot3(&ra, &er) * l;
        for k in 0..3 {
            edge_a[k] += er[k] * l;
        }
    }
    let omega = omega_acc.to_array();
    let (face_u, edge_u) = (face_u.to_array(), edge_u.to_array());
    let face_a = face_a.map(L::to_array);
    let edge_a = edge_a.map(L::to_array);
    std::array::from_fn(|k| Sums {
        edge_u: edge_u[k],
        edge_a: [edge_a[0][k], edge_a[1][k], edge_a[2][k]],
        face_u: face_u[k],
        face_a: [face_a[0][k], face_a[1][k], face_a[2][k]],
        omega: omega[k],
        ..Sums::default()
    })
}

/// Two four-point halves side by side.
fn join(lo: [Sums; 4], hi: [Sums; 4]) -> [Sums; BLOCK] {
    std::array::from_fn(|k| if k < 4 { lo[k] } else { hi[k - 4] })
}

/// The block kernel on `wide::f64x4` (portable), two halves.
pub(crate) fn sums_block_wide(t: &Tables, q: &[Oct]) -> [Sums; BLOCK] {
    join(kernel::<f64x4>(t, q, 0), kernel::<f64x4>(t, q, 1))
}

/// The block kernel with explicit AVX2+FMA (two four-lane halves) on x86-64 CPUs that have
/// them, `wide` elsewhere.
#[multiversion(targets("x86_64+avx2+fma+avx"))]
pub(crate) fn sums_block_avx2(t: &Tables, q: &[Oct]) -> [Sums; BLOCK] {
    match_target! {
        "x86_64+avx2+fma" => join(
            super::avx2::sums_half(t, q, 0),
            super::avx2::sums_half(t, q, 1),
        ),
        _ => sums_block_wide(t, q),
    }
}

/// Potential and acceleration sums of the [`BLOCK`] points whose vertex blocks are `q`, with the
/// fastest kernel for this CPU (chosen at run time): explicit AVX-512 (eight lanes), else
/// AVX2+FMA, else `wide`.
#[multiversion(targets("x86_64+avx512f+avx512dq+avx2+fma+avx"))]
pub(crate) fn sums_block(t: &Tables, q: &[Oct]) -> [Sums; BLOCK] {
    match_target! {
        "x86_64+avx512f+avx512dq" => super::avx512::sums8(t, q),
        _ => sums_block_avx2(t, q),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::direct;

    #[test]
    fn every_block_kernel_matches_the_scalar_kernel() {
        // Each compiled variant this CPU can run (AVX-512, AVX2 halves, wide) against the
        // portable scalar reference, point by point; a point exactly on a vertex and one on an
        // edge midpoint exercise the surface rules.
        let mesh = crate::generate::demo_body(2);
        let (t, _) = Tables::build(&mesh).expect("valid");
        let [a, b, _] = mesh.triangle(5);
        let mid = (a.coords + b.coords) * 0.5;
        let pts: [[f64; 3]; BLOCK] = [
            [3000.0, 100.0, -200.0],
            [a.x, a.y, a.z],
            [mid.x, mid.y, mid.z],
            [0.0, 0.0, 0.0],
            [-900.0, 700.0, 2500.0],
            [150.0, -4000.0, 60.0],
            [2500.0, 2000.0, -3000.0],
            [500.0, 500.0, 500.0],
        ];
        let mut q = Vec::new();
        fill_block(&t, &pts, &mut q);
        let kernels = [
            sums_block(&t, &q),
            sums_block_avx2(&t, &q),
            sums_block_wide(&t, &q),
        ];
        let mut rv = Vec::new();
        for (k, p) in pts.iter().enumerate() {
            direct::fill_vertices(&t, *p, &mut rv);
            let want = direct::sums_scalar::<false>(&t, &rv);
            let scale_u = want.edge_u.abs().max(want.face_u.abs());
            let scale_a = want
                .edge_a
                .iter()
                .chain(&want.face_a)
                .fold(0.0f64, |m, v| m.max(v.abs()));
            for got in &kernels {
                let got = &got[k];
                assert!((got.edge_u - want.edge_u).abs() <= 1e-13 * scale_u, "{p:?}");
                assert!((got.face_u - want.face_u).abs() <= 1e-13 * scale_u, "{p:?}");
                assert!((got.omega - want.omega).abs() <= 1e-13, "{p:?}");
                for j in 0..3 {
                    assert!(
                        (got.edge_a[j] - want.edge_a[j]).abs() <= 1e-13 * scale_a,
                        "{p:?}"
                    );
                    assert!(
                        (got.face_a[j] - want.face_a[j]).abs() <= 1e-13 * scale_a,
                        "{p:?}"
                    );
                }
            }
        }
    }
}
