//! Several field points at once: the face and edge sums with the vector lanes running over
//! [`BLOCK`] field points instead of over faces.
//!
//! Each face and edge is then read once per block of points (its constants broadcast to all
//! lanes), so the tables stream from memory once per [`BLOCK`] points, and the per-vertex vectors
//! of the points sit side by side in one [`Quad`] per vertex: a face reads its three corners as
//! whole vectors with no shuffles. Same formulas and surface rules as the scalar kernel in
//! `direct`; batches of points use this (see [`super::PolyhedronGravity::potential_acceleration_batch`]).

use multiversion::multiversion;
use multiversion::target::match_target;
use wide::f64x4;

use super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::lanes::Lanes;
use super::tables::Tables;

/// Number of field points evaluated together.
pub(crate) const BLOCK: usize = 4;

/// Vertex vectors `r = v - p` of one vertex for the [`BLOCK`] field points of a block:
/// `[x0, x1, x2, x3, y0, .., y3, z0, .., z3, |r0|, .., |r3|]`, metres (one cache-line pair).
#[derive(Debug, Clone, Copy)]
#[repr(C, align(64))]
pub(crate) struct Quad(pub [f64; 16]);

/// Fills `out` with one [`Quad`] per vertex for the field points `p` (portable version).
fn fill_quads_portable(t: &Tables, p: &[[f64; 3]; BLOCK], out: &mut Vec<Quad>) {
    out.clear();
    out.extend(t.vx.iter().zip(&t.vy).zip(&t.vz).map(|((&x, &y), &z)| {
        let mut q = [0.0; 16];
        for (k, pk) in p.iter().enumerate() {
            let (rx, ry, rz) = (x - pk[0], y - pk[1], z - pk[2]);
            q[k] = rx;
            q[4 + k] = ry;
            q[8 + k] = rz;
            q[12 + k] = (rx * rx + ry * ry + rz * rz).sqrt();
        }
        Quad(q)
    }));
}

/// Fills `out` with one [`Quad`] per vertex for the field points `p`.
#[multiversion(targets("x86_64+avx2+fma+avx"))]
pub(crate) fn fill_quads(t: &Tables, p: &[[f64; 3]; BLOCK], out: &mut Vec<Quad>) {
    match_target! {
        "x86_64+avx2+fma" => super::avx2::fill_quads(t, p, out),
        _ => fill_quads_portable(t, p, out),
    }
}

#[inline(always)]
fn vertex<L: Lanes>(q: &[Quad], i: u32) -> [L; 4] {
    let q = &q[i as usize].0;
    std::array::from_fn(|k| L::from_array([q[4 * k], q[4 * k + 1], q[4 * k + 2], q[4 * k + 3]]))
}

#[inline(always)]
fn dot3<L: Lanes>(a: &[L], b: &[L]) -> L {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// The block kernel over any [`Lanes`] type.
#[inline(always)]
fn kernel<L: Lanes>(t: &Tables, q: &[Quad]) -> [Sums; BLOCK] {
    let zero = L::splat(0.0);
    let two = L::splat(2.0);
    let plane_tol = L::splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    for f in 0..t.face_count {
        let r1: [L; 4] = vertex(q, t.f0[f]);
        let r2: [L; 4] = vertex(q, t.f1[f]);
        let r3: [L; 4] = vertex(q, t.f2[f]);
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
        let ra: [L; 4] = vertex(q, t.e0[e]);
        let rb: [L; 4] = vertex(q, t.e1[e]);
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

/// The block kernel on `wide::f64x4` (portable).
pub(crate) fn sums_block_wide(t: &Tables, q: &[Quad]) -> [Sums; BLOCK] {
    kernel::<f64x4>(t, q)
}

/// Potential and acceleration sums of the [`BLOCK`] points whose vertex blocks are `q`: explicit
/// AVX2+FMA on x86-64 CPUs that have them (chosen at run time), `wide` elsewhere.
#[multiversion(targets("x86_64+avx2+fma+avx"))]
pub(crate) fn sums_block(t: &Tables, q: &[Quad]) -> [Sums; BLOCK] {
    match_target! {
        "x86_64+avx2+fma" => super::avx2::sums4(t, q),
        _ => kernel::<f64x4>(t, q),
    }
}
