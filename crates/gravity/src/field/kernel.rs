//! The direct Werner–Scheeres face and edge sums, written once over [`Lanes`], with the vector
//! lanes running over field points.
//!
//! Each face and edge of a piece of the mesh is read once per block of points, its constants
//! broadcast to all lanes; the vertex vectors of the points sit side by side in one
//! [`Oct`] per vertex, so a face reads its three corners as whole vectors. Same formulas and
//! surface rules as the scalar reference kernel in `direct` (which documents them). With
//! `GRAD` the gradient-tensor sums (`sum_f F_f omega_f`, `sum_e E_e L_e`) come too, for six
//! fused multiply-adds per face and per edge.
//!
//! With `OPEN` (and `GRAD`) it also sums the terms of the gradient tensor that cancel over a
//! closed polyhedron but not over an open set of faces (the interpolated field sums sets of
//! faces near a cell). In the single-layer split (`interp::face_set`) they are
//! `T_ij = (1/2) sum_f h_f d_i d_j S_f(x) = (1/2) integral over the set of
//! (n . z) d_i d_j (1/|z|) dA`, `z = y - x` (`h_f = n_f . z` for every `y` on face `f`). The
//! field `Phi = z d_i d_j (1/|z|)` is divergence-free away from `z = 0` (`d_i d_j (1/|z|)` is
//! homogeneous of degree -3), and `Phi = curl A` with `A = z x grad(psi)`,
//! `psi = (1/2) d_i d_j |z|` (for `psi` homogeneous of degree -1,
//! `curl(z x grad psi) = z lap(psi)`, and `lap |z| = 2/|z|`), i.e.
//! `A = -(z_j (z x e_i) + z_i (z x e_j)) / (2 |z|^3)`. By Stokes' theorem `T` is therefore
//! `(1/2)` the line integral of `A` around the set's boundary (each boundary edge run the way
//! its face in the set runs it, anticlockwise seen from outside). Along an edge from `r_a` to
//! `r_b`, `(z x e_i) . dz` is constant and `integral z / |z|^3 dt` has a closed form, which give
//! per edge `(u q^T + q u^T) / (4 |u|^2)` with `u = r_a x r_b` and
//! `q = (r_b/|r_b| - r_a/|r_a|) x u`: bounded by `|r_b/|r_b| - r_a/|r_a||`, so well conditioned
//! even where the field point is nearly in line with the edge (zero where exactly in line and
//! off the edge). This is an identity, not an approximation: the tensor of a face set costs its
//! boundary edges instead of a Biot–Savart term per face and per edge (the ring of faces
//! between two cells' near sets is an annulus of thousands of faces with a few hundred
//! boundary edges). At a point exactly on the set's surface the small circle Stokes' theorem
//! cuts out around it adds nothing on a face's interior (`integral of the in-plane unit
//! vector around a circle` vanishes); on an edge or corner of the surface the tensor itself
//! diverges (like `log d`), and the build's points fall on one only by coincidence.
//! Tested against the per-face scalar formulas of `face_set` (which are the definition).
//!
//! Every lane runs the same operations in the same order whatever the lane type, so a point's
//! sums do not depend on the width, on its neighbours in the block or on the thread: the
//! field is bit-for-bit reproducible however the points are batched.

use super::block::{BLOCK, Oct};
use super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::lanes::{Lanes, atan2, edge_log};
use super::tables::Tables;

/// Lanes `BASE .. BASE + V::N` of vertex `i`'s block: x, y, z, |r|.
#[inline(always)]
fn vertex<V: Lanes, const BASE: usize>(q: &[Oct], i: u32) -> [V; 4] {
    let q = &q[i as usize].0;
    std::array::from_fn(|k| V::load(&q[BLOCK * k + BASE..BLOCK * k + BASE + V::N]))
}

#[inline(always)]
fn dot3<V: Lanes>(a: &[V], b: &[V]) -> V {
    a[2].mul_add(b[2], a[1].mul_add(b[1], a[0] * b[0]))
}

