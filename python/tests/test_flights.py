"""Scenario.fly() and Scenario.surface_map() against `spinfall fly` and `spinfall map` on the
same scenarios: every reported number, bit for bit."""

import json
import threading

import numpy as np
import pytest

import spinfall
from conftest import builtin_with, number, read_csv, same, write_json

SUN = {
    "sun": {"direction_inertial": [0.3, -0.2, 1.0], "distance_au": 1.2},
    "particle": {"radius_m": 1e-4, "density_kg_m3": 2000},
}

# Keys of a launch record in results.json that FlightResults gives under the same name.
SAME_KEYS = [
    "launch_pos_body_m",
    "launch_vel_body_m_s",
    "first_contact_time_s",
    "rest_time_s",
    "end_time_s",
    "downrange_m",
    "max_altitude_m",
    "jacobi_rel_drift",
    "frame_agreement_m",
    "gravity_evaluations",
    "steps",
    "rejected_steps",
    "final_pos_body_m",
    "final_vel_body_m_s",
    "final_pos_inertial_m",
    "final_vel_inertial_m_s",
]

CONTACT_KEYS = [
    "t_s",
    "pos_body_m",
    "face",
    "lat_deg",
    "lon_deg",
    "impact_speed_m_s",
    "impact_angle_deg",
    "rebound_speed_m_s",
    "rest",
]


def plain(value):
    """numpy values as the plain Python values json.loads gives."""
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, dict):
        return {k: plain(v) for k, v in value.items()}
    return value


def assert_launch_matches(mine, record):
    assert mine["id"] == record["id"]
    assert mine["outcome"] == record["outcome"]["kind"]
    assert mine["failure_reason"] == record["outcome"].get("reason")
    assert mine[mine["outcome"]] is True
    for key in SAME_KEYS:
        assert plain(mine[key]) == record[key], key
    assert plain(mine["landing"]) == record["landing"]
    contacts = mine["contacts"]
    assert len(contacts["t_s"]) == len(record["contacts"])
    for k, c in enumerate(record["contacts"]):
        for key in CONTACT_KEYS:
            assert plain(contacts[key][k]) == c[key], (k, key)
    first = record["contacts"][0] if record["contacts"] else None
    assert plain(mine["first_contact"]) == first
    if "energy_added_m2_s2" in record:
        assert mine["energy_added_m2_s2"] == record["energy_added_m2_s2"]
    shadow = record.get("shadow_events", [])
    assert mine["shadow_events"]["t_s"].tolist() == [e["t_s"] for e in shadow]
    assert mine["shadow_events"]["enters_shadow"].tolist() == [e["enters_shadow"] for e in shadow]
    assert mine["shadow_events"]["pos_body_m"].tolist() == [e["pos_body_m"] for e in shadow]
    assert plain(mine["targeting"]) == record.get("targeting")


def trajectories_by_launch(path):
    header, rows = read_csv(path)
    assert header == ["launch_id", "frame", "t_s", "x_m", "y_m", "z_m", "vx_m_s", "vy_m_s", "vz_m_s"]
    out = {}
    for row in rows:
        out.setdefault((row[0], row[1]), []).append([float(x) for x in row[2:]])
    return {k: np.array(v) for k, v in out.items()}


def check_fly_against_cli(cli, tmp_path, scenario_arg, results):
    cli("fly", scenario_arg, "--out", tmp_path / "out")
    doc = json.loads((tmp_path / "out" / "results.json").read_text())
    records = doc["launches"]
    assert results.ids == [r["id"] for r in records]
    assert len(results) == len(records) and list(results) == results.ids
    for record in records:
        assert_launch_matches(results[record["id"]], record)
    assert results.field["method"] == doc["field"]["method"]
    assert results.field["kernel"] == doc["field"]["kernel"]
    trajectories = trajectories_by_launch(tmp_path / "out" / "trajectories.csv")
    for launch_id in results.ids:
        launch = results[launch_id]
        for frame in ("body", "inertial"):
            rows = trajectories[(launch_id, frame)]
            mine = launch[f"trajectory_{frame}"]
            assert same(mine["t_s"], rows[:, 0])
            assert same(mine["pos_m"], rows[:, 1:4])
            assert same(mine["vel_m_s"], rows[:, 4:7])
    # The table has the results.csv columns, with the same numbers.
    header, rows = read_csv(tmp_path / "out" / "results.csv")
    table = results.table()
    for k, name in enumerate(header):
        column = [r[k] for r in rows]
        if name == "id":
            assert table["id"] == column
        elif name == "outcome":
            assert [o.replace("_", " ") for o in table["outcome"]] == [
                c.split(":")[0] for c in column
            ]
        elif name in ("contacts", "shadow_events"):
            assert table[name].tolist() == [int(c) for c in column], name
        elif name == "jacobi_rel_drift":
            assert same(table[name], [number(c) if c != "n/a" else np.nan for c in column])
        elif name in table:
            assert same(table[name], [number(c) for c in column]), name
        else:
            raise AssertionError(f"results.csv column {name} is not in the table")


