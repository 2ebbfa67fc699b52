//! The fit bases evaluated at a point by recurrences: values, gradients and Hessians of the real
//! solid harmonics `R_n^m` (and of `|x|^2 R_n^m`), stable at every degree.
//!
//! Written as polynomials in monomials, high-degree harmonics have coefficients of very
//! different sizes that cancel on evaluation (the monomial basis is badly conditioned on a
//! cube: a degree-24 fit would lose some seven digits). The Legendre recurrences of `basis`
//! evaluated at the point keep full precision, so fits of degree above
//! [`super::fit::MONOMIAL_MAX_DEGREE`] are kept and evaluated in this form.
//!
//! Every function is scaled by `1 / sqrt((n+m)! (n-m)!)` (so `|R_n^m| <= |x|^n`), the same
//! scale the monomial forms of `basis` use, so coefficients mean the same in both.

use super::fit::Space;
use super::poly3::Jet;

/// A complex number with its gradient and Hessian (xx, xy, xz, yy, yz, zz).
#[derive(Debug, Clone, Copy, Default)]
struct CJet {
    re: Jet,
    im: Jet,
}

/// The scale of `R_n^m` in every basis: `1 / sqrt((n+m)! (n-m)!)`.
pub(crate) fn scale(n: usize, m: usize) -> f64 {
    let mut s = 1.0f64;
    for k in 1..=(n + m) {
        s /= (k as f64).sqrt();
    }
    for k in 1..=(n - m) {
        s /= (k as f64).sqrt();
    }
    s
}

fn index(n: usize, m: usize) -> usize {
    n * (n + 1) / 2 + m
}

/// The index pairs of a symmetric 3 x 3 tensor's six entries, in storage order (xx, xy, xz,
/// yy, yz, zz).
pub(crate) const PAIRS: [(usize, usize); 6] = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)];

/// `a * b` for jets (product rule), `b` a plain complex coefficient times `w = x + i y`.
fn times_w(j: &CJet, x: [f64; 3], hess: bool) -> CJet {
    // w = x + i y: grad w = (1, i, 0), Hessian 0.
    let (w_re, w_im) = (x[0], x[1]);
    let gw_re = [1.0, 0.0, 0.0];
    let gw_im = [0.0, 1.0, 0.0];
    let mut out = CJet::default();
    out.re.value = w_re * j.re.value - w_im * j.im.value;
    out.im.value = w_re * j.im.value + w_im * j.re.value;
    for k in 0..3 {
        out.re.grad[k] = gw_re[k] * j.re.value - gw_im[k] * j.im.value + w_re * j.re.grad[k]
            - w_im * j.im.grad[k];
        out.im.grad[k] = gw_re[k] * j.im.value
            + gw_im[k] * j.re.value
            + w_re * j.im.grad[k]
            + w_im * j.re.grad[k];
    }
    if hess {
        for (h, &(a, b)) in PAIRS.iter().enumerate() {
            out.re.hess[h] = gw_re[a] * j.re.grad[b] - gw_im[a] * j.im.grad[b]
                + gw_re[b] * j.re.grad[a]
                - gw_im[b] * j.im.grad[a]
                + w_re * j.re.hess[h]
                - w_im * j.im.hess[h];
            out.im.hess[h] = gw_re[a] * j.im.grad[b]
                + gw_im[a] * j.re.grad[b]
                + gw_re[b] * j.im.grad[a]
                + gw_im[b] * j.re.grad[a]
                + w_re * j.im.hess[h]
                + w_im * j.re.hess[h];
        }
    }
    out
}

/// `(a z J1 - b r^2 J0) / d` for jets of real functions, with `[a, b, d] = abd`.
fn step(j1: &Jet, j0: &Jet, x: [f64; 3], r2: f64, abd: [f64; 3], hess: bool) -> Jet {
    let [a, b, d] = abd;
    let z = x[2];
    let mut out = Jet {
        value: (a * z * j1.value - b * r2 * j0.value) / d,
        ..Jet::default()
    };
    for (k, &xk) in x.iter().enumerate() {
        let dz = if k == 2 { j1.value } else { 0.0 };
        out.grad[k] = (a * (dz + z * j1.grad[k]) - b * (2.0 * xk * j0.value + r2 * j0.grad[k])) / d;
    }
    if hess {
        for (h, &(p, q)) in PAIRS.iter().enumerate() {
            let dzp = if q == 2 { j1.grad[p] } else { 0.0 };
            let dzq = if p == 2 { j1.grad[q] } else { 0.0 };
            let delta = if p == q { 2.0 * j0.value } else { 0.0 };
            out.hess[h] = (a * (dzp + dzq + z * j1.hess[h])
                - b * (delta
                    + 2.0 * x[q] * j0.grad[p]
                    + 2.0 * x[p] * j0.grad[q]
                    + r2 * j0.hess[h]))
                / d;
        }
    }
    out
}

