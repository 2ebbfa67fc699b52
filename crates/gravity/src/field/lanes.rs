//! Vectors of f64 lanes for the field kernel, and the elementary functions it needs on them.
//!
//! The kernel (`kernel`) is written once, over the [`Lanes`] trait, and instantiated for every
//! vector width this crate knows: explicit AVX-512 (eight lanes) and AVX2+FMA (four lanes) on
//! x86-64 CPUs that have them (`x86` module), and a portable four-lane type ([`Portable`], on the
//! `wide` crate: SSE2 on a default x86-64 build, NEON on AArch64).
//!
//! Every lane is computed by the same sequence of IEEE-754 operations whatever the width (fused
//! multiply-adds where the trait says `mul_add`, nothing fused elsewhere), so a field point gets
//! bit-for-bit the same value in an eight-lane or a four-lane instantiation, alone or beside
//! other points. The portable type fuses nothing (`mul_add` is a multiply then an add), so on
//! CPUs without FMA the same holds among its users.
//!
//! `atan2` uses the Cephes `atan` rational approximation (S. L. Moshier, Cephes Math Library);
//! the edge log `L = ln((1+s)/(1-s)) = 2 atanh(s)` uses the series of fdlibm's `e_log.c` (Sun
//! Microsystems), and fdlibm's `log` reduction where the series does not apply. Their scalar
//! statements are tested against the standard library below.

#![allow(
    clippy::excessive_precision,
    reason = "polynomial coefficients are kept with the digits they were published with"
)]

use std::ops::{Add, Div, Mul, Sub};

use wide::f64x4;

/// Widest vector of any instantiation: arrays of lane values have this many slots.
pub(crate) const MAX_LANES: usize = 8;

/// What the field kernel needs from a vector of f64 lanes.
pub(crate) trait Lanes:
    Copy + Add<Output = Self> + Sub<Output = Self> + Mul<Output = Self> + Div<Output = Self>
{
    /// Number of lanes.
    const N: usize;
    /// Lane-wise comparison result.
    type Mask: Copy;
    fn splat(v: f64) -> Self;
    /// The first `N` values of `s`.
    fn load(s: &[f64]) -> Self;
    /// The lanes, in the first `N` slots.
    fn to_array(self) -> [f64; MAX_LANES];
    /// Writes the lanes to the first `N` slots of `s`.
    fn store(self, s: &mut [f64]);
    /// `self * b + c`, rounded once where the type fuses (every type but [`Portable`]).
    fn mul_add(self, b: Self, c: Self) -> Self;
    /// `self * b - c`, rounded as [`Lanes::mul_add`].
    fn mul_sub(self, b: Self, c: Self) -> Self;
    fn abs(self) -> Self;
    fn sqrt(self) -> Self;
    fn max(self, b: Self) -> Self;
    fn min(self, b: Self) -> Self;
    fn gt(self, b: Self) -> Self::Mask;
    fn le(self, b: Self) -> Self::Mask;
    fn eq(self, b: Self) -> Self::Mask;
    fn and(a: Self::Mask, b: Self::Mask) -> Self::Mask;
    /// `m ? a : b`, lane by lane.
    fn select(m: Self::Mask, a: Self, b: Self) -> Self;
    fn all(m: Self::Mask) -> bool;
    /// Lanes whose sign bit is set (negative numbers and -0).
    fn sign_set(self) -> Self::Mask;
    /// `self` with its sign flipped in the lanes where `y`'s sign bit is set.
    fn flip_sign_by(self, y: Self) -> Self;
    /// For positive, normal, finite lanes: the mantissa with the exponent bits of 1.0 (in
    /// [1, 2)) and the unbiased binary exponent as an f64, both exact.
    fn split_exponent(self) -> (Self, Self);
    /// Eight rows in, eight columns out: vector `j` holds `rows[lane][j]` in each lane (the
    /// first `N` rows are read). Shuffles in registers where the type has them, else through
    /// memory.
    #[inline(always)]
    fn transpose8(rows: [&[f64; 8]; MAX_LANES]) -> [Self; 8] {
        let mut buf = [[0.0f64; MAX_LANES]; 8];
        for (lane, row) in rows.iter().enumerate().take(Self::N) {
            for (j, x) in row.iter().enumerate() {
                buf[j][lane] = *x;
            }
        }
        std::array::from_fn(|j| Self::load(&buf[j]))
    }
}

