//! The direct face and edge sums with explicit AVX2+FMA intrinsics (x86-64 only).
//!
//! Two kernels: `sums`, four faces or edges in the lanes (one field point), and `sums_half`,
//! four field points in the lanes (half of a `block::Oct` block of eight).
//! Same formulas, surface rules and polynomial approximations as the portable kernels
//! (`simd::kernel` over `lanes::Lanes`): Cephes `atan` for the solid angles, fdlibm's `log`
//! reduction for the edge logs. Every function here carries
//! `#[target_feature(enable = "avx2,fma")]`; they are only called from the `multiversion`
//! clone of `simd::sums_compiled` that is compiled for (and selected at run time on) CPUs with
//! those features, which makes the intrinsic calls safe without `unsafe` blocks.

use std::arch::x86_64::*;

use super::block::{BLOCK, Oct};
use super::direct::{EDGE_FLOOR, PLANE_TOL, Sums};
use super::lanes::{ATAN_P, ATAN_Q, ATANH_FAST_MAX, LG, LN2_HI, LN2_LO, MORE_BITS};
use super::simd::Span;
use super::tables::{LANES, SymSoa, Tables};

type V = __m256d;

#[target_feature(enable = "avx2,fma")]
#[inline]
fn splat(v: f64) -> V {
    _mm256_set1_pd(v)
}

#[target_feature(enable = "avx2,fma")]
#[inline]
fn load(v: &[f64], i: usize) -> V {
    // One bounds check for the slice, then a single vector load.
    let s = &v[i..i + 4];
    _mm256_setr_pd(s[0], s[1], s[2], s[3])
}

#[target_feature(enable = "avx2,fma")]
#[inline]
fn row(r: &[f64; 4]) -> V {
    _mm256_setr_pd(r[0], r[1], r[2], r[3])
}

/// Rows `[x, y, z, |r|]` of four vertices -> lanes x, y, z, |r|.
#[target_feature(enable = "avx2,fma")]
#[inline]
fn gather(rv: &[[f64; 4]], idx: &[u32]) -> [V; 4] {
    let a = row(&rv[idx[0] as usize]);
    let b = row(&rv[idx[1] as usize]);
    let c = row(&rv[idx[2] as usize]);
    let d = row(&rv[idx[3] as usize]);
    let t0 = _mm256_unpacklo_pd(a, b); // a0 b0 a2 b2
    let t1 = _mm256_unpackhi_pd(a, b); // a1 b1 a3 b3
    let t2 = _mm256_unpacklo_pd(c, d); // c0 d0 c2 d2
    let t3 = _mm256_unpackhi_pd(c, d); // c1 d1 c3 d3
    [
        _mm256_permute2f128_pd::<0x20>(t0, t2),
        _mm256_permute2f128_pd::<0x20>(t1, t3),
        _mm256_permute2f128_pd::<0x31>(t0, t2),
        _mm256_permute2f128_pd::<0x31>(t1, t3),
    ]
}

#[target_feature(enable = "avx2,fma")]
#[inline]
fn hsum(v: V) -> f64 {
    let s = _mm_add_pd(_mm256_castpd256_pd128(v), _mm256_extractf128_pd::<1>(v));
    _mm_cvtsd_f64(_mm_add_sd(s, _mm_unpackhi_pd(s, s)))
}

#[target_feature(enable = "avx2,fma")]
#[inline]
fn dot3(a: &[V], b: &[V]) -> V {
    _mm256_fmadd_pd(
        a[2],
        b[2],
        _mm256_fmadd_pd(a[1], b[1], _mm256_mul_pd(a[0], b[0])),
    )
}

