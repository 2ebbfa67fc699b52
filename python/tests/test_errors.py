"""Bad input raises SpinfallError (a ValueError) or SpinfallOSError (an OSError) with the
workflow's own message, the one the command line prints after "error: "."""

import errno
import json
import warnings

import numpy as np
import pytest

import spinfall
from conftest import box_obj, builtin_with, write_json


def cli_message(cli, *args):
    """The command line's error message for the same input (exit code 2, bad input)."""
    done = cli(*args, check=False)
    assert done.returncode == 2, done.stderr
    line = done.stderr.strip().splitlines()[-1]
    assert line.startswith("error: "), done.stderr
    return line[len("error: "):]


@pytest.fixture
def prism(tmp_path):
    path = tmp_path / "prism.obj"
    path.write_text(box_obj((-1.0, -1.0, -1.0), (1.0, 1.0, 1.0)))
    return spinfall.Shape.load(path)


def test_the_exceptions_are_value_and_os_errors():
    assert issubclass(spinfall.SpinfallError, ValueError)
    assert issubclass(spinfall.SpinfallOSError, OSError)
    assert issubclass(spinfall.SpinfallWarning, UserWarning)


def test_a_malformed_obj_is_refused_with_the_line(cli, tmp_path):
    bad = tmp_path / "bad.obj"
    bad.write_text("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 9\n")
    with pytest.raises(spinfall.SpinfallError) as e:
        spinfall.Shape.load(bad)
    assert "line 4" in str(e.value) and "vertex 9" in str(e.value)
    assert str(e.value) == cli_message(cli, "info", bad)


def test_an_open_mesh_is_refused(cli, tmp_path):
    text = box_obj((-1.0, -1.0, -1.0), (1.0, 1.0, 1.0))
    bad = tmp_path / "open.obj"
    bad.write_text("\n".join(text.splitlines()[:-1]) + "\n")  # one face missing
    with pytest.raises(spinfall.SpinfallError) as e:
        spinfall.Shape.load(bad)
    assert str(e.value) == cli_message(cli, "info", bad)


def test_a_missing_file_is_an_os_error_naming_it(cli, tmp_path):
    missing = tmp_path / "nowhere.obj"
    with pytest.raises(spinfall.SpinfallOSError) as e:
        spinfall.Shape.load(missing)
    assert e.value.path == missing
    assert e.value.errno == errno.ENOENT
    assert str(e.value) == cli_message(cli, "info", missing)
    with pytest.raises(OSError):
        spinfall.Scenario.from_json(tmp_path / "nowhere.json")


def test_bad_json_names_line_and_column(cli, tmp_path):
    bad = tmp_path / "bad.json"
    bad.write_text('{"format":\n')
    with pytest.raises(spinfall.SpinfallError) as e:
        spinfall.Scenario.from_json(bad)
    assert "line 2 column 0" in str(e.value)
    assert str(e.value) == cli_message(cli, "fly", bad, "--out", tmp_path / "o")
    with pytest.raises(spinfall.SpinfallError, match="JSON text"):
        spinfall.Scenario.from_json('{"format": "spinfall-scenario"')


def test_an_unknown_scenario_key_names_its_path(cli, tmp_path):
    doc = builtin_with()
    doc["body"]["densty_kg_m3"] = 2000
    path = write_json(tmp_path / "typo.json", doc)
    with pytest.raises(spinfall.SpinfallError, match="densty_kg_m3") as e:
        spinfall.Scenario.from_json(path)
    assert str(e.value) == cli_message(cli, "fly", path, "--out", tmp_path / "o")


def test_a_negative_density_is_refused(cli, prism, tmp_path):
    with pytest.raises(spinfall.SpinfallError, match="density_kg_m3") as e:
        spinfall.Field(prism, density_kg_m3=-5.0)
    # The command line takes the value after "=" (a leading "-" would read as an option).
    assert str(e.value) == cli_message(
        cli, "gravity", "builtin:quillon", "--density=-5", "--at", "0,0,9000"
    )
    with pytest.raises(spinfall.SpinfallError):
        spinfall.Field(prism, density_kg_m3=float("nan"))
    with pytest.raises(spinfall.SpinfallError, match="positive"):
        prism.mass_kg(0.0)
    with pytest.raises(spinfall.SpinfallError, match="exactly one"):
        spinfall.Field(prism)
    with pytest.raises(spinfall.SpinfallError, match="exactly one"):
        spinfall.Field(prism, density_kg_m3=2000.0, mass_kg=1e12)


def test_bad_settings_are_refused(prism):
    with pytest.raises(spinfall.SpinfallError, match="unknown length unit"):
        spinfall.Shape.builtin().load("x.obj", unit="furlong")
    with pytest.raises(spinfall.SpinfallError, match="direct"):
        spinfall.Field(prism, density_kg_m3=2000.0, method="fast")
    with pytest.raises(spinfall.SpinfallError, match="max_rel_error"):
        spinfall.Field(prism, density_kg_m3=2000.0, method="interpolated", max_rel_error=0.5)
    with pytest.raises(spinfall.SpinfallError, match="max_rel_error"):
        spinfall.Scenario.builtin().fly(max_rel_error=0.5)
    with pytest.raises(spinfall.SpinfallError, match="limit of 3"):
        spinfall.Scenario.builtin().fly(max_launches=3)


@pytest.mark.parametrize(
    "points, message",
    [
        ([[1.0, 2.0, 3.0]], "numpy array"),
        (np.ones((4, 3), dtype=np.float32), "float64"),
        (np.ones((4, 3), dtype=np.int64), "float64"),
        (np.ones((4, 2)), r"shape \(n, 3\)"),
        (np.ones(3), r"reshape\(1, 3\)"),
        (np.ones((2, 3, 1)), r"shape \(n, 3\)"),
        (np.array([[1.0, 2.0, 3.0], [0.0, np.nan, 0.0]]), r"points\[1\]"),
        (np.array([[np.inf, 0.0, 0.0]]), r"points\[0\]"),
    ],
)
def test_bad_point_arrays_are_refused(prism, points, message):
    field = spinfall.Field(prism, density_kg_m3=2000.0)
    with pytest.raises(spinfall.SpinfallError, match=message):
        field.evaluate(points)


def test_a_point_beyond_f64_is_refused_naming_it(prism):
    field = spinfall.Field(prism, density_kg_m3=2000.0)
    with pytest.raises(spinfall.SpinfallError, match=r"points\[1\].*not a finite number"):
        field.evaluate(np.array([[5000.0, 0.0, 0.0], [1e300, 1e300, 1e300]]))


def test_scenario_warnings_are_python_warnings(tmp_path):
    doc = builtin_with(environment={"particle": {"radius_m": 1e-4, "density_kg_m3": 2000}})
    scenario = spinfall.Scenario.from_json(json.dumps(doc))
    assert scenario.warnings
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        scenario.surface_map()
    assert any(
        issubclass(w.category, spinfall.SpinfallWarning) and "environment" in str(w.message)
        for w in caught
    )
    # An "error" filter turns the warning into an exception before any work.
    with warnings.catch_warnings():
        warnings.simplefilter("error", spinfall.SpinfallWarning)
        with pytest.raises(spinfall.SpinfallWarning):
            scenario.fly()


def test_a_failing_progress_callback_stops_the_run_with_its_exception():
    def progress(stage, done, total):
        raise RuntimeError("stop here")

    with pytest.raises(RuntimeError, match="stop here"):
        spinfall.Scenario.builtin().fly(progress=progress)
    # The next run is unaffected.
    assert len(spinfall.Scenario.builtin().fly()) == 16
