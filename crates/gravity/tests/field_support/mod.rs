//! Reference formulas from outside the project for the field tests.
#![allow(dead_code)]

use nalgebra::{Matrix3, Point3, Vector3};
use spinfall_gravity::Mesh;

/// Newtonian constant used by the crate (CODATA 2018), repeated here on purpose.
pub const G: f64 = 6.674_30e-11;

/// Relative difference `|a - b| / scale`.
pub fn rel(a: f64, b: f64, scale: f64) -> f64 {
    (a - b).abs() / scale
}

// ---------------------------------------------------------------------------------------------
// Homogeneous right rectangular prism: Nagy, Papp & Benedek (2000), "The gravitational
// potential and its derivatives for the prism", J. Geodesy 74:552-560, eqs. for V and V_x.
// With coordinates relative to the field point, x_i = X_i - P, the potential is
//   V = G rho ||| x y ln(z + r) + y z ln(x + r) + z x ln(y + r)
//                - x^2/2 atan(y z / (x r)) - y^2/2 atan(z x / (y r)) - z^2/2 atan(x y / (z r)) |||
// summed over the eight corners with signs (+ at upper limits, - at lower).
// ---------------------------------------------------------------------------------------------

/// `ln(z + r)` written to avoid cancellation when `z < 0` (`z + r = (x^2 + y^2)/(r - z)`);
/// returns 0 where the argument vanishes (its coefficient vanishes there too).
fn ln_plus(z: f64, r: f64, rho2: f64) -> f64 {
    if z >= 0.0 {
        if z + r > 0.0 { (z + r).ln() } else { 0.0 }
    } else if rho2 > 0.0 {
        (rho2 / (r - z)).ln()
    } else {
        0.0
    }
}

/// `c^2 atan(a b / (c r))`, 0 when `c = 0` (its limit).
fn sq_atan(a: f64, b: f64, c: f64, r: f64) -> f64 {
    if c == 0.0 {
        0.0
    } else {
        c * c * (a * b / (c * r)).atan()
    }
}

fn c_atan(a: f64, b: f64, c: f64, r: f64) -> f64 {
    if c == 0.0 {
        0.0
    } else {
        c * (a * b / (c * r)).atan()
    }
}

fn prism_corner(x: f64, y: f64, z: f64) -> (f64, [f64; 3]) {
    let r = (x * x + y * y + z * z).sqrt();
    let lz = ln_plus(z, r, x * x + y * y);
    let lx = ln_plus(x, r, y * y + z * z);
    let ly = ln_plus(y, r, z * z + x * x);
    let v = x * y * lz + y * z * lx + z * x * ly
        - 0.5 * sq_atan(y, z, x, r)
        - 0.5 * sq_atan(z, x, y, r)
        - 0.5 * sq_atan(x, y, z, r);
    // Derivatives of the corner function with respect to x, y, z (Nagy et al. 2000, V_x etc.).
    let gx = y * lz + z * ly - c_atan(y, z, x, r);
    let gy = z * lx + x * lz - c_atan(z, x, y, r);
    let gz = x * ly + y * lx - c_atan(x, y, z, r);
    (v, [gx, gy, gz])
}

/// Potential (m^2/s^2, positive) and acceleration (m/s^2) of the homogeneous box `[lo, hi]`
/// of density `rho` at `p`.
pub fn prism_field(lo: [f64; 3], hi: [f64; 3], rho: f64, p: &Point3<f64>) -> (f64, Vector3<f64>) {
    let mut v = 0.0;
    let mut g = [0.0; 3];
    for (i, xi) in [lo[0], hi[0]].iter().enumerate() {
        for (j, yj) in [lo[1], hi[1]].iter().enumerate() {
            for (k, zk) in [lo[2], hi[2]].iter().enumerate() {
                let sign = if (i + j + k) % 2 == 1 { -1.0 } else { 1.0 };
                let sign = -sign; // lower limits (index 0) carry -, upper +: (-1)^(3 - i - j - k)
                let (cv, cg) = prism_corner(xi - p.x, yj - p.y, zk - p.z);
                v += sign * cv;
                for a in 0..3 {
                    g[a] += sign * cg[a];
                }
            }
        }
    }
    // The corner derivatives are with respect to x = X - P, the acceleration is d/dP = -d/dx.
    (G * rho * v, Vector3::new(-g[0], -g[1], -g[2]) * (G * rho))
}

// Carlson symmetric elliptic integrals R_F and R_D (Carlson 1995): in `carlson.rs`, which the
// dynamics crate's tests include as well.
mod carlson;
pub use carlson::{carlson_rd, carlson_rf};