#[target_feature(enable = "avx2,fma")]
#[inline]
fn atan2(y: V, x: V) -> V {
    let sign = splat(-0.0);
    let ax = _mm256_andnot_pd(sign, x);
    let ay = _mm256_andnot_pd(sign, y);
    let swap = _mm256_cmp_pd::<_CMP_GT_OQ>(ay, ax);
    let hi = _mm256_max_pd(ax, ay);
    let lo = _mm256_min_pd(ax, ay);
    let mid = _mm256_cmp_pd::<_CMP_GT_OQ>(lo, _mm256_mul_pd(splat(0.66), hi));
    let zn = _mm256_blendv_pd(lo, _mm256_sub_pd(lo, hi), mid);
    let zd = _mm256_blendv_pd(hi, _mm256_add_pd(lo, hi), mid);
    let zd = _mm256_blendv_pd(zd, splat(1.0), _mm256_cmp_pd::<_CMP_EQ_OQ>(zd, splat(0.0)));
    let z = _mm256_div_pd(zn, zd);
    let zz = _mm256_mul_pd(z, z);
    let mut p = splat(ATAN_P[4]);
    for c in [ATAN_P[3], ATAN_P[2], ATAN_P[1], ATAN_P[0]] {
        p = _mm256_fmadd_pd(p, zz, splat(c));
    }
    let mut q = _mm256_add_pd(zz, splat(ATAN_Q[4]));
    for c in [ATAN_Q[3], ATAN_Q[2], ATAN_Q[1], ATAN_Q[0]] {
        q = _mm256_fmadd_pd(q, zz, splat(c));
    }
    let mut r = _mm256_fmadd_pd(_mm256_mul_pd(z, zz), _mm256_div_pd(p, q), z);
    r = _mm256_add_pd(
        r,
        _mm256_and_pd(mid, splat(std::f64::consts::FRAC_PI_4 + 0.5 * MORE_BITS)),
    );
    let r_swapped = _mm256_add_pd(
        _mm256_sub_pd(splat(std::f64::consts::FRAC_PI_2), r),
        splat(MORE_BITS),
    );
    r = _mm256_blendv_pd(r, r_swapped, swap);
    let r_left = _mm256_add_pd(
        _mm256_sub_pd(splat(std::f64::consts::PI), r),
        splat(2.0 * MORE_BITS),
    );
    r = _mm256_blendv_pd(r, r_left, x); // blendv picks on the sign bit of x
    _mm256_xor_pd(r, _mm256_and_pd(y, sign))
}

/// `ln` of finite positive normal lanes.
#[target_feature(enable = "avx2,fma")]
#[inline]
pub(crate) fn ln(v: V) -> V {
    let bits = _mm256_castpd_si256(v);
    // Exponent field to f64 with the 2^52 trick (AVX2 has no i64 -> f64 conversion).
    let e_field = _mm256_srli_epi64::<52>(bits);
    let two52 = _mm256_castsi256_pd(_mm256_set1_epi64x(0x4330_0000_0000_0000));
    let e = _mm256_sub_pd(
        _mm256_castsi256_pd(_mm256_or_si256(e_field, _mm256_castpd_si256(two52))),
        two52,
    );
    let m = _mm256_castsi256_pd(_mm256_or_si256(
        _mm256_and_si256(bits, _mm256_set1_epi64x(0x000f_ffff_ffff_ffff)),
        _mm256_set1_epi64x(0x3ff0_0000_0000_0000),
    ));
    let big = _mm256_cmp_pd::<_CMP_GT_OQ>(m, splat(std::f64::consts::SQRT_2));
    let m = _mm256_blendv_pd(m, _mm256_mul_pd(splat(0.5), m), big);
    let k = _mm256_add_pd(
        _mm256_sub_pd(e, splat(1023.0)),
        _mm256_and_pd(big, splat(1.0)),
    );
    let f = _mm256_sub_pd(m, splat(1.0));
    let s = _mm256_div_pd(f, _mm256_add_pd(splat(2.0), f));
    let z = _mm256_mul_pd(s, s);
    let w = _mm256_mul_pd(z, z);
    let t1 = _mm256_mul_pd(
        w,
        _mm256_fmadd_pd(
            w,
            _mm256_fmadd_pd(w, splat(LG[5]), splat(LG[3])),
            splat(LG[1]),
        ),
    );
    let t2 = _mm256_mul_pd(
        z,
        _mm256_fmadd_pd(
            w,
            _mm256_fmadd_pd(
                w,
                _mm256_fmadd_pd(w, splat(LG[6]), splat(LG[4])),
                splat(LG[2]),
            ),
            splat(LG[0]),
        ),
    );
    let r = _mm256_add_pd(t2, t1);
    let hfsq = _mm256_mul_pd(splat(0.5), _mm256_mul_pd(f, f));
    // k ln2_hi - ((hfsq - (s (hfsq + r) + k ln2_lo)) - f)
    let inner = _mm256_fmadd_pd(s, _mm256_add_pd(hfsq, r), _mm256_mul_pd(k, splat(LN2_LO)));
    _mm256_fmsub_pd(
        k,
        splat(LN2_HI),
        _mm256_sub_pd(_mm256_sub_pd(hfsq, inner), f),
    )
}

