//! The direct sums with explicit AVX-512 intrinsics (x86-64 only): `sums`, eight faces or edges
//! in the lanes (one field point), and `sums8`, eight field points in the lanes (a
//! `block::Oct` block).
//!
//! Same formulas, surface rules and polynomial approximations as the AVX2 kernels, on eight
//! lanes at once. Every function carries `#[target_feature(enable = "avx512f,avx512dq")]` and is
//! only called from the `multiversion` clones of `block::sums_block` and `simd::sums_compiled`
//! compiled for (and selected
//! at run time on) CPUs with those features, which makes the intrinsic calls safe without
//! `unsafe` blocks.

use std::arch::x86_64::*;

use super::block::{BLOCK, Oct};
use super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::lanes::{ATAN_P, ATAN_Q, ATANH_FAST_MAX, LG, MORE_BITS};
use super::simd::Span;
use super::tables::{SymSoa, Tables};

type V = __m512d;

#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn splat(v: f64) -> V {
    _mm512_set1_pd(v)
}

#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn dot3(a: &[V], b: &[V]) -> V {
    _mm512_fmadd_pd(
        a[2],
        b[2],
        _mm512_fmadd_pd(a[1], b[1], _mm512_mul_pd(a[0], b[0])),
    )
}

/// Component `k` (x, y, z, |r|) of a vertex block, eight points.
#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn part(q: &[f64; 4 * BLOCK], k: usize) -> V {
    let o = BLOCK * k;
    _mm512_setr_pd(
        q[o],
        q[o + 1],
        q[o + 2],
        q[o + 3],
        q[o + 4],
        q[o + 5],
        q[o + 6],
        q[o + 7],
    )
}

#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn vertex(q: &[Oct], i: u32) -> [V; 4] {
    let q = &q[i as usize].0;
    [part(q, 0), part(q, 1), part(q, 2), part(q, 3)]
}

#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn to_array(v: V) -> [f64; 8] {
    let halves = [_mm512_castpd512_pd256(v), _mm512_extractf64x4_pd::<1>(v)];
    let mut out = [0.0; 8];
    for (h, half) in halves.into_iter().enumerate() {
        let lo = _mm256_castpd256_pd128(half);
        let hi = _mm256_extractf128_pd::<1>(half);
        out[4 * h] = _mm_cvtsd_f64(lo);
        out[4 * h + 1] = _mm_cvtsd_f64(_mm_unpackhi_pd(lo, lo));
        out[4 * h + 2] = _mm_cvtsd_f64(hi);
        out[4 * h + 3] = _mm_cvtsd_f64(_mm_unpackhi_pd(hi, hi));
    }
    out
}

/// `atan2(y, x)`, the algorithm of `avx2::atan2` (Cephes) with mask registers.
#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn atan2(y: V, x: V) -> V {
    let sign = splat(-0.0);
    let ax = _mm512_andnot_pd(sign, x);
    let ay = _mm512_andnot_pd(sign, y);
    let swap = _mm512_cmp_pd_mask::<_CMP_GT_OQ>(ay, ax);
    let hi = _mm512_max_pd(ax, ay);
    let lo = _mm512_min_pd(ax, ay);
    let mid = _mm512_cmp_pd_mask::<_CMP_GT_OQ>(lo, _mm512_mul_pd(splat(0.66), hi));
    let zn = _mm512_mask_blend_pd(mid, lo, _mm512_sub_pd(lo, hi));
    let zd = _mm512_mask_blend_pd(mid, hi, _mm512_add_pd(lo, hi));
    let zero_d = _mm512_cmp_pd_mask::<_CMP_EQ_OQ>(zd, splat(0.0));
    let zd = _mm512_mask_blend_pd(zero_d, zd, splat(1.0));
    let z = _mm512_div_pd(zn, zd);
    let zz = _mm512_mul_pd(z, z);
    let mut p = splat(ATAN_P[4]);
    for c in [ATAN_P[3], ATAN_P[2], ATAN_P[1], ATAN_P[0]] {
        p = _mm512_fmadd_pd(p, zz, splat(c));
    }
    let mut q = _mm512_add_pd(zz, splat(ATAN_Q[4]));
    for c in [ATAN_Q[3], ATAN_Q[2], ATAN_Q[1], ATAN_Q[0]] {
        q = _mm512_fmadd_pd(q, zz, splat(c));
    }
    let mut r = _mm512_fmadd_pd(_mm512_mul_pd(z, zz), _mm512_div_pd(p, q), z);
    r = _mm512_mask_add_pd(
        r,
        mid,
        r,
        splat(std::f64::consts::FRAC_PI_4 + 0.5 * MORE_BITS),
    );
    let r_swapped = _mm512_add_pd(
        _mm512_sub_pd(splat(std::f64::consts::FRAC_PI_2), r),
        splat(MORE_BITS),
    );
    r = _mm512_mask_blend_pd(swap, r, r_swapped);
    let r_left = _mm512_add_pd(
        _mm512_sub_pd(splat(std::f64::consts::PI), r),
        splat(2.0 * MORE_BITS),
    );
    // Sign bit of x set (x < 0 or x = -0): the left half-plane.
    let x_neg = _mm512_movepi64_mask(_mm512_castpd_si512(x));
    r = _mm512_mask_blend_pd(x_neg, r, r_left);
    _mm512_xor_pd(r, _mm512_and_pd(y, sign))
}

