//! Equilibrium points against closed forms: the homogeneous triaxial ellipsoid (exact exterior
//! potential through Carlson's integrals), the sphere's synchronous ring, and independent
//! finite differences of the potential.
#![allow(clippy::unwrap_used)]

mod common;

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use common::{ExactEllipsoid, carlson_rd, shape, spin_z};
use nalgebra::{Complex, Matrix3, Point3, Vector3};
use spinfall_dynamics::equilibria::{EquilibriumSearch, EquilibriumSet, find_equilibria};
use spinfall_dynamics::{Body, DynamicsError, GravityModel, PointMass};
use spinfall_gravity::{G_SI, MassSpec, generate};

/// Semi-axes of the test ellipsoid, m (a > b > c, spinning about c).
const ABC: [f64; 3] = [1000.0, 700.0, 500.0];
const DENSITY: f64 = 2000.0;
/// Spin period, s: puts the synchronous radius near 1.8 km, 1.8 times the long semi-axis.
const PERIOD_S: f64 = 34_200.0;
/// A slower spin (synchronous radius near 3.4 km).
const SLOW_PERIOD_S: f64 = 90_000.0;

/// A grid small enough for quick debug runs; the equilibria on the axes fall on its nodes'
/// longitudes (every 10 deg) and its middle layer is the equatorial plane.
fn quick_search() -> EquilibriumSearch {
    EquilibriumSearch {
        radial_cells: 24,
        azimuth_cells: 36,
        axial_cells: 3,
        ..EquilibriumSearch::default()
    }
}

fn search(body: &Body, s: &EquilibriumSearch) -> EquilibriumSet {
    find_equilibria(body, s, &|_, _| {}, &AtomicBool::new(false)).unwrap()
}

fn exact_gm() -> f64 {
    4.0 / 3.0 * std::f64::consts::PI * G_SI * DENSITY * ABC[0] * ABC[1] * ABC[2]
}

fn omega(period_s: f64) -> f64 {
    std::f64::consts::TAU / period_s
}

/// Radius of the equilibrium on semi-axis `k` (0: long, 1: intermediate) of the exact
/// ellipsoid: on the x axis outside, `|g_x| = GM x R_D(b^2+l, c^2+l, x^2)` with `l = x^2 - a^2`
/// (see `ExactEllipsoid`), and the balance `|g_x| = w^2 x` leaves the 1-D equation
/// `GM R_D(b^2+l, c^2+l, x^2) = w^2`, decreasing in x: bisection. Likewise on y.
fn exact_axis_radius(k: usize, period_s: f64) -> f64 {
    let [a, b, c] = ABC;
    let (own, o1, o2) = if k == 0 { (a, b, c) } else { (b, c, a) };
    let f = |x: f64| {
        let l = x * x - own * own;
        exact_gm() * carlson_rd(o1 * o1 + l, o2 * o2 + l, x * x) - omega(period_s).powi(2)
    };
    let (mut lo, mut hi) = (own, 10.0 * own);
    assert!(f(lo) > 0.0 && f(hi) < 0.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) > 0.0 { lo = mid } else { hi = mid }
    }
    0.5 * (lo + hi)
}

/// The six eigenvalues (units of w) of the linearised motion at an equilibrium on a principal
/// axis, from the closed-form Hessian of the exact ellipsoid: `H = Hess Phi` is diagonal there,
/// the vertical mode gives `+- i sqrt(H_zz)`, and the planar equations
/// `x'' - 2 w y' + H_xx x = 0`, `y'' + 2 w x' + H_yy y = 0` the quadratic in `s = l^2`:
/// `s^2 + (H_xx + H_yy + 4 w^2) s + H_xx H_yy = 0` (e.g. Scheeres 1994, Icarus 110, for the
/// ellipsoid; the same algebra as any rotating-frame equilibrium).
fn expected_eigenvalues(p: &Point3<f64>, period_s: f64) -> Vec<Complex<f64>> {
    let body = ExactEllipsoid {
        abc_m: ABC,
        gm_m3_s2: exact_gm(),
    };
    let w2 = omega(period_s).powi(2);
    let h = -(body.hessian(p) + Matrix3::from_diagonal(&Vector3::new(w2, w2, 0.0)));
    let (hx, hy, hz) = (h[(0, 0)] / w2, h[(1, 1)] / w2, h[(2, 2)] / w2);
    let bq = hx + hy + 4.0;
    let disc = Complex::new(bq * bq - 4.0 * hx * hy, 0.0).sqrt();
    let mut out = Vec::new();
    for s in [
        (-bq + disc) / 2.0,
        (-bq - disc) / 2.0,
        Complex::new(-hz, 0.0),
    ] {
        let r = s.sqrt();
        out.push(r);
        out.push(-r);
    }
    out
}

