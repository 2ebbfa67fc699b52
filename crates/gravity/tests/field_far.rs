//! Far field: the exterior expansion against MacCullagh's formula, and the accuracy of the
//! direct sum against the expansion at growing distance (the figures quoted in the `field`
//! module documentation come from `far_field_accuracy_table`; run with `--nocapture`).

mod field_support;

use field_support::*;
use nalgebra::{Point3, Vector3};
use spinfall_gravity::{MassSpec, PolyhedronGravity, generate};

fn demo_field(n: u32) -> (spinfall_gravity::Mesh, PolyhedronGravity) {
    let mesh = generate::demo_body(n);
    let field =
        PolyhedronGravity::from_mesh(&mesh, MassSpec::DensityKgM3(2100.0)).expect("demo body");
    (mesh, field)
}

fn directions() -> Vec<Vector3<f64>> {
    vec![
        Vector3::new(1.0, 0.2, -0.3).normalize(),
        Vector3::new(-0.3, 1.0, 0.5).normalize(),
        Vector3::new(0.1, -0.4, 1.0).normalize(),
        Vector3::new(-0.7, -0.7, -0.2).normalize(),
    ]
}

#[test]
fn degree_two_expansion_is_maccullagh() {
    // MacCullagh's formula U = GM/r + G (A + B + C - 3 I)/(2 r^3) is exactly the expansion
    // through degree 2 about the centre of mass (e.g. Murray & Dermott 1999, "Solar System
    // Dynamics", sec. 4.x); inertia from the tetrahedron formulas in field_support.
    let (mesh, field) = demo_field(3);
    let (vol, com, inertia) = mass_properties(&mesh);
    assert!(rel(field.volume_m3(), vol, vol) < 1e-13);
    assert!((field.center_of_mass_m() - com).norm() < 1e-9 * field.brillouin_radius_m());
    let rho = field.density_kg_m3();
    for d in directions() {
        for k in [1.5, 4.0, 30.0] {
            let r = d * k * field.brillouin_radius_m();
            let (u2, _) = field.exterior().potential_acceleration_to_degree(&r, 2);
            let want = maccullagh(vol, &inertia, rho, &r);
            assert!(
                rel(G * rho * u2, want, want) < 1e-13,
                "k={k}: {} vs {want}",
                G * rho * u2
            );
        }
    }
}

#[test]
fn far_field_matches_maccullagh_to_the_octupole_order() {
    // Beyond degree 2 the difference is the octupole and higher: below (R/r)^3 relative.
    let (mesh, field) = demo_field(3);
    let (vol, _, inertia) = mass_properties(&mesh);
    let rho = field.density_kg_m3();
    for d in directions() {
        for k in [20.0, 100.0, 1e4] {
            let r = d * k * field.brillouin_radius_m();
            let p = field.center_of_mass_m() + r;
            let (u, a) = field.potential_acceleration(&p);
            let want = maccullagh(vol, &inertia, rho, &r);
            assert!(rel(u, want, want) < 1.0 / (k * k * k), "k={k}");
            let gm = G * rho * vol;
            let a_point = -r * gm / r.norm().powi(3);
            assert!(
                (a - a_point).norm() < 3.0 * a_point.norm() / (k * k),
                "k={k}"
            );
        }
    }
}

/// Rigorous bound of the truncation error of the degree-N exterior expansion, relative to GM/r:
/// `|P_n| <= 1` gives `|U_n| <= GM R_B^n / r^(n+1)`, so the tail is below
/// `(R_B/r)^(N+1) / (1 - R_B/r)`.
fn truncation_bound(k: f64, degree: usize) -> f64 {
    (1.0 / k).powi(degree as i32 + 1) / (1.0 - 1.0 / k)
}

/// Largest relative difference (U and |a|) between direct sum and expansion over directions.
fn direct_vs_exterior(field: &PolyhedronGravity, k: f64) -> f64 {
    let mut worst = 0.0f64;
    for d in directions() {
        let p = field.center_of_mass_m() + d * k * field.brillouin_radius_m();
        let (ud, ad) = field.potential_acceleration_direct(&p);
        let (ue, ae) = field.potential_acceleration_exterior(&p);
        worst = worst.max(rel(ud, ue, ue)).max((ad - ae).norm() / ae.norm());
    }
    worst
}

