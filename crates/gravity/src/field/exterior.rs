//! Exterior spherical-harmonic expansion of the homogeneous polyhedron's potential.
//!
//! With the addition theorem of Legendre functions,
//! `1/|r - s| = sum_n s^n/r^(n+1) sum_m (2 - delta_m0) (n-m)!/(n+m)! P_n^m(mu) P_n^m(mu')
//! cos(m (phi - phi'))`, so outside the Brillouin sphere (about the centre of mass)
//! `U / (G rho) = sum_n sum_m (2 - delta_m0) (n-m)!/(n+m)! [C_nm Re R_n^m(r) + S_nm Im R_n^m(r)]
//! / r^(2n+1)`, where `R_n^m(r) = r^n P_n^m(cos theta) e^(i m phi)` are the unnormalised regular
//! solid harmonics (computed as polynomials by the usual Legendre recurrences, no trigonometry)
//! and `C_nm + i S_nm = integral of R_n^m over the body`.
//!
//! The moments are exact for the polyhedron (to rounding): each `R_n^m` is a homogeneous
//! polynomial of degree `n`, so by Euler's theorem its integral over the cone from the centre of
//! mass to face `f` is `h_f / (n + 3)` times its integral over the face (`h_f` the signed
//! distance of the face plane), and the face integrals use a collapsed (Duffy) Gauss–Legendre
//! rule: exact for every degree on large faces; on small faces (fine meshes) a smaller rule
//! whose error bound at the switch radius is below 1e-15 relative (see `rule_points`), which
//! makes the moments of a 330k-face mesh over ten times cheaper (~0.2 s on two cores).
//!
//! # Accuracy (measured by `tests/field_far.rs`, `far_field_accuracy_table`)
//! Truncating at degree `N` leaves a tail bounded rigorously by `(R_B/r)^(N+1) / (1 - R_B/r)`
//! relative to `GM/r` (`|P_n| <= 1`; Brillouin radius `R_B` about the centre of mass). The
//! direct face/edge sum instead loses digits to cancellation, roughly `1e-15 (r/R_B)^3`
//! relative. Largest relative difference of `U` and `|a|` between the two (four directions,
//! the 5120-face demo body, degree 8):
//!
//! | r / R_B | direct - expansion | expansion bound | which one errs            |
//! |--------:|-------------------:|----------------:|---------------------------|
//! |     1.5 |             4.0e-4 |          7.8e-2 | expansion (truncation)    |
//! |       2 |             2.9e-5 |          3.9e-3 | expansion                 |
//! |       4 |             6.8e-8 |          5.1e-6 | expansion                 |
//! |       8 |            1.5e-10 |          8.5e-9 | expansion                 |
//! |      16 |            4.4e-12 |         1.6e-11 | both, about equal         |
//! |      32 |            3.5e-11 |         2.9e-14 | direct sum (cancellation) |
//! |      64 |            3.3e-10 |         5.6e-17 | direct sum                |
//! |     128 |             2.7e-9 |         1.1e-19 | direct sum                |
//! |     256 |             1.3e-8 |         2.1e-22 | direct sum                |
//! |    1000 |             1.3e-6 |           1e-27 | direct sum                |
//! |   10000 |             1.1e-3 |           1e-36 | direct sum                |
//!
//! So [`super::PolyhedronGravity`] switches at [`super::SWITCH_BRILLOUIN_MULTIPLE`] = 16
//! Brillouin radii, where both are at the ~1e-11 level: the field is accurate to about 1e-11
//! relative (U and a) everywhere outside ~8 R_B and continuous across the switch to that level
//! (tested), and to rounding (~1e-14) near the body. Meshes with many more faces lose
//! somewhat more in the direct sum (more terms cancel); the switch stays where the expansion's
//! rigorous bound is 1.6e-11.

use nalgebra::{Point3, Vector3};
use rayon::prelude::*;

use crate::mesh::Mesh;

/// Degree of the expansion built by [`super::PolyhedronGravity`].
pub const DEFAULT_DEGREE: usize = 8;

