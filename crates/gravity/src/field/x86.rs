//! Explicit AVX2+FMA (four lanes) and AVX-512 (eight lanes) vectors for the field kernel, and
//! the entry points compiled for those features (x86-64 only).
//!
//! # Safety
//! The intrinsics are `unsafe` to call where the compiler cannot see the CPU feature. Every
//! method of [`Avx2`] and [`Avx512`] is `#[inline(always)]` and these types are private to the
//! field module: they are only used inside the generic kernel as instantiated by the
//! `#[target_feature]` functions below, and those are only called (through [`Isa`]) after
//! `is_x86_feature_detected!` confirmed the features at run time. That is the whole
//! argument for the `unsafe` blocks of this module.

#![allow(
    unsafe_code,
    reason = "SIMD intrinsics behind run-time feature detection; see the module's Safety section"
)]

use std::arch::x86_64::*;
use std::ops::{Add, Div, Mul, Sub};

use super::block::Oct;
use super::direct::Sums;
use super::interp::face_set::FaceGeometry;
use super::interp::near::{self, NearSums};
use super::kernel;
use super::lanes::{Lanes, MANTISSA_BITS, MAX_LANES, ONE_BITS};
use super::tables::Tables;

/// The bits of 2^52: OR-ed with a biased exponent (below 2^11) they give 2^52 + exponent.
const TWO_52_BITS: i64 = 0x4330_0000_0000_0000;
/// 2^52 + 1023 (exact in f64): subtracted, it leaves the unbiased exponent.
const TWO_52_PLUS_BIAS: f64 = 4_503_599_627_370_496.0 + 1023.0;

/// Four f64 lanes in an AVX register.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Avx2(__m256d);

/// Eight f64 lanes in an AVX-512 register.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Avx512(__m512d);

macro_rules! ops {
    ($t:ident, $add:ident, $sub:ident, $mul:ident, $div:ident) => {
        impl Add for $t {
            type Output = $t;
            #[inline(always)]
            fn add(self, b: $t) -> $t {
                // SAFETY: see the module's Safety section.
                $t(unsafe { $add(self.0, b.0) })
            }
        }
        impl Sub for $t {
            type Output = $t;
            #[inline(always)]
            fn sub(self, b: $t) -> $t {
                // SAFETY: see the module's Safety section.
                $t(unsafe { $sub(self.0, b.0) })
            }
        }
        impl Mul for $t {
            type Output = $t;
            #[inline(always)]
            fn mul(self, b: $t) -> $t {
                // SAFETY: see the module's Safety section.
                $t(unsafe { $mul(self.0, b.0) })
            }
        }
        impl Div for $t {
            type Output = $t;
            #[inline(always)]
            fn div(self, b: $t) -> $t {
                // SAFETY: see the module's Safety section.
                $t(unsafe { $div(self.0, b.0) })
            }
        }
    };
}
ops!(
    Avx2,
    _mm256_add_pd,
    _mm256_sub_pd,
    _mm256_mul_pd,
    _mm256_div_pd
);
ops!(
    Avx512,
    _mm512_add_pd,
    _mm512_sub_pd,
    _mm512_mul_pd,
    _mm512_div_pd
);

