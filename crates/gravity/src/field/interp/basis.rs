//! The biharmonic polynomials of degree at most `p`, the space the smooth part of the field is
//! fitted in.
//!
//! Outside the faces it leaves out, the potential of a set of faces (in the single-layer split
//! `U = sum_f U_f` of `face_set`) has a Laplacian `-G rho sum_f omega_f` that is itself
//! harmonic there, so the potential is biharmonic; by Almansi's theorem (E. Almansi, Annali di
//! Matematica 1899) it is `H1 + |x|^2 H2` with `H1`, `H2` harmonic in the ball, and truncating
//! both gives the space spanned by the regular solid harmonics `R_n^m` (`n <= p`) and
//! `|x|^2 R_n^m` (`n <= p - 2`): `2 p^2 + 2` functions instead of the `(p+1)(p+2)(p+3)/6` of all
//! polynomials.
//!
//! The solid harmonics come from the usual Legendre recurrences written on polynomials
//! (`R_m^m = (2m-1) (x + i y) R_(m-1)^(m-1)`, `R_(m+1)^m = (2m+1) z R_m^m`,
//! `(n-m) R_n^m = (2n-1) z R_(n-1)^m - (n+m-1) |x|^2 R_(n-2)^m`; e.g. Hobson, "The Theory of
//! Spherical and Ellipsoidal Harmonics", 1931), real and imaginary parts separately, so they are
//! exact polynomials; each is scaled by `1 / sqrt((n+m)! (n-m)!)` (see `solid`, which
//! evaluates the same functions by the recurrences at a point).

use super::poly3::{Layout, Poly3};
use super::solid::scale;

/// The basis for degree `p` as polynomials over `Layout::new(p)`, ordered by total degree (for
/// each `n`: the solid harmonics of degree `n`, then `|x|^2` times those of degree `n - 2`), so
/// the basis of every lower degree is a prefix; the constant comes first.
pub(crate) fn biharmonic_basis(layout: &Layout) -> Vec<Poly3> {
    let p = layout.degree();
    let harmonics = solid_harmonics(layout);
    let mut out = Vec::with_capacity(2 * p * p + 2);
    for n in 0..=p {
        for (deg, m, h) in &harmonics {
            if *deg == n {
                out.push(h.scaled(scale(n, *m)));
            }
        }
        if n >= 2 {
            for (deg, m, h) in &harmonics {
                if *deg == n - 2 {
                    out.push(h.times_r2(layout).scaled(scale(n - 2, *m)));
                }
            }
        }
    }
    out
}

/// The regular solid harmonics of degree at most `p` (`(p+1)^2` of them), for cells with no
/// faces near: there the field is harmonic, and this smaller space fits it with fewer data.
pub(crate) fn harmonic_basis(layout: &Layout) -> Vec<Poly3> {
    solid_harmonics(layout)
        .into_iter()
        .map(|(n, m, h)| h.scaled(scale(n, m)))
        .collect()
}

