//! Dense polynomials in three variables of total degree at most `p`, evaluated with their
//! gradient and Hessian by nested Horner schemes.
//!
//! Coefficients are stored with `x` outermost and `z` innermost: for `i` in `0..=p`, for `j` in
//! `0..=p-i`, for `k` in `0..=p-i-j`, the coefficient of `x^i y^j z^k` (see [`Layout`]).

/// Where each monomial's coefficient lives, for one total degree.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Layout {
    degree: usize,
    /// Index of the first coefficient of `x^i y^j z^0`, at `[i][j]`.
    start: Vec<Vec<usize>>,
    len: usize,
}

impl Layout {
    pub fn new(degree: usize) -> Layout {
        let mut start = Vec::with_capacity(degree + 1);
        let mut len = 0;
        for i in 0..=degree {
            let mut row = Vec::with_capacity(degree + 1 - i);
            for j in 0..=degree - i {
                row.push(len);
                len += degree - i - j + 1;
            }
            start.push(row);
        }
        Layout { degree, start, len }
    }

    /// Number of coefficients: `(p+1)(p+2)(p+3)/6`.
    pub fn len(&self) -> usize {
        self.len
    }

    pub fn degree(&self) -> usize {
        self.degree
    }

    /// Index of the coefficient of `x^i y^j z^k` (`i + j + k <= p`).
    pub fn index(&self, i: usize, j: usize, k: usize) -> usize {
        self.start[i][j] + k
    }

    /// Every monomial `(i, j, k)` in storage order.
    pub fn monomials(&self) -> impl Iterator<Item = (usize, usize, usize)> + '_ {
        let p = self.degree;
        (0..=p).flat_map(move |i| {
            (0..=p - i).flat_map(move |j| (0..=p - i - j).map(move |k| (i, j, k)))
        })
    }
}

/// A polynomial over a [`Layout`] (used to build bases; evaluation takes plain slices).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Poly3 {
    pub coef: Vec<f64>,
}

impl Poly3 {
    pub fn zero(layout: &Layout) -> Poly3 {
        Poly3 {
            coef: vec![0.0; layout.len()],
        }
    }

    pub fn one(layout: &Layout) -> Poly3 {
        let mut p = Poly3::zero(layout);
        p.coef[0] = 1.0;
        p
    }

    /// `self` times the variable `axis` (0 = x, 1 = y, 2 = z); terms pushed beyond the
    /// layout's degree must be zero (the caller keeps degrees in range).
    pub fn times_var(&self, layout: &Layout, axis: usize) -> Poly3 {
        let mut out = Poly3::zero(layout);
        let p = layout.degree();
        for (i, j, k) in layout.monomials() {
            let c = self.coef[layout.index(i, j, k)];
            if c == 0.0 {
                continue;
            }
            let (a, b, d) = match axis {
                0 => (i + 1, j, k),
                1 => (i, j + 1, k),
                _ => (i, j, k + 1),
            };
            debug_assert!(a + b + d <= p, "degree overflow");
            if a + b + d <= p {
                out.coef[layout.index(a, b, d)] += c;
            }
        }
        out
    }

    /// `self * |x|^2`.
    pub fn times_r2(&self, layout: &Layout) -> Poly3 {
        let mut out = Poly3::zero(layout);
        for axis in 0..3 {
            let t = self.times_var(layout, axis).times_var(layout, axis);
            out.add_scaled(&t, 1.0);
        }
        out
    }

    pub fn add_scaled(&mut self, other: &Poly3, s: f64) {
        for (a, b) in self.coef.iter_mut().zip(&other.coef) {
            *a += s * b;
        }
    }

    /// The Laplacian, exactly (for tests of harmonicity).
    #[cfg(test)]
    pub fn laplacian(&self, layout: &Layout) -> Poly3 {
        let mut out = Poly3::zero(layout);
        for (i, j, k) in layout.monomials() {
            let c = self.coef[layout.index(i, j, k)];
            if i >= 2 {
                out.coef[layout.index(i - 2, j, k)] += c * (i * (i - 1)) as f64;
            }
            if j >= 2 {
                out.coef[layout.index(i, j - 2, k)] += c * (j * (j - 1)) as f64;
            }
            if k >= 2 {
                out.coef[layout.index(i, j, k - 2)] += c * (k * (k - 1)) as f64;
            }
        }
        out
    }

    pub fn scaled(&self, s: f64) -> Poly3 {
        Poly3 {
            coef: self.coef.iter().map(|c| c * s).collect(),
        }
    }
}

