//! Landing dispersion statistics against closed forms: members placed on known points give a
//! known mean, covariance and ellipses; the ellipse scale factors against the chi-square
//! distribution with 2 degrees of freedom; the fraction within a radius; the density counts;
//! and a dispersion set really flown.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

mod common;

use std::sync::atomic::AtomicBool;

use nalgebra::Vector3;
use spinfall_dynamics::launch::{Dispersion, LaunchSpec, SpeedSigma};
use spinfall_dynamics::scenario::Scenario;
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::statistics::{
    GroupKind, LaunchGroup, MIN_POINTS, SpreadResult, StatisticsOptions, Target, density_per_m2,
    drape_ellipse, group_statistics, landing_counts, principal_axes, probability_scale,
    scale_probability, scenario_groups, spread_of,
};
use spinfall_dynamics::{
    Body, BounceModel, Contact, FlightReport, FlightSettings, LandingPoint, Outcome, fly_all,
};
use spinfall_gravity::generate;

const R_M: f64 = 1000.0;

fn sphere() -> Body {
    common::point_mass_sphere(R_M, 4, 500.0, common::spin_z(8.0 * 3600.0))
}

/// The local east, north and up at planetocentric (lat, lon) about a +z spin axis, written out
/// from spherical coordinates (not from the crate): up = (cos φ cos λ, cos φ sin λ, sin φ),
/// east = (−sin λ, cos λ, 0), north = (−sin φ cos λ, −sin φ sin λ, cos φ).
fn enu(lat_deg: f64, lon_deg: f64) -> [Vector3<f64>; 3] {
    let (sp, cp) = lat_deg.to_radians().sin_cos();
    let (sl, cl) = lon_deg.to_radians().sin_cos();
    [
        Vector3::new(-sl, cl, 0.0),
        Vector3::new(-sp * cl, -sp * sl, cp),
        Vector3::new(cp * cl, cp * sl, sp),
    ]
}

/// Body-frame points in the tangent plane of the sphere of radius `R_M` at (lat, lon), with
/// the given east/north offsets.
fn tangent_points(lat_deg: f64, lon_deg: f64, en: &[[f64; 2]]) -> Vec<[f64; 3]> {
    let [e, n, u] = enu(lat_deg, lon_deg);
    en.iter()
        .map(|c| (u * R_M + e * c[0] + n * c[1]).into())
        .collect()
}

fn close(a: f64, b: f64, tol: f64, what: &str) {
    assert!((a - b).abs() <= tol, "{what}: {a} vs {b} (tol {tol})");
}

/// A report of a launch that rests at `rest` (first contact at `first`), on `face`.
fn landed(id: &str, rest: [f64; 3], first: [f64; 3], face: usize) -> FlightReport {
    let mut r = blank(id, Outcome::Landed);
    r.landing = Some(LandingPoint {
        pos_body_m: rest,
        lat_deg: 0.0,
        lon_deg: 0.0,
        face,
    });
    r.contacts = vec![Contact {
        t_s: 1.0,
        pos_body_m: first,
        face,
        lat_deg: 0.0,
        lon_deg: 0.0,
        impact_speed_m_s: 0.1,
        impact_angle_deg: 45.0,
        rebound_speed_m_s: 0.0,
        rest: false,
    }];
    r.final_pos_body_m = rest;
    r
}

fn blank(id: &str, outcome: Outcome) -> FlightReport {
    let launch = spinfall_dynamics::launch::LaunchState {
        id: id.into(),
        pos_body_m: nalgebra::Point3::new(R_M, 0.0, 0.0),
        vel_body_m_s: Vector3::zeros(),
        site: None,
        particle: None,
    };
    FlightReport {
        outcome,
        end_time_s: 1.0,
        ..FlightReport::not_flown(&launch, "")
    }
}

