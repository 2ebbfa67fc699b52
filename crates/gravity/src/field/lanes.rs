//! Four-lane f64 arithmetic for the portable field kernel, and the polynomial constants of the
//! explicit AVX2 kernel.
//!
//! The portable kernel runs on `wide::f64x4` (explicit SIMD chosen when `wide` is compiled:
//! SSE2 on a default x86-64 build, NEON on AArch64) with its vector `atan2` and `ln`. `wide`
//! cannot use AVX2 without a global `target-cpu` flag, so the `avx2` module has its own
//! `atan2` (Cephes `atan` coefficients, S. L. Moshier's Cephes Math Library, the same ones
//! `wide` uses) and `ln` (fdlibm `e_log.c` reduction `ln(m) = 2 atanh(f/(2+f))`, Sun
//! Microsystems). Their scalar statements below are tested against the standard library.

#![allow(
    clippy::excessive_precision,
    reason = "polynomial coefficients are kept with the digits they were published with"
)]

use std::ops::{Add, AddAssign, Div, Mul, Sub};

use wide::f64x4;

/// What the kernels need from a four-lane vector of f64.
pub(crate) trait Lanes:
    Copy + Add<Output = Self> + Sub<Output = Self> + Mul<Output = Self> + Div<Output = Self> + AddAssign
{
    fn splat(v: f64) -> Self;
    fn from_array(a: [f64; 4]) -> Self;
    fn transpose(rows: [Self; 4]) -> [Self; 4];
    fn abs(self) -> Self;
    /// Lane-wise `if a <= ta && b <= tb { 0 } else { val }`.
    fn zero_where_both_le(a: Self, ta: Self, b: Self, tb: Self, val: Self) -> Self;
    fn atan2(self, x: Self) -> Self;
    fn reduce_add(self) -> f64;
    fn to_array(self) -> [f64; 4];
    /// `L_e = ln((sum + e) / max(sum - e, floor (sum + e)))` for `sum = a + b`, via
    /// `2 atanh(e / sum)` where that series applies (see [`ATANH_FAST_MAX`]).
    fn edge_log(sum: Self, e: Self, floor: Self) -> Self;
}

impl Lanes for f64x4 {
    #[inline(always)]
    fn splat(v: f64) -> Self {
        f64x4::splat(v)
    }
    #[inline(always)]
    fn from_array(a: [f64; 4]) -> Self {
        f64x4::new(a)
    }
    #[inline(always)]
    fn transpose(rows: [Self; 4]) -> [Self; 4] {
        f64x4::transpose(rows)
    }
    #[inline(always)]
    fn abs(self) -> Self {
        f64x4::abs(self)
    }
    #[inline(always)]
    fn zero_where_both_le(a: Self, ta: Self, b: Self, tb: Self, val: Self) -> Self {
        let mask = a.simd_le(ta) & b.simd_le(tb);
        mask.bitselect(f64x4::ZERO, val)
    }
    #[inline(always)]
    fn atan2(self, x: Self) -> Self {
        f64x4::atan2(self, x)
    }
    #[inline(always)]
    fn reduce_add(self) -> f64 {
        f64x4::reduce_add(self)
    }
    #[inline(always)]
    fn to_array(self) -> [f64; 4] {
        f64x4::to_array(self)
    }
    #[inline(always)]
    fn edge_log(sum: Self, e: Self, floor: Self) -> Self {
        let s = e / sum;
        let z = s * s;
        let mut r = f64x4::splat(LG[6]);
        for c in [LG[5], LG[4], LG[3], LG[2], LG[1], LG[0]] {
            r = r.mul_add(z, f64x4::splat(c));
        }
        let fast_val = (s * z).mul_add(r, s + s);
        let fast = s.simd_le(f64x4::splat(ATANH_FAST_MAX));
        if fast.all() {
            return fast_val;
        }
        let num = sum + e;
        let den = f64x4::max(sum - e, floor * num);
        fast.bitselect(fast_val, f64x4::ln(num / den))
    }
}

// Cephes atan rational approximation on |z| <= 0.66: atan z = z + z^3 P(z^2)/Q(z^2).
pub(crate) const ATAN_P: [f64; 5] = [
    -6.485021904942025371773E1,
    -1.228866684490136173410E2,
    -7.500855792314704667340E1,
    -1.615753718733365076637E1,
    -8.750608600031904122785E-1,
];
pub(crate) const ATAN_Q: [f64; 5] = [
    1.945506571482613964425E2,
    4.853903996359136964868E2,
    4.328810604912902668951E2,
    1.650270098316988542046E2,
    2.485846490142306297962E1,
];
/// pi/2 - fl(pi/2), the bits lost in rounding pi/2 (Cephes MOREBITS).
pub(crate) const MORE_BITS: f64 = 6.123233995736765886130E-17;

// fdlibm e_log.c: ln(1+f) = f - f^2/2 + s (f^2/2 + R(s^2)), s = f/(2+f).
pub(crate) const LG: [f64; 7] = [
    6.666666666666735130e-01,
    3.999999999940941908e-01,
    2.857142874366239149e-01,
    2.222219843214978396e-01,
    1.818357216161805012e-01,
    1.531383769920937332e-01,
    1.479819860511658591e-01,
];
/// Largest `s` for which `2 atanh(s) = 2s + s R(s^2)` with the `LG` polynomial `R` is accurate:
/// `3 - 2 sqrt 2`, where `(1+s)/(1-s) = sqrt 2`, the edge of fdlibm's reduced range.
pub(crate) const ATANH_FAST_MAX: f64 = 0.171_572_875_253_809_9;
pub(crate) const LN2_HI: f64 = 6.93147180369123816490e-01;
pub(crate) const LN2_LO: f64 = 1.90821492927058770002e-10;