/// Value, gradient and (optionally) Hessian of a polynomial at a point.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct Jet {
    pub value: f64,
    pub grad: [f64; 3],
    /// xx, xy, xz, yy, yz, zz.
    pub hess: [f64; 6],
}

/// Evaluates the polynomial with coefficients `c` (over `layout`) at `(x, y, z)`: value and
/// gradient, and the Hessian when `HESS`.
pub(crate) fn eval<const HESS: bool>(layout: &Layout, c: &[f64], x: f64, y: f64, z: f64) -> Jet {
    let p = layout.degree();
    // Outer Horner over x of Q_i(y, z) = sum_j y^j R_ij(z), each carrying the partial
    // derivatives it needs.
    let mut out = Jet::default();
    for i in (0..=p).rev() {
        let mut q = Jet::default();
        for j in (0..=p - i).rev() {
            let s = layout.start[i][j];
            let n = p - i - j;
            // R(z) and R'(z), R''(z) by Horner.
            let (mut r, mut r1, mut r2) = (0.0, 0.0, 0.0);
            for k in (0..=n).rev() {
                if HESS {
                    r2 = r2 * z + 2.0 * r1;
                }
                r1 = r1 * z + r;
                r = r * z + c[s + k];
            }
            // q = q * y + R, with derivatives in y and z.
            // Every right-hand side uses the values before this update (product rule).
            if HESS {
                q.hess[3] = q.hess[3] * y + 2.0 * q.grad[1]; // yy
                q.hess[4] = q.hess[4] * y + q.grad[2]; // yz
                q.hess[5] = q.hess[5] * y + r2; // zz
            }
            q.grad[1] = q.grad[1] * y + q.value; // y
            q.grad[2] = q.grad[2] * y + r1; // z
            q.value = q.value * y + r;
        }
        // out = out * x + q.
        if HESS {
            out.hess[0] = out.hess[0] * x + 2.0 * out.grad[0]; // xx
            out.hess[1] = out.hess[1] * x + out.grad[1]; // xy
            out.hess[2] = out.hess[2] * x + out.grad[2]; // xz
            out.hess[3] = out.hess[3] * x + q.hess[3];
            out.hess[4] = out.hess[4] * x + q.hess[4];
            out.hess[5] = out.hess[5] * x + q.hess[5];
        }
        out.grad[0] = out.grad[0] * x + out.value;
        out.grad[1] = out.grad[1] * x + q.grad[1];
        out.grad[2] = out.grad[2] * x + q.grad[2];
        out.value = out.value * x + q.value;
    }
    out
}

/// Points evaluated side by side by [`eval_lanes`].
pub(crate) const LANES: usize = 8;