/// Jets of every basis function of `space` and degree `p` at `x`, in the basis order of
/// `basis` (by total degree `n`: the solid harmonics of degree `n`, real then imaginary part,
/// then for the biharmonic space `|x|^2` times those of degree `n - 2`), each scaled by
/// [`scale`].
pub(crate) fn basis_jets<const HESS: bool>(space: Space, p: usize, x: [f64; 3]) -> Vec<Jet> {
    let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
    let len = index(p, p) + 1;
    let mut h = vec![CJet::default(); len];
    h[0].re.value = 1.0;
    for m in 0..=p {
        if m > 0 {
            let f = (2 * m - 1) as f64;
            let mut j = times_w(&h[index(m - 1, m - 1)], x, HESS);
            for part in [&mut j.re, &mut j.im] {
                part.value *= f;
                part.grad.iter_mut().for_each(|g| *g *= f);
                part.hess.iter_mut().for_each(|g| *g *= f);
            }
            h[index(m, m)] = j;
        }
        for n in m..p {
            // (n - m + 1) R_(n+1)^m = (2n + 1) z R_n^m - (n + m) r^2 R_(n-1)^m
            let (a, b, d) = ((2 * n + 1) as f64, (n + m) as f64, (n - m + 1) as f64);
            let cur = h[index(n, m)];
            let prev = if n > m {
                h[index(n - 1, m)]
            } else {
                CJet::default()
            };
            h[index(n + 1, m)] = CJet {
                re: step(&cur.re, &prev.re, x, r2, [a, b, d], HESS),
                im: step(&cur.im, &prev.im, x, r2, [a, b, d], HESS),
            };
        }
    }
    let mut out = Vec::with_capacity(2 * p * p + 2);
    let push_degree = |out: &mut Vec<Jet>, n: usize, times_r2: bool| {
        for m in 0..=n {
            let s = scale(n, m);
            let c = &h[index(n, m)];
            let parts: &[&Jet] = if m == 0 { &[&c.re] } else { &[&c.re, &c.im] };
            for j in parts {
                let mut v = Jet {
                    value: s * j.value,
                    grad: j.grad.map(|g| s * g),
                    hess: if HESS {
                        j.hess.map(|g| s * g)
                    } else {
                        [0.0; 6]
                    },
                };
                if times_r2 {
                    // r^2 f: grad 2 x f + r^2 grad f; Hessian 2 delta f + 2 (x grad f^T +
                    // grad f x^T) + r^2 Hess f.
                    let f = v;
                    v.value = r2 * f.value;
                    for (k, &xk) in x.iter().enumerate() {
                        v.grad[k] = 2.0 * xk * f.value + r2 * f.grad[k];
                    }
                    if HESS {
                        for (hh, &(a, b)) in PAIRS.iter().enumerate() {
                            let delta = if a == b { 2.0 * f.value } else { 0.0 };
                            v.hess[hh] = delta
                                + 2.0 * (x[a] * f.grad[b] + x[b] * f.grad[a])
                                + r2 * f.hess[hh];
                        }
                    }
                }
                out.push(v);
            }
        }
    };
    for n in 0..=p {
        push_degree(&mut out, n, false);
        if space == Space::Biharmonic && n >= 2 {
            push_degree(&mut out, n - 2, true);
        }
    }
    out
}

/// The function with basis coefficients `coef` (the constant first) at `x`.
pub(crate) fn eval<const HESS: bool>(space: Space, p: usize, coef: &[f64], x: [f64; 3]) -> Jet {
    let jets = basis_jets::<HESS>(space, p, x);
    let mut out = Jet::default();
    for (c, j) in coef.iter().zip(&jets) {
        out.value += c * j.value;
        for k in 0..3 {
            out.grad[k] += c * j.grad[k];
        }
        if HESS {
            for k in 0..6 {
                out.hess[k] += c * j.hess[k];
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::super::basis::biharmonic_basis;
    use super::super::poly3::{Layout, eval as poly_eval};
    use super::*;

    #[test]
    fn recurrence_matches_the_monomial_basis_with_derivatives() {
        // The two constructions of the same functions (monomial polynomials from `basis`,
        // scaled alike, and the recurrence at a point) must agree, derivatives included.
        let p = 7;
        let layout = Layout::new(p);
        let polys = biharmonic_basis(&layout);
        let x = [0.31, -0.52, 0.44];
        let jets = basis_jets::<true>(Space::Biharmonic, p, x);
        assert_eq!(jets.len(), polys.len());
        for (k, (poly, j)) in polys.iter().zip(&jets).enumerate() {
            let want = poly_eval::<true>(&layout, &poly.coef, x[0], x[1], x[2]);
            let scale = want.value.abs().max(1e-3);
            assert!(
                (want.value - j.value).abs() < 1e-12 * scale.max(1.0),
                "{k} value"
            );
            for i in 0..3 {
                assert!((want.grad[i] - j.grad[i]).abs() < 1e-11, "{k} grad");
            }
            for i in 0..6 {
                assert!((want.hess[i] - j.hess[i]).abs() < 1e-10, "{k} hess");
            }
        }
    }
}
