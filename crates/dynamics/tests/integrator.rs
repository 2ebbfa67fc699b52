//! The DOP853 integrator against closed-form solutions.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use std::f64::consts::PI;

use spinfall_dynamics::dop853::{Dop853, OdeSystem, Tolerances, hermite_pos_vel};

struct Exp;
impl OdeSystem<1> for Exp {
    fn derivative(&mut self, _t: f64, y: &[f64; 1]) -> [f64; 1] {
        [y[0]]
    }
}

/// Harmonic oscillator x'' = -x in the [pos, vel] layout used by the flights (3-D, unit rate).
struct Oscillator;
impl OdeSystem<6> for Oscillator {
    fn derivative(&mut self, _t: f64, y: &[f64; 6]) -> [f64; 6] {
        [y[3], y[4], y[5], -y[0], -y[1], -y[2]]
    }
}

fn fixed_step_error(h: f64) -> f64 {
    // Loose tolerances so every step of length h is accepted; stepping to t + h forces the size.
    let tol = Tolerances {
        rel: 1e3,
        abs: [1e3],
    };
    let mut sys = Exp;
    let mut ode = Dop853::new(&mut sys, 0.0, [1.0], tol, h);
    let n = (1.0 / h).round() as usize;
    for k in 1..=n {
        ode.step(&mut sys, k as f64 * h).unwrap();
    }
    assert!((ode.t() - 1.0).abs() < 1e-12);
    (ode.y()[0] - 1f64.exp()).abs()
}

#[test]
fn order_of_convergence_is_eight_on_exponential_growth() {
    // y' = y, y(0) = 1 has y(1) = e. A method of order p shrinks the global error by 2^p when
    // the step halves (Hairer, Nørsett & Wanner, Solving ODEs I, sec. II.3); DOP853 has p = 8.
    let e1 = fixed_step_error(0.25);
    let e2 = fixed_step_error(0.125);
    let order = (e1 / e2).log2();
    assert!(
        order > 7.5 && order < 9.0,
        "observed order {order} (errors {e1:e}, {e2:e})"
    );
}

#[test]
fn adaptive_run_meets_tolerance_on_harmonic_oscillator() {
    // Closed form: x = cos t, v = -sin t.
    let tol = Tolerances {
        rel: 1e-12,
        abs: [1e-12; 6],
    };
    let mut sys = Oscillator;
    let mut ode = Dop853::new(&mut sys, 0.0, [1.0, 0.0, 0.0, 0.0, 1.0, 0.0], tol, 1.0);
    while ode.t() < 20.0 {
        ode.step(&mut sys, 20.0).unwrap();
    }
    let y = ode.y();
    assert!(
        (y[0] - 20f64.cos()).abs() < 1e-9,
        "x error {}",
        y[0] - 20f64.cos()
    );
    assert!((y[3] + 20f64.sin()).abs() < 1e-9);
    assert!((y[1] - 20f64.sin()).abs() < 1e-9);
    assert!(ode.steps < 400, "{} steps", ode.steps);
}

#[test]
fn dense_output_is_seventh_order_accurate_inside_steps() {
    // The continuous extension of DOP853 is of order 7 (Hairer et al., sec. II.6 and II.10):
    // inside a step of length h its error scales like h^8 locally. Check both its absolute
    // accuracy and its scaling against the closed form x = cos t.
    let err_for = |h: f64| {
        let tol = Tolerances {
            rel: 1e3,
            abs: [1e3; 6],
        };
        let mut sys = Oscillator;
        let mut ode = Dop853::new(&mut sys, 0.0, [1.0, 0.0, 0.0, 0.0, 0.0, 0.0], tol, h);
        ode.step(&mut sys, h).unwrap();
        ode.prepare_dense(&mut sys);
        let mut worst: f64 = 0.0;
        for k in 1..10 {
            let t = h * k as f64 / 10.0;
            let y = ode.dense_output(t).unwrap();
            worst = worst
                .max((y[0] - t.cos()).abs())
                .max((y[3] + t.sin()).abs());
        }
        worst
    };
    let e1 = err_for(0.4);
    let e2 = err_for(0.2);
    assert!(e1 < 1e-8, "dense error {e1:e}");
    let order = (e1 / e2).log2();
    assert!(order > 7.0, "local dense order {order} ({e1:e}, {e2:e})");
}

#[test]
fn quintic_hermite_matches_closed_form_to_sixth_order() {
    // Quintic Hermite interpolation from values, first and second derivatives at both ends has
    // error O(h^6) (standard interpolation theory, e.g. Burden & Faires, Numerical Analysis).
    let err_for = |h: f64| {
        let y0 = [1.0, 0.0, 0.0, 0.0, 0.0, 0.0];
        let f0 = [0.0, 0.0, 0.0, -1.0, 0.0, 0.0];
        let y1 = [h.cos(), 0.0, 0.0, -h.sin(), 0.0, 0.0];
        let f1 = [-h.sin(), 0.0, 0.0, -h.cos(), 0.0, 0.0];
        let mut worst: f64 = 0.0;
        for k in 0..=10 {
            let s = k as f64 / 10.0;
            let y = hermite_pos_vel(h, &y0, &f0, &y1, &f1, s);
            let t = s * h;
            worst = worst
                .max((y[0] - t.cos()).abs())
                .max((y[3] + t.sin()).abs() * h);
        }
        worst
    };
    let e1 = err_for(0.5);
    let e2 = err_for(0.25);
    assert!(e1 < 1e-5, "{e1:e}");
    let order = (e1 / e2).log2();
    assert!(order > 5.5, "hermite order {order}");
}

/// Two-body problem with GM = 1 in the [pos, vel] layout.
struct Kepler;
impl OdeSystem<6> for Kepler {
    fn derivative(&mut self, _t: f64, y: &[f64; 6]) -> [f64; 6] {
        let r3 = (y[0] * y[0] + y[1] * y[1] + y[2] * y[2]).powf(1.5);
        [y[3], y[4], y[5], -y[0] / r3, -y[1] / r3, -y[2] / r3]
    }
}

#[test]
fn order_of_convergence_is_eight_on_the_kepler_problem() {
    // An ellipse with e = 0.5, a = 1 (periapsis 0.5, vis-viva speed sqrt(3)) returns to its start
    // after one period 2 pi (Kepler's third law); with a fixed step h the error after one
    // period shrinks like h^8 for DOP853 (Hairer et al., sec. II.10).
    let y0 = [0.5, 0.0, 0.0, 0.0, 3f64.sqrt(), 0.0];
    let err = |n: usize| {
        let h = 2.0 * PI / n as f64;
        let tol = Tolerances {
            rel: 1e3,
            abs: [1e3; 6],
        };
        let mut sys = Kepler;
        let mut ode = Dop853::new(&mut sys, 0.0, y0, tol, h);
        for k in 1..=n {
            ode.step(&mut sys, k as f64 * h).unwrap();
        }
        let y = ode.y();
        ((y[0] - y0[0]).powi(2) + (y[1] - y0[1]).powi(2)).sqrt()
    };
    let (e1, e2) = (err(200), err(400));
    let order = (e1 / e2).log2();
    assert!(e2 < 1e-7, "error {e2:e}");
    assert!(order > 7.3 && order < 9.0, "order {order} ({e1:e}, {e2:e})");
}
