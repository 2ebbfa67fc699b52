//! The exact sums over a cell's near faces at one point, vectorised over faces.
//!
//! Each face's single-layer term (see `face_set`) is independent of the others, so the lanes
//! run over faces: a group of faces is gathered, its terms computed lane by lane with the same
//! elementary functions as the field kernel (`lanes`), accumulated per lane, and the lanes are
//! added in a fixed order at the end. A point's sums are thus the same whatever else is
//! evaluated (the interpolated field's reproducibility).

use super::super::direct::{EDGE_FLOOR, PLANE_TOL};
use super::super::lanes::{Lanes, MAX_LANES, atan2, edge_log};
use super::face_set::FaceGeometry;

/// Potential and gradient of a face set per unit `G rho`.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(crate) struct NearSums {
    pub potential: f64,
    pub grad: [f64; 3],
}

#[inline(always)]
fn dot3<V: Lanes>(a: &[V; 3], b: &[V; 3]) -> V {
    a[2].mul_add(b[2], a[1].mul_add(b[1], a[0] * b[0]))
}

/// The sums over `faces` at `p`, `V::N` faces at a time.
#[inline(always)]
pub(crate) fn near_sums<V: Lanes>(g: &FaceGeometry, faces: &[u32], p: [f64; 3]) -> NearSums {
    let n = V::N;
    let zero = V::splat(0.0);
    let half = V::splat(0.5);
    let two = V::splat(2.0);
    let plane_tol = V::splat(PLANE_TOL);
    let floor = V::splat(EDGE_FLOOR);
    let lane_index: [f64; MAX_LANES] = std::array::from_fn(|k| k as f64);
    let lanes = V::load(&lane_index);
    let mut pot = zero;
    let mut grad = [zero; 3];
    // Records are fetched this many faces ahead (a query next to the surface waits on memory
    // when its cell's faces are not in the cache).
    const AHEAD: usize = 16;
    for (i, chunk) in faces.chunks(n).enumerate() {
        #[cfg(target_arch = "x86_64")]
        for f in faces.iter().skip(i * n + AHEAD).take(n) {
            let r = &g.records[*f as usize];
            super::super::x86::prefetch(&r.0[0]);
            super::super::x86::prefetch(&r.0[1]);
        }
        let count = chunk.len();
        // Corners, normal and edge lengths of the chunk's faces, a vector each
        // (lanes past the chunk repeat its last face).
        let rows: [&super::face_set::FaceRecord; MAX_LANES] =
            std::array::from_fn(|lane| &g.records[chunk[lane.min(count - 1)] as usize]);
        let mut q = [zero; 16];
        for (b, out) in q.chunks_exact_mut(8).enumerate() {
            out.copy_from_slice(&V::transpose8(std::array::from_fn(|l| &rows[l].0[b])));
        }
        let nv = [q[9], q[10], q[11]];
        // The edges' in-plane normals, as `face_set::edge_normal` computes them (same bits),
        // and the corners relative to the point. (Plain loops: closures called through
        // `array::from_fn` are not always inlined into this function and its vector
        // instructions, and then cost a call per operation.)
        let one = V::splat(1.0);
        let mut en = [[zero; 3]; 3];
        let mut r = [[zero; 3]; 3];
        for k in 0..3 {
            let (a, b) = (3 * k, 3 * ((k + 1) % 3));
            let d = [q[b] - q[a], q[b + 1] - q[a + 1], q[b + 2] - q[a + 2]];
            let inv = one / q[12 + k];
            en[k] = [
                (d[1] * nv[2] - d[2] * nv[1]) * inv,
                (d[2] * nv[0] - d[0] * nv[2]) * inv,
                (d[0] * nv[1] - d[1] * nv[0]) * inv,
            ];
            for c in 0..3 {
                r[k][c] = q[a + c] - V::splat(p[c]);
            }
        }
        let len = [
            dot3(&r[0], &r[0]).sqrt(),
            dot3(&r[1], &r[1]).sqrt(),
            dot3(&r[2], &r[2]).sqrt(),
        ];
        // Solid angle (van Oosterom & Strackee) with the surface rule of `direct`.
        let cx = r[1][1].mul_sub(r[2][2], r[1][2] * r[2][1]);
        let cy = r[1][2].mul_sub(r[2][0], r[1][0] * r[2][2]);
        let cz = r[1][0].mul_sub(r[2][1], r[1][1] * r[2][0]);
        let num = dot3(&r[0], &[cx, cy, cz]);
        let prod = len[0] * len[1] * len[2];
        let den = len[2].mul_add(
            dot3(&r[0], &r[1]),
            len[1].mul_add(dot3(&r[2], &r[0]), len[0].mul_add(dot3(&r[1], &r[2]), prod)),
        );
        let tol = plane_tol * prod;
        let on_plane = V::and(num.abs().le(tol), den.le(tol));
        let omega = V::select(on_plane, zero, two * atan2(num, den));
        let h = dot3(&nv, &r[0]);
        let mut s = zero - h * omega;
        let mut grad_s = [nv[0] * omega, nv[1] * omega, nv[2] * omega];
        for k in 0..3 {
            let (a, b) = (k, (k + 1) % 3);
            let l = edge_log(len[a] + len[b], q[12 + k], floor);
            let nu = en[k];
            s = dot3(&nu, &r[a]).mul_add(l, s);
            for c in 0..3 {
                grad_s[c] = grad_s[c] - nu[c] * l;
            }
        }
        // Lanes past the chunk's faces repeat its last face: leave them out.
        let valid = lanes.le(V::splat((count - 1) as f64));
        pot = V::select(valid, (half * h).mul_add(s, pot), pot);
        for c in 0..3 {
            let term = half * (h * grad_s[c] - nv[c] * s);
            grad[c] = V::select(valid, grad[c] + term, grad[c]);
        }
    }
    let sum = |v: V| v.to_array()[..n].iter().fold(0.0, |a, b| a + b);
    NearSums {
        potential: sum(pot),
        grad: grad.map(sum),
    }
}