/// Real and imaginary parts of `R_n^m` for `0 <= m <= n <= p` (the imaginary part of `m = 0`
/// is zero and left out), with their degree and order, in order of degree.
fn solid_harmonics(layout: &Layout) -> Vec<(usize, usize, Poly3)> {
    let p = layout.degree();
    // re[m][n], im[m][n] for n >= m.
    let mut re: Vec<Vec<Poly3>> = Vec::with_capacity(p + 1);
    let mut im: Vec<Vec<Poly3>> = Vec::with_capacity(p + 1);
    let mut diag_re = Poly3::one(layout);
    let mut diag_im = Poly3::zero(layout);
    for m in 0..=p {
        if m > 0 {
            // (a + i b)(x + i y) (2m - 1)
            let f = (2 * m - 1) as f64;
            let mut nr = diag_re.times_var(layout, 0);
            nr.add_scaled(&diag_im.times_var(layout, 1), -1.0);
            let mut ni = diag_re.times_var(layout, 1);
            ni.add_scaled(&diag_im.times_var(layout, 0), 1.0);
            diag_re = nr.scaled(f);
            diag_im = ni.scaled(f);
        }
        let mut col_re = vec![diag_re.clone()];
        let mut col_im = vec![diag_im.clone()];
        if m < p {
            let f = (2 * m + 1) as f64;
            col_re.push(diag_re.times_var(layout, 2).scaled(f));
            col_im.push(diag_im.times_var(layout, 2).scaled(f));
        }
        for n in m + 2..=p {
            let a = (2 * n - 1) as f64;
            let b = (n + m - 1) as f64;
            let d = (n - m) as f64;
            let k = n - m;
            let mut r = col_re[k - 1].times_var(layout, 2).scaled(a);
            r.add_scaled(&col_re[k - 2].times_r2(layout), -b);
            let mut i = col_im[k - 1].times_var(layout, 2).scaled(a);
            i.add_scaled(&col_im[k - 2].times_r2(layout), -b);
            col_re.push(r.scaled(1.0 / d));
            col_im.push(i.scaled(1.0 / d));
        }
        re.push(col_re);
        im.push(col_im);
    }
    let mut out = Vec::with_capacity((p + 1) * (p + 1));
    for n in 0..=p {
        for m in 0..=n {
            out.push((n, m, re[m][n - m].clone()));
            if m > 0 {
                out.push((n, m, im[m][n - m].clone()));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::super::poly3::eval;
    use super::*;

    #[test]
    fn basis_has_two_p_squared_plus_two_harmonic_or_biharmonic_members() {
        for p in [2usize, 5, 9, 14] {
            let layout = Layout::new(p);
            let basis = biharmonic_basis(&layout);
            assert_eq!(basis.len(), 2 * p * p + 2);
            let max_abs = |q: &Poly3| q.coef.iter().fold(0.0f64, |m, c| m.max(c.abs()));
            let mut harmonic = 0;
            for (k, b) in basis.iter().enumerate() {
                // The Laplacian (solid harmonics) or the bi-Laplacian (|x|^2 times them) must
                // vanish to rounding, relative to the coefficients' size.
                let size = max_abs(b);
                let lap = b.laplacian(&layout);
                if max_abs(&lap) <= 1e-12 * size {
                    harmonic += 1;
                } else {
                    let bilap = max_abs(&lap.laplacian(&layout));
                    assert!(bilap <= 1e-12 * size, "p {p} basis {k}: {bilap} vs {size}");
                }
            }
            assert_eq!(harmonic, (p + 1) * (p + 1), "p {p}");
            assert_eq!(harmonic_basis(&layout).len(), (p + 1) * (p + 1));
        }
    }

    #[test]
    fn solid_harmonics_match_legendre_closed_forms() {
        // R_2^0 = (3 z^2 - r^2) / 2 ... scaled: compare shapes at points (Legendre P_2, P_3^1).
        let layout = Layout::new(3);
        let h = solid_harmonics(&layout);
        let at =
            |k: usize, x: f64, y: f64, z: f64| eval::<false>(&layout, &h[k].2.coef, x, y, z).value;
        // Order: n=0: R00; n=1: R10, Re R11, Im R11; n=2: R20, ...
        let (x, y, z) = (0.3, -0.4, 0.5);
        let r2 = x * x + y * y + z * z;
        assert!((at(4, x, y, z) - 0.5 * (3.0 * z * z - r2)).abs() < 1e-14);
        // R_1^1 = x + i y (P_1^1 = sin theta without the Condon-Shortley phase).
        assert!((at(2, x, y, z) - x).abs() < 1e-15 && (at(3, x, y, z) - y).abs() < 1e-15);
        // R_3^1 = r^3 P_3^1 e^(i phi) with P_3^1 = (3/2) sin(theta) (5 cos^2 theta - 1).
        let want_re = 1.5 * x * (5.0 * z * z - r2);
        assert!(
            (at(10, x, y, z) - want_re).abs() < 1e-13,
            "{}",
            at(10, x, y, z)
        );
    }
}