// SAFETY (every `unsafe` block below): see the module's Safety section.
impl Lanes for Avx2 {
    const N: usize = 4;
    type Mask = __m256d;
    #[inline(always)]
    fn splat(v: f64) -> Self {
        Avx2(unsafe { _mm256_set1_pd(v) })
    }
    #[inline(always)]
    fn load(s: &[f64]) -> Self {
        let s = &s[..4];
        Avx2(unsafe { _mm256_loadu_pd(s.as_ptr()) })
    }
    #[inline(always)]
    fn store(self, s: &mut [f64]) {
        let s = &mut s[..4];
        unsafe { _mm256_storeu_pd(s.as_mut_ptr(), self.0) }
    }
    #[inline(always)]
    fn to_array(self) -> [f64; MAX_LANES] {
        let mut out = [0.0; MAX_LANES];
        unsafe { _mm256_storeu_pd(out.as_mut_ptr(), self.0) };
        out
    }
    #[inline(always)]
    fn mul_add(self, b: Self, c: Self) -> Self {
        Avx2(unsafe { _mm256_fmadd_pd(self.0, b.0, c.0) })
    }
    #[inline(always)]
    fn mul_sub(self, b: Self, c: Self) -> Self {
        Avx2(unsafe { _mm256_fmsub_pd(self.0, b.0, c.0) })
    }
    #[inline(always)]
    fn abs(self) -> Self {
        Avx2(unsafe { _mm256_andnot_pd(_mm256_set1_pd(-0.0), self.0) })
    }
    #[inline(always)]
    fn sqrt(self) -> Self {
        Avx2(unsafe { _mm256_sqrt_pd(self.0) })
    }
    #[inline(always)]
    fn max(self, b: Self) -> Self {
        Avx2(unsafe { _mm256_max_pd(self.0, b.0) })
    }
    #[inline(always)]
    fn min(self, b: Self) -> Self {
        Avx2(unsafe { _mm256_min_pd(self.0, b.0) })
    }
    #[inline(always)]
    fn gt(self, b: Self) -> __m256d {
        unsafe { _mm256_cmp_pd::<_CMP_GT_OQ>(self.0, b.0) }
    }
    #[inline(always)]
    fn le(self, b: Self) -> __m256d {
        unsafe { _mm256_cmp_pd::<_CMP_LE_OQ>(self.0, b.0) }
    }
    #[inline(always)]
    fn eq(self, b: Self) -> __m256d {
        unsafe { _mm256_cmp_pd::<_CMP_EQ_OQ>(self.0, b.0) }
    }
    #[inline(always)]
    fn and(a: __m256d, b: __m256d) -> __m256d {
        unsafe { _mm256_and_pd(a, b) }
    }
    #[inline(always)]
    fn select(m: __m256d, a: Self, b: Self) -> Self {
        Avx2(unsafe { _mm256_blendv_pd(b.0, a.0, m) })
    }
    #[inline(always)]
    fn all(m: __m256d) -> bool {
        unsafe { _mm256_movemask_pd(m) == 0b1111 }
    }
    #[inline(always)]
    fn sign_set(self) -> __m256d {
        // blendv reads only the sign bit of the mask lanes.
        self.0
    }
    #[inline(always)]
    fn flip_sign_by(self, y: Self) -> Self {
        Avx2(unsafe { _mm256_xor_pd(self.0, _mm256_and_pd(y.0, _mm256_set1_pd(-0.0))) })
    }
    #[inline(always)]
    fn split_exponent(self) -> (Self, Self) {
        unsafe {
            let bits = _mm256_castpd_si256(self.0);
            let m = _mm256_or_si256(
                _mm256_and_si256(bits, _mm256_set1_epi64x(MANTISSA_BITS as i64)),
                _mm256_set1_epi64x(ONE_BITS as i64),
            );
            // The biased exponent (sign bit clear) as the low bits of 2^52, then 2^52 + 1023 off.
            let e = _mm256_or_si256(
                _mm256_srli_epi64::<52>(bits),
                _mm256_set1_epi64x(TWO_52_BITS),
            );
            (
                Avx2(_mm256_castsi256_pd(m)),
                Avx2(_mm256_sub_pd(
                    _mm256_castsi256_pd(e),
                    _mm256_set1_pd(TWO_52_PLUS_BIAS),
                )),
            )
        }
    }
    #[inline(always)]
    fn transpose8(rows: [&[f64; 8]; MAX_LANES]) -> [Self; 8] {
        // Two 4x4 transposes (columns 0-3, 4-7) of the first four rows, written out (see
        // `Avx512::transpose8`).
        unsafe {
            let ld = |i: usize, h: usize| _mm256_loadu_pd(rows[i][4 * h..].as_ptr());
            let (l0, l1, l2, l3) = (ld(0, 0), ld(1, 0), ld(2, 0), ld(3, 0));
            let (h0, h1, h2, h3) = (ld(0, 1), ld(1, 1), ld(2, 1), ld(3, 1));
            let (la, lb) = (_mm256_unpacklo_pd(l0, l1), _mm256_unpackhi_pd(l0, l1));
            let (lc, ld2) = (_mm256_unpacklo_pd(l2, l3), _mm256_unpackhi_pd(l2, l3));
            let (ha, hb) = (_mm256_unpacklo_pd(h0, h1), _mm256_unpackhi_pd(h0, h1));
            let (hc, hd) = (_mm256_unpacklo_pd(h2, h3), _mm256_unpackhi_pd(h2, h3));
            [
                Avx2(_mm256_permute2f128_pd::<0x20>(la, lc)),
                Avx2(_mm256_permute2f128_pd::<0x20>(lb, ld2)),
                Avx2(_mm256_permute2f128_pd::<0x31>(la, lc)),
                Avx2(_mm256_permute2f128_pd::<0x31>(lb, ld2)),
                Avx2(_mm256_permute2f128_pd::<0x20>(ha, hc)),
                Avx2(_mm256_permute2f128_pd::<0x20>(hb, hd)),
                Avx2(_mm256_permute2f128_pd::<0x31>(ha, hc)),
                Avx2(_mm256_permute2f128_pd::<0x31>(hb, hd)),
            ]
        }
    }
}

