//! The vectorised kernel against the portable scalar one, and batches against single points
//! (bit for bit: a point's value must not depend on how it is batched or threaded).

use nalgebra::Point3;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use spinfall_gravity::field::DirectKernel;
use spinfall_gravity::{MassSpec, PolyhedronGravity, generate};

fn random_points(field: &PolyhedronGravity, n: usize, seed: u64) -> Vec<Point3<f64>> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let r = field.brillouin_radius_m();
    (0..n)
        .map(|_| {
            let v = nalgebra::Vector3::new(
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
            );
            field.center_of_mass_m() + v * (3.0 * r)
        })
        .collect()
}

#[test]
fn vector_kernel_matches_scalar_kernel() {
    // The same sums with polynomial atan2/ln (Cephes, fdlibm) and fused multiply-adds:
    // agreement to ~1e-13 relative is what double precision allows for sums of this many terms.
    let field =
        PolyhedronGravity::from_mesh(&generate::demo_body(3), MassSpec::DensityKgM3(2100.0))
            .expect("valid input");
    // Acceleration scale: |a|, but not below a tenth of GM/R_B^2 (|a| -> 0 near the centre).
    let a_floor = 0.1 * field.gm_m3_s2() / field.brillouin_radius_m().powi(2);
    let mut worst = 0.0f64;
    for p in random_points(&field, 200, 7) {
        let (us, as_) = field.potential_acceleration_with_kernel(&p, DirectKernel::Scalar);
        let a_scale = as_.norm().max(a_floor);
        for kernel in DirectKernel::all_available() {
            let (uv, av) = field.potential_acceleration_with_kernel(&p, kernel);
            assert!(
                (us - uv).abs() < 1e-13 * us.abs(),
                "{kernel:?} {p}: {us} vs {uv}"
            );
            assert!(
                (as_ - av).norm() < 1e-13 * as_.norm(),
                "{kernel:?} {p}: {as_} vs {av}"
            );
            worst = worst.max((us - uv).abs() / us.abs());
            worst = worst.max((as_ - av).norm() / a_scale);
        }
        assert_eq!(
            field.potential_acceleration_direct(&p),
            field.potential_acceleration_with_kernel(&p, DirectKernel::Auto)
        );
    }
    eprintln!("worst relative difference vector vs scalar kernel: {worst:e}");
}

#[test]
fn batches_equal_single_points() {
    let field =
        PolyhedronGravity::from_mesh(&generate::demo_body(2), MassSpec::DensityKgM3(2100.0))
            .expect("valid input");
    let mut points = random_points(&field, 300, 11);
    points.push(field.center_of_mass_m() + nalgebra::Vector3::new(1e9, 0.0, 0.0));
    let batch = field.potential_acceleration_batch(&points);
    let samples = field.evaluate_batch(&points);
    assert_eq!(batch.len(), points.len());
    for ((p, b), s) in points.iter().zip(&batch).zip(&samples) {
        // Every path runs the same lane-wise kernel: identical bits, not just close values.
        assert_eq!(*b, field.potential_acceleration(p), "{p}");
        assert_eq!(*s, field.evaluate(p), "{p}");
        assert_eq!(b.0, s.potential_m2_s2, "{p}");
        assert_eq!(b.1, s.acceleration_m_s2, "{p}");
        assert_eq!(s.inside, field.is_inside(p), "{p}");
    }
    // Any sub-batch, in any order, on any thread count gives the same bits.
    let mut reversed = points.clone();
    reversed.reverse();
    let rev = field.potential_acceleration_batch(&reversed[..37]);
    for (k, r) in rev.iter().enumerate() {
        assert_eq!(*r, batch[points.len() - 1 - k]);
    }
    let one_thread = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("pool");
    let serial = one_thread.install(|| field.potential_acceleration_batch(&points));
    assert_eq!(serial, batch);
    // The far point comes from the expansion in both.
    assert_eq!(batch[300], field.potential_acceleration(&points[300]));
}

