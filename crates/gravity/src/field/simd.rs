//! The direct face and edge sums, four faces or edges at a time.
//!
//! Same formulas and surface rules as the scalar kernel in `direct`, written over the
//! [`Lanes`] abstraction and run on `wide::f64x4` (portable explicit SIMD); on x86-64 CPUs with
//! AVX2+FMA, chosen at run time through `multiversion`, the explicit-intrinsics kernel in
//! `avx2` runs instead. All agree with the scalar kernel to ~1e-13 relative on non-degenerate
//! points (tested).

use std::ops::Range;

use multiversion::multiversion;
use multiversion::target::match_target;
use wide::f64x4;

use super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::lanes::Lanes;
use super::tables::{LANES, SymSoa, Tables};

#[inline(always)]
fn gather<L: Lanes>(rv: &[[f64; 4]], idx: &[u32]) -> [L; 4] {
    L::transpose([
        L::from_array(rv[idx[0] as usize]),
        L::from_array(rv[idx[1] as usize]),
        L::from_array(rv[idx[2] as usize]),
        L::from_array(rv[idx[3] as usize]),
    ])
}

#[inline(always)]
fn load<L: Lanes>(v: &[f64], i: usize) -> L {
    L::from_array([v[i], v[i + 1], v[i + 2], v[i + 3]])
}

#[inline(always)]
fn sym_load<L: Lanes>(m: &SymSoa, i: usize) -> [L; 6] {
    [
        load(&m.xx, i),
        load(&m.xy, i),
        load(&m.xz, i),
        load(&m.yy, i),
        load(&m.yz, i),
        load(&m.zz, i),
    ]
}

#[inline(always)]
fn sym_mul<L: Lanes>(m: &[L; 6], r: &[L; 4]) -> [L; 3] {
    [
        m[0] * r[0] + m[1] * r[1] + m[2] * r[2],
        m[1] * r[0] + m[3] * r[1] + m[4] * r[2],
        m[2] * r[0] + m[4] * r[1] + m[5] * r[2],
    ]
}