/// Four points at (±a, 0) and (0, ±b) east/north: by the definition of the covariance (divided
/// by n), var_east = 2a²/4 = a²/2, var_north = b²/2, no correlation; with a > b the major axis
/// points east (azimuth 90 deg) and the ellipse of probability p has semi-axes
/// k a/√2 and k b/√2 with k = sqrt(-2 ln(1 - p)).
#[test]
fn four_points_on_the_axes_give_the_closed_form_covariance_and_ellipses() {
    let body = sphere();
    let (a, b) = (30.0, 12.0);
    let (lat, lon) = (25.0, -40.0);
    let pts = tangent_points(lat, lon, &[[a, 0.0], [-a, 0.0], [0.0, b], [0.0, -b]]);
    let s = match spread_of(&body, &pts) {
        SpreadResult::Ok(s) => s,
        other => panic!("{other:?}"),
    };
    // The mean of the four points lies on the radial line through (lat, lon).
    close(s.mean.lat_deg, lat, 1e-9, "mean latitude");
    close(s.mean.lon_deg, lon, 1e-9, "mean longitude");
    let c = s.covariance_en_m2;
    close(c[0][0], a * a / 2.0, 1e-9, "var east");
    close(c[1][1], b * b / 2.0, 1e-9, "var north");
    close(c[0][1], 0.0, 1e-9, "cov east-north");
    close(s.sigma_east_m, a / 2f64.sqrt(), 1e-9, "sigma east");
    close(s.correlation, 0.0, 1e-9, "correlation");
    assert_eq!(s.ellipses.len(), 3);
    for e in &s.ellipses {
        let k = (-2.0 * (1.0 - e.probability).ln()).sqrt();
        close(e.semi_major_m, k * a / 2f64.sqrt(), 1e-8, "semi-major");
        close(e.semi_minor_m, k * b / 2f64.sqrt(), 1e-8, "semi-minor");
        close(e.major_azimuth_deg, 90.0, 1e-9, "major axis azimuth");
        // Each point is at squared Mahalanobis distance a²/(a²/2) = 2 (or b²/(b²/2) = 2):
        // outside the 50 % ellipse (k² = 2 ln 2 = 1.386), inside the 90 % one (k² = 4.605).
        let expected = if e.probability < 0.6 { 0 } else { 4 };
        assert_eq!(e.points_inside, expected, "p = {}", e.probability);
    }
    // RMS distance from the mean: sqrt((2a² + 2b²)/4).
    close(
        s.rms_distance_m,
        ((a * a + b * b) / 2.0).sqrt(),
        1e-9,
        "rms distance",
    );
    close(s.max_distance_m, a, 1e-9, "max distance");
}

/// The same set rotated so that the long axis points at azimuth θ from north toward east: the
/// covariance is R diag(a²/2, b²/2) Rᵀ (rotation of a quadratic form), and the major axis
/// reports θ (mod 180 deg).
#[test]
fn a_rotated_set_gives_the_rotated_orientation() {
    let body = sphere();
    let (a, b) = (40.0, 10.0);
    for theta_deg in [0.0, 30.0, 75.0, 120.0, 160.0] {
        let t: f64 = f64::to_radians(theta_deg);
        // Unit vectors (east, north) along azimuth θ and θ + 90.
        let u = [t.sin(), t.cos()];
        let v = [t.cos(), -t.sin()];
        let en = [
            [a * u[0], a * u[1]],
            [-a * u[0], -a * u[1]],
            [b * v[0], b * v[1]],
            [-b * v[0], -b * v[1]],
        ];
        let pts = tangent_points(-35.0, 110.0, &en);
        let s = spread_of(&body, &pts);
        let s = s.spread().unwrap();
        let (va, vb) = (a * a / 2.0, b * b / 2.0);
        let ee = va * u[0] * u[0] + vb * v[0] * v[0];
        let nn = va * u[1] * u[1] + vb * v[1] * v[1];
        let en_ = va * u[0] * u[1] + vb * v[0] * v[1];
        let c = s.covariance_en_m2;
        close(c[0][0], ee, 1e-8, "ee");
        close(c[1][1], nn, 1e-8, "nn");
        close(c[0][1], en_, 1e-8, "en");
        let az = s.ellipses[0].major_azimuth_deg;
        let diff = (az - theta_deg).rem_euclid(180.0);
        assert!(
            diff.min(180.0 - diff) < 1e-7,
            "θ = {theta_deg}: azimuth {az}"
        );
        let (major, minor, _) = principal_axes(&c);
        close(major, va, 1e-8, "major variance");
        close(minor, vb, 1e-8, "minor variance");
    }
}