/// `L_e` as `avx2::edge_log`: the `2 atanh(e / sum)` series, the general route for lanes of
/// edges closer than its range.
#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn edge_log(sum: V, e: V, floor: V) -> V {
    let s = _mm512_div_pd(e, sum);
    let fast = _mm512_cmp_pd_mask::<_CMP_LE_OQ>(s, splat(ATANH_FAST_MAX));
    let z = _mm512_mul_pd(s, s);
    let mut r = splat(LG[6]);
    for c in [LG[5], LG[4], LG[3], LG[2], LG[1], LG[0]] {
        r = _mm512_fmadd_pd(r, z, splat(c));
    }
    let l_fast = _mm512_fmadd_pd(_mm512_mul_pd(s, z), r, _mm512_add_pd(s, s));
    if fast == 0xff {
        return l_fast;
    }
    let num = _mm512_add_pd(sum, e);
    let den = _mm512_max_pd(_mm512_sub_pd(sum, e), _mm512_mul_pd(floor, num));
    let ratio = to_array(_mm512_div_pd(num, den));
    let lo = super::avx2::ln(_mm256_setr_pd(ratio[0], ratio[1], ratio[2], ratio[3]));
    let hi = super::avx2::ln(_mm256_setr_pd(ratio[4], ratio[5], ratio[6], ratio[7]));
    let slow = _mm512_insertf64x4::<1>(_mm512_castpd256_pd512(lo), hi);
    _mm512_mask_blend_pd(fast, slow, l_fast)
}

