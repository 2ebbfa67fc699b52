"""spinfall.Shape against `spinfall info` and against mass properties recomputed in numpy from
the vertex and face arrays (the divergence theorem over signed tetrahedra)."""

import json

import numpy as np
import pytest

import spinfall
from conftest import REPO, box_obj


def numpy_mass_properties(vertices, faces):
    """Volume and centroid of a closed, outward-oriented triangle mesh as sums over the signed
    tetrahedra (origin, a, b, c): V = sum det/6, centroid = sum det (a + b + c) / 24 / V (the
    divergence theorem; any textbook on polyhedral mass properties)."""
    a, b, c = (vertices[faces[:, k]] for k in range(3))
    det = np.einsum("ij,ij->i", a, np.cross(b, c))
    volume = det.sum() / 6.0
    centroid = (det[:, None] * (a + b + c)).sum(axis=0) / 24.0 / volume
    return volume, centroid


@pytest.mark.parametrize("recenter", [False, True])
def test_builtin_shape_is_what_spinfall_info_reports(cli, recenter):
    shape = spinfall.Shape.builtin(recenter=recenter)
    args = ["info", "builtin:quillon", "--density", "2100"] + (["--recenter"] if recenter else [])
    info = json.loads(cli(*args).stdout)
    assert shape.info(2100.0) == info
    assert shape.face_count == info["faces"] == 5120
    assert shape.vertex_count == info["vertices"]
    assert shape.volume_m3 == info["volume_m3"]
    assert shape.area_m2 == info["area_m2"]
    assert shape.centroid_m.tolist() == info["center_of_mass_m"]
    assert shape.inertia_per_density_m5.tolist() == info["inertia_per_unit_density_m5"]
    assert shape.inertia_kg_m2(2100.0).tolist() == info["inertia_kg_m2"]
    assert shape.mass_kg(2100.0) == info["mass_kg"]
    assert shape.principal_axes.tolist() == info["principal_axes"]
    assert (
        shape.principal_moments_per_density_m5.tolist()
        == info["principal_moments_per_unit_density_m5"]
    )
    assert shape.brillouin_radius_m == info["brillouin_radius_m"]
    assert shape.equivalent_radius_m == info["equivalent_radius_m"]
    assert shape.recentered == recenter


def test_arrays_give_the_same_mass_properties_in_numpy():
    shape = spinfall.Shape.builtin()
    v, f = shape.vertices_m, shape.faces
    assert v.shape == (shape.vertex_count, 3) and f.shape == (shape.face_count, 3)
    assert f.dtype == np.int64 and f.min() == 0 and f.max() == shape.vertex_count - 1
    volume, centroid = numpy_mass_properties(v, f)
    assert volume == pytest.approx(shape.volume_m3, rel=1e-12)
    np.testing.assert_allclose(centroid, shape.centroid_m, rtol=0, atol=1e-9 * 3000)
    np.testing.assert_array_equal(shape.bounds_m, [v.min(axis=0), v.max(axis=0)])


def test_recentring_moves_the_centre_of_mass_to_the_origin():
    plain = spinfall.Shape.builtin()
    moved = spinfall.Shape.builtin(recenter=True)
    np.testing.assert_allclose(moved.centroid_m, 0.0, atol=1e-9)
    np.testing.assert_allclose(moved.recentred_by_m, -plain.centroid_m, rtol=1e-15)
    np.testing.assert_allclose(moved.vertices_m, plain.vertices_m - plain.centroid_m, atol=1e-9)
    assert not plain.recentered and plain.recentred_by_m.tolist() == [0.0, 0.0, 0.0]


def test_units_files_and_bytes_open_the_same_model(tmp_path):
    # A 2 x 1.2 x 0.8 km box: volume 1.92 km^3 whatever the unit it is written in.
    km = tmp_path / "rock.obj"
    km.write_text(box_obj((-1.0, -0.6, -0.4), (1.0, 0.6, 0.4)))
    m = tmp_path / "rock_m.obj"
    m.write_text(box_obj((-1000.0, -600.0, -400.0), (1000.0, 600.0, 400.0)))
    in_km = spinfall.Shape.load(km)
    in_m = spinfall.Shape.load(str(m), unit="m")
    from_bytes = spinfall.Shape.from_bytes(km.read_bytes(), "rock.obj", unit="km")
    for s in (in_km, in_m, from_bytes):
        assert s.volume_m3 == pytest.approx(1.92e9, rel=1e-14)
        assert s.face_count == 12
    assert in_km.unit == "km" and in_m.unit == "m"
    assert in_km.name == "rock" and from_bytes.source == "rock.obj"
    np.testing.assert_array_equal(in_km.vertices_m, from_bytes.vertices_m)


def test_the_shipped_ellipsoid_has_the_volume_of_its_semi_axes():
    # V = 4/3 pi abc for the ellipsoid; the icosphere inscribed in it is a little smaller, by
    # about 1 % at 5,120 faces (the polygonal approximation's deficit, common practice).
    s = spinfall.Shape.load(REPO / "shapes" / "ellipsoid.obj")
    exact = 4.0 / 3.0 * np.pi * 3000.0 * 2000.0 * 1500.0
    assert 0.98 * exact < s.volume_m3 < exact


def test_ply_and_stl_files_open_through_the_same_loader(tmp_path):
    lo, hi = (-1.0, -0.6, -0.4), (1.0, 0.6, 0.4)
    obj = box_obj(lo, hi)
    vertices = [line.split()[1:] for line in obj.splitlines() if line.startswith("v ")]
    faces = [[int(i) - 1 for i in line.split()[1:]] for line in obj.splitlines() if line.startswith("f ")]
    ply = tmp_path / "brick.ply"
    ply.write_text(
        "ply\nformat ascii 1.0\n"
        f"element vertex {len(vertices)}\nproperty double x\nproperty double y\nproperty double z\n"
        f"element face {len(faces)}\nproperty list uchar int vertex_indices\nend_header\n"
        + "".join(" ".join(v) + "\n" for v in vertices)
        + "".join("3 " + " ".join(map(str, f)) + "\n" for f in faces)
    )
    stl = tmp_path / "brick.stl"
    stl.write_text(
        "solid brick\n"
        + "".join(
            "facet normal 0 0 0\n outer loop\n"
            + "".join(f"  vertex {' '.join(vertices[i])}\n" for i in f)
            + " endloop\nendfacet\n"
            for f in faces
        )
        + "endsolid brick\n"
    )
    for path in (ply, stl):
        shape = spinfall.Shape.load(path)
        assert shape.face_count == 12, path
        assert shape.volume_m3 == pytest.approx(1.92e9, rel=1e-14), path
        np.testing.assert_allclose(shape.centroid_m, 0.0, atol=1e-6)