impl Lanes for Avx512 {
    const N: usize = 8;
    type Mask = __mmask8;
    #[inline(always)]
    fn splat(v: f64) -> Self {
        Avx512(unsafe { _mm512_set1_pd(v) })
    }
    #[inline(always)]
    fn load(s: &[f64]) -> Self {
        let s = &s[..8];
        Avx512(unsafe { _mm512_loadu_pd(s.as_ptr()) })
    }
    #[inline(always)]
    fn store(self, s: &mut [f64]) {
        let s = &mut s[..8];
        unsafe { _mm512_storeu_pd(s.as_mut_ptr(), self.0) }
    }
    #[inline(always)]
    fn to_array(self) -> [f64; MAX_LANES] {
        let mut out = [0.0; MAX_LANES];
        unsafe { _mm512_storeu_pd(out.as_mut_ptr(), self.0) };
        out
    }
    #[inline(always)]
    fn mul_add(self, b: Self, c: Self) -> Self {
        Avx512(unsafe { _mm512_fmadd_pd(self.0, b.0, c.0) })
    }
    #[inline(always)]
    fn mul_sub(self, b: Self, c: Self) -> Self {
        Avx512(unsafe { _mm512_fmsub_pd(self.0, b.0, c.0) })
    }
    #[inline(always)]
    fn abs(self) -> Self {
        Avx512(unsafe { _mm512_abs_pd(self.0) })
    }
    #[inline(always)]
    fn sqrt(self) -> Self {
        Avx512(unsafe { _mm512_sqrt_pd(self.0) })
    }
    #[inline(always)]
    fn max(self, b: Self) -> Self {
        Avx512(unsafe { _mm512_max_pd(self.0, b.0) })
    }
    #[inline(always)]
    fn min(self, b: Self) -> Self {
        Avx512(unsafe { _mm512_min_pd(self.0, b.0) })
    }
    #[inline(always)]
    fn gt(self, b: Self) -> __mmask8 {
        unsafe { _mm512_cmp_pd_mask::<_CMP_GT_OQ>(self.0, b.0) }
    }
    #[inline(always)]
    fn le(self, b: Self) -> __mmask8 {
        unsafe { _mm512_cmp_pd_mask::<_CMP_LE_OQ>(self.0, b.0) }
    }
    #[inline(always)]
    fn eq(self, b: Self) -> __mmask8 {
        unsafe { _mm512_cmp_pd_mask::<_CMP_EQ_OQ>(self.0, b.0) }
    }
    #[inline(always)]
    fn and(a: __mmask8, b: __mmask8) -> __mmask8 {
        a & b
    }
    #[inline(always)]
    fn select(m: __mmask8, a: Self, b: Self) -> Self {
        Avx512(unsafe { _mm512_mask_blend_pd(m, b.0, a.0) })
    }
    #[inline(always)]
    fn all(m: __mmask8) -> bool {
        m == 0xff
    }
    #[inline(always)]
    fn sign_set(self) -> __mmask8 {
        unsafe { _mm512_movepi64_mask(_mm512_castpd_si512(self.0)) }
    }
    #[inline(always)]
    fn flip_sign_by(self, y: Self) -> Self {
        Avx512(unsafe { _mm512_xor_pd(self.0, _mm512_and_pd(y.0, _mm512_set1_pd(-0.0))) })
    }
    #[inline(always)]
    fn split_exponent(self) -> (Self, Self) {
        unsafe {
            let bits = _mm512_castpd_si512(self.0);
            let m = _mm512_or_si512(
                _mm512_and_si512(bits, _mm512_set1_epi64(MANTISSA_BITS as i64)),
                _mm512_set1_epi64(ONE_BITS as i64),
            );
            let e = _mm512_or_si512(
                _mm512_srli_epi64::<52>(bits),
                _mm512_set1_epi64(TWO_52_BITS),
            );
            (
                Avx512(_mm512_castsi512_pd(m)),
                Avx512(_mm512_sub_pd(
                    _mm512_castsi512_pd(e),
                    _mm512_set1_pd(TWO_52_PLUS_BIAS),
                )),
            )
        }
    }
    #[inline(always)]
    fn transpose8(rows: [&[f64; 8]; MAX_LANES]) -> [Self; 8] {
        // Written out rather than through `array::from_fn`, whose closures were not always
        // inlined here: a closure that is not loses the target features and calls each
        // intrinsic (the loads' one-line closure is inlined).
        unsafe {
            let ld = |i: usize| _mm512_loadu_pd(rows[i].as_ptr());
            let (r0, r1, r2, r3) = (ld(0), ld(1), ld(2), ld(3));
            let (r4, r5, r6, r7) = (ld(4), ld(5), ld(6), ld(7));
            // Pairs of rows interleaved: even columns (lo) and odd columns (hi).
            let (e01, o01) = (_mm512_unpacklo_pd(r0, r1), _mm512_unpackhi_pd(r0, r1));
            let (e23, o23) = (_mm512_unpacklo_pd(r2, r3), _mm512_unpackhi_pd(r2, r3));
            let (e45, o45) = (_mm512_unpacklo_pd(r4, r5), _mm512_unpackhi_pd(r4, r5));
            let (e67, o67) = (_mm512_unpacklo_pd(r6, r7), _mm512_unpackhi_pd(r6, r7));
            // Four rows, columns c and c + 4: c = 0, 1 (lo) and 2, 3 (hi).
            let lo = _mm512_setr_epi64(0, 1, 8, 9, 4, 5, 12, 13);
            let hi = _mm512_setr_epi64(2, 3, 10, 11, 6, 7, 14, 15);
            let a0 = _mm512_permutex2var_pd(e01, lo, e23);
            let a1 = _mm512_permutex2var_pd(o01, lo, o23);
            let a2 = _mm512_permutex2var_pd(e01, hi, e23);
            let a3 = _mm512_permutex2var_pd(o01, hi, o23);
            let b0 = _mm512_permutex2var_pd(e45, lo, e67);
            let b1 = _mm512_permutex2var_pd(o45, lo, o67);
            let b2 = _mm512_permutex2var_pd(e45, hi, e67);
            let b3 = _mm512_permutex2var_pd(o45, hi, o67);
            // All eight rows: column c from the low halves, c + 4 from the high halves.
            let first = _mm512_setr_epi64(0, 1, 2, 3, 8, 9, 10, 11);
            let second = _mm512_setr_epi64(4, 5, 6, 7, 12, 13, 14, 15);
            [
                Avx512(_mm512_permutex2var_pd(a0, first, b0)),
                Avx512(_mm512_permutex2var_pd(a1, first, b1)),
                Avx512(_mm512_permutex2var_pd(a2, first, b2)),
                Avx512(_mm512_permutex2var_pd(a3, first, b3)),
                Avx512(_mm512_permutex2var_pd(a0, second, b0)),
                Avx512(_mm512_permutex2var_pd(a1, second, b1)),
                Avx512(_mm512_permutex2var_pd(a2, second, b2)),
                Avx512(_mm512_permutex2var_pd(a3, second, b3)),
            ]
        }
    }
}