/// Whether the closed-form eigenvalues are all imaginary (the planar quadratic in `s` has
/// two real negative roots; its discriminant negative gives a spiral quadruplet, a positive
/// root a hyperbolic pair).
fn expected_stable(expected: &[Complex<f64>]) -> bool {
    expected.iter().all(|z| z.re.abs() < 1e-9)
}

/// Every expected eigenvalue has a computed one within `tol` (units of w).
fn assert_eigenvalues_match(
    computed: &[[f64; 2]; 6],
    expected: &[Complex<f64>],
    tol: f64,
    period_s: f64,
) {
    let w = omega(period_s);
    for e in expected {
        let best = computed
            .iter()
            .map(|c| (Complex::new(c[0], c[1]) / w - e).norm())
            .fold(f64::INFINITY, f64::min);
        assert!(best < tol, "{e} not among {computed:?} (w = {w})");
    }
}

#[test]
fn the_closed_form_hessian_of_the_ellipsoid_matches_differences_of_its_field() {
    // A self-check of the derived Hessian used below: central differences of the exact
    // acceleration (step 1e-3 m; truncation and round-off far below 1e-6 relative).
    let e = ExactEllipsoid {
        abc_m: ABC,
        gm_m3_s2: exact_gm(),
    };
    for p in [
        Point3::new(1800.0, 0.0, 0.0),
        Point3::new(300.0, 1500.0, -200.0),
    ] {
        let h = e.hessian(&p);
        let step = 1e-3;
        for k in 0..3 {
            let mut d = Vector3::zeros();
            d[k] = step;
            let col = (e.potential_acceleration(&(p + d)).1 - e.potential_acceleration(&(p - d)).1)
                / (2.0 * step);
            for r in 0..3 {
                assert!(
                    (col[r] - h[(r, k)]).abs() < 1e-6 * h.norm(),
                    "{p}: column {k}: {col} vs {}",
                    h.column(k)
                );
            }
        }
    }
}

#[test]
fn the_exact_ellipsoid_has_four_equilibria_on_its_long_and_intermediate_axes() {
    // The search on the exact field (Carlson), a model without a gradient tensor: the Hessian
    // comes from differences of the acceleration. Two spin rates: at the faster one the
    // closed form makes the intermediate-axis points complex-unstable, at the slower one
    // linearly stable; the search must agree with it at both.
    let exact = ExactEllipsoid {
        abc_m: ABC,
        gm_m3_s2: exact_gm(),
    };
    let mut intermediate_stable = Vec::new();
    for period_s in [PERIOD_S, SLOW_PERIOD_S] {
        let body = Body::with_gravity(
            "exact ellipsoid",
            shape(generate::ellipsoid(ABC[0], ABC[1], ABC[2], 3)),
            Arc::new(exact),
            spin_z(period_s),
        )
        .unwrap();
        let set = search(&body, &quick_search());
        assert_eq!(set.equilibria.len(), 4, "{:#?}", set);
        let rx = exact_axis_radius(0, period_s);
        let ry = exact_axis_radius(1, period_s);
        let w2 = omega(period_s).powi(2);
        for e in &set.equilibria {
            let p = Point3::from(e.position_m);
            // On an axis: longitudes 0, 90, 180, -90 (lon 0 is +x, the spin is about +z).
            let on_x = p.y.abs() < 1e-6 * rx;
            let expected = if on_x { rx } else { ry };
            assert!(on_x || p.x.abs() < 1e-6 * ry, "{p}");
            assert!(p.z.abs() < 1e-6 * rx, "{p}");
            assert!(
                (e.radius_m - expected).abs() < 1e-6 * expected,
                "{} vs {expected}",
                e.radius_m
            );
            // Jacobi constant: the exact geopotential there.
            let (u, _) = exact.potential_acceleration(&p);
            let phi = -(u + 0.5 * w2 * (p.x * p.x + p.y * p.y));
            assert!((e.jacobi_m2_s2 - phi).abs() < 1e-9 * phi.abs());
            let closed = expected_eigenvalues(&p, period_s);
            assert_eigenvalues_match(&e.eigenvalues, &closed, 1e-4, period_s);
            assert_eq!(
                e.linearly_stable,
                expected_stable(&closed),
                "{:?}",
                e.stability
            );
            if on_x {
                // Scheeres 1994 (Icarus 110), from memory: the equilibria on the long axis of
                // a uniformly rotating triaxial ellipsoid are unstable, with one real pair.
                assert!(!e.linearly_stable);
                assert_eq!(e.stability.hyperbolic_pairs, 1, "{:?}", e.stability);
            } else {
                intermediate_stable.push(e.linearly_stable);
                if !e.linearly_stable {
                    assert_eq!(e.stability.spiral_quadruplets, 1, "{:?}", e.stability);
                }
            }
        }
    }
    // Both branches of the intermediate-axis stability were exercised (as Scheeres 1994
    // describes, from memory: stable at slow spin, complex-unstable at fast spin for an
    // elongated body).
    assert_eq!(intermediate_stable, [false, false, true, true]);
}