/// The squared Mahalanobis distance of a 2-D Gaussian is chi-square with 2 degrees of freedom,
/// whose distribution function is F(x) = 1 − exp(−x/2) (e.g. Abramowitz & Stegun 1964, 26.4.1
/// with ν = 2). Tabulated quantiles (Abramowitz & Stegun, Table 26.8; values from memory):
/// χ²₂(0.50) = 1.386, χ²₂(0.90) = 4.605, χ²₂(0.99) = 9.210. And F(1), F(4), F(9) = 39.3, 86.5,
/// 98.9 % for the 1-, 2- and 3-sigma ellipses.
#[test]
fn ellipse_scales_match_the_chi_square_law_with_two_degrees_of_freedom() {
    for (p, chi2) in [(0.5, 1.386), (0.9, 4.605), (0.99, 9.210)] {
        let k = probability_scale(p);
        close(k * k, chi2, 5e-4, "tabulated quantile");
        close(
            1.0 - (-k * k / 2.0).exp(),
            p,
            1e-12,
            "distribution function",
        );
        close(scale_probability(k), p, 1e-12, "inverse");
    }
    for (k, held) in [(1.0, 0.393), (2.0, 0.865), (3.0, 0.989)] {
        close(scale_probability(k), held, 5e-4, "n-sigma ellipse content");
    }
    close(
        probability_scale(0.5),
        (2f64.ln() * 2.0).sqrt(),
        1e-15,
        "k50 = sqrt(2 ln 2)",
    );
}

/// Rest points at known straight-line distances from a target: 10, 20, 30, 40 m east of it and
/// one 25 m north; within 25 m are exactly three (the point at 25 m counts).
#[test]
fn fraction_within_radius_counts_the_points_at_most_that_far() {
    let body = sphere();
    let (lat, lon) = (10.0, 20.0);
    let [e, n, u] = enu(lat, lon);
    let target = u * R_M;
    let offsets = [e * 10.0, e * 20.0, e * 30.0, e * 40.0, n * 25.0];
    let mut reports = Vec::new();
    let mut ids = Vec::new();
    for (k, o) in offsets.iter().enumerate() {
        let p: [f64; 3] = (target + o).into();
        ids.push(format!("g#{k}"));
        reports.push(landed(&ids[k], p, p, 0));
    }
    let group = LaunchGroup::explicit("g", ids);
    let options = StatisticsOptions {
        target: Some(Target::PointM(target.into())),
        radius_m: Some(25.0 + 1e-9),
    };
    let s = group_statistics(&body, &group, &reports, &options).unwrap();
    let w = s.within_radius.unwrap();
    // The target snaps to the nearest point of the faceted sphere, close to the exact one.
    assert_eq!(w.target_from, "point");
    assert_eq!(w.landed, 5);
    let d_target = (Vector3::from(w.target.pos_body_m) - target).norm();
    assert!(d_target < 2.0, "snap moved the target by {d_target} m");
    // Recount against the snapped target by hand.
    let t = Vector3::from(w.target.pos_body_m);
    let expected = offsets
        .iter()
        .filter(|o| ((target + **o) - t).norm() <= 25.0 + 1e-9)
        .count();
    assert_eq!(w.inside, expected);
    close(
        w.fraction.unwrap(),
        expected as f64 / 5.0,
        1e-15,
        "fraction",
    );
    // A lat/lon target on the radial line: the snapped points coincide up to the facet.
    let by_latlon = group_statistics(
        &body,
        &group,
        &reports,
        &StatisticsOptions {
            target: Some(Target::LatLon {
                lat_deg: lat,
                lon_deg: lon,
            }),
            radius_m: Some(1000.0),
        },
    )
    .unwrap();
    let w2 = by_latlon.within_radius.unwrap();
    assert_eq!((w2.inside, w2.target_from.as_str()), (5, "lat_lon"));
    close(w2.target.lat_deg, lat, 1e-9, "target latitude");
    // Bad options are errors, not NaN.
    for bad in [
        StatisticsOptions {
            target: None,
            radius_m: Some(-1.0),
        },
        StatisticsOptions {
            target: Some(Target::LatLon {
                lat_deg: 95.0,
                lon_deg: 0.0,
            }),
            radius_m: Some(1.0),
        },
        StatisticsOptions {
            target: Some(Target::PointM([f64::NAN, 0.0, 0.0])),
            radius_m: Some(1.0),
        },
    ] {
        assert!(group_statistics(&body, &group, &reports, &bad).is_err());
    }
}