/// Writes to `out[BASE .. BASE + V::N]` the sums over the whole of `t` for the points in those
/// lanes of the blocks `q` (the gradient sums only with `GRAD`).
#[inline(always)]
pub(crate) fn sums<V: Lanes, const GRAD: bool, const OPEN: bool, const BASE: usize>(
    t: &Tables,
    q: &[Oct],
    out: &mut [Sums; BLOCK],
) {
    let zero = V::splat(0.0);
    let two = V::splat(2.0);
    let plane_tol = V::splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    let mut face_grad = [zero; 6];
    let mut open_grad = [zero; 6];
    let faces = t.face_count;
    let corners = t.f0[..faces].iter().zip(&t.f1[..faces]).zip(&t.f2[..faces]);
    let normals = t.nx[..faces].iter().zip(&t.ny[..faces]).zip(&t.nz[..faces]);
    for (((&i1, &i2), &i3), ((&nx, &ny), &nz)) in corners.zip(normals) {
        let r1: [V; 4] = vertex::<V, BASE>(q, i1);
        let r2: [V; 4] = vertex::<V, BASE>(q, i2);
        let r3: [V; 4] = vertex::<V, BASE>(q, i3);
        let cx = r2[1].mul_sub(r3[2], r2[2] * r3[1]);
        let cy = r2[2].mul_sub(r3[0], r2[0] * r3[2]);
        let cz = r2[0].mul_sub(r3[1], r2[1] * r3[0]);
        let num = dot3(&r1, &[cx, cy, cz]);
        let d12 = dot3(&r1, &r2);
        let d23 = dot3(&r2, &r3);
        let d31 = dot3(&r3, &r1);
        let prod = r1[3] * r2[3] * r3[3];
        let den = r3[3].mul_add(d12, r2[3].mul_add(d31, r1[3].mul_add(d23, prod)));
        let tol = plane_tol * prod;
        let on_plane = V::and(num.abs().le(tol), den.le(tol));
        let omega = V::select(on_plane, zero, two * atan2(num, den));
        let n = [V::splat(nx), V::splat(ny), V::splat(nz)];
        let h = dot3(&n, &r1);
        let h_omega = h * omega;
        omega_acc = omega_acc + omega;
        face_u = h.mul_add(h_omega, face_u);
        for k in 0..3 {
            face_a[k] = n[k].mul_add(h_omega, face_a[k]);
        }
        if GRAD {
            let m = [nx * nx, nx * ny, nx * nz, ny * ny, ny * nz, nz * nz];
            for k in 0..6 {
                face_grad[k] = V::splat(m[k]).mul_add(omega, face_grad[k]);
            }
        }
    }
    let floor = V::splat(EDGE_FLOOR);
    let mut edge_u = zero;
    let mut edge_a = [zero; 3];
    let mut edge_grad = [zero; 6];
    let d = &t.edge_dyad;
    let ne = t.edge_count;
    let ends = t.e0[..ne].iter().zip(&t.e1[..ne]).zip(&t.edge_len_m[..ne]);
    let dyads = (d.xx[..ne].iter().zip(&d.xy[..ne]).zip(&d.xz[..ne]))
        .zip(d.yy[..ne].iter().zip(&d.yz[..ne]).zip(&d.zz[..ne]));
    for (((&ia, &ib), &len), (((&xx, &xy), &xz), ((&yy, &yz), &zz))) in ends.zip(dyads) {
        let ra: [V; 4] = vertex::<V, BASE>(q, ia);
        let rb: [V; 4] = vertex::<V, BASE>(q, ib);
        let len_v = V::splat(len);
        let l = edge_log(ra[3] + rb[3], len_v, floor);
        let mv = [xx, xy, xz, yy, yz, zz].map(V::splat);
        let er = [
            dot3(&[mv[0], mv[1], mv[2]], &ra),
            dot3(&[mv[1], mv[3], mv[4]], &ra),
            dot3(&[mv[2], mv[4], mv[5]], &ra),
        ];
        edge_u = dot3(&ra, &er).mul_add(l, edge_u);
        for k in 0..3 {
            edge_a[k] = er[k].mul_add(l, edge_a[k]);
        }
        if GRAD {
            for k in 0..6 {
                edge_grad[k] = mv[k].mul_add(l, edge_grad[k]);
            }
        }
    }
    if OPEN {
        // Along the set's boundary edges (a, b): with u = r_a x r_b and
        // q = (r_b/|r_b| - r_a/|r_a|) x u, each adds (u q^T + q u^T) / (4 |u|^2).
        let nb = t.b0.len();
        for (&ia, &ib) in t.b0[..nb].iter().zip(&t.b1[..nb]) {
            let ra: [V; 4] = vertex::<V, BASE>(q, ia);
            let rb: [V; 4] = vertex::<V, BASE>(q, ib);
            let u = [
                ra[1].mul_sub(rb[2], ra[2] * rb[1]),
                ra[2].mul_sub(rb[0], ra[0] * rb[2]),
                ra[0].mul_sub(rb[1], ra[1] * rb[0]),
            ];
            let uu = dot3(&u, &u);
            let (ia_inv, ib_inv) = (V::splat(1.0) / ra[3], V::splat(1.0) / rb[3]);
            let w = [
                rb[0].mul_sub(ib_inv, ra[0] * ia_inv),
                rb[1].mul_sub(ib_inv, ra[1] * ia_inv),
                rb[2].mul_sub(ib_inv, ra[2] * ia_inv),
            ];
            let qv = [
                w[1].mul_sub(u[2], w[2] * u[1]),
                w[2].mul_sub(u[0], w[0] * u[2]),
                w[0].mul_sub(u[1], w[1] * u[0]),
            ];
            let s = V::select(uu.gt(zero), V::splat(0.25) / uu, zero);
            let pairs = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)];
            for (k, (i, j)) in pairs.into_iter().enumerate() {
                let v = u[i].mul_add(qv[j], u[j] * qv[i]);
                open_grad[k] = v.mul_add(s, open_grad[k]);
            }
        }
    }
    let omega = omega_acc.to_array();
    let (face_u, edge_u) = (face_u.to_array(), edge_u.to_array());
    let face_a = face_a.map(V::to_array);
    let edge_a = edge_a.map(V::to_array);
    let face_grad = face_grad.map(V::to_array);
    let edge_grad = edge_grad.map(V::to_array);
    let open_grad = open_grad.map(V::to_array);
    for k in 0..V::N {
        let s = &mut out[BASE + k];
        s.omega = omega[k];
        s.face_u = face_u[k];
        s.edge_u = edge_u[k];
        s.face_a = std::array::from_fn(|j| face_a[j][k]);
        s.edge_a = std::array::from_fn(|j| edge_a[j][k]);
        if GRAD {
            s.face_grad = std::array::from_fn(|j| face_grad[j][k]);
            s.edge_grad = std::array::from_fn(|j| edge_grad[j][k]);
        }
        if OPEN {
            s.open_grad = std::array::from_fn(|j| open_grad[j][k]);
        }
    }
}