#[test]
fn polyhedral_ellipsoids_converge_to_the_exact_equilibria() {
    let rx = exact_axis_radius(0, PERIOD_S);
    let ry = exact_axis_radius(1, PERIOD_S);
    let mut errors = Vec::new();
    for subdivisions in [2, 3, 4] {
        let body = Body::new(
            "ellipsoid",
            shape(generate::ellipsoid(ABC[0], ABC[1], ABC[2], subdivisions)),
            MassSpec::DensityKgM3(DENSITY),
            spin_z(PERIOD_S),
        )
        .unwrap();
        let set = search(&body, &quick_search());
        assert_eq!(set.equilibria.len(), 4, "{:#?}", set);
        let mut worst: f64 = 0.0;
        for e in &set.equilibria {
            let p = Point3::from(e.position_m);
            let on_x = p.x.abs() > p.y.abs();
            let exact = if on_x { rx } else { ry };
            worst = worst.max((e.radius_m - exact).abs() / exact);
            // Stability as the exact ellipsoid's at its own equilibrium.
            let q = Point3::new(
                if on_x { exact.copysign(p.x) } else { 0.0 },
                if on_x { 0.0 } else { exact.copysign(p.y) },
                0.0,
            );
            let closed = expected_eigenvalues(&q, PERIOD_S);
            assert_eq!(
                e.linearly_stable,
                expected_stable(&closed),
                "{:?}",
                e.stability
            );
            if subdivisions == 4 {
                assert_eigenvalues_match(&e.eigenvalues, &closed, 0.02, PERIOD_S);
            }
        }
        errors.push(worst);
    }
    // The inscribed polyhedra lose volume (mass) as h^2: the error falls with each
    // subdivision (roughly fourfold) and is small at the finest.
    assert!(
        errors[1] < 0.6 * errors[0] && errors[2] < 0.6 * errors[1],
        "{errors:?}"
    );
    assert!(errors[2] < 2e-3, "{errors:?}");
}

#[test]
fn a_faceted_sphere_breaks_the_synchronous_ring_into_a_bounded_set_of_points() {
    let body = Body::new(
        "faceted sphere",
        shape(generate::icosphere(1000.0, 2)),
        MassSpec::DensityKgM3(DENSITY),
        spin_z(12.0 * 3600.0),
    )
    .unwrap();
    // Kepler's third law: the circular orbit with the spin period, (GM / w^2)^(1/3).
    let w = body.spin.rate_rad_s();
    let rs = (body.gm_m3_s2() / (w * w)).cbrt();
    let s = quick_search();
    let set = search(&body, &s);
    assert!(!set.equilibria.is_empty(), "{set:#?}");
    assert!(set.equilibria.len() <= s.max_reported);
    assert!(set.counts.seeds <= s.max_seeds);
    assert_eq!(set.counts.not_converged, 0, "{:?}", set.counts);
    // Along the ring the geopotential is a smooth periodic function of longitude, whose
    // maxima and minima alternate; at a maximum (tangential Hessian < 0) the point is linearly
    // stable, at a minimum it has a hyperbolic pair (the planar quadratic of
    // `expected_eigenvalues` with H_rr = -3 w^2). So, sorted by longitude, stability
    // alternates, and there is an even number of points.
    assert!(
        set.equilibria.len().is_multiple_of(2),
        "{}",
        set.equilibria.len()
    );
    for pair in set.equilibria.windows(2) {
        assert_ne!(
            pair[0].linearly_stable, pair[1].linearly_stable,
            "{pair:#?}"
        );
    }
    assert!(set.ring.is_some(), "{:?}", set.notes);
    for e in &set.equilibria {
        // Icosahedral symmetry: the first harmonic beyond the monopole is of degree 6, so at
        // r_s = 2.9 R its relative size is ~(1/2.9)^6 times the facets' ~1% (a few 1e-6).
        assert!(
            (e.radius_m - rs).abs() < 1e-4 * rs,
            "{} vs {rs}",
            e.radius_m
        );
        assert!(e.position_m[2].abs() < 1e-6 * rs, "{:?}", e.position_m);
    }
}