/// Escaped, failed, still-flying and missing members are counted and excluded; the per-face
/// counts sum to the landed members; the density is count over face area; fewer than three
/// landed members give "too few", not NaN.
#[test]
fn counts_exclude_members_that_did_not_land_and_density_sums_to_the_landed() {
    let body = sphere();
    let pts = tangent_points(
        0.0,
        0.0,
        &[[0.0, 0.0], [5.0, 0.0], [0.0, 5.0], [50.0, 50.0]],
    );
    let face_of = |p: &[f64; 3]| {
        body.shape
            .nearest_surface_point(&nalgebra::Point3::from(*p))
            .face
    };
    let mut reports: Vec<FlightReport> = pts
        .iter()
        .enumerate()
        .map(|(k, p)| landed(&format!("d#{k}"), *p, *p, face_of(p)))
        .collect();
    reports.push(blank("d#4", Outcome::Escaped));
    reports.push(blank(
        "d#5",
        Outcome::Failed {
            reason: "step limit".into(),
        },
    ));
    reports.push(blank("d#6", Outcome::StillFlying));
    let ids: Vec<String> = (0..8).map(|k| format!("d#{k}")).collect();
    let group = LaunchGroup::explicit("d", ids);
    let s = group_statistics(&body, &group, &reports, &StatisticsOptions::default()).unwrap();
    let c = s.counts;
    assert_eq!(
        (
            c.members,
            c.landed,
            c.escaped,
            c.failed,
            c.still_flying,
            c.missing
        ),
        (8, 4, 1, 1, 1, 1)
    );
    assert_eq!(s.rest.spread().unwrap().points, 4);
    let counts = landing_counts(&body, &group, &reports);
    assert_eq!(counts.len(), body.shape.face_count());
    assert_eq!(counts.iter().map(|&c| c as usize).sum::<usize>(), 4);
    let density = density_per_m2(&body, &counts);
    for (f, (&n, &d)) in counts.iter().zip(&density).enumerate() {
        close(
            d * body.shape.face_area_m2(f),
            f64::from(n),
            1e-9,
            "density × area",
        );
    }
    assert_eq!(
        s.faces_hit,
        counts.iter().filter(|&&n| n > 0).count(),
        "faces hit"
    );
    // Two landed members: too few for a spread (no NaN anywhere in the JSON).
    let two = LaunchGroup::explicit("two", vec!["d#0".into(), "d#1".into(), "d#4".into()]);
    let s2 = group_statistics(&body, &two, &reports, &StatisticsOptions::default()).unwrap();
    assert_eq!(
        s2.rest,
        SpreadResult::TooFew {
            points: 2,
            needed: MIN_POINTS
        }
    );
    assert!(s2.rest_vs_first_contact.is_none());
    let json = serde_json::to_string(&s2).unwrap();
    assert!(
        json.contains("\"too_few\"") && !json.contains("NaN"),
        "{json}"
    );
    // Points all round the body: their mean is the centre, no mean point.
    let around = vec![
        [R_M, 0.0, 0.0],
        [-R_M, 0.0, 0.0],
        [0.0, R_M, 0.0],
        [0.0, -R_M, 0.0],
    ];
    assert!(matches!(
        spread_of(&body, &around),
        SpreadResult::Undefined { .. }
    ));
}