/// Scalar statement of `avx2::atan2` (the readable form of the algorithm; tested).
#[cfg(test)]
fn atan2_lane(y: f64, x: f64) -> f64 {
    let (ax, ay) = (x.abs(), y.abs());
    let swap = ay > ax;
    let hi = if swap { ay } else { ax };
    let lo = if swap { ax } else { ay };
    let mid = lo > 0.66 * hi;
    let zn = if mid { lo - hi } else { lo };
    let zd = if mid { lo + hi } else { hi };
    let zd = if zd == 0.0 { 1.0 } else { zd };
    let z = zn / zd;
    let zz = z * z;
    let p = (((ATAN_P[4] * zz + ATAN_P[3]) * zz + ATAN_P[2]) * zz + ATAN_P[1]) * zz + ATAN_P[0];
    let q =
        ((((zz + ATAN_Q[4]) * zz + ATAN_Q[3]) * zz + ATAN_Q[2]) * zz + ATAN_Q[1]) * zz + ATAN_Q[0];
    let mut r = z + z * zz * (p / q);
    r += if mid {
        std::f64::consts::FRAC_PI_4 + 0.5 * MORE_BITS
    } else {
        0.0
    };
    r = if swap {
        (std::f64::consts::FRAC_PI_2 - r) + MORE_BITS
    } else {
        r
    };
    r = if x.is_sign_negative() {
        (std::f64::consts::PI - r) + 2.0 * MORE_BITS
    } else {
        r
    };
    if y.is_sign_negative() { -r } else { r }
}

/// Scalar statement of `avx2::ln`, for finite positive normal input (tested).
#[cfg(test)]
fn ln_lane(v: f64) -> f64 {
    let bits = v.to_bits();
    let e = ((bits >> 52) & 0x7ff) as i64 - 1023;
    // Mantissa in [1, 2); fold it into [sqrt(2)/2, sqrt(2)).
    let m = f64::from_bits((bits & 0x000f_ffff_ffff_ffff) | 0x3ff0_0000_0000_0000);
    let big = m > std::f64::consts::SQRT_2;
    let m = if big { 0.5 * m } else { m };
    let k = (e + big as i64) as f64;
    let f = m - 1.0;
    let s = f / (2.0 + f);
    let z = s * s;
    let w = z * z;
    let t1 = w * (LG[1] + w * (LG[3] + w * LG[5]));
    let t2 = z * (LG[0] + w * (LG[2] + w * (LG[4] + w * LG[6])));
    let r = t2 + t1;
    let hfsq = 0.5 * f * f;
    k * LN2_HI - ((hfsq - (s * (hfsq + r) + k * LN2_LO)) - f)
}

/// Scalar statement of the edge-log series `2 atanh(s) = 2s + s R(s^2)` (tested).
#[cfg(test)]
fn atanh2_lane(s: f64) -> f64 {
    let z = s * s;
    let r = LG.iter().rev().fold(0.0, |acc, &c| acc * z + c);
    s * z * r + 2.0 * s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn atanh_series_matches_std() {
        // Reference: 2 atanh(s) = ln((1+s)/(1-s)) = ln_1p(2s/(1-s)) from the platform libm.
        let mut worst = 0.0f64;
        for i in 0..=20_000 {
            let s = ATANH_FAST_MAX * i as f64 / 20_000.0;
            let want = (2.0 * s / (1.0 - s)).ln_1p();
            let got = atanh2_lane(s);
            if want == 0.0 {
                assert_eq!(got, 0.0);
            } else {
                worst = worst.max((got - want).abs() / (f64::EPSILON * want));
            }
        }
        assert!(worst < 4.0, "worst {worst} ulp");
    }

    fn ulps(a: f64, b: f64) -> f64 {
        (a - b).abs() / (f64::EPSILON * b.abs().max(f64::MIN_POSITIVE))
    }

    #[test]
    fn atan2_matches_std() {
        // Reference: the platform libm's atan2 (correctly rounded or within 1 ulp).
        let mut worst = 0.0f64;
        let vals = [
            -3.7, -1.0, -0.66, -0.3, -1e-9, -0.0, 0.0, 1e-12, 0.2, 0.41, 0.67, 1.0, 2.5, 1e6,
        ];
        for &y in &vals {
            for &x in &vals {
                let got = atan2_lane(y, x);
                let want = y.atan2(x);
                if want == 0.0 {
                    assert!(got.abs() < 1e-300, "atan2({y}, {x}) = {got}");
                } else {
                    worst = worst.max(ulps(got, want));
                }
            }
        }
        for i in 0..10_000 {
            let a = i as f64 * 0.000_628_3;
            let (y, x) = (a.sin() * 3.0, a.cos() * 3.0);
            worst = worst.max(ulps(atan2_lane(y, x), y.atan2(x)));
        }
        assert!(worst < 4.0, "worst {worst} ulp");
    }

    #[test]
    fn ln_matches_std() {
        let mut worst = 0.0f64;
        for i in 0..20_000 {
            let v = 1.0 + (i as f64 * 0.0137).powf(3.0);
            worst = worst.max((ln_lane(v) - v.ln()).abs() / (f64::EPSILON * v.ln().max(1.0)));
        }
        for v in [
            1.0,
            1.0 + 1e-15,
            1.5,
            std::f64::consts::SQRT_2,
            2.0,
            1e32,
            3e-5,
            0.7,
        ] {
            worst = worst.max((ln_lane(v) - v.ln()).abs() / (f64::EPSILON * v.ln().abs().max(1.0)));
        }
        assert!(worst < 4.0, "worst {worst} ulp");
    }
}