/// Exterior expansion about the centre of mass, per unit `G rho`.
#[derive(Debug, Clone)]
pub struct Exterior {
    degree: usize,
    /// Reference radius (the Brillouin radius), metres; moments are in units of it.
    ref_radius_m: f64,
    /// `(2 - delta_m0) (n-m)!/(n+m)! C_nm / R^(n+3)` at `index(n, m)`.
    c: Vec<f64>,
    /// Same for `S_nm`.
    s: Vec<f64>,
    /// The gradient of each degree's sum as sums over the harmonics one degree down: for
    /// degree `n >= 1`, at `index(n - 1, j)`, the coefficients of `Re` and `Im R_(n-1)^j` in
    /// the x, y and z components (`[xr, xi, yr, yi, zr, zi]`; see [`gradient_table`]).
    grad: Vec<[f64; 6]>,
}

/// The ladder identities of [`Harmonics::gradient`] summed over each degree's cosine and sine
/// coefficients once, so that an evaluation takes six products per harmonic for the gradient
/// instead of three lookups and branches per term. With the recurrence of
/// [`Harmonics::fill`] kept in registers, a degree-20 evaluation on the 2-core machine fell
/// from 1.76-1.87 us to 0.81-0.84 us (`interp_build`'s points beyond the switch radius, old
/// and new run alternately on a quiet machine).
fn gradient_table(degree: usize, c: &[f64], s: &[f64]) -> Vec<[f64; 6]> {
    let len = if degree == 0 {
        0
    } else {
        index(degree - 1, degree - 1) + 1
    };
    let mut g = vec![[0.0; 6]; len];
    for n in 1..=degree {
        for m in 0..=n {
            let (cv, sv) = (c[index(n, m)], s[index(n, m)]);
            let k = (n + m) as f64;
            // (d/dx + i d/dy) R_n^m = -R_(n-1)^(m+1) ("up"), and for m = 0 the x and y parts
            // come from it alone (R_n^0 is real).
            if m < n - 1 {
                let e = &mut g[index(n - 1, m + 1)];
                if m == 0 {
                    e[0] -= cv;
                    e[3] -= cv;
                } else {
                    e[0] -= 0.5 * cv;
                    e[1] -= 0.5 * sv;
                    e[2] += 0.5 * sv;
                    e[3] -= 0.5 * cv;
                }
            }
            // (d/dx - i d/dy) R_n^m = (n + m)(n + m - 1) R_(n-1)^(m-1) for m >= 1.
            if m >= 1 {
                let f = k * (k - 1.0);
                let e = &mut g[index(n - 1, m - 1)];
                e[0] += 0.5 * cv * f;
                e[1] += 0.5 * sv * f;
                e[2] += 0.5 * sv * f;
                e[3] -= 0.5 * cv * f;
            }
            // d/dz R_n^m = (n + m) R_(n-1)^m.
            if m < n {
                let e = &mut g[index(n - 1, m)];
                e[4] += k * cv;
                e[5] += k * sv;
            }
        }
    }
    g
}

fn index(n: usize, m: usize) -> usize {
    n * (n + 1) / 2 + m
}