#[inline(always)]
fn kernel<L: Lanes>(t: &Tables, rv: &[[f64; 4]], span: &Span) -> Sums {
    let zero = L::splat(0.0);
    let two = L::splat(2.0);
    let plane_tol = L::splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    for i in span.faces.clone().step_by(LANES) {
        let r1: [L; 4] = gather(rv, &t.f0[i..i + LANES]);
        let r2: [L; 4] = gather(rv, &t.f1[i..i + LANES]);
        let r3: [L; 4] = gather(rv, &t.f2[i..i + LANES]);
        let cx = r2[1] * r3[2] - r2[2] * r3[1];
        let cy = r2[2] * r3[0] - r2[0] * r3[2];
        let cz = r2[0] * r3[1] - r2[1] * r3[0];
        let num = r1[0] * cx + r1[1] * cy + r1[2] * cz;
        let d12 = r1[0] * r2[0] + r1[1] * r2[1] + r1[2] * r2[2];
        let d23 = r2[0] * r3[0] + r2[1] * r3[1] + r2[2] * r3[2];
        let d31 = r3[0] * r1[0] + r3[1] * r1[1] + r3[2] * r1[2];
        let prod = r1[3] * r2[3] * r3[3];
        let den = prod + r1[3] * d23 + r2[3] * d31 + r3[3] * d12;
        let tol = plane_tol * prod;
        let omega = L::zero_where_both_le(num.abs(), tol, den, tol, two * num.atan2(den));
        let n: [L; 3] = [load(&t.nx, i), load(&t.ny, i), load(&t.nz, i)];
        let h = n[0] * r1[0] + n[1] * r1[1] + n[2] * r1[2];
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
    for i in span.edges.clone().step_by(LANES) {
        let ra: [L; 4] = gather(rv, &t.e0[i..i + LANES]);
        let rb: [L; 4] = gather(rv, &t.e1[i..i + LANES]);
        let e: L = load(&t.edge_len_m, i);
        let sum = ra[3] + rb[3];
        let l = L::edge_log(sum, e, floor);
        let m: [L; 6] = sym_load(&t.edge_dyad, i);
        let er = sym_mul(&m, &ra);
        edge_u += (ra[0] * er[0] + ra[1] * er[1] + ra[2] * er[2]) * l;
        for k in 0..3 {
            edge_a[k] += er[k] * l;
        }
    }
    Sums {
        edge_u: edge_u.reduce_add(),
        edge_a: edge_a.map(|v| v.reduce_add()),
        face_u: face_u.reduce_add(),
        face_a: face_a.map(|v| v.reduce_add()),
        omega: omega_acc.reduce_add(),
        ..Sums::default()
    }
}

/// The kernel on `wide::f64x4` (whatever SIMD the build enables; SSE2 on default x86-64).
pub(crate) fn sums_wide(t: &Tables, rv: &[[f64; 4]], span: &Span) -> Sums {
    kernel::<f64x4>(t, rv, span)
}

/// The kernel compiled per CPU feature set and dispatched at run time: explicit AVX-512 (eight
/// lanes) or AVX2+FMA (four) on x86-64 CPUs that have them, `wide` elsewhere. `span` must be in
/// multiples of eight (the tables are padded so).
#[multiversion(targets("x86_64+avx512f+avx512dq+avx2+fma+avx"))]
pub(crate) fn sums_compiled(t: &Tables, rv: &[[f64; 4]], span: &Span) -> Sums {
    match_target! {
        "x86_64+avx512f+avx512dq" => super::avx512::sums(t, rv, span),
        _ => sums_avx2(t, rv, span),
    }
}

/// As [`sums_compiled`] without the AVX-512 kernel (tested on its own on CPUs with both).
#[multiversion(targets("x86_64+avx2+fma+avx"))]
pub(crate) fn sums_avx2(t: &Tables, rv: &[[f64; 4]], span: &Span) -> Sums {
    match_target! {
        "x86_64+avx2+fma" => super::avx2::sums(t, rv, span),
        _ => kernel::<f64x4>(t, rv, span),
    }
}

/// Face and edge index ranges (padded tables, multiples of `tables::PAD`) one kernel call covers.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Span {
    pub faces: Range<usize>,
    pub edges: Range<usize>,
}

impl Span {
    /// Everything.
    pub fn all(t: &Tables) -> Span {
        Span {
            faces: 0..t.f0.len(),
            edges: 0..t.e0.len(),
        }
    }
}

/// The fastest kernel for this CPU over the whole mesh.
pub(crate) fn sums(t: &Tables, rv: &[[f64; 4]]) -> Sums {
    sums_compiled(t, rv, &Span::all(t))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::direct;

    #[test]
    fn every_single_point_kernel_matches_the_scalar_kernel() {
        // Each compiled variant this CPU can run (AVX-512, AVX2, wide) against the portable
        // scalar reference; a vertex and an edge midpoint exercise the surface rules. The
        // demo body's face count is not a multiple of eight, so the padding is exercised too.
        let mesh = crate::generate::demo_body(2);
        let (t, _) = Tables::build(&mesh).expect("valid");
        let t = t.pieces(usize::MAX).remove(0);
        let [a, b, _] = mesh.triangle(9);
        let mid = (a.coords + b.coords) * 0.5;
        let span = Span::all(&t);
        let mut rv = Vec::new();
        for p in [
            [3000.0, 100.0, -200.0],
            [a.x, a.y, a.z],
            [mid.x, mid.y, mid.z],
            [0.0, 0.0, 0.0],
            [-900.0, 700.0, 2500.0],
        ] {
            direct::fill_vertices(&t, p, &mut rv);
            let want = direct::sums_scalar::<false>(&t, &rv);
            let scale_u = want.edge_u.abs().max(want.face_u.abs());
            let scale_a = want
                .edge_a
                .iter()
                .chain(&want.face_a)
                .fold(0.0f64, |m, v| m.max(v.abs()));
            for got in [
                sums_compiled(&t, &rv, &span),
                sums_avx2(&t, &rv, &span),
                sums_wide(&t, &rv, &span),
            ] {
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
