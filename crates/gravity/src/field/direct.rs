//! The direct Werner–Scheeres face and edge sums, portable scalar version.
//!
//! Conventions (Werner & Scheeres 1997): `r_i = v_i - p` from the field point to the vertices;
//! per face the signed solid angle `omega_f` (van Oosterom & Strackee 1983), per edge the
//! line integral `L_e = ln((a + b + e) / (a + b - e))`.
//!
//! Limits on the surface (no NaN anywhere):
//! - A face seen exactly edge-on with the point in its plane over the triangle, or on its edges or
//!   corners (triple product and denominator both zero to rounding): `omega_f = 0`, the mean of
//!   the limits `+-2 pi` from the two sides. The face term `r_f . F_f . r_f omega_f` is zero there
//!   anyway, so potential and acceleration are unaffected; the Laplacian takes the surface value.
//! - A point on the edge segment (`a + b - e` = 0 to rounding): the denominator is floored at
//!   `1e-32 (a + b + e)`, which keeps `L_e` finite (<= 74); it multiplies `E_e r_e`, which
//!   vanishes there, so the edge term takes its limit 0. Only the gradient tensor, which truly
//!   diverges logarithmically on an edge, is left at this large finite value.

use super::tables::Tables;

/// Accumulated sums for one field point, before the factors `G rho`.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(crate) struct Sums {
    /// sum_e r_e . E_e . r_e L_e, m^2.
    pub edge_u: f64,
    /// sum_e E_e r_e L_e, m.
    pub edge_a: [f64; 3],
    /// sum_f r_f . F_f . r_f omega_f, m^2.
    pub face_u: f64,
    /// sum_f F_f r_f omega_f, m.
    pub face_a: [f64; 3],
    /// sum_f omega_f, sr.
    pub omega: f64,
    /// sum_e E_e L_e (xx, xy, xz, yy, yz, zz).
    pub edge_grad: [f64; 6],
    /// sum_f F_f omega_f (xx, xy, xz, yy, yz, zz).
    pub face_grad: [f64; 6],
}

impl Sums {
    /// The sums of two disjoint parts of the mesh.
    pub fn merged(&self, o: &Sums) -> Sums {
        Sums {
            edge_u: self.edge_u + o.edge_u,
            edge_a: std::array::from_fn(|k| self.edge_a[k] + o.edge_a[k]),
            face_u: self.face_u + o.face_u,
            face_a: std::array::from_fn(|k| self.face_a[k] + o.face_a[k]),
            omega: self.omega + o.omega,
            edge_grad: std::array::from_fn(|k| self.edge_grad[k] + o.edge_grad[k]),
            face_grad: std::array::from_fn(|k| self.face_grad[k] + o.face_grad[k]),
        }
    }
}

/// Vertex vectors relative to the field point: `[x, y, z, |r|]` per vertex, metres.
pub(crate) fn fill_vertices(t: &Tables, p: [f64; 3], scratch: &mut Vec<[f64; 4]>) {
    scratch.clear();
    scratch.extend(t.vx.iter().zip(&t.vy).zip(&t.vz).map(|((&x, &y), &z)| {
        let (rx, ry, rz) = (x - p[0], y - p[1], z - p[2]);
        [rx, ry, rz, (rx * rx + ry * ry + rz * rz).sqrt()]
    }));
}

/// Relative size under which a triple product or solid-angle denominator counts as zero.
pub(crate) const PLANE_TOL: f64 = 16.0 * f64::EPSILON;
/// Floor of the edge-log denominator relative to its numerator.
pub(crate) const EDGE_FLOOR: f64 = 1e-32;

/// Signed solid angle of a triangle seen from the origin, with the surface rule above.
#[inline]
pub(crate) fn solid_angle(r1: &[f64; 4], r2: &[f64; 4], r3: &[f64; 4]) -> f64 {
    let cx = r2[1] * r3[2] - r2[2] * r3[1];
    let cy = r2[2] * r3[0] - r2[0] * r3[2];
    let cz = r2[0] * r3[1] - r2[1] * r3[0];
    let num = r1[0] * cx + r1[1] * cy + r1[2] * cz;
    let d12 = r1[0] * r2[0] + r1[1] * r2[1] + r1[2] * r2[2];
    let d23 = r2[0] * r3[0] + r2[1] * r3[1] + r2[2] * r3[2];
    let d31 = r3[0] * r1[0] + r3[1] * r1[1] + r3[2] * r1[2];
    let prod = r1[3] * r2[3] * r3[3];
    let den = prod + r1[3] * d23 + r2[3] * d31 + r3[3] * d12;
    let tol = PLANE_TOL * prod;
    if num.abs() <= tol && den <= tol {
        0.0
    } else {
        2.0 * num.atan2(den)
    }
}

/// `L_e` for distances `a`, `b` to the edge ends and edge length `e`, floored as above.
#[inline]
pub(crate) fn edge_log(a: f64, b: f64, e: f64) -> f64 {
    let num = a + b + e;
    let den = (a + b - e).max(EDGE_FLOOR * num);
    // ln(num / den) = ln(1 + 2e / den): far from the edge the ratio is close to 1 and taking
    // the log of the rounded ratio would lose ~1e-16 / L_e relative.
    (2.0 * e / den).ln_1p()
}

#[inline]
fn sym_mul(m: &[f64; 6], r: &[f64; 4]) -> [f64; 3] {
    [
        m[0] * r[0] + m[1] * r[1] + m[2] * r[2],
        m[1] * r[0] + m[3] * r[1] + m[4] * r[2],
        m[2] * r[0] + m[4] * r[1] + m[5] * r[2],
    ]
}

/// Face and edge sums over the whole mesh for the vertex vectors in `rv` (see
/// [`fill_vertices`]). With `GRAD` the gradient-tensor sums are filled too.
pub(crate) fn sums_scalar<const GRAD: bool>(t: &Tables, rv: &[[f64; 4]]) -> Sums {
    let mut s = Sums::default();
    for f in 0..t.face_count {
        let r1 = &rv[t.f0[f] as usize];
        let r2 = &rv[t.f1[f] as usize];
        let r3 = &rv[t.f2[f] as usize];
        let omega = solid_angle(r1, r2, r3);
        let n = [t.nx[f], t.ny[f], t.nz[f]];
        let h = n[0] * r1[0] + n[1] * r1[1] + n[2] * r1[2];
        s.omega += omega;
        s.face_u += h * h * omega;
        for (acc, nk) in s.face_a.iter_mut().zip(n) {
            *acc += nk * h * omega;
        }
        if GRAD {
            let m = [
                n[0] * n[0],
                n[0] * n[1],
                n[0] * n[2],
                n[1] * n[1],
                n[1] * n[2],
                n[2] * n[2],
            ];
            for (acc, mk) in s.face_grad.iter_mut().zip(m) {
                *acc += mk * omega;
            }
        }
    }
    for e in 0..t.edge_count {
        let ra = &rv[t.e0[e] as usize];
        let rb = &rv[t.e1[e] as usize];
        let l = edge_log(ra[3], rb[3], t.edge_len_m[e]);
        let m = t.edge_dyad.get(e);
        let er = sym_mul(&m, ra);
        s.edge_u += (ra[0] * er[0] + ra[1] * er[1] + ra[2] * er[2]) * l;
        for (acc, ek) in s.edge_a.iter_mut().zip(er) {
            *acc += ek * l;
        }
        if GRAD {
            for (acc, mk) in s.edge_grad.iter_mut().zip(m) {
                *acc += mk * l;
            }
        }
    }
    s
}