/// Gauss–Legendre nodes and weights on [0, 1] (weights sum to 1), by Newton iteration on
/// `P_k` (Abramowitz & Stegun 25.4.29 for the weights).
pub(crate) fn gauss_legendre_01(k: usize) -> Vec<(f64, f64)> {
    let mut out = Vec::with_capacity(k);
    for i in 0..k {
        let mut x = (std::f64::consts::PI * (i as f64 + 0.75) / (k as f64 + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            let (mut p0, mut p1) = (1.0, x);
            for j in 2..=k {
                let p2 = ((2 * j - 1) as f64 * x * p1 - (j - 1) as f64 * p0) / j as f64;
                p0 = p1;
                p1 = p2;
            }
            // p1 = P_k(x), p0 = P_{k-1}(x)
            dp = k as f64 * (x * p1 - p0) / (x * x - 1.0);
            let dx = p1 / dp;
            x -= dx;
            if dx.abs() < 1e-16 {
                break;
            }
        }
        let w = 2.0 / ((1.0 - x * x) * dp * dp);
        out.push((0.5 * (1.0 - x), 0.5 * w));
    }
    out
}

/// Regular solid harmonics `R_n^m(x)` for `0 <= m <= n <= degree` (real and imaginary parts),
/// normalised so that `R_m^m = (2m - 1)!! (x + i y)^m` (no Condon–Shortley phase), and their
/// gradients from the values one degree down ([`Harmonics::gradient`]).
pub(crate) struct Harmonics {
    degree: usize,
    /// The recurrence's coefficients `(2n + 1) / (n - m + 1)` and `(n + m) / (n - m + 1)` at
    /// `index(n, m)`, so that filling divides nothing.
    step: Vec<[f64; 2]>,
    pub re: Vec<f64>,
    pub im: Vec<f64>,
}

impl Harmonics {
    fn new(degree: usize) -> Self {
        let len = index(degree, degree) + 1;
        let mut step = vec![[0.0; 2]; len];
        for m in 0..=degree {
            for n in m..=degree {
                let d = (n - m + 1) as f64;
                step[index(n, m)] = [(2 * n + 1) as f64 / d, (n + m) as f64 / d];
            }
        }
        Self {
            degree,
            step,
            re: vec![0.0; len],
            im: vec![0.0; len],
        }
    }

    fn fill(&mut self, x: [f64; 3]) {
        let nmax = self.degree;
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let (re, im, step) = (&mut self.re[..], &mut self.im[..], &self.step[..]);
        re[0] = 1.0;
        im[0] = 0.0;
        for m in 0..=nmax {
            let mm = index(m, m);
            if m > 0 {
                // R_m^m = (2m - 1) (x + i y) R_{m-1}^{m-1}
                let p = index(m - 1, m - 1);
                let f = (2 * m - 1) as f64;
                let (pr, pi) = (re[p], im[p]);
                re[mm] = f * (x[0] * pr - x[1] * pi);
                im[mm] = f * (x[0] * pi + x[1] * pr);
            }
            // (n - m + 1) R_{n+1}^m = (2n + 1) z R_n^m - (n + m) r^2 R_{n-1}^m, with the
            // coefficients divided once in `new`; the last two terms kept in registers (the
            // orders m run side by side instead of each step waiting on a store and a load).
            let (mut prev_re, mut prev_im) = (0.0, 0.0);
            let (mut cur_re, mut cur_im) = (re[mm], im[mm]);
            let mut cur = mm;
            for n in m..nmax {
                let next = cur + n + 1;
                let [a, b] = step[cur];
                let next_re = a * x[2] * cur_re - b * r2 * prev_re;
                let next_im = a * x[2] * cur_im - b * r2 * prev_im;
                re[next] = next_re;
                im[next] = next_im;
                (prev_re, prev_im, cur_re, cur_im) = (cur_re, cur_im, next_re, next_im);
                cur = next;
            }
        }
    }

    /// `R_n^m` of degree `n - 1` (zero where `m` is outside `0..=n - 1`).
    #[cfg(test)]
    fn lower(&self, n: usize, m: usize) -> (f64, f64) {
        if n == 0 || m > n - 1 {
            (0.0, 0.0)
        } else {
            let i = index(n - 1, m);
            (self.re[i], self.im[i])
        }
    }

    /// The gradient of `R_n^m` (real part, imaginary part) from the harmonics one degree down,
    /// by the ladder identities of this normalisation:
    /// `d/dz R_n^m = (n + m) R_(n-1)^m`, `(d/dx + i d/dy) R_n^m = -R_(n-1)^(m+1)`, and
    /// `(d/dx - i d/dy) R_n^m = (n + m)(n + m - 1) R_(n-1)^(m-1)` for `m >= 1` (for `m = 0`,
    /// the conjugate of the `+` one, `R_n^0` being real). Tested against central differences;
    /// evaluations use these identities summed once per expansion ([`gradient_table`]).
    #[cfg(test)]
    fn gradient(&self, n: usize, m: usize) -> ([f64; 3], [f64; 3]) {
        let k = (n + m) as f64;
        let (up_r, up_i) = self.lower(n, m + 1);
        let (ar, ai) = (-up_r, -up_i);
        let (br, bi) = if m == 0 {
            (ar, -ai)
        } else {
            let (lr, li) = self.lower(n, m - 1);
            let f = k * (k - 1.0);
            (f * lr, f * li)
        };
        let (zr, zi) = self.lower(n, m);
        (
            [0.5 * (ar + br), 0.5 * (ai - bi), k * zr],
            [0.5 * (ai + bi), 0.5 * (br - ar), k * zi],
        )
    }
}

/// Field error allowed from the face quadrature at [`super::SWITCH_BRILLOUIN_MULTIPLE`]
/// Brillouin radii, relative to `GM/r`: four orders below the truncation bound there.
const QUADRATURE_TOLERANCE: f64 = 1e-15;

/// Points per direction of the collapsed Gauss–Legendre rule for a face of diameter `size`
/// (in Brillouin radii).
///
/// The `k x k` rule integrates polynomials of total degree `2k - 2` over the triangle exactly.
/// Expanded about a point of the face, `R_n^m` (normalised, `|x| <= 1`) has terms of degree `j`
/// in the offset of size up to `binom(n, j) size^j`, and a degree-`n` moment error `eps_n`
/// moves the field at `r` by `eps_n (R_B / r)^n` relative. So the rule needs
/// `sum_n binom(n, 2k-1) size^(2k-1) / 16^n <= QUADRATURE_TOLERANCE`: small faces of fine
/// meshes need far fewer points than exactness for every degree (`k = degree/2 + 1`) demands.
/// At `r` below the switch radius the truncation error of the expansion, which grows as fast,
/// stays the larger one.
fn rule_points(size: f64, degree: usize, switch: f64) -> usize {
    let k_exact = degree / 2 + 1;
    (1..k_exact)
        .find(|&k| {
            let j = 2 * k - 1;
            let bound: f64 = (j..=degree)
                .map(|n| binomial(n, j) * size.powi(j as i32) / switch.powi(n as i32))
                .sum();
            bound <= QUADRATURE_TOLERANCE
        })
        .unwrap_or(k_exact)
}

fn binomial(n: usize, j: usize) -> f64 {
    (0..j).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}

/// The Legendre recurrences of [`Harmonics::fill`] with their coefficients precomputed, for the
/// moment integration (values only, accumulated straight into the moments).
struct Recurrence {
    degree: usize,
    /// `(2n + 1) / (n - m + 1)` and `(n + m) / (n - m + 1)` at `index(n, m)`.
    a: Vec<f64>,
    b: Vec<f64>,
    /// `1 / (n + 3)`, the cone factor of degree `n`.
    cone: Vec<f64>,
}

impl Recurrence {
    fn new(degree: usize) -> Self {
        let len = index(degree, degree) + 1;
        let (mut a, mut b) = (vec![0.0; len], vec![0.0; len]);
        for n in 0..=degree {
            for m in 0..=n {
                let d = (n - m + 1) as f64;
                a[index(n, m)] = (2 * n + 1) as f64 / d;
                b[index(n, m)] = (n + m) as f64 / d;
            }
        }
        let cone = (0..=degree).map(|n| 1.0 / (n + 3) as f64).collect();
        Self { degree, a, b, cone }
    }

    /// Adds `w / (n + 3) R_n^m(x)` to `c` (real parts) and `s` (imaginary parts).
    #[inline]
    fn accumulate(&self, x: [f64; 3], w: f64, c: &mut [f64], s: &mut [f64]) {
        let nmax = self.degree;
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let (mut mm_re, mut mm_im) = (1.0, 0.0);
        for m in 0..=nmax {
            if m > 0 {
                // R_m^m = (2m - 1) (x + i y) R_{m-1}^{m-1}
                let f = (2 * m - 1) as f64;
                (mm_re, mm_im) = (
                    f * (x[0] * mm_re - x[1] * mm_im),
                    f * (x[0] * mm_im + x[1] * mm_re),
                );
            }
            let (mut prev_re, mut prev_im) = (0.0, 0.0);
            let (mut cur_re, mut cur_im) = (mm_re, mm_im);
            for n in m..=nmax {
                let i = index(n, m);
                let wn = w * self.cone[n];
                c[i] += wn * cur_re;
                s[i] += wn * cur_im;
                // R_{n+1}^m = a z R_n^m - b r^2 R_{n-1}^m
                let (za, rb) = (self.a[i] * x[2], self.b[i] * r2);
                (prev_re, prev_im, cur_re, cur_im) = (
                    cur_re,
                    cur_im,
                    za * cur_re - rb * prev_re,
                    za * cur_im - rb * prev_im,
                );
            }
        }
    }
}

fn factorial(n: usize) -> f64 {
    (1..=n).map(|k| k as f64).product()
}

impl Exterior {
    /// Integrates the moments of the homogeneous polyhedron `mesh` about `center_m` up to
    /// `degree`.
    pub fn from_mesh(mesh: &Mesh, center_m: Point3<f64>, degree: usize) -> Self {
        Self::from_mesh_for_switch(mesh, center_m, degree, super::SWITCH_BRILLOUIN_MULTIPLE)
    }

    /// As [`Self::from_mesh`] for use from `switch_multiple` Brillouin radii outwards (the face
    /// quadrature is chosen so its error there stays below 1e-15 relative).
    pub fn from_mesh_for_switch(
        mesh: &Mesh,
        center_m: Point3<f64>,
        degree: usize,
        switch_multiple: f64,
    ) -> Self {
        let ref_radius_m = mesh
            .vertices_m
            .iter()
            .map(|v| (v - center_m).norm())
            .fold(0.0, f64::max);
        Self::integrate(
            mesh.faces.len(),
            &|f| mesh.triangle(f),
            center_m,
            ref_radius_m,
            degree,
            switch_multiple,
        )
    }

    /// As [`Self::from_mesh`], for `face_count` triangles given by `triangle` (corners
    /// counter-clockwise seen from outside, metres), with `ref_radius_m` the largest vertex
    /// distance from `center_m`.
    pub(crate) fn integrate(
        face_count: usize,
        triangle: &(dyn Fn(usize) -> [Point3<f64>; 3] + Sync),
        center_m: Point3<f64>,
        ref_radius_m: f64,
        degree: usize,
        switch_multiple: f64,
    ) -> Self {
        let ref_radius_m = ref_radius_m.max(f64::MIN_POSITIVE);
        let len = index(degree, degree) + 1;
        // One collapsed Gauss–Legendre rule per size: rules[k - 1] has k x k points.
        let rules: Vec<Vec<(f64, f64)>> = (1..=degree / 2 + 1).map(gauss_legendre_01).collect();
        let steps = Recurrence::new(degree);
        let scaled = |p: Point3<f64>| (p - center_m) / ref_radius_m;
        // Faces in fixed chunks of 1,024, each chunk's sums added in face order and the chunks
        // in chunk order, so the moments are the same to the bit whatever the thread count
        // (a fold-and-reduce over rayon's adaptive splits adds in an order that depends on
        // which thread stole what).
        let chunk_sums: Vec<(Vec<f64>, Vec<f64>)> = (0..face_count.div_ceil(1024))
            .into_par_iter()
            .map(|chunk| {
                let (mut c, mut s) = (vec![0.0; len], vec![0.0; len]);
                for f in chunk * 1024..((chunk + 1) * 1024).min(face_count) {
                    let [p0, p1, p2] = triangle(f);
                    let (v0, v1, v2) = (scaled(p0), scaled(p1), scaled(p2));
                    let cross = (v1 - v0).cross(&(v2 - v0)); // 2 A n
                    let area2 = cross.norm();
                    if area2 == 0.0 {
                        continue;
                    }
                    let height = cross.dot(&v0) / area2;
                    let (e1, e2) = (v1 - v0, v2 - v1);
                    let size = e1.norm().max(e2.norm()).max((v0 - v2).norm());
                    let rule = &rules[rule_points(size, degree, switch_multiple) - 1];
                    for &(xi, wx) in rule {
                        for &(eta, we) in rule {
                            let p = v0 + xi * (e1 + eta * e2);
                            let w = area2 * wx * we * xi * height;
                            steps.accumulate([p.x, p.y, p.z], w, &mut c, &mut s);
                        }
                    }
                }
                (c, s)
            })
            .collect();
        let (mut c, mut s) = (vec![0.0; len], vec![0.0; len]);
        for (c2, s2) in &chunk_sums {
            for i in 0..len {
                c[i] += c2[i];
                s[i] += s2[i];
            }
        }
        for n in 0..=degree {
            for m in 0..=n {
                let w = if m == 0 { 1.0 } else { 2.0 } * factorial(n - m) / factorial(n + m);
                c[index(n, m)] *= w;
                s[index(n, m)] *= w;
            }
        }
        Self {
            grad: gradient_table(degree, &c, &s),
            degree,
            ref_radius_m,
            c,
            s,
        }
    }

    /// The expansion's numbers, for storing it: degree, reference radius, and the cosine and
    /// sine moments.
    pub(crate) fn parts(&self) -> (usize, f64, &[f64], &[f64]) {
        (self.degree, self.ref_radius_m, &self.c, &self.s)
    }

    /// An expansion from stored [`Self::parts`]; `None` if the lengths do not fit the degree.
    pub(crate) fn from_parts(
        degree: usize,
        ref_radius_m: f64,
        c: Vec<f64>,
        s: Vec<f64>,
    ) -> Option<Self> {
        let len = index(degree, degree) + 1;
        (c.len() == len && s.len() == len && ref_radius_m > 0.0 && ref_radius_m.is_finite()).then(
            || Self {
                grad: gradient_table(degree, &c, &s),
                degree,
                ref_radius_m,
                c,
                s,
            },
        )
    }

    /// Degree of the expansion.
    pub fn degree(&self) -> usize {
        self.degree
    }

    /// Volume of the body from the degree-0 moment, m^3.
    pub fn volume_m3(&self) -> f64 {
        self.c[0] * self.ref_radius_m.powi(3)
    }

    /// Approximate heap use, bytes.
    pub fn heap_bytes(&self) -> usize {
        (self.c.capacity() + self.s.capacity()) * std::mem::size_of::<f64>()
            + self.grad.capacity() * std::mem::size_of::<[f64; 6]>()
    }

    /// Potential and acceleration per unit `G rho` (m^2 and m) at `r_m` relative to the centre
    /// of mass, using degrees `0..=degree` only (`degree` capped at the expansion's).
    pub fn potential_acceleration_to_degree(
        &self,
        r_m: &Vector3<f64>,
        degree: usize,
    ) -> (f64, Vector3<f64>) {
        let degree = degree.min(self.degree);
        let big_r = self.ref_radius_m;
        let rho = r_m / big_r;
        let dist = rho.norm();
        if dist.is_nan() || dist <= 0.0 {
            return (f64::INFINITY, Vector3::zeros());
        }
        let unit = rho / dist;
        thread_local! {
            // Reused between calls: evaluating allocates nothing.
            static SCRATCH: std::cell::RefCell<Option<Harmonics>> =
                const { std::cell::RefCell::new(None) };
        }
        SCRATCH.with(|cell| {
            let mut slot = cell.borrow_mut();
            let h = match slot.as_mut() {
                Some(h) if h.degree == degree => h,
                _ => slot.insert(Harmonics::new(degree)),
            };
            h.fill([unit.x, unit.y, unit.z]);
            self.sum_harmonics(h, degree, dist, &unit)
        })
    }

    fn sum_harmonics(
        &self,
        h: &Harmonics,
        degree: usize,
        dist: f64,
        unit: &Vector3<f64>,
    ) -> (f64, Vector3<f64>) {
        let big_r = self.ref_radius_m;
        let mut u = 0.0;
        let mut a = Vector3::zeros();
        let inv = 1.0 / dist;
        let mut pow = inv; // dist^-(n+1)
        for n in 0..=degree {
            let at = index(n, 0);
            let mut phi = 0.0;
            for m in at..=at + n {
                phi += self.c[m] * h.re[m] + self.s[m] * h.im[m];
            }
            let mut grad = [0.0; 3];
            if n > 0 {
                let below = index(n - 1, 0);
                for j in below..below + n {
                    let (e, re, im) = (&self.grad[j], h.re[j], h.im[j]);
                    grad[0] += e[0] * re + e[1] * im;
                    grad[1] += e[2] * re + e[3] * im;
                    grad[2] += e[4] * re + e[5] * im;
                }
            }
            u += pow * phi;
            a += (pow * inv) * (Vector3::from(grad) - (2 * n + 1) as f64 * phi * *unit);
            pow *= inv;
        }
        (big_r * big_r * u, big_r * a)
    }

    /// Potential and acceleration per unit `G rho` (m^2 and m) at `r_m` relative to the centre
    /// of mass, full degree.
    pub fn potential_acceleration(&self, r_m: &Vector3<f64>) -> (f64, Vector3<f64>) {
        self.potential_acceleration_to_degree(r_m, self.degree)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gauss_legendre_integrates_polynomials() {
        // Gauss–Legendre with k nodes is exact to degree 2k - 1 (any numerical analysis text).
        for k in 1..=6 {
            let rule = gauss_legendre_01(k);
            for deg in 0..(2 * k) {
                let q: f64 = rule.iter().map(|(x, w)| w * x.powi(deg as i32)).sum();
                assert!(
                    (q - 1.0 / (deg as f64 + 1.0)).abs() < 1e-14,
                    "k={k} deg={deg}"
                );
            }
        }
    }

    #[test]
    fn moment_recurrence_matches_harmonics() {
        // The integration's lean recurrence against the tested Harmonics::fill.
        let x = [0.3, -0.5, 0.7];
        let mut h = Harmonics::new(8);
        h.fill(x);
        let steps = Recurrence::new(8);
        let (mut c, mut s) = (vec![0.0; index(8, 8) + 1], vec![0.0; index(8, 8) + 1]);
        steps.accumulate(x, 2.0, &mut c, &mut s);
        for n in 0..=8 {
            for m in 0..=n {
                let i = index(n, m);
                let w = 2.0 / (n + 3) as f64;
                assert!((c[i] - w * h.re[i]).abs() <= 1e-12 * (w * h.re[i]).abs().max(1e-3));
                assert!((s[i] - w * h.im[i]).abs() <= 1e-12 * (w * h.im[i]).abs().max(1e-3));
            }
        }
    }

    #[test]
    fn moments_are_the_same_whatever_the_thread_count() {
        // Chunks of faces summed in a fixed order: one, two and three threads give the same
        // bits (the build's fields, and the caches keyed on their inputs, rely on it).
        let mesh = crate::generate::demo_body(4);
        let com = Point3::new(10.0, -20.0, 5.0);
        let moments = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .map_err(|e| e.to_string());
            let pool = match pool {
                Ok(p) => p,
                Err(e) => panic!("{e}"),
            };
            pool.install(|| {
                let e = Exterior::from_mesh(&mesh, com, 12);
                let (_, _, c, s) = e.parts();
                (
                    c.iter().chain(s).map(|v| v.to_bits()).collect::<Vec<u64>>(),
                    e.degree(),
                )
            })
        };
        let one = moments(1);
        assert!(mesh.faces.len() > 4 * 1024, "several chunks");
        assert_eq!(one, moments(2));
        assert_eq!(one, moments(3));
    }

    #[test]
    fn tabled_gradient_equals_the_ladder_identities_term_by_term() {
        // Evaluations sum each degree's gradient from a table made once per expansion; the
        // same sums taken term by term from the ladder identities (`Harmonics::gradient`,
        // tested against central differences) must agree to rounding, in several directions
        // and at several distances, at the full degree and a lower one.
        let mesh = crate::generate::demo_body(2);
        let e = Exterior::from_mesh(&mesh, Point3::new(10.0, -20.0, 5.0), 16);
        let by_terms = |r: &Vector3<f64>, degree: usize| -> (f64, Vector3<f64>) {
            let rho = r / e.ref_radius_m;
            let dist = rho.norm();
            let unit = rho / dist;
            let mut h = Harmonics::new(degree);
            h.fill([unit.x, unit.y, unit.z]);
            let (mut u, mut a) = (0.0, Vector3::zeros());
            let inv = 1.0 / dist;
            let mut pow = inv;
            for n in 0..=degree {
                let (mut phi, mut grad) = (0.0, Vector3::zeros());
                for m in 0..=n {
                    let i = index(n, m);
                    let (c, s) = (e.c[i], e.s[i]);
                    phi += c * h.re[i] + s * h.im[i];
                    let (gr, gi) = h.gradient(n, m);
                    grad += Vector3::new(
                        c * gr[0] + s * gi[0],
                        c * gr[1] + s * gi[1],
                        c * gr[2] + s * gi[2],
                    );
                }
                u += pow * phi;
                a += (pow * inv) * (grad - (2 * n + 1) as f64 * phi * unit);
                pow *= inv;
            }
            let big_r = e.ref_radius_m;
            (big_r * big_r * u, big_r * a)
        };
        let dirs = [
            Vector3::new(1.0, 0.0, 0.0),
            Vector3::new(0.3, -0.8, 0.52),
            Vector3::new(-0.6, 0.1, -0.79),
            Vector3::new(0.0, 0.0, 1.0),
        ];
        for d in dirs {
            for multiple in [1.2, 2.5, 9.0] {
                let r = d.normalize() * (multiple * e.ref_radius_m);
                for degree in [16, 7] {
                    let (u, a) = e.potential_acceleration_to_degree(&r, degree);
                    let (u_ref, a_ref) = by_terms(&r, degree);
                    assert!((u - u_ref).abs() <= 1e-13 * u_ref.abs(), "{u} vs {u_ref}");
                    assert!(
                        (a - a_ref).norm() <= 1e-12 * a_ref.norm(),
                        "{a:?} vs {a_ref:?} at {r:?}, degree {degree}"
                    );
                }
            }
        }
    }

    #[test]
    fn quadrature_rule_shrinks_with_face_size() {
        // Large faces get the rule exact for every degree, small ones fewer points.
        assert_eq!(rule_points(0.5, 8, 16.0), 5);
        assert_eq!(rule_points(0.0062, 8, 16.0), 3);
        assert!(rule_points(1e-6, 8, 16.0) <= 2);
        assert_eq!(binomial(8, 3), 56.0);
    }

    #[test]
    fn solid_harmonics_match_legendre_closed_forms() {
        // P_2^0 = (3 mu^2 - 1)/2, P_2^1 = 3 mu sqrt(1-mu^2), P_2^2 = 3 (1 - mu^2),
        // P_3^0 = (5 mu^3 - 3 mu)/2 (Abramowitz & Stegun table 8.x, no Condon–Shortley phase).
        let x = [0.3, -0.5, 0.7];
        let r = (0.09f64 + 0.25 + 0.49).sqrt();
        let mu = x[2] / r;
        let phi = x[1].atan2(x[0]);
        let st = (1.0 - mu * mu).sqrt();
        let mut h = Harmonics::new(3);
        h.fill(x);
        let check = |n: usize, m: usize, p: f64| {
            let want_re = r.powi(n as i32) * p * (m as f64 * phi).cos();
            let want_im = r.powi(n as i32) * p * (m as f64 * phi).sin();
            assert!((h.re[index(n, m)] - want_re).abs() < 1e-14, "re {n} {m}");
            assert!((h.im[index(n, m)] - want_im).abs() < 1e-14, "im {n} {m}");
        };
        check(2, 0, 0.5 * (3.0 * mu * mu - 1.0));
        check(2, 1, 3.0 * mu * st);
        check(2, 2, 3.0 * st * st);
        check(3, 0, 0.5 * (5.0 * mu.powi(3) - 3.0 * mu));
        // Gradients against central differences.
        let hstep = 1e-6;
        for k in 0..3 {
            let mut xp = x;
            let mut xm = x;
            xp[k] += hstep;
            xm[k] -= hstep;
            let mut hp = Harmonics::new(3);
            let mut hm = Harmonics::new(3);
            hp.fill(xp);
            hm.fill(xm);
            for n in 0..=3 {
                for m in 0..=n {
                    let i = index(n, m);
                    let (gr, gi) = h.gradient(n, m);
                    let fd = (hp.re[i] - hm.re[i]) / (2.0 * hstep);
                    assert!((gr[k] - fd).abs() < 1e-8, "grad re {n} {m} {k}");
                    let fd = (hp.im[i] - hm.im[i]) / (2.0 * hstep);
                    assert!((gi[k] - fd).abs() < 1e-8, "grad im {n} {m} {k}");
                }
            }
        }
    }
}