/// The draped ellipse lies on the surface (radius R up to the facet sagitta plus the lift),
/// and, for a small ellipse, its points are at Mahalanobis distance k from the mean.
#[test]
fn draped_ellipses_follow_the_surface_and_have_the_ellipse_shape() {
    let body = sphere();
    let (a, b) = (20.0, 8.0);
    let pts = tangent_points(40.0, 60.0, &[[a, 0.0], [-a, 0.0], [0.0, b], [0.0, -b]]);
    let s = spread_of(&body, &pts);
    let s = s.spread().unwrap();
    let k = probability_scale(0.9);
    let line = drape_ellipse(&body, s, k, 64, 0.5);
    assert_eq!(line.first(), line.last());
    assert_eq!(line.len(), 65);
    let [e, n, _] = enu(40.0, 60.0);
    for p in &line {
        let r = Vector3::from(*p).norm();
        // The icosphere (4 subdivisions) lies within ~0.5 % of R.
        assert!((r - R_M - 0.5).abs() < 0.01 * R_M, "radius {r}");
        // Projected back onto the tangent directions the point is on the ellipse scaled by
        // the radial carrying (a factor within 1 % at these sizes).
        let v = Vector3::from(*p);
        let (x, y) = (v.dot(&e), v.dot(&n));
        let m2 = x * x / (a * a / 2.0) + y * y / (b * b / 2.0);
        close(
            m2.sqrt(),
            k,
            0.02 * k,
            "Mahalanobis distance of a drawn point",
        );
    }
}

/// Groups follow the ids that the scenario's expansion makes: a fan, a dispersion set, and a
/// fan of dispersion sets (with one group per fan member); single launches form none.
#[test]
fn scenario_groups_name_exactly_the_launches_the_scenario_expands_to() {
    let text = r#"{
      "format": "spinfall-scenario", "version": 1, "seed": 3,
      "body": {"shape": "builtin:quillon", "unit": "m", "density_kg_m3": 2000,
               "spin": {"period_h": 8}},
      "launches": [
        {"id": "f", "site": {"lat_deg": 10, "lon_deg": 20}, "speed_m_s": 0.2,
         "fan": {"vary": "azimuth_deg", "to": 270, "count": 4}},
        {"id": "d", "site": {"face": 3}, "speed_m_s": 0.2,
         "dispersion": {"count": 5, "speed_sigma_percent": 5}},
        {"id": "fd", "site": {"face": 7}, "speed_m_s": 0.2,
         "fan": {"vary": "speed_m_s", "to": 0.3, "count": 2},
         "dispersion": {"count": 3, "direction_sigma_deg": 1}},
        {"id": "one", "site": {"face": 1}, "speed_m_s": 0.1},
        {"id": "st", "state": {"position_m": [2000, 0, 0], "velocity_m_s": [0, 0.1, 0]}}
      ]
    }"#;
    let scenario = Scenario::from_json_str(text).unwrap();
    let body = scenario
        .build_body(
            spinfall_gravity::ShapeModel::new(generate::icosphere(1000.0, 2))
                .unwrap()
                .0,
        )
        .unwrap();
    let launches = scenario.build_launches(&body).unwrap();
    let groups = scenario_groups(&scenario);
    let ids: Vec<&str> = groups.iter().map(|g| g.id.as_str()).collect();
    assert_eq!(ids, ["f", "d", "fd", "fd/0", "fd/1"]);
    let kinds: Vec<GroupKind> = groups.iter().map(|g| g.kind).collect();
    assert_eq!(
        kinds,
        [
            GroupKind::Fan,
            GroupKind::Dispersion,
            GroupKind::FanOfDispersions,
            GroupKind::FanMemberDispersion,
            GroupKind::FanMemberDispersion
        ]
    );
    let launched = |prefix: &str, sep: char| -> Vec<String> {
        launches
            .iter()
            .map(|l| l.id.clone())
            .filter(|id| {
                id.strip_prefix(prefix)
                    .is_some_and(|rest| rest.starts_with(sep))
            })
            .collect()
    };
    assert_eq!(groups[0].member_ids, launched("f", '/'));
    assert_eq!(groups[1].member_ids, launched("d", '#'));
    assert_eq!(groups[2].member_ids, launched("fd", '/'));
    assert_eq!(groups[3].member_ids, launched("fd/0", '#'));
    assert_eq!(groups[2].member_ids.len(), 6);
}