#[test]
fn a_point_mass_ring_is_reported_as_a_ring_and_cut_not_flooded() {
    // The exact sphere (a point mass) has a continuous ring at the synchronous radius: every
    // seed along it converges where it is. The search must end, report the ring and cut the
    // list at max_reported.
    let gm = 200.0;
    let body = Body::with_gravity(
        "round",
        shape(generate::icosphere(500.0, 1)),
        Arc::new(PointMass { gm_m3_s2: gm }),
        spin_z(6.0 * 3600.0),
    )
    .unwrap();
    let w = body.spin.rate_rad_s();
    let rs = (gm / (w * w)).cbrt();
    let s = EquilibriumSearch {
        max_reported: 10,
        ..quick_search()
    };
    let set = search(&body, &s);
    assert_eq!(set.equilibria.len(), 10, "{set:#?}");
    assert!(set.truncated);
    let ring = set.ring.unwrap();
    assert!((ring.radius_m - rs).abs() < 1e-8 * rs, "{ring:?} vs {rs}");
    assert!(
        set.notes.iter().any(|n| n.contains("ring")),
        "{:?}",
        set.notes
    );
}

#[test]
fn reported_points_have_a_vanishing_gradient_by_independent_differences() {
    // Central differences of the potential alone (not the acceleration the search used), with
    // the centrifugal term written out: grad Phi = -(grad U + w^2 (x, y, 0)).
    let body = Body::new(
        "ellipsoid",
        shape(generate::ellipsoid(ABC[0], ABC[1], ABC[2], 3)),
        MassSpec::DensityKgM3(DENSITY),
        spin_z(PERIOD_S),
    )
    .unwrap();
    let set = search(&body, &quick_search());
    assert!(!set.equilibria.is_empty());
    let w2 = omega(PERIOD_S).powi(2);
    for e in &set.equilibria {
        let p = Point3::from(e.position_m);
        let h = 1e-4 * e.radius_m;
        let mut grad = Vector3::zeros();
        for k in 0..3 {
            let mut d = Vector3::zeros();
            d[k] = h;
            let up = body.gravity.potential_acceleration(&(p + d)).0;
            let down = body.gravity.potential_acceleration(&(p - d)).0;
            grad[k] = (up - down) / (2.0 * h);
        }
        let grad_phi = -(grad + Vector3::new(w2 * p.x, w2 * p.y, 0.0));
        let scale = w2 * e.radius_m;
        assert!(grad_phi.norm() < 1e-6 * scale, "{p}: {grad_phi}");
        assert!(e.residual_m_s2 < 1e-9 * scale);
        assert!(e.surface_distance_m > 0.0);
    }
}

#[test]
fn absurd_settings_and_cancel_are_errors() {
    let body = Body::new(
        "ellipsoid",
        shape(generate::ellipsoid(ABC[0], ABC[1], ABC[2], 1)),
        MassSpec::DensityKgM3(DENSITY),
        spin_z(PERIOD_S),
    )
    .unwrap();
    for bad in [
        EquilibriumSearch {
            radial_cells: 0,
            ..EquilibriumSearch::default()
        },
        EquilibriumSearch {
            residual_tolerance: f64::NAN,
            ..EquilibriumSearch::default()
        },
        EquilibriumSearch {
            imaginary_tolerance: -1.0,
            ..EquilibriumSearch::default()
        },
        EquilibriumSearch {
            radial_cells: 2000,
            azimuth_cells: 3600,
            axial_cells: 2000,
            ..EquilibriumSearch::default()
        },
    ] {
        let err = find_equilibria(&body, &bad, &|_, _| {}, &AtomicBool::new(false)).unwrap_err();
        assert!(
            matches!(err, DynamicsError::InvalidParameter { .. }),
            "{err}"
        );
        assert!(err.to_string().contains("equilibrium search"), "{err}");
    }
    let err =
        find_equilibria(&body, &quick_search(), &|_, _| {}, &AtomicBool::new(true)).unwrap_err();
    assert!(matches!(err, DynamicsError::Cancelled));
}

#[test]
fn a_small_body_far_inside_its_synchronous_radius_is_searched_past_the_empty_shell() {
    // At a 60 h period the synchronous radius is ~8.6 km, 8.6 times the sphere's radius: the
    // region has an empty shell between the body and the synchronous circle (region.rs), and
    // the equilibria beyond it must still be found there.
    let body = Body::new(
        "slow sphere",
        shape(generate::icosphere(1000.0, 2)),
        MassSpec::DensityKgM3(DENSITY),
        spin_z(60.0 * 3600.0),
    )
    .unwrap();
    let w = body.spin.rate_rad_s();
    let rs = (body.gm_m3_s2() / (w * w)).cbrt();
    let s = quick_search();
    let set = search(&body, &s);
    let [r1, r2] = set.region.empty_shell_m.unwrap();
    assert!(r1 > 1000.0 && r2 < rs, "{:?}", set.region);
    assert!(!set.equilibria.is_empty(), "{set:#?}");
    assert!(set.equilibria.len() <= s.max_reported);
    for e in &set.equilibria {
        assert!(
            (e.radius_m - rs).abs() < 1e-4 * rs,
            "{} vs {rs}",
            e.radius_m
        );
        assert!(e.position_m[2].abs() < 1e-6 * rs, "{:?}", e.position_m);
    }
}
