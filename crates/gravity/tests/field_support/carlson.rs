//! Carlson's symmetric elliptic integrals R_F and R_D, shared by the gravity and dynamics tests
//! (the dynamics tests include this file by path).

// ---------------------------------------------------------------------------------------------
// Carlson symmetric elliptic integrals by duplication: B. C. Carlson (1995), "Numerical
// computation of real or complex elliptic integrals", Numerical Algorithms 10:13-26.
// We iterate until the relative deviations are below 1e-9, where the truncated series error
// (order dev^2 for the terms we drop beyond those kept) is far below 1e-15.
// ---------------------------------------------------------------------------------------------

/// `R_F(x, y, z) = 1/2 int_0^inf dt / sqrt((t+x)(t+y)(t+z))`.
pub fn carlson_rf(mut x: f64, mut y: f64, mut z: f64) -> f64 {
    for _ in 0..200 {
        let a = (x + y + z) / 3.0;
        let (dx, dy, dz) = ((a - x) / a, (a - y) / a, (a - z) / a);
        if dx.abs().max(dy.abs()).max(dz.abs()) < 1e-9 {
            let e2 = dx * dy - dz * dz;
            let e3 = dx * dy * dz;
            return (1.0 - e2 / 10.0 + e3 / 14.0 + e2 * e2 / 24.0 - 3.0 * e2 * e3 / 44.0)
                / a.sqrt();
        }
        let (sx, sy, sz) = (x.sqrt(), y.sqrt(), z.sqrt());
        let l = sx * sy + sy * sz + sz * sx;
        x = 0.25 * (x + l);
        y = 0.25 * (y + l);
        z = 0.25 * (z + l);
    }
    f64::NAN
}

/// `R_D(x, y, z) = 3/2 int_0^inf dt / ((t+z) sqrt((t+x)(t+y)(t+z)))`.
pub fn carlson_rd(mut x: f64, mut y: f64, mut z: f64) -> f64 {
    let mut sum = 0.0;
    let mut fac = 1.0;
    for _ in 0..200 {
        let a = (x + y + 3.0 * z) / 5.0;
        let (dx, dy, dz) = ((a - x) / a, (a - y) / a, (a - z) / a);
        if dx.abs().max(dy.abs()).max(dz.abs()) < 1e-9 {
            // Leading terms of Carlson's series: 1 - 3/14 E2 + ... with E2 = dx dy - 6 dz^2
            // (Carlson 1995, eq. 2.26-ish, from memory; only E2 matters at this deviation).
            let e2 = dx * dy - 6.0 * dz * dz;
            return 3.0 * sum + fac * (1.0 - 3.0 / 14.0 * e2) / (a * a.sqrt());
        }
        let (sx, sy, sz) = (x.sqrt(), y.sqrt(), z.sqrt());
        let l = sx * sy + sy * sz + sz * sx;
        sum += fac / (sz * (z + l));
        fac *= 0.25;
        x = 0.25 * (x + l);
        y = 0.25 * (y + l);
        z = 0.25 * (z + l);
    }
    f64::NAN
}
