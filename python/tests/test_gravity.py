"""spinfall.Field against the command line (`spinfall gravity`, same bits) and against an
independent numpy computation of a published closed form (the homogeneous prism)."""

import json

import numpy as np
import pytest

import spinfall
from conftest import box_obj, ellipsoid_obj, same

# The prism of the closed-form checks: not centred, not cubic, in metres.
LO = (-300.0, -200.0, -150.0)
HI = (900.0, 400.0, 250.0)
RHO = 2500.0

# Field points: outside in several directions, near a face, and inside. No coordinate equals a
# face plane of the prism (where single terms of the closed form are singular, though the sum
# is not).
POINTS = np.array(
    [
        [2500.0, 310.0, -170.0],
        [-1200.0, -900.0, 800.0],
        [150.0, 1300.0, 40.0],
        [610.0, 120.0, 260.5],
        [301.0, -57.0, 33.0],
        [-250.0, 350.0, -100.0],
        [880.0, -190.0, 240.0],
    ]
)
INSIDE = np.array([False, False, False, False, True, True, True])


def prism_nagy(lo, hi, rho, points):
    """Potential (positive, m^2/s^2) and attraction (m/s^2) of a homogeneous right rectangular
    prism [lo, hi] at `points`, by the closed form of Nagy, Papp & Benedek (2000), "The
    gravitational potential and its derivatives for the prism", J. Geodesy 74, 552-560, eqs.
    for V and its first derivatives, written here in numpy.

    With coordinates relative to the field point, x = X - x_P (and y, z alike), r = |(x, y, z)|:

        F(x, y, z) = xy ln(z + r) + yz ln(x + r) + zx ln(y + r)
                     - x^2/2 atan(yz / (xr)) - y^2/2 atan(zx / (yr)) - z^2/2 atan(xy / (zr))

    is a triple antiderivative of 1/r, so V = G rho |||F||| summed over the 8 corners with the
    sign (-1)^(i+j+k) (i, j, k = 1 for the lower and 2 for the upper bound). The attraction is
    dV/dx_P = -G rho |||dF/dx|||, with dF/dx = y ln(z + r) + z ln(y + r) - x atan(yz / (xr)).
    """
    p = np.asarray(points, dtype=float)
    potential = np.zeros(len(p))
    attraction = np.zeros((len(p), 3))
    for i, xs in ((1, lo[0]), (2, hi[0])):
        for j, ys in ((1, lo[1]), (2, hi[1])):
            for k, zs in ((1, lo[2]), (2, hi[2])):
                sign = (-1.0) ** (i + j + k)
                x, y, z = xs - p[:, 0], ys - p[:, 1], zs - p[:, 2]
                r = np.sqrt(x * x + y * y + z * z)
                f = (
                    x * y * np.log(z + r)
                    + y * z * np.log(x + r)
                    + z * x * np.log(y + r)
                    - 0.5 * x * x * np.arctan(y * z / (x * r))
                    - 0.5 * y * y * np.arctan(z * x / (y * r))
                    - 0.5 * z * z * np.arctan(x * y / (z * r))
                )
                fx = y * np.log(z + r) + z * np.log(y + r) - x * np.arctan(y * z / (x * r))
                fy = z * np.log(x + r) + x * np.log(z + r) - y * np.arctan(z * x / (y * r))
                fz = x * np.log(y + r) + y * np.log(x + r) - z * np.arctan(x * y / (z * r))
                potential += sign * f
                attraction -= sign * np.stack([fx, fy, fz], axis=1)
    g = spinfall.G_SI
    return g * rho * potential, g * rho * attraction


def prism_quadrature(lo, hi, rho, point, n=48):
    """The same potential and attraction at one exterior point by Gauss-Legendre quadrature of
    G rho / r over the prism (n^3 nodes), to check the closed form as written above."""
    x, w = np.polynomial.legendre.leggauss(n)
    axes = [(0.5 * (b - a) * x + 0.5 * (b + a), 0.5 * (b - a) * w) for a, b in zip(lo, hi)]
    (xs, wx), (ys, wy), (zs, wz) = axes
    gx, gy, gz = np.meshgrid(xs, ys, zs, indexing="ij")
    weights = np.einsum("i,j,k->ijk", wx, wy, wz)
    d = np.stack([gx - point[0], gy - point[1], gz - point[2]])
    r = np.sqrt((d * d).sum(axis=0))
    g = spinfall.G_SI * rho
    return g * (weights / r).sum(), g * (weights * d / r**3).reshape(3, -1).sum(axis=1)