/// A dispersion set really flown on a small body: its 50 % rest ellipse holds about half of the
/// members. The ellipse is fitted to the same members, so for a Gaussian cloud the fraction is
/// near 0.5 with a binomial spread of sqrt(0.25/n) ≈ 0.065 for n = 60; the landing points are
/// only nearly Gaussian (the map from launch errors to landing points is smooth but not linear),
/// so the check allows ±0.2, about three binomial deviations. Bounces are off (rest at the
/// first contact), which keeps the map smooth; the 90 % ellipse is checked the same way.
#[test]
fn a_flown_dispersion_set_has_about_half_inside_its_fifty_percent_ellipse() {
    let body = common::point_mass_sphere(R_M, 4, 560.0, common::spin_z(12.0 * 3600.0));
    let site = Site::from_lat_lon(&body, 15.0, 30.0, NormalMode::Face).unwrap();
    let spec = LaunchSpec {
        id: "set".into(),
        site,
        speed_m_s: 0.3,
        azimuth_deg: 60.0,
        elevation_deg: 45.0,
        start_altitude_m: 0.05,
    };
    let states = spec
        .disperse(&Dispersion {
            count: 60,
            speed_sigma: SpeedSigma::Percent(5.0),
            direction_sigma_deg: 3.0,
            seed: 11,
        })
        .unwrap();
    let mut settings = FlightSettings {
        bounce: BounceModel {
            max_bounces: 0,
            ..BounceModel::default()
        },
        ..FlightSettings::default()
    };
    settings.sampling.max_samples_per_frame = 0;
    let reports = fly_all(
        &body,
        &states,
        &settings,
        &|_, _| {},
        &AtomicBool::new(false),
    );
    let group = LaunchGroup::explicit("set", states.iter().map(|s| s.id.clone()).collect());
    let s = group_statistics(&body, &group, &reports, &StatisticsOptions::default()).unwrap();
    assert_eq!(s.counts.landed, 60, "{:?}", s.counts);
    let rest = s.rest.spread().unwrap();
    let f50 = rest.ellipses[0].fraction_inside;
    let f90 = rest.ellipses[1].fraction_inside;
    eprintln!("flown set: 50 % ellipse holds {f50}, 90 % ellipse holds {f90}");
    assert!((f50 - 0.5).abs() <= 0.2, "50 % ellipse holds {f50}");
    assert!((f90 - 0.9).abs() <= 0.1, "90 % ellipse holds {f90}");
    // Without bounces the rest points are the first contacts.
    let first = s.first_contact.spread().unwrap();
    close(
        first.covariance_en_m2[0][0],
        rest.covariance_en_m2[0][0],
        1e-6,
        "same points",
    );
    assert!(s.rest_vs_first_contact.unwrap().mean_shift_m < 1e-6);
}