/// `L_e = ln((a+b+e)/(a+b-e))` from `sum = a + b` and the edge length `e`.
///
/// Since `(a+b+e)/(a+b-e) = (1+s)/(1-s)` with `s = e/(a+b)`, `L_e = 2 atanh(s) = 2s + s R(s^2)`
/// with fdlibm's `R` (the same polynomial as in [`ln`]), valid for `s <= 3 - 2 sqrt 2` (ratio
/// `<= sqrt 2`): one division instead of two, and more accurate than taking the log of the
/// rounded ratio. Lanes of an edge closer than that (rare on large meshes) take the general
/// route with the floored denominator.
#[target_feature(enable = "avx2,fma")]
#[inline]
fn edge_log(sum: V, e: V, floor: V) -> V {
    let s = _mm256_div_pd(e, sum);
    let fast = _mm256_cmp_pd::<_CMP_LE_OQ>(s, splat(ATANH_FAST_MAX));
    let z = _mm256_mul_pd(s, s);
    let mut r = splat(LG[6]);
    for c in [LG[5], LG[4], LG[3], LG[2], LG[1], LG[0]] {
        r = _mm256_fmadd_pd(r, z, splat(c));
    }
    let l_fast = _mm256_fmadd_pd(_mm256_mul_pd(s, z), r, _mm256_add_pd(s, s));
    if _mm256_movemask_pd(fast) == 0b1111 {
        return l_fast;
    }
    let num = _mm256_add_pd(sum, e);
    let den = _mm256_max_pd(_mm256_sub_pd(sum, e), _mm256_mul_pd(floor, num));
    _mm256_blendv_pd(ln(_mm256_div_pd(num, den)), l_fast, fast)
}

#[target_feature(enable = "avx2,fma")]
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

/// Potential and acceleration sums (no gradient) over `span` for the vertex vectors `rv`.
#[target_feature(enable = "avx2,fma")]
pub(crate) fn sums(t: &Tables, rv: &[[f64; 4]], span: &Span) -> Sums {
    let zero = _mm256_setzero_pd();
    let two = splat(2.0);
    let plane_tol = splat(PLANE_TOL);
    let mut omega_acc = zero;
    let mut face_u = zero;
    let mut face_a = [zero; 3];
    for i in span.faces.clone().step_by(LANES) {
        let r1 = gather(rv, &t.f0[i..i + LANES]);
        let r2 = gather(rv, &t.f1[i..i + LANES]);
        let r3 = gather(rv, &t.f2[i..i + LANES]);
        let cx = _mm256_fmsub_pd(r2[1], r3[2], _mm256_mul_pd(r2[2], r3[1]));
        let cy = _mm256_fmsub_pd(r2[2], r3[0], _mm256_mul_pd(r2[0], r3[2]));
        let cz = _mm256_fmsub_pd(r2[0], r3[1], _mm256_mul_pd(r2[1], r3[0]));
        let num = dot3(&r1, &[cx, cy, cz]);
        let d12 = dot3(&r1, &r2);
        let d23 = dot3(&r2, &r3);
        let d31 = dot3(&r3, &r1);
        let prod = _mm256_mul_pd(_mm256_mul_pd(r1[3], r2[3]), r3[3]);
        let den = _mm256_fmadd_pd(
            r3[3],
            d12,
            _mm256_fmadd_pd(r2[3], d31, _mm256_fmadd_pd(r1[3], d23, prod)),
        );
        let tol = _mm256_mul_pd(plane_tol, prod);
        let abs_num = _mm256_andnot_pd(splat(-0.0), num);
        let on_plane = _mm256_and_pd(
            _mm256_cmp_pd::<_CMP_LE_OQ>(abs_num, tol),
            _mm256_cmp_pd::<_CMP_LE_OQ>(den, tol),
        );
        let omega = _mm256_andnot_pd(on_plane, _mm256_mul_pd(two, atan2(num, den)));
        let n = [load(&t.nx, i), load(&t.ny, i), load(&t.nz, i)];
        let h = dot3(&n, &r1);
        let h_omega = _mm256_mul_pd(h, omega);
        omega_acc = _mm256_add_pd(omega_acc, omega);
        face_u = _mm256_fmadd_pd(h, h_omega, face_u);
        for k in 0..3 {
            face_a[k] = _mm256_fmadd_pd(n[k], h_omega, face_a[k]);
        }
    }
    let floor = splat(EDGE_FLOOR);
    let mut edge_u = zero;
    let mut edge_a = [zero; 3];
    for i in span.edges.clone().step_by(LANES) {
        let ra = gather(rv, &t.e0[i..i + LANES]);
        let rb = gather(rv, &t.e1[i..i + LANES]);
        let e = load(&t.edge_len_m, i);
        let sum = _mm256_add_pd(ra[3], rb[3]);
        let l = edge_log(sum, e, floor);
        let m = sym_load(&t.edge_dyad, i);
        let er = [
            dot3(&[m[0], m[1], m[2]], &ra),
            dot3(&[m[1], m[3], m[4]], &ra),
            dot3(&[m[2], m[4], m[5]], &ra),
        ];
        edge_u = _mm256_fmadd_pd(dot3(&ra, &er), l, edge_u);
        for k in 0..3 {
            edge_a[k] = _mm256_fmadd_pd(er[k], l, edge_a[k]);
        }
    }
    Sums {
        edge_u: hsum(edge_u),
        edge_a: [hsum(edge_a[0]), hsum(edge_a[1]), hsum(edge_a[2])],
        face_u: hsum(face_u),
        face_a: [hsum(face_a[0]), hsum(face_a[1]), hsum(face_a[2])],
        omega: hsum(omega_acc),
        ..Sums::default()
    }
}