@pytest.fixture
def prism(tmp_path):
    path = tmp_path / "prism.obj"
    path.write_text(box_obj(LO, HI))
    return spinfall.Shape.load(path, unit="m")


def test_the_closed_form_as_written_agrees_with_quadrature():
    # Checks the numpy reference itself, so that a sign slip in it cannot pass unnoticed (at the
    # points far enough out for the quadrature to converge to 1e-12).
    v, a = prism_nagy(LO, HI, RHO, POINTS[:3])
    for k in range(3):
        qv, qa = prism_quadrature(LO, HI, RHO, POINTS[k])
        assert qv == pytest.approx(v[k], rel=1e-12)
        assert np.abs(qa - a[k]).max() <= 1e-12 * np.linalg.norm(a[k])


def test_prism_potential_and_acceleration_match_nagy_2000(prism):
    # Nagy, Papp & Benedek (2000), J. Geodesy 74, 552-560: the prism's potential and first
    # derivatives in closed form (numpy above), against the polyhedron field of the same box.
    field = spinfall.Field(prism, density_kg_m3=RHO)
    out = field.evaluate(POINTS)
    v, a = prism_nagy(LO, HI, RHO, POINTS)
    np.testing.assert_allclose(out["potential_m2_s2"], v, rtol=1e-11, atol=0)
    err = np.linalg.norm(out["acceleration_m_s2"] - a, axis=1)
    assert (err <= 1e-11 * np.linalg.norm(a, axis=1)).all(), err / np.linalg.norm(a, axis=1)
    assert (out["inside"] == INSIDE).all()


def test_poisson_and_laplace_hold_inside_and_outside(prism):
    # Poisson's equation: the Laplacian of the potential is -4 pi G rho inside the body and 0
    # outside (Laplace); the trace of the gradient tensor is the Laplacian.
    out = spinfall.Field(prism, density_kg_m3=RHO).evaluate(POINTS)
    expected = np.where(INSIDE, -4.0 * np.pi * spinfall.G_SI * RHO, 0.0)
    np.testing.assert_allclose(out["laplacian_s2"], expected, rtol=1e-12, atol=1e-20)
    trace = np.trace(out["gradient_s2"], axis1=1, axis2=2)
    np.testing.assert_allclose(trace, out["laplacian_s2"], rtol=1e-9, atol=1e-18)
    # The gradient tensor of a potential is symmetric.
    g = out["gradient_s2"]
    assert np.abs(g - g.transpose(0, 2, 1)).max() <= 1e-12 * np.abs(g).max()


def test_mass_can_be_given_as_mass_or_gm(prism):
    mass = prism.mass_kg(RHO)
    by_density = spinfall.Field(prism, density_kg_m3=RHO)
    by_mass = spinfall.Field(prism, mass_kg=mass)
    by_gm = spinfall.Field(prism, gm_m3_s2=spinfall.G_SI * mass)
    for f in (by_mass, by_gm):
        assert f.gm_m3_s2 == pytest.approx(by_density.gm_m3_s2, rel=1e-14)
        np.testing.assert_allclose(
            f.evaluate(POINTS)["potential_m2_s2"],
            by_density.evaluate(POINTS)["potential_m2_s2"],
            rtol=1e-13,
        )


def cli_samples(cli, shape_args, mass_args, points, tmp_path, extra=()):
    path = tmp_path / "points.csv"
    path.write_text(
        "x_m,y_m,z_m\n" + "".join(f"{float(x)!r},{float(y)!r},{float(z)!r}\n" for x, y, z in points)
    )
    done = cli("gravity", *shape_args, *mass_args, "--points", path, *extra)
    return [json.loads(line) for line in done.stdout.splitlines()]


def assert_same_as_cli(out, lines):
    assert same(out["potential_m2_s2"], [s["potential_m2_s2"] for s in lines])
    assert same(out["acceleration_m_s2"], [s["acceleration_m_s2"] for s in lines])
    assert same(out["gradient_s2"], [s["gradient_s2"] for s in lines])
    assert same(out["laplacian_s2"], [s["laplacian_s2"] for s in lines])
    assert list(out["inside"]) == [s["inside"] for s in lines]