/// Asks the CPU to bring the cache line holding `value` towards L1 (a hint: no effect on
/// results).
#[inline(always)]
pub(crate) fn prefetch<T>(value: &T) {
    // SAFETY: SSE is part of x86-64; a prefetch reads nothing and the pointer comes from a
    // reference.
    unsafe { _mm_prefetch::<_MM_HINT_T0>((value as *const T).cast::<i8>()) }
}

/// The vector instruction sets the field kernel can use on this CPU.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Isa {
    Avx512,
    Avx2,
}

impl Isa {
    /// Whether this CPU runs `self`.
    pub fn detected(self) -> bool {
        match self {
            Isa::Avx512 => {
                is_x86_feature_detected!("avx512f")
                    && is_x86_feature_detected!("avx512dq")
                    && Isa::Avx2.detected()
            }
            Isa::Avx2 => is_x86_feature_detected!("avx2") && is_x86_feature_detected!("fma"),
        }
    }

    /// Sums of the points in `q` (eight per block, see [`Oct`]) over the whole of `t`.
    ///
    /// # Panics
    /// If this CPU lacks `self`'s features (callers check [`Isa::detected`] first).
    pub fn sums_block<const GRAD: bool, const OPEN: bool>(
        self,
        t: &Tables,
        q: &[Oct],
        out: &mut [Sums; 8],
    ) {
        assert!(self.detected(), "{self:?} is not available on this CPU");
        match self {
            // SAFETY: the features were detected just above.
            Isa::Avx512 => unsafe { block_avx512::<GRAD, OPEN>(t, q, out) },
            // SAFETY: as above.
            Isa::Avx2 => unsafe { block_avx2::<GRAD, OPEN>(t, q, out, 2) },
        }
    }