/// Lanes `4 half .. 4 half + 4` of component `k` (x, y, z, |r|) of a vertex block.
#[target_feature(enable = "avx2,fma")]
#[inline]
fn part(q: &[f64; 4 * BLOCK], k: usize, half: usize) -> V {
    let o = BLOCK * k + 4 * half;
    let s = &q[o..o + 4];
    _mm256_setr_pd(s[0], s[1], s[2], s[3])
}

#[target_feature(enable = "avx2,fma")]
#[inline]
fn vertex(q: &[Oct], i: u32, half: usize) -> [V; 4] {
    let q = &q[i as usize].0;
    [
        part(q, 0, half),
        part(q, 1, half),
        part(q, 2, half),
        part(q, 3, half),
    ]
}

#[target_feature(enable = "avx2,fma")]
#[inline]
fn to_array(v: V) -> [f64; 4] {
    let lo = _mm256_castpd256_pd128(v);
    let hi = _mm256_extractf128_pd::<1>(v);
    [
        _mm_cvtsd_f64(lo),
        _mm_cvtsd_f64(_mm_unpackhi_pd(lo, lo)),
        _mm_cvtsd_f64(hi),
        _mm_cvtsd_f64(_mm_unpackhi_pd(hi, hi)),
    ]
}

/// Potential and acceleration sums over the whole of `t` for the four field points in lanes
/// `4 half .. 4 half + 4` of the vertex blocks `q` (see [`Oct`]).
#[target_feature(enable = "avx2,fma")]
pub(crate) fn sums_half(t: &Tables, q: &[Oct], half: usize) -> [Sums; 4] {
    let zero = _mm256_setzero_pd();
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
        let r1 = vertex(q, i0, half);
        let r2 = vertex(q, i1, half);
        let r3 = vertex(q, i2, half);
        let cx = _mm256_fmsub_pd(r2[1], r3[2], _mm256_mul_pd(r2[2], r3[1]));
        let cy = _mm256_fmsub_pd(r2[2], r3[0], _mm256_mul_pd(r2[0], r3[2]));
        let cz = _mm256_fmsub_pd(r2[0], r3[1], _mm256_mul_pd(r2[1], r3[0]));
        let num = dot3(&r1, &[cx, cy, cz]);
        let d12 = dot3(&r1, &r2);
        let d23 = dot3(&r2, &r3);
        let d31 = dot3(&r3, &r1);
        let prod = _mm256_mul_pd(_mm256_mul_pd(r1[3], r2[3]), r3[3]);
        let den = _mm256_fmadd_pd(
            r3[3],
            d12,
            _mm256_fmadd_pd(r2[3], d31, _mm256_fmadd_pd(r1[3], d23, prod)),
        );
        let tol = _mm256_mul_pd(plane_tol, prod);
        let abs_num = _mm256_andnot_pd(splat(-0.0), num);
        let on_plane = _mm256_and_pd(
            _mm256_cmp_pd::<_CMP_LE_OQ>(abs_num, tol),
            _mm256_cmp_pd::<_CMP_LE_OQ>(den, tol),
        );
        let omega = _mm256_andnot_pd(on_plane, _mm256_mul_pd(two, atan2(num, den)));
        let n = [splat(nx), splat(ny), splat(nz)];
        let h = dot3(&n, &r1);
        let h_omega = _mm256_mul_pd(h, omega);
        omega_acc = _mm256_add_pd(omega_acc, omega);
        face_u = _mm256_fmadd_pd(h, h_omega, face_u);
        for k in 0..3 {
            face_a[k] = _mm256_fmadd_pd(n[k], h_omega, face_a[k]);
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
        let ra = vertex(q, ia, half);
        let rb = vertex(q, ib, half);
        let sum = _mm256_add_pd(ra[3], rb[3]);
        let l = edge_log(sum, splat(len), floor);
        let (xx, xy, xz) = (splat(d.xx[e]), splat(d.xy[e]), splat(d.xz[e]));
        let (yy, yz, zz) = (splat(d.yy[e]), splat(d.yz[e]), splat(d.zz[e]));
        let er = [
            dot3(&[xx, xy, xz], &ra),
            dot3(&[xy, yy, yz], &ra),
            dot3(&[xz, yz, zz], &ra),
        ];
        edge_u = _mm256_fmadd_pd(dot3(&ra, &er), l, edge_u);
        for k in 0..3 {
            edge_a[k] = _mm256_fmadd_pd(er[k], l, edge_a[k]);
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