def demo_points():
    rng = np.random.default_rng(11)
    directions = rng.normal(size=(40, 3))
    directions /= np.linalg.norm(directions, axis=1)[:, None]
    radii = rng.uniform(200.0, 9000.0, size=40)
    # Inside, near the surface and far out (beyond the exterior expansion's switch radius).
    far = np.array([[60000.0, -3000.0, 1000.0]])
    return np.vstack([directions * radii[:, None], far])


def test_direct_field_is_bit_for_bit_what_spinfall_gravity_writes(cli, tmp_path):
    # More points than one chunk of evaluate() (about 20,000 on this body), so the chunked
    # Python path is compared with the CLI's single batch.
    rng = np.random.default_rng(4)
    points = np.vstack([demo_points(), rng.uniform(-7000.0, 7000.0, size=(24000, 3))])
    shape = spinfall.Shape.builtin(recenter=True)
    out = spinfall.Field(shape, density_kg_m3=2100.0).evaluate(points)
    lines = cli_samples(
        cli, ["builtin:quillon", "--recenter"], ["--density", "2100"], points, tmp_path
    )
    assert out["inside"].any() and not out["inside"].all()
    assert_same_as_cli(out, lines)


def test_interpolated_field_is_what_spinfall_gravity_reads_from_the_same_cache(cli, tmp_path):
    # A 1,280-face ellipsoid-like body: an octree of a few hundred cells, built in seconds.
    body = tmp_path / "pebble.obj"
    body.write_text(ellipsoid_obj(3, (3.0, 2.0, 1.5)))
    shape = spinfall.Shape.load(body)
    cache = tmp_path / "fields"
    stages = []
    field = spinfall.Field(
        shape,
        density_kg_m3=1900.0,
        method="interpolated",
        max_rel_error=1e-6,
        cache_dir=cache,
        progress=lambda stage, done, total: stages.append(stage),
    )
    assert field.method == "interpolated" and field.max_rel_error == 1e-6
    assert field.info["store"].startswith("built and stored as"), field.info
    assert field.info["build"]["cells"] > 100, field.info
    assert set(stages) == {"field"}
    again = spinfall.Field(
        shape, density_kg_m3=1900.0, method="interpolated", max_rel_error=1e-6, cache_dir=cache
    )
    assert again.info["store"].startswith("read from"), again.info
    points = demo_points()
    out = field.evaluate(points)
    lines = cli_samples(
        cli,
        [body],
        ["--density", "1900"],
        points,
        tmp_path,
        extra=["--field", "interpolated", "--max-rel-error", "1e-6", "--cache-dir", cache],
    )
    assert_same_as_cli(out, lines)
    # Within its bound of the direct field (relative to the local gravity, or to 0.1 GM/R_B^2
    # where gravity is weaker; see SCENARIO.md, `field`).
    direct = spinfall.Field(shape, density_kg_m3=1900.0).evaluate(points)
    floor = 0.1 * field.gm_m3_s2 / shape.brillouin_radius_m**2
    scale = np.maximum(np.linalg.norm(direct["acceleration_m_s2"], axis=1), floor)
    err = np.linalg.norm(out["acceleration_m_s2"] - direct["acceleration_m_s2"], axis=1)
    assert (err <= 1e-6 * scale).all(), (err / scale).max()
    assert (out["inside"] == direct["inside"]).all() and out["inside"].any()


def test_an_empty_batch_gives_empty_arrays(prism):
    out = spinfall.Field(prism, density_kg_m3=RHO).evaluate(np.zeros((0, 3)))
    assert out["potential_m2_s2"].shape == (0,)
    assert out["acceleration_m_s2"].shape == (0, 3)
    assert out["gradient_s2"].shape == (0, 3, 3)
    assert out["inside"].dtype == np.bool_


def test_views_and_fortran_order_read_the_right_values(prism):
    field = spinfall.Field(prism, density_kg_m3=RHO)
    base = field.evaluate(POINTS)["potential_m2_s2"]
    fortran = np.asfortranarray(POINTS)
    assert same(field.evaluate(fortran)["potential_m2_s2"], base)
    strided = np.zeros((len(POINTS) * 2, 6))
    strided[::2, 1:4] = POINTS
    assert same(field.evaluate(strided[::2, 1:4])["potential_m2_s2"], base)