#[test]
fn block_kernels_match_scalar_kernel() {
    // Lanes over points instead of faces: the same sums per point, so the agreement with the
    // portable scalar reference is the same ~1e-13 as for the single-point vector kernels.
    // Odd point counts leave unused lanes in the last block.
    let field =
        PolyhedronGravity::from_mesh(&generate::demo_body(3), MassSpec::DensityKgM3(2100.0))
            .expect("valid input");
    let mut points = random_points(&field, 203, 5);
    // A vertex, an edge midpoint and a face centroid of the mesh (surface limits), and a point
    // far enough that the edge logs all take the series route.
    let mesh = generate::demo_body(3);
    let [a, b, c] = mesh.triangle(17);
    points.push(a);
    points.push(Point3::from((a.coords + b.coords) * 0.5));
    points.push(Point3::from((a.coords + b.coords + c.coords) / 3.0));
    points.push(
        field.center_of_mass_m()
            + nalgebra::Vector3::new(0.0, 0.0, 2.5 * field.brillouin_radius_m()),
    );
    let a_floor = 0.1 * field.gm_m3_s2() / field.brillouin_radius_m().powi(2);
    let scalar = field.potential_acceleration_batch_direct(&points, DirectKernel::Scalar);
    for kernel in DirectKernel::all_available() {
        let got = field.potential_acceleration_batch_direct(&points, kernel);
        assert_eq!(got.len(), points.len());
        for ((p, s), g) in points.iter().zip(&scalar).zip(&got) {
            assert_eq!(
                *s,
                field.potential_acceleration_with_kernel(p, DirectKernel::Scalar)
            );
            assert!(
                (s.0 - g.0).abs() < 1e-13 * s.0.abs(),
                "{kernel:?} {p}: {} vs {}",
                s.0,
                g.0
            );
            assert!(
                (s.1 - g.1).norm() < 1e-13 * s.1.norm().max(a_floor),
                "{kernel:?} {p}: {} vs {}",
                s.1,
                g.1
            );
        }
    }
}

#[test]
fn split_single_point_matches_unsplit_sum() {
    // Large meshes split one point's sums over threads by pieces, added in piece order: the
    // same bits as the unsplit sum and as the point inside a batch.
    let field = PolyhedronGravity::from_mesh(
        &generate::icosphere(1000.0, 6),
        MassSpec::DensityKgM3(1000.0),
    )
    .expect("valid input");
    assert!(field.face_count() >= spinfall_gravity::field::SPLIT_FACE_COUNT);
    for p in random_points(&field, 4, 3) {
        let split = field.potential_acceleration(&p);
        let whole = field.potential_acceleration_direct(&p);
        assert_eq!(split, whole);
        let batch = field.potential_acceleration_batch(&[p, p * 0.9, p * 0.8]);
        assert_eq!(batch[0], whole);
        let one_thread = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .expect("pool");
        assert_eq!(
            one_thread.install(|| field.potential_acceleration(&p)),
            whole
        );
    }
}

#[test]
fn many_piece_mesh_obeys_gauss_law_and_monopole() {
    // The sums run over cache-sized pieces of the mesh (4096 faces each); a 20480-face icosphere
    // has five. Gauss's law for the solid angles (Laplacian -4 pi G rho inside, 0 outside,
    // -2 pi G rho on a face: Werner & Scheeres 1997) and Newton's shell theorem far away
    // (U = GM/r, a = -GM r/r^3; the icosahedral symmetry leaves no multipole below degree 6, so
    // at 10 radii the rest is below 1e-6 (R/r)^6 relative) check that no face or edge is lost.
    let field = PolyhedronGravity::from_mesh(
        &generate::icosphere(1000.0, 5),
        MassSpec::DensityKgM3(1500.0),
    )
    .expect("valid input");
    assert!(field.face_count() > 4 * 4096);
    let g_rho = spinfall_gravity::field::G_SI * field.density_kg_m3();
    let four_pi = 4.0 * std::f64::consts::PI;
    let inside = field.evaluate(&Point3::new(10.0, -20.0, 30.0));
    assert!(inside.inside);
    assert!((inside.laplacian_s2 + four_pi * g_rho).abs() < 1e-12 * four_pi * g_rho);
    let outside = field.evaluate(&Point3::new(1500.0, 200.0, 0.0));
    assert!(!outside.inside);
    assert!(outside.laplacian_s2.abs() < 1e-12 * four_pi * g_rho);
    let gm = field.gm_m3_s2();
    for p in [
        Point3::<f64>::new(10_000.0, 0.0, 0.0),
        Point3::<f64>::new(-3000.0, 6000.0, 7000.0),
    ] {
        let r = p.coords.norm();
        let want_a = -p.coords * (gm / r.powi(3));
        let singles = [
            field.potential_acceleration(&p),
            field.potential_acceleration_direct(&p),
        ];
        let batch = field.potential_acceleration_batch_direct(&[p, p * 0.5], DirectKernel::Auto);
        for (u, a) in singles.into_iter().chain([batch[0]]) {
            assert!(
                (u - gm / r).abs() < 1e-7 * gm / r,
                "{p}: U {u} vs {}",
                gm / r
            );
            assert!(
                (a - want_a).norm() < 1e-7 * want_a.norm(),
                "{p}: a {a} vs {want_a}"
            );
        }
    }
}