#[test]
fn far_field_accuracy_table() {
    // The exterior expansion (degree 8) is exact up to its rigorous truncation bound; where that
    // bound is far below the difference, the difference is the direct sum's rounding error.
    let (_, field) = demo_field(4);
    let degree = field.exterior().degree();
    eprintln!(
        "faces {}  degree {degree}  switch at {} R_B",
        field.face_count(),
        field.switch_radius_m() / field.brillouin_radius_m()
    );
    eprintln!("r/R_B   |direct - exterior|   exterior bound");
    let mut rows = Vec::new();
    for k in [
        1.5, 2.0, 4.0, 8.0, 16.0, 32.0, 64.0, 128.0, 256.0, 1000.0, 1e4,
    ] {
        let diff = direct_vs_exterior(&field, k);
        let bound = truncation_bound(k, degree);
        eprintln!("{k:>7}  {diff:>10.2e}  {bound:>10.2e}");
        rows.push((k, diff, bound));
    }
    // The difference is bounded by truncation + the direct sum's rounding, which grows about
    // like 1e-15 (r/R_B)^3 on this body (measured; 10x margin).
    for &(k, diff, bound) in &rows {
        if k >= 2.0 {
            assert!(
                diff < bound + 1e-14 * k * k * k,
                "k={k}: {diff:e} vs {bound:e}"
            );
        }
    }
    // The direct sum does lose digits far away (this is why the switch exists).
    let far = rows.last().map(|r| r.1).unwrap_or(0.0);
    assert!(
        far > 1e-12,
        "direct sum at 1e4 R_B unexpectedly exact: {far:e}"
    );
}

#[test]
fn field_is_continuous_across_the_switch_radius() {
    let (_, field) = demo_field(4);
    let rs = field.switch_radius_m();
    for d in directions() {
        let inside = field.center_of_mass_m() + d * rs * (1.0 - 1e-12);
        let outside = field.center_of_mass_m() + d * rs * (1.0 + 1e-12);
        let (u1, a1) = field.potential_acceleration(&inside);
        let (u2, a2) = field.potential_acceleration(&outside);
        assert!(rel(u1, u2, u1) < 1e-10, "{u1} vs {u2}");
        assert!((a1 - a2).norm() < 1e-10 * a1.norm());
        let s = field.evaluate(&outside);
        assert!(!s.inside && s.laplacian_s2.abs() < 1e-12);
    }
    // Points far away are finite and tend to GM/r.
    let p = Point3::new(1e12, -3e11, 2e11);
    let (u, a) = field.potential_acceleration(&p);
    let r = (p - field.center_of_mass_m()).norm();
    assert!(rel(u, field.gm_m3_s2() / r, field.gm_m3_s2() / r) < 1e-12);
    assert!(a.iter().all(|v| v.is_finite()));
}

#[test]
fn far_gradient_tensor_matches_the_direct_sum_and_is_traceless() {
    // Just beyond the switch the direct gradient-tensor sum is still accurate, so the
    // expansion's (finite-difference) tensor must match it; Laplace's equation outside the body
    // makes it traceless (Poisson's equation with zero density).
    let (_, field) = demo_field(3);
    let rs = field.switch_radius_m();
    for d in directions() {
        let far = field.center_of_mass_m() + d * rs * 1.01;
        let near = field.center_of_mass_m() + d * rs * 0.99;
        let s_far = field.evaluate(&far);
        let s_near = field.evaluate(&near);
        let scale = s_near.gradient_s2.norm();
        // The tensor changes by ~6 % between 0.99 and 1.01 r_s (it falls like r^-3): compare
        // the far one with the near one scaled by (0.99/1.01)^3 along the same direction.
        let ratio = (0.99f64 / 1.01).powi(3);
        assert!(
            (s_far.gradient_s2 - s_near.gradient_s2 * ratio).norm() < 1e-3 * scale,
            "{}",
            (s_far.gradient_s2 - s_near.gradient_s2 * ratio).norm() / scale
        );
        assert!(s_far.gradient_s2.trace().abs() < 1e-9 * scale);
        assert!(!s_far.inside && s_far.laplacian_s2 == 0.0);
    }
    // A tight check at one point: the finite-difference tensor against the direct-sum tensor
    // at the same point (direct sum still accurate at 1.01 r_s, see the accuracy table).
    let p = field.center_of_mass_m() + directions()[0] * rs * 1.01;
    let s = field.evaluate(&p);
    let h = 1e-3 * rs;
    for k in 0..3 {
        let mut dp = Vector3::zeros();
        dp[k] = h;
        let col = (field.potential_acceleration_direct(&(p + dp)).1
            - field.potential_acceleration_direct(&(p - dp)).1)
            / (2.0 * h);
        assert!(
            (col - s.gradient_s2.column(k)).norm() < 1e-5 * s.gradient_s2.norm(),
            "col {k}"
        );
    }
}