    /// Sums of the first four points of `q` only (one four-lane pass).
    pub fn sums_half<const GRAD: bool, const OPEN: bool>(
        self,
        t: &Tables,
        q: &[Oct],
        out: &mut [Sums; 8],
    ) {
        assert!(Isa::Avx2.detected(), "AVX2 is not available on this CPU");
        // SAFETY: the features were detected just above.
        unsafe { block_avx2::<GRAD, OPEN>(t, q, out, 1) }
    }
}

impl Isa {
    /// The interpolated field's near sums at one point, lanes over faces.
    ///
    /// # Panics
    /// If this CPU lacks `self`'s features.
    pub fn near(self, g: &FaceGeometry, faces: &[u32], p: [f64; 3]) -> NearSums {
        assert!(self.detected(), "{self:?} is not available on this CPU");
        match self {
            // SAFETY: the features were detected just above.
            Isa::Avx512 => unsafe { near_avx512(g, faces, p) },
            // SAFETY: as above.
            Isa::Avx2 => unsafe { near_avx2(g, faces, p) },
        }
    }
}

#[target_feature(enable = "avx512f,avx512dq,avx2,fma,avx")]
fn near_avx512(g: &FaceGeometry, faces: &[u32], p: [f64; 3]) -> NearSums {
    near::near_sums::<Avx512>(g, faces, p)
}

#[target_feature(enable = "avx2,fma,avx")]
fn near_avx2(g: &FaceGeometry, faces: &[u32], p: [f64; 3]) -> NearSums {
    near::near_sums::<Avx2>(g, faces, p)
}

impl Isa {
    /// [`fill_block`](super::block::fill_block) with this instruction set's lanes.
    ///
    /// # Panics
    /// If this CPU lacks `self`'s features.
    pub fn fill(self, t: &Tables, p: &[[f64; 3]; 8], out: &mut [Oct]) {
        assert!(self.detected(), "{self:?} is not available on this CPU");
        match self {
            // SAFETY: the features were detected just above.
            Isa::Avx512 => unsafe { fill_avx512(t, p, out) },
            // SAFETY: as above.
            Isa::Avx2 => unsafe { fill_avx2(t, p, out) },
        }
    }
}

#[target_feature(enable = "avx512f,avx512dq,avx2,fma,avx")]
fn fill_avx512(t: &Tables, p: &[[f64; 3]; 8], out: &mut [Oct]) {
    super::block::fill_lanes::<Avx512>(t, p, out);
}

#[target_feature(enable = "avx2,fma,avx")]
fn fill_avx2(t: &Tables, p: &[[f64; 3]; 8], out: &mut [Oct]) {
    super::block::fill_lanes::<Avx2>(t, p, out);
}

#[target_feature(enable = "avx512f,avx512dq,avx2,fma,avx")]
fn block_avx512<const GRAD: bool, const OPEN: bool>(t: &Tables, q: &[Oct], out: &mut [Sums; 8]) {
    kernel::sums::<Avx512, GRAD, OPEN, 0>(t, q, out);
}