/// Mask of an f64's mantissa bits.
pub(crate) const MANTISSA_BITS: u64 = 0x000f_ffff_ffff_ffff;
/// The bits of 1.0 (biased exponent 1023, zero mantissa).
pub(crate) const ONE_BITS: u64 = 0x3ff0_0000_0000_0000;

/// Four lanes on `wide::f64x4`: explicit SIMD for the build's target (SSE2 on a default x86-64
/// build, NEON on AArch64). Fuses nothing, whatever the target.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Portable(pub f64x4);

macro_rules! portable_op {
    ($tr:ident, $f:ident, $op:tt) => {
        impl $tr for Portable {
            type Output = Portable;
            #[inline(always)]
            fn $f(self, b: Portable) -> Portable {
                Portable(self.0 $op b.0)
            }
        }
    };
}
portable_op!(Add, add, +);
portable_op!(Sub, sub, -);
portable_op!(Mul, mul, *);
portable_op!(Div, div, /);

impl Lanes for Portable {
    const N: usize = 4;
    type Mask = f64x4;
    #[inline(always)]
    fn splat(v: f64) -> Self {
        Portable(f64x4::splat(v))
    }
    #[inline(always)]
    fn load(s: &[f64]) -> Self {
        Portable(f64x4::new([s[0], s[1], s[2], s[3]]))
    }
    #[inline(always)]
    fn store(self, s: &mut [f64]) {
        s[..4].copy_from_slice(&self.0.to_array());
    }
    #[inline(always)]
    fn to_array(self) -> [f64; MAX_LANES] {
        let mut out = [0.0; MAX_LANES];
        out[..4].copy_from_slice(&self.0.to_array());
        out
    }
    #[inline(always)]
    fn mul_add(self, b: Self, c: Self) -> Self {
        self * b + c
    }
    #[inline(always)]
    fn mul_sub(self, b: Self, c: Self) -> Self {
        self * b - c
    }
    #[inline(always)]
    fn abs(self) -> Self {
        Portable(self.0.abs())
    }
    #[inline(always)]
    fn sqrt(self) -> Self {
        Portable(self.0.sqrt())
    }
    #[inline(always)]
    fn max(self, b: Self) -> Self {
        Portable(self.0.fast_max(b.0))
    }
    #[inline(always)]
    fn min(self, b: Self) -> Self {
        Portable(self.0.fast_min(b.0))
    }
    #[inline(always)]
    fn gt(self, b: Self) -> f64x4 {
        self.0.simd_gt(b.0)
    }
    #[inline(always)]
    fn le(self, b: Self) -> f64x4 {
        self.0.simd_le(b.0)
    }
    #[inline(always)]
    fn eq(self, b: Self) -> f64x4 {
        self.0.simd_eq(b.0)
    }
    #[inline(always)]
    fn and(a: f64x4, b: f64x4) -> f64x4 {
        a & b
    }
    #[inline(always)]
    fn select(m: f64x4, a: Self, b: Self) -> Self {
        Portable(m.bitselect(a.0, b.0))
    }
    #[inline(always)]
    fn all(m: f64x4) -> bool {
        m.all()
    }
    #[inline(always)]
    fn sign_set(self) -> f64x4 {
        self.0.is_sign_negative()
    }
    #[inline(always)]
    fn flip_sign_by(self, y: Self) -> Self {
        Portable(self.0 ^ (y.0 & f64x4::splat(-0.0)))
    }
    #[inline(always)]
    fn split_exponent(self) -> (Self, Self) {
        let a = self.0.to_array();
        let m = a.map(|v| f64::from_bits((v.to_bits() & MANTISSA_BITS) | ONE_BITS));
        let e = a.map(|v| ((v.to_bits() >> 52) & 0x7ff) as f64 - 1023.0);
        (Portable(f64x4::new(m)), Portable(f64x4::new(e)))
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
const LN2_HI: f64 = 6.93147180369123816490e-01;
const LN2_LO: f64 = 1.90821492927058770002e-10;

/// `atan2(y, x)` lane by lane (Cephes `atan` after folding into `|z| <= 0.66`), within 2 ulp of
/// the platform's `atan2` (tested through [`atan2_scalar`]).
#[inline(always)]
pub(crate) fn atan2<V: Lanes>(y: V, x: V) -> V {
    let ax = x.abs();
    let ay = y.abs();
    let swap = ay.gt(ax);
    let hi = ax.max(ay);
    let lo = ax.min(ay);
    let mid = lo.gt(V::splat(0.66) * hi);
    let zn = V::select(mid, lo - hi, lo);
    let zd = V::select(mid, lo + hi, hi);
    let zd = V::select(zd.eq(V::splat(0.0)), V::splat(1.0), zd);
    let z = zn / zd;
    let zz = z * z;
    let mut p = V::splat(ATAN_P[4]);
    for c in [ATAN_P[3], ATAN_P[2], ATAN_P[1], ATAN_P[0]] {
        p = p.mul_add(zz, V::splat(c));
    }
    let mut q = zz + V::splat(ATAN_Q[4]);
    for c in [ATAN_Q[3], ATAN_Q[2], ATAN_Q[1], ATAN_Q[0]] {
        q = q.mul_add(zz, V::splat(c));
    }
    let mut r = (z * zz).mul_add(p / q, z);
    r = V::select(
        mid,
        r + V::splat(std::f64::consts::FRAC_PI_4 + 0.5 * MORE_BITS),
        r,
    );
    r = V::select(
        swap,
        (V::splat(std::f64::consts::FRAC_PI_2) - r) + V::splat(MORE_BITS),
        r,
    );
    r = V::select(
        x.sign_set(),
        (V::splat(std::f64::consts::PI) - r) + V::splat(2.0 * MORE_BITS),
        r,
    );
    r.flip_sign_by(y)
}

/// `L_e = ln((sum + e) / max(sum - e, floor (sum + e)))` for `sum = a + b`, the distances to the
/// edge ends, and the edge length `e`.
///
/// Since `(a+b+e)/(a+b-e) = (1+s)/(1-s)` with `s = e/(a+b)`, `L_e = 2 atanh(s) = 2s + s R(s^2)`
/// with fdlibm's `R`, valid for `s <= 3 - 2 sqrt 2`: one division and no log, and more accurate
/// than the log of the rounded ratio. Lanes of an edge closer than that (rare in batches on large
/// meshes, common in the interpolated field's near sums) take the general route, all lanes at
/// once through [`ln_lanes`] (bit-for-bit [`ln_scalar`]).
#[inline(always)]
pub(crate) fn edge_log<V: Lanes>(sum: V, e: V, floor: V) -> V {
    let s = e / sum;
    let z = s * s;
    let mut r = V::splat(LG[6]);
    for c in [LG[5], LG[4], LG[3], LG[2], LG[1], LG[0]] {
        r = r.mul_add(z, V::splat(c));
    }
    let fast_val = (s * z).mul_add(r, s + s);
    let fast = s.le(V::splat(ATANH_FAST_MAX));
    if V::all(fast) {
        return fast_val;
    }
    let num = sum + e;
    let den = (sum - e).max(floor * num);
    let ratio = num / den;
    let normal = V::and(
        ratio.gt(V::splat(f64::MIN_POSITIVE)),
        ratio.le(V::splat(f64::MAX)),
    );
    let slow = if V::all(normal) {
        ln_lanes(ratio)
    } else {
        V::load(&ratio.to_array().map(ln_scalar))
    };
    V::select(fast, fast_val, slow)
}

/// [`ln_scalar`] on every lane at once, for positive, normal, finite lanes: the same operations
/// in the same order (nothing fused), so each lane is bit-for-bit [`ln_scalar`] of it.
#[inline(always)]
pub(crate) fn ln_lanes<V: Lanes>(v: V) -> V {
    let (m, e) = v.split_exponent();
    let big = m.gt(V::splat(std::f64::consts::SQRT_2));
    let m = V::select(big, V::splat(0.5) * m, m);
    let k = e + V::select(big, V::splat(1.0), V::splat(0.0));
    let f = m - V::splat(1.0);
    let s = f / (V::splat(2.0) + f);
    let z = s * s;
    let w = z * z;
    let c = V::splat;
    let t1 = w * (c(LG[1]) + w * (c(LG[3]) + w * c(LG[5])));
    let t2 = z * (c(LG[0]) + w * (c(LG[2]) + w * (c(LG[4]) + w * c(LG[6]))));
    let r = t2 + t1;
    let hfsq = c(0.5) * f * f;
    k * c(LN2_HI) - ((hfsq - (s * (hfsq + r) + k * c(LN2_LO))) - f)
}

/// Natural log of a finite positive number (fdlibm `e_log.c` reduction and polynomial, no fused
/// operations); the slow path of [`edge_log`] for lanes [`ln_lanes`] does not take. Zero, negative and non-finite input give NaN.
#[inline]
pub(crate) fn ln_scalar(v: f64) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        return f64::NAN;
    }
    // Subnormals: scale into the normal range first.
    let (v, extra) = if v < f64::MIN_POSITIVE {
        (v * 2f64.powi(54), -54.0)
    } else {
        (v, 0.0)
    };
    let bits = v.to_bits();
    let e = ((bits >> 52) & 0x7ff) as f64 - 1023.0 + extra;
    // Mantissa in [1, 2); fold it into [sqrt(2)/2, sqrt(2)).
    let m = f64::from_bits((bits & 0x000f_ffff_ffff_ffff) | 0x3ff0_0000_0000_0000);
    let big = m > std::f64::consts::SQRT_2;
    let m = if big { 0.5 * m } else { m };
    let k = e + if big { 1.0 } else { 0.0 };
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

/// [`atan2`] on one value (the portable instantiation's first lane), for tests.
#[cfg(test)]
fn atan2_scalar(y: f64, x: f64) -> f64 {
    atan2(Portable::splat(y), Portable::splat(x)).0.to_array()[0]
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    fn ulps(a: f64, b: f64) -> f64 {
        (a - b).abs() / (f64::EPSILON * b.abs().max(f64::MIN_POSITIVE))
    }

    /// Values across the log's range: near 1, around the sqrt(2) fold, powers of two and their
    /// neighbours, and large ratios (an edge seen from next to its end).
    pub(crate) fn log_sweep() -> Vec<f64> {
        let mut v = Vec::new();
        for i in 0..20_000 {
            v.push(1.0 + i as f64 * 1e-4);
            v.push(std::f64::consts::SQRT_2 * (1.0 + (i as f64 - 10_000.0) * 1e-12));
            v.push(1.0 + 1e300f64.powf(i as f64 / 20_000.0));
        }
        for e in -1000..1000 {
            let p = 2f64.powi(e);
            v.extend([
                p,
                f64::from_bits(p.to_bits() + 1),
                f64::from_bits(p.to_bits() - 1),
            ]);
        }
        v.extend([f64::MIN_POSITIVE, f64::MAX]);
        v
    }

    #[test]
    fn lane_log_is_bit_for_bit_the_scalar_log() {
        // ln_lanes promises the same bits as ln_scalar (which is checked against std below), so
        // moving edge logs into the lanes changes no result.
        for chunk in log_sweep().chunks(4) {
            let mut a = [1.0; 4];
            a[..chunk.len()].copy_from_slice(chunk);
            let got = ln_lanes(Portable::load(&a)).to_array();
            for (k, &x) in a.iter().enumerate() {
                assert_eq!(got[k].to_bits(), ln_scalar(x).to_bits(), "ln({x:e})");
                let want = x.ln();
                assert!(
                    (got[k] - want).abs() <= 2.0 * f64::EPSILON * want.abs().max(1e-300),
                    "ln({x:e}) = {} vs std {want}",
                    got[k]
                );
            }
        }
    }

    #[test]
    fn edge_log_series_matches_std() {
        // Reference: L = ln((1+s)/(1-s)) = ln_1p(2s/(1-s)) from the platform libm, for sum = 1
        // and e = s across the series' range and beyond it (the slow path).
        let mut worst = 0.0f64;
        for i in 1..=40_000 {
            let s = 0.9 * i as f64 / 40_000.0;
            let want = (2.0 * s / (1.0 - s)).ln_1p();
            let got = edge_log(
                Portable::splat(1.0),
                Portable::splat(s),
                Portable::splat(1e-32),
            );
            worst = worst.max(ulps(got.0.to_array()[0], want));
        }
        assert!(worst < 4.0, "worst {worst} ulp");
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
                let got = atan2_scalar(y, x);
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
            worst = worst.max(ulps(atan2_scalar(y, x), y.atan2(x)));
        }
        assert!(worst < 4.0, "worst {worst} ulp");
    }

    #[test]
    fn ln_matches_std() {
        let mut worst = 0.0f64;
        for i in 0..20_000 {
            let v = 1.0 + (i as f64 * 0.0137).powf(3.0);
            worst = worst.max((ln_scalar(v) - v.ln()).abs() / (f64::EPSILON * v.ln().max(1.0)));
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
            1e300,
            3e-310,
        ] {
            worst =
                worst.max((ln_scalar(v) - v.ln()).abs() / (f64::EPSILON * v.ln().abs().max(1.0)));
        }
        assert!(worst < 4.0, "worst {worst} ulp");
        assert!(ln_scalar(0.0).is_nan() && ln_scalar(-1.0).is_nan());
        assert!(ln_scalar(f64::INFINITY).is_nan());
    }
}
