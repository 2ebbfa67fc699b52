//! The direct face and edge sums, four faces or edges at a time with `wide::f64x4`.
//!
//! Same formulas and surface rules as the scalar kernel in `direct`; the vectorised `atan2`
//! and `ln` of `wide` are polynomial approximations good to about an ulp, so the two kernels agree
//! to ~1e-14 relative on non-degenerate points (checked by a test). The function is compiled for
//! several x86-64 feature sets and picked at run time by `multiversion`.

use multiversion::multiversion;
use wide::f64x4;

use super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::tables::{LANES, SymSoa, Tables};

#[inline(always)]
fn gather(rv: &[[f64; 4]], idx: &[u32]) -> [f64x4; 4] {
    f64x4::transpose([
        f64x4::new(rv[idx[0] as usize]),
        f64x4::new(rv[idx[1] as usize]),
        f64x4::new(rv[idx[2] as usize]),
        f64x4::new(rv[idx[3] as usize]),
    ])
}

#[inline(always)]
fn load(v: &[f64], i: usize) -> f64x4 {
    f64x4::new([v[i], v[i + 1], v[i + 2], v[i + 3]])
}

#[inline(always)]
fn sym_load(m: &SymSoa, i: usize) -> [f64x4; 6] {
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
fn sym_mul(m: &[f64x4; 6], r: &[f64x4; 4]) -> [f64x4; 3] {
    [
        m[0] * r[0] + m[1] * r[1] + m[2] * r[2],
        m[1] * r[0] + m[3] * r[1] + m[4] * r[2],
        m[2] * r[0] + m[4] * r[1] + m[5] * r[2],
    ]
}

#[inline(always)]
fn kernel(t: &Tables, rv: &[[f64; 4]]) -> Sums {
    let zero = f64x4::ZERO;
    let two = f64x4::splat(2.0);
    let plane_tol = f64x4::splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    for i in (0..t.f0.len()).step_by(LANES) {
        let r1 = gather(rv, &t.f0[i..i + LANES]);
        let r2 = gather(rv, &t.f1[i..i + LANES]);
        let r3 = gather(rv, &t.f2[i..i + LANES]);
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
        let on_plane = num.abs().simd_le(tol) & den.simd_le(tol);
        let omega = on_plane.bitselect(zero, two * num.atan2(den));
        let m = sym_load(&t.face_dyad, i);
        let fr = sym_mul(&m, &r1);
        omega_acc += omega;
        face_u += (r1[0] * fr[0] + r1[1] * fr[1] + r1[2] * fr[2]) * omega;
        for k in 0..3 {
            face_a[k] += fr[k] * omega;
        }
    }
    let floor = f64x4::splat(EDGE_FLOOR);
    let mut edge_u = zero;
    let mut edge_a = [zero; 3];
    for i in (0..t.e0.len()).step_by(LANES) {
        let ra = gather(rv, &t.e0[i..i + LANES]);
        let rb = gather(rv, &t.e1[i..i + LANES]);
        let e = load(&t.edge_len_m, i);
        let sum = ra[3] + rb[3];
        let num = sum + e;
        let den = (sum - e).max(floor * num);
        let l = (num / den).ln();
        let m = sym_load(&t.edge_dyad, i);
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

/// Potential and acceleration sums (no gradient) for the vertex vectors `rv`.
#[multiversion(targets(
    "x86_64+avx512f+avx512vl+avx2+fma+avx",
    "x86_64+avx2+fma+avx",
    "x86_64+avx",
    "aarch64+neon"
))]
pub(crate) fn sums(t: &Tables, rv: &[[f64; 4]]) -> Sums {
    kernel(t, rv)
}