/// [`eval`] with the Hessian at [`LANES`] points side by side (the same operations in the same
/// order per lane, nothing fused: each lane's result is [`eval`]'s to the bit). One point's
/// Horner chains wait on each other's latency; eight run in the time of one.
#[multiversion::multiversion(targets(
    "x86_64+avx512f+avx512dq+avx2+fma+avx",
    "x86_64+avx2+fma+avx"
))]
pub(crate) fn eval_lanes(
    layout: &Layout,
    c: &[f64],
    x: &[f64; LANES],
    y: &[f64; LANES],
    z: &[f64; LANES],
) -> [Jet; LANES] {
    type L = [f64; LANES];
    let p = layout.degree();
    let zero = [0.0; LANES];
    // out and q: value, grad (3), hess (6), as in `eval`.
    let mut out = [zero; 10];
    for i in (0..=p).rev() {
        let mut q = [zero; 10];
        for j in (0..=p - i).rev() {
            let s = layout.start[i][j];
            let n = p - i - j;
            let (mut r, mut r1, mut r2): (L, L, L) = (zero, zero, zero);
            for k in (0..=n).rev() {
                let ck = c[s + k];
                for l in 0..LANES {
                    r2[l] = r2[l] * z[l] + 2.0 * r1[l];
                    r1[l] = r1[l] * z[l] + r[l];
                    r[l] = r[l] * z[l] + ck;
                }
            }
            for l in 0..LANES {
                q[7][l] = q[7][l] * y[l] + 2.0 * q[2][l];
                q[8][l] = q[8][l] * y[l] + q[3][l];
                q[9][l] = q[9][l] * y[l] + r2[l];
                q[2][l] = q[2][l] * y[l] + q[0][l];
                q[3][l] = q[3][l] * y[l] + r1[l];
                q[0][l] = q[0][l] * y[l] + r[l];
            }
        }
        for l in 0..LANES {
            out[4][l] = out[4][l] * x[l] + 2.0 * out[1][l];
            out[5][l] = out[5][l] * x[l] + out[2][l];
            out[6][l] = out[6][l] * x[l] + out[3][l];
            out[7][l] = out[7][l] * x[l] + q[7][l];
            out[8][l] = out[8][l] * x[l] + q[8][l];
            out[9][l] = out[9][l] * x[l] + q[9][l];
            out[1][l] = out[1][l] * x[l] + out[0][l];
            out[2][l] = out[2][l] * x[l] + q[2][l];
            out[3][l] = out[3][l] * x[l] + q[3][l];
            out[0][l] = out[0][l] * x[l] + q[0][l];
        }
    }
    std::array::from_fn(|l| Jet {
        value: out[0][l],
        grad: [out[1][l], out[2][l], out[3][l]],
        hess: std::array::from_fn(|k| out[4 + k][l]),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn naive(layout: &Layout, c: &[f64], x: f64, y: f64, z: f64) -> f64 {
        layout
            .monomials()
            .map(|(i, j, k)| {
                c[layout.index(i, j, k)] * x.powi(i as i32) * y.powi(j as i32) * z.powi(k as i32)
            })
            .sum()
    }

    #[test]
    fn lanes_give_each_point_the_bits_of_the_single_point_horner() {
        let layout = Layout::new(16);
        let c: Vec<f64> = (0..layout.len())
            .map(|k| ((k * 7919) % 101) as f64 / 50.0 - 1.0)
            .collect();
        let x: [f64; LANES] = std::array::from_fn(|l| 0.9 - 0.23 * l as f64);
        let y: [f64; LANES] = std::array::from_fn(|l| -0.8 + 0.19 * l as f64);
        let z: [f64; LANES] = std::array::from_fn(|l| 0.1 * (l as f64 - 3.5));
        let got = eval_lanes(&layout, &c, &x, &y, &z);
        for l in 0..LANES {
            let want = eval::<true>(&layout, &c, x[l], y[l], z[l]);
            assert_eq!(got[l].value.to_bits(), want.value.to_bits(), "lane {l}");
            for k in 0..3 {
                assert_eq!(got[l].grad[k].to_bits(), want.grad[k].to_bits(), "lane {l}");
            }
            for k in 0..6 {
                assert_eq!(got[l].hess[k].to_bits(), want.hess[k].to_bits(), "lane {l}");
            }
        }
    }

    #[test]
    fn horner_matches_naive_sum_and_finite_differences() {
        let layout = Layout::new(6);
        assert_eq!(layout.len(), 7 * 8 * 9 / 6);
        let c: Vec<f64> = (0..layout.len())
            .map(|k| ((k * 7919) % 101) as f64 / 50.0 - 1.0)
            .collect();
        let (x, y, z) = (0.3, -0.7, 0.45);
        let jet = eval::<true>(&layout, &c, x, y, z);
        let f = |x, y, z| naive(&layout, &c, x, y, z);
        assert!((jet.value - f(x, y, z)).abs() < 1e-13);
        let h = 1e-5;
        let d = |g: &dyn Fn(f64) -> f64| (g(h) - g(-h)) / (2.0 * h);
        let gx = d(&|e| f(x + e, y, z));
        let gy = d(&|e| f(x, y + e, z));
        let gz = d(&|e| f(x, y, z + e));
        for (got, want) in jet.grad.iter().zip([gx, gy, gz]) {
            assert!((got - want).abs() < 1e-8, "{got} vs {want}");
        }
        // Hessian by differences of the analytic gradient.
        let g = |x, y, z| eval::<false>(&layout, &c, x, y, z).grad;
        let col = |axis: usize| -> [f64; 3] {
            let mut a = [x, y, z];
            let mut b = [x, y, z];
            a[axis] += h;
            b[axis] -= h;
            let (ga, gb) = (g(a[0], a[1], a[2]), g(b[0], b[1], b[2]));
            std::array::from_fn(|k| (ga[k] - gb[k]) / (2.0 * h))
        };
        let (cx, cy, cz) = (col(0), col(1), col(2));
        let want = [cx[0], cx[1], cx[2], cy[1], cy[2], cz[2]];
        for (got, want) in jet.hess.iter().zip(want) {
            assert!((got - want).abs() < 1e-7, "{got} vs {want}");
        }
    }
}
