//! Bracketed scalar root finding (Illinois variant of regula falsi).

/// A root of `g` in `[a, b]` where `g(a)` and `g(b)` have opposite signs (or one is zero), to
/// within `tol` in the argument; `None` if the bracket is not valid. At most 200 iterations.
///
/// Method: the Illinois modification of regula falsi (Dowell & Jarratt 1971, BIT 11:168–174),
/// superlinear and never leaving the bracket.
pub fn illinois(mut g: impl FnMut(f64) -> f64, mut a: f64, mut b: f64, tol: f64) -> Option<f64> {
    let mut ga = g(a);
    let mut gb = g(b);
    if ga == 0.0 {
        return Some(a);
    }
    if gb == 0.0 {
        return Some(b);
    }
    if !(ga.is_finite() && gb.is_finite()) || ga.signum() == gb.signum() {
        return None;
    }
    let mut side = 0i8;
    for _ in 0..200 {
        if (b - a).abs() <= tol {
            break;
        }
        let mut c = (a * gb - b * ga) / (gb - ga);
        if !c.is_finite() || c <= a.min(b) || c >= a.max(b) {
            c = 0.5 * (a + b);
        }
        let gc = g(c);
        if gc == 0.0 {
            return Some(c);
        }
        if gc.signum() == gb.signum() {
            b = c;
            gb = gc;
            if side == -1 {
                ga *= 0.5;
            }
            side = -1;
        } else {
            a = c;
            ga = gc;
            if side == 1 {
                gb *= 0.5;
            }
            side = 1;
        }
        // Guard against stagnation: bisect when the interval barely shrinks.
        if (b - a).abs() > tol && side != 0 && (gc.abs() > 0.5 * ga.abs().max(gb.abs())) {
            let m = 0.5 * (a + b);
            let gm = g(m);
            if gm == 0.0 {
                return Some(m);
            }
            if gm.signum() == gb.signum() {
                b = m;
                gb = gm;
            } else {
                a = m;
                ga = gm;
            }
        }
    }
    Some(if ga.abs() < gb.abs() { a } else { b })
}