/// [`near_sums`] with the widest vectors this CPU runs.
pub(crate) fn near(g: &FaceGeometry, faces: &[u32], p: [f64; 3]) -> NearSums {
    match super::super::block::Runner::for_kernel(super::super::DirectKernel::Auto) {
        #[cfg(target_arch = "x86_64")]
        Some(super::super::block::Runner::X86(isa)) => isa.near(g, faces, p),
        _ => near_sums::<super::super::lanes::Portable>(g, faces, p),
    }
}

#[cfg(test)]
mod tests {
    use nalgebra::Point3;

    use super::super::face_set::set_jet;
    use super::*;
    use crate::generate;

    #[test]
    fn vector_near_sums_match_the_scalar_face_sums() {
        // Every width this CPU runs (each with its own transposition of the face records)
        // against the scalar per-face formulas (checked in turn
        // against the Werner–Scheeres field), for sets of every length modulo the width, at a
        // point off the surface and one on a vertex.
        let mesh = generate::demo_body(2);
        let g = FaceGeometry::new(&mesh);
        let a = mesh.triangle(7)[0];
        for p in [Point3::new(2600.0, 900.0, 400.0), a] {
            for len in [1usize, 3, 4, 8, 9, 17, 40] {
                let faces: Vec<u32> = (0..len as u32).map(|k| k * 7 % 320).collect();
                let want = set_jet::<false>(&g, &faces, &p);
                let x = [p.x, p.y, p.z];
                let mut got = vec![near(&g, &faces, x)];
                got.push(near_sums::<super::super::super::lanes::Portable>(
                    &g, &faces, x,
                ));
                #[cfg(target_arch = "x86_64")]
                {
                    use super::super::super::x86::Isa;
                    for isa in [Isa::Avx2, Isa::Avx512] {
                        if isa.detected() {
                            got.push(isa.near(&g, &faces, x));
                        }
                    }
                }
                let scale = want.potential.abs().max(1.0);
                for s in got {
                    assert!(
                        (s.potential - want.potential).abs() < 1e-12 * scale,
                        "{len}: {} vs {}",
                        s.potential,
                        want.potential
                    );
                    for k in 0..3 {
                        assert!((s.grad[k] - want.grad[k]).abs() < 1e-12 * scale, "{len}");
                    }
                }
            }
        }
    }
}