def test_builtin_example_flies_as_spinfall_fly(cli, tmp_path):
    calls = []
    results = spinfall.Scenario.builtin().fly(
        progress=lambda stage, done, total: calls.append((stage, done, total, threading.get_ident()))
    )
    check_fly_against_cli(cli, tmp_path, "builtin:example", results)
    # Both outcomes of interest occur, and each launch flew in both frames.
    assert {"landed", "escaped"} <= set(results.table()["outcome"])
    for launch_id in results:
        assert len(results[launch_id]["trajectory_inertial"]["t_s"]) > 1
    # Progress came on this thread, ending with every launch done.
    assert calls and all(c[3] == threading.get_ident() for c in calls)
    assert calls[-1][:3] == ("flights", 16, 16)
    assert [c[1] for c in calls] == sorted(c[1] for c in calls)


def test_a_scenario_with_the_sun_flies_and_maps_as_the_command_line(cli, tmp_path):
    doc = builtin_with(environment=SUN)
    path = write_json(tmp_path / "sunny.json", doc)
    scenario = spinfall.Scenario.from_json(path)
    results = scenario.fly()
    check_fly_against_cli(cli, tmp_path, path, results)
    assert all(results[i]["jacobi_rel_drift"] is None for i in results)
    assert any(len(results[i]["shadow_events"]["t_s"]) for i in results)
    check_map_against_cli(cli, tmp_path, path, scenario.surface_map())


def check_map_against_cli(cli, tmp_path, scenario_arg, mine):
    out = tmp_path / "map.csv"
    cli("map", scenario_arg, "--out", out)
    header, rows = read_csv(out)
    cols = {name: [r[k] for r in rows] for k, name in enumerate(header)}
    assert mine["face"].tolist() == [int(c) for c in cols.pop("face")]
    for vector, names in {
        "centroid_m": ["centroid_x_m", "centroid_y_m", "centroid_z_m"],
        "eff_acc_m_s2": ["eff_acc_x_m_s2", "eff_acc_y_m_s2", "eff_acc_z_m_s2"],
    }.items():
        for axis, name in enumerate(names):
            assert same(mine[vector][:, axis], [number(c) for c in cols.pop(name)]), name
    for name, cells in cols.items():
        assert same(mine[name], [number(c) for c in cells]), name
    expected = {"face", "centroid_m", "eff_acc_m_s2"} | set(header) - {
        "face",
        "centroid_x_m",
        "centroid_y_m",
        "centroid_z_m",
        "eff_acc_x_m_s2",
        "eff_acc_y_m_s2",
        "eff_acc_z_m_s2",
    }
    assert set(mine) == expected


def test_surface_map_is_what_spinfall_map_writes(cli, tmp_path):
    stages = set()
    mine = spinfall.Scenario.builtin().surface_map(
        progress=lambda stage, done, total: stages.add(stage)
    )
    check_map_against_cli(cli, tmp_path, "builtin:example", mine)
    assert "sunlit" not in mine
    assert stages <= {"map"}


def test_json_text_bytes_and_paths_read_the_same_scenario(tmp_path):
    text = spinfall.Scenario.builtin().to_json()
    path = tmp_path / "example.json"
    path.write_text(text)
    for source in (text, text.encode(), path, str(path), "builtin:example"):
        s = spinfall.Scenario.from_json(source)
        assert s.to_json() == text
        assert s.launch_count == 16 and s.body_name == "Quillon"
    assert spinfall.Scenario.from_json(path).base_dir == tmp_path


def test_a_relative_shape_path_is_resolved_against_the_scenario_folder(tmp_path, cli):
    (tmp_path / "bodies").mkdir()
    from conftest import box_obj

    (tmp_path / "bodies" / "brick.obj").write_text(box_obj((-1.0, -0.6, -0.4), (1.0, 0.6, 0.4)))
    doc = builtin_with(
        body={
            "shape": "bodies/brick.obj",
            "unit": "km",
            "density_kg_m3": 2400,
            "spin": {"period_h": 3.7, "axis": [0, 0, 1], "phase_deg": 0},
        },
        launches=[
            {"id": "drop", "state": {"position_m": [100, 50, 900], "velocity_m_s": [0, 0, 0]}}
        ],
    )
    path = write_json(tmp_path / "brick.json", doc)
    results = spinfall.Scenario.from_json(path).fly()
    check_fly_against_cli(cli, tmp_path, path, results)
    assert results["drop"]["landed"]
    # The same text elsewhere finds the shape through base_dir.
    text = path.read_text()
    assert spinfall.Scenario.from_json(text, base_dir=tmp_path).shape().face_count == 12
    with pytest.raises(spinfall.SpinfallOSError):
        spinfall.Scenario.from_json(text, base_dir=tmp_path / "bodies").fly()