/// Potential and acceleration sums over the whole of `t` for the eight field points of the
/// vertex blocks `q` (see [`Oct`]).
#[target_feature(enable = "avx512f,avx512dq")]
pub(crate) fn sums8(t: &Tables, q: &[Oct]) -> [Sums; BLOCK] {
    let zero = _mm512_setzero_pd();
    let two = splat(2.0);
    let plane_tol = splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    let faces = t.face_count;
    for ((((&i0, &i1), &i2), (&nx, &ny)), &nz) in t.f0[..faces]
        .iter()
        .zip(&t.f1[..faces])
        .zip(&t.f2[..faces])
        .zip(t.nx[..faces].iter().zip(&t.ny[..faces]))
        .zip(&t.nz[..faces])
    {
        let r1 = vertex(q, i0);
        let r2 = vertex(q, i1);
        let r3 = vertex(q, i2);
        let cx = _mm512_fmsub_pd(r2[1], r3[2], _mm512_mul_pd(r2[2], r3[1]));
        let cy = _mm512_fmsub_pd(r2[2], r3[0], _mm512_mul_pd(r2[0], r3[2]));
        let cz = _mm512_fmsub_pd(r2[0], r3[1], _mm512_mul_pd(r2[1], r3[0]));
        let num = dot3(&r1, &[cx, cy, cz]);
        let d12 = dot3(&r1, &r2);
        let d23 = dot3(&r2, &r3);
        let d31 = dot3(&r3, &r1);
        let prod = _mm512_mul_pd(_mm512_mul_pd(r1[3], r2[3]), r3[3]);
        let den = _mm512_fmadd_pd(
            r3[3],
            d12,
            _mm512_fmadd_pd(r2[3], d31, _mm512_fmadd_pd(r1[3], d23, prod)),
        );
        let tol = _mm512_mul_pd(plane_tol, prod);
        let abs_num = _mm512_andnot_pd(splat(-0.0), num);
        let on_plane = _mm512_cmp_pd_mask::<_CMP_LE_OQ>(abs_num, tol)
            & _mm512_cmp_pd_mask::<_CMP_LE_OQ>(den, tol);
        let omega = _mm512_maskz_mul_pd(!on_plane, two, atan2(num, den));
        let n = [splat(nx), splat(ny), splat(nz)];
        let h = dot3(&n, &r1);
        let h_omega = _mm512_mul_pd(h, omega);
        omega_acc = _mm512_add_pd(omega_acc, omega);
        face_u = _mm512_fmadd_pd(h, h_omega, face_u);
        for k in 0..3 {
            face_a[k] = _mm512_fmadd_pd(n[k], h_omega, face_a[k]);
        }
    }
    let floor = splat(EDGE_FLOOR);
    let mut edge_u = zero;
    let mut edge_a = [zero; 3];
    let edges = t.edge_count;
    let d = &t.edge_dyad;
    for (((&ia, &ib), &len), e) in t.e0[..edges]
        .iter()
        .zip(&t.e1[..edges])
        .zip(&t.edge_len_m[..edges])
        .zip(0..edges)
    {
        let ra = vertex(q, ia);
        let rb = vertex(q, ib);
        let sum = _mm512_add_pd(ra[3], rb[3]);
        let l = edge_log(sum, splat(len), floor);
        let (xx, xy, xz) = (splat(d.xx[e]), splat(d.xy[e]), splat(d.xz[e]));
        let (yy, yz, zz) = (splat(d.yy[e]), splat(d.yz[e]), splat(d.zz[e]));
        let er = [
            dot3(&[xx, xy, xz], &ra),
            dot3(&[xy, yy, yz], &ra),
            dot3(&[xz, yz, zz], &ra),
        ];
        edge_u = _mm512_fmadd_pd(dot3(&ra, &er), l, edge_u);
        for k in 0..3 {
            edge_a[k] = _mm512_fmadd_pd(er[k], l, edge_a[k]);
        }
    }
    let omega = to_array(omega_acc);
    let face_u = to_array(face_u);
    let edge_u = to_array(edge_u);
    let face_a = [
        to_array(face_a[0]),
        to_array(face_a[1]),
        to_array(face_a[2]),
    ];
    let edge_a = [
        to_array(edge_a[0]),
        to_array(edge_a[1]),
        to_array(edge_a[2]),
    ];
    std::array::from_fn(|k| Sums {
        edge_u: edge_u[k],
        edge_a: [edge_a[0][k], edge_a[1][k], edge_a[2][k]],
        face_u: face_u[k],
        face_a: [face_a[0][k], face_a[1][k], face_a[2][k]],
        omega: omega[k],
        ..Sums::default()
    })
}

/// Rows `[x, y, z, |r|]` of eight vertices -> lanes x, y, z, |r| (lane `k` from `idx[k]`).
#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn gather(rv: &[[f64; 4]], idx: &[u32]) -> [V; 4] {
    let row = |k: usize| {
        let r = &rv[idx[k] as usize];
        _mm256_setr_pd(r[0], r[1], r[2], r[3])
    };
    // Rows a..h; pairs [a | c], [b | d], [e | g], [f | h] in the two 256-bit halves.
    let pa = _mm512_insertf64x4::<1>(_mm512_castpd256_pd512(row(0)), row(2));
    let pb = _mm512_insertf64x4::<1>(_mm512_castpd256_pd512(row(1)), row(3));
    let pc = _mm512_insertf64x4::<1>(_mm512_castpd256_pd512(row(4)), row(6));
    let pd = _mm512_insertf64x4::<1>(_mm512_castpd256_pd512(row(5)), row(7));
    let t0 = _mm512_unpacklo_pd(pa, pb); // a0 b0 a2 b2 | c0 d0 c2 d2
    let t1 = _mm512_unpackhi_pd(pa, pb); // a1 b1 a3 b3 | c1 d1 c3 d3
    let t2 = _mm512_unpacklo_pd(pc, pd); // e0 f0 e2 f2 | g0 h0 g2 h2
    let t3 = _mm512_unpackhi_pd(pc, pd); // e1 f1 e3 f3 | g1 h1 g3 h3
    [
        _mm512_shuffle_f64x2::<0x88>(t0, t2),
        _mm512_shuffle_f64x2::<0x88>(t1, t3),
        _mm512_shuffle_f64x2::<0xDD>(t0, t2),
        _mm512_shuffle_f64x2::<0xDD>(t1, t3),
    ]
}