#[target_feature(enable = "avx2,fma,avx")]
fn block_avx2<const GRAD: bool, const OPEN: bool>(
    t: &Tables,
    q: &[Oct],
    out: &mut [Sums; 8],
    halves: usize,
) {
    kernel::sums::<Avx2, GRAD, OPEN, 0>(t, q, out);
    if halves == 2 {
        kernel::sums::<Avx2, GRAD, OPEN, 4>(t, q, out);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::lanes::{ln_lanes, ln_scalar};

    #[target_feature(enable = "avx2,fma,avx")]
    fn ln_avx2(a: &[f64]) -> [f64; MAX_LANES] {
        ln_lanes(Avx2::load(a)).to_array()
    }

    #[target_feature(enable = "avx512f,avx512dq,avx2,fma,avx")]
    fn ln_avx512(a: &[f64]) -> [f64; MAX_LANES] {
        ln_lanes(Avx512::load(a)).to_array()
    }

    #[test]
    fn lane_logs_of_every_isa_are_bit_for_bit_the_scalar_log() {
        let sweep = crate::field::lanes::tests::log_sweep();
        for isa in [Isa::Avx2, Isa::Avx512] {
            if !isa.detected() {
                eprintln!("{isa:?} not on this CPU: skipped");
                continue;
            }
            for chunk in sweep.chunks(8) {
                let mut a = [1.0; 8];
                a[..chunk.len()].copy_from_slice(chunk);
                let got: Vec<f64> = match isa {
                    // SAFETY: detected just above.
                    Isa::Avx2 => [unsafe { ln_avx2(&a[..4]) }, unsafe { ln_avx2(&a[4..]) }]
                        .iter()
                        .flat_map(|g| g[..4].to_vec())
                        .collect(),
                    // SAFETY: as above.
                    Isa::Avx512 => unsafe { ln_avx512(&a) }.to_vec(),
                };
                for (k, &x) in a.iter().enumerate() {
                    assert_eq!(
                        got[k].to_bits(),
                        ln_scalar(x).to_bits(),
                        "{isa:?}: ln({x:e})"
                    );
                }
            }
        }
    }

    #[target_feature(enable = "avx2,fma,avx")]
    fn transpose_avx2(rows: [&[f64; 8]; MAX_LANES]) -> Vec<[f64; MAX_LANES]> {
        Avx2::transpose8(rows)
            .iter()
            .map(|v| v.to_array())
            .collect()
    }

    #[target_feature(enable = "avx512f,avx512dq,avx2,fma,avx")]
    fn transpose_avx512(rows: [&[f64; 8]; MAX_LANES]) -> Vec<[f64; MAX_LANES]> {
        Avx512::transpose8(rows)
            .iter()
            .map(|v| v.to_array())
            .collect()
    }

    #[test]
    fn transposes_of_every_isa_put_row_l_column_j_in_vector_j_lane_l() {
        let data: Vec<[f64; 8]> = (0..8)
            .map(|i| std::array::from_fn(|j| (10 * i + j) as f64 + 0.5))
            .collect();
        let rows: [&[f64; 8]; MAX_LANES] = std::array::from_fn(|i| &data[i]);
        let portable = crate::field::lanes::Portable::transpose8(rows);
        for (j, v) in portable.iter().enumerate() {
            let lanes = v.to_array();
            for (l, x) in lanes[..4].iter().enumerate() {
                assert_eq!(*x, data[l][j], "portable: row {l} column {j}");
            }
        }
        for isa in [Isa::Avx2, Isa::Avx512] {
            if !isa.detected() {
                eprintln!("{isa:?} not on this CPU: skipped");
                continue;
            }
            let (got, n) = match isa {
                // SAFETY: detected just above.
                Isa::Avx2 => (unsafe { transpose_avx2(rows) }, 4),
                // SAFETY: as above.
                Isa::Avx512 => (unsafe { transpose_avx512(rows) }, 8),
            };
            for (j, lanes) in got.iter().enumerate() {
                for (l, x) in lanes[..n].iter().enumerate() {
                    assert_eq!(*x, data[l][j], "{isa:?}: row {l} column {j}");
                }
            }
        }
    }
}