/// Potential and acceleration of the homogeneous ellipsoid with semi-axes `a, b, c` (along
/// x, y, z, centred at the origin), at any point. Classical result (MacMillan 1930, "The
/// Theory of the Potential", ch. 2; Chandrasekhar 1969 "Ellipsoidal Figures of Equilibrium"
/// ch. 3) written with Carlson's integrals:
/// `U = pi G rho a b c [2 R_F(A,B,C) - 2/3 (x^2 R_D(B,C,A) + y^2 R_D(C,A,B) + z^2 R_D(A,B,C))]`
/// with `A = a^2 + lambda` etc., `lambda = 0` inside and the confocal parameter (largest root of
/// `x^2/A + y^2/B + z^2/C = 1`) outside; `a_x = -4/3 pi G rho a b c x R_D(B,C,A)`, etc.
pub fn ellipsoid_field(abc: [f64; 3], rho: f64, p: &Point3<f64>) -> (f64, Vector3<f64>) {
    let [a, b, c] = abc;
    let (a2, b2, c2) = (a * a, b * b, c * c);
    let q = |l: f64| p.x * p.x / (a2 + l) + p.y * p.y / (b2 + l) + p.z * p.z / (c2 + l) - 1.0;
    let lambda = if q(0.0) <= 0.0 {
        0.0
    } else {
        // q decreases monotonically in lambda: bisection.
        let (mut lo, mut hi) = (0.0, 1.0);
        while q(hi) > 0.0 {
            hi *= 2.0 * (1.0 + p.coords.norm_squared() / (a2 + b2 + c2));
        }
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if q(mid) > 0.0 { lo = mid } else { hi = mid }
        }
        0.5 * (lo + hi)
    };
    let (aa, bb, cc) = (a2 + lambda, b2 + lambda, c2 + lambda);
    let k = std::f64::consts::PI * G * rho * a * b * c;
    let (dx, dy, dz) = (
        carlson_rd(bb, cc, aa),
        carlson_rd(cc, aa, bb),
        carlson_rd(aa, bb, cc),
    );
    let u = k
        * (2.0 * carlson_rf(aa, bb, cc)
            - 2.0 / 3.0 * (p.x * p.x * dx + p.y * p.y * dy + p.z * p.z * dz));
    let acc = Vector3::new(p.x * dx, p.y * dy, p.z * dz) * (-4.0 / 3.0 * k);
    (u, acc)
}

// ---------------------------------------------------------------------------------------------
// Mass properties by signed tetrahedra (standard formulas: volume a.(b x c)/6, centroid the
// mean of the four corners, second moment int x x^T = V/20 (sum v v^T + s s^T), s = sum v).
// ---------------------------------------------------------------------------------------------

/// Volume (m^3), centre of mass (m) and inertia tensor per unit density about the COM (m^5).
pub fn mass_properties(mesh: &Mesh) -> (f64, Point3<f64>, Matrix3<f64>) {
    let mut vol = 0.0;
    let mut first = Vector3::zeros();
    let mut second = Matrix3::zeros();
    for f in 0..mesh.faces.len() {
        let [a, b, c] = mesh.triangle(f);
        let (a, b, c) = (a.coords, b.coords, c.coords);
        let v = a.dot(&b.cross(&c)) / 6.0;
        let s = a + b + c;
        vol += v;
        first += v * s / 4.0;
        second += (v / 20.0)
            * (a * a.transpose() + b * b.transpose() + c * c.transpose() + s * s.transpose());
    }
    let com = first / vol;
    let second_com = second - vol * com * com.transpose();
    let inertia = Matrix3::identity() * second_com.trace() - second_com;
    (vol, Point3::from(com), inertia)
}

/// MacCullagh's formula: `U = GM/r + G (A + B + C - 3 I) / (2 r^3)` with `I` the moment of
/// inertia about the direction of `r` (relative to the COM). Inertia here is per unit density.
pub fn maccullagh(vol: f64, inertia_per_rho: &Matrix3<f64>, rho: f64, r: &Vector3<f64>) -> f64 {
    let d = r.norm();
    let u = r / d;
    let i_dir = (u.transpose() * inertia_per_rho * u)[(0, 0)];
    G * rho * (vol / d + (inertia_per_rho.trace() - 3.0 * i_dir) / (2.0 * d * d * d))
}

/// Inside test by counting crossings of a ray with the triangles (Jordan curve theorem;
/// ray-triangle intersection after Moller & Trumbore 1997).
pub fn inside_by_ray(mesh: &Mesh, p: &Point3<f64>, dir: &Vector3<f64>) -> bool {
    let mut crossings = 0;
    for f in 0..mesh.faces.len() {
        let [a, b, c] = mesh.triangle(f);
        let e1 = b - a;
        let e2 = c - a;
        let h = dir.cross(&e2);
        let det = e1.dot(&h);
        if det.abs() < 1e-300 {
            continue;
        }
        let s = p - a;
        let u = s.dot(&h) / det;
        if !(0.0..=1.0).contains(&u) {
            continue;
        }
        let q = s.cross(&e1);
        let v = dir.dot(&q) / det;
        if v < 0.0 || u + v > 1.0 {
            continue;
        }
        if e2.dot(&q) / det > 0.0 {
            crossings += 1;
        }
    }
    crossings % 2 == 1
}