#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn load(v: &[f64], i: usize) -> V {
    // One bounds check for the slice, then a single vector load.
    let s = &v[i..i + 8];
    _mm512_setr_pd(s[0], s[1], s[2], s[3], s[4], s[5], s[6], s[7])
}

#[target_feature(enable = "avx512f,avx512dq")]
#[inline]
fn sym_load(m: &SymSoa, i: usize) -> [V; 6] {
    [
        load(&m.xx, i),
        load(&m.xy, i),
        load(&m.xz, i),
        load(&m.yy, i),
        load(&m.yz, i),
        load(&m.zz, i),
    ]
}

/// Potential and acceleration sums (no gradient) over `span` (multiples of eight) for the
/// vertex vectors `rv` of one field point.
#[target_feature(enable = "avx512f,avx512dq")]
pub(crate) fn sums(t: &Tables, rv: &[[f64; 4]], span: &Span) -> Sums {
    const W: usize = 8;
    let zero = _mm512_setzero_pd();
    let two = splat(2.0);
    let plane_tol = splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    for i in span.faces.clone().step_by(W) {
        let r1 = gather(rv, &t.f0[i..i + W]);
        let r2 = gather(rv, &t.f1[i..i + W]);
        let r3 = gather(rv, &t.f2[i..i + W]);
        let cx = _mm512_fmsub_pd(r2[1], r3[2], _mm512_mul_pd(r2[2], r3[1]));
        let cy = _mm512_fmsub_pd(r2[2], r3[0], _mm512_mul_pd(r2[0], r3[2]));
        let cz = _mm512_fmsub_pd(r2[0], r3[1], _mm512_mul_pd(r2[1], r3[0]));
        let num = dot3(&r1, &[cx, cy, cz]);
        let d12 = dot3(&r1, &r2);
        let d23 = dot3(&r2, &r3);
        let d31 = dot3(&r3, &r1);
        let prod = _mm512_mul_pd(_mm512_mul_pd(r1[3], r2[3]), r3[3]);
        let den = _mm512_fmadd_pd(
            r3[3],
            d12,
            _mm512_fmadd_pd(r2[3], d31, _mm512_fmadd_pd(r1[3], d23, prod)),
        );
        let tol = _mm512_mul_pd(plane_tol, prod);
        let abs_num = _mm512_andnot_pd(splat(-0.0), num);
        let on_plane = _mm512_cmp_pd_mask::<_CMP_LE_OQ>(abs_num, tol)
            & _mm512_cmp_pd_mask::<_CMP_LE_OQ>(den, tol);
        let omega = _mm512_maskz_mul_pd(!on_plane, two, atan2(num, den));
        let n = [load(&t.nx, i), load(&t.ny, i), load(&t.nz, i)];
        let h = dot3(&n, &r1);
        let h_omega = _mm512_mul_pd(h, omega);
        omega_acc = _mm512_add_pd(omega_acc, omega);
        face_u = _mm512_fmadd_pd(h, h_omega, face_u);
        for k in 0..3 {
            face_a[k] = _mm512_fmadd_pd(n[k], h_omega, face_a[k]);
        }
    }
    let floor = splat(EDGE_FLOOR);
    let mut edge_u = zero;
    let mut edge_a = [zero; 3];
    for i in span.edges.clone().step_by(W) {
        let ra = gather(rv, &t.e0[i..i + W]);
        let rb = gather(rv, &t.e1[i..i + W]);
        let sum = _mm512_add_pd(ra[3], rb[3]);
        let l = edge_log(sum, load(&t.edge_len_m, i), floor);
        let m = sym_load(&t.edge_dyad, i);
        let er = [
            dot3(&[m[0], m[1], m[2]], &ra),
            dot3(&[m[1], m[3], m[4]], &ra),
            dot3(&[m[2], m[4], m[5]], &ra),
        ];
        edge_u = _mm512_fmadd_pd(dot3(&ra, &er), l, edge_u);
        for k in 0..3 {
            edge_a[k] = _mm512_fmadd_pd(er[k], l, edge_a[k]);
        }
    }
    let total = |v: V| to_array(v).iter().sum::<f64>();
    Sums {
        edge_u: total(edge_u),
        edge_a: [total(edge_a[0]), total(edge_a[1]), total(edge_a[2])],
        face_u: total(face_u),
        face_a: [total(face_a[0]), total(face_a[1]), total(face_a[2])],
        omega: total(omega_acc),
        ..Sums::default()
    }
}
