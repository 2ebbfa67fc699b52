"""Shared helpers of the Python package's tests: the command-line binary they compare with, and
small bodies and scenarios written by the tests themselves.

The binary is ``$SPINFALL_BIN`` if set, else ``target/debug/spinfall`` of this workspace (built
with ``cargo build`` when missing). The comparisons run it as a subprocess on purpose: the
package itself never does.
"""

import json
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest

import spinfall

REPO = Path(__file__).resolve().parents[2]


def _binary() -> Path:
    env = os.environ.get("SPINFALL_BIN")
    if env:
        return Path(env)
    exe = REPO / "target" / "debug" / "spinfall"
    if not exe.exists():
        subprocess.run(["cargo", "build", "-q", "--bin", "spinfall"], cwd=REPO, check=True)
    return exe


@pytest.fixture(scope="session")
def cli(tmp_path_factory):
    """``cli(*args, check=True)`` runs the spinfall binary; returns the CompletedProcess."""
    exe = _binary()
    cache = tmp_path_factory.mktemp("cli-cache")

    def run(*args, check=True):
        env = dict(os.environ, SPINFALL_CACHE_DIR=str(cache))
        done = subprocess.run(
            [str(exe), *map(str, args)], capture_output=True, text=True, env=env
        )
        if check and done.returncode != 0:
            raise AssertionError(
                f"spinfall {' '.join(map(str, args))} exited {done.returncode}: {done.stderr}"
            )
        return done

    return run


@pytest.fixture(autouse=True)
def _own_cache(tmp_path, monkeypatch):
    """Each test keeps interpolated fields in a folder of its own, never in ~/.cache."""
    monkeypatch.setenv("SPINFALL_CACHE_DIR", str(tmp_path / "cache"))


def box_obj(lo, hi) -> str:
    """An OBJ of the box [lo, hi] (8 vertices, 12 triangles, counter-clockwise seen from
    outside)."""
    (x1, y1, z1), (x2, y2, z2) = lo, hi
    v = [
        (x1, y1, z1), (x2, y1, z1), (x2, y2, z1), (x1, y2, z1),
        (x1, y1, z2), (x2, y1, z2), (x2, y2, z2), (x1, y2, z2),
    ]
    f = [
        (1, 3, 2), (1, 4, 3), (5, 6, 7), (5, 7, 8), (1, 2, 6), (1, 6, 5),
        (2, 3, 7), (2, 7, 6), (3, 4, 8), (3, 8, 7), (4, 1, 5), (4, 5, 8),
    ]
    return "".join(f"v {a!r} {b!r} {c!r}\n" for a, b, c in v) + "".join(
        f"f {a} {b} {c}\n" for a, b, c in f
    )


def ellipsoid_obj(subdivisions, axes_km) -> str:
    """An OBJ of a triaxial ellipsoid-like body in km: an icosahedron subdivided `subdivisions`
    times (20 * 4**subdivisions faces), its vertices on the unit sphere, scaled per axis."""
    t = (1 + 5**0.5) / 2
    vertices = [
        (-1, t, 0), (1, t, 0), (-1, -t, 0), (1, -t, 0), (0, -1, t), (0, 1, t),
        (0, -1, -t), (0, 1, -t), (t, 0, -1), (t, 0, 1), (-t, 0, -1), (-t, 0, 1),
    ]
    faces = [
        (0, 11, 5), (0, 5, 1), (0, 1, 7), (0, 7, 10), (0, 10, 11), (1, 5, 9), (5, 11, 4),
        (11, 10, 2), (10, 7, 6), (7, 1, 8), (3, 9, 4), (3, 4, 2), (3, 2, 6), (3, 6, 8),
        (3, 8, 9), (4, 9, 5), (2, 4, 11), (6, 2, 10), (8, 6, 7), (9, 8, 1),
    ]
    v = [np.array(p, dtype=float) / np.linalg.norm(p) for p in vertices]
    for _ in range(subdivisions):
        middle = {}

        def mid(a, b):
            key = (min(a, b), max(a, b))
            if key not in middle:
                p = v[a] + v[b]
                v.append(p / np.linalg.norm(p))
                middle[key] = len(v) - 1
            return middle[key]

        faces = [
            f
            for a, b, c in faces
            for f in (
                (a, mid(a, b), mid(c, a)),
                (b, mid(b, c), mid(a, b)),
                (c, mid(c, a), mid(b, c)),
                (mid(a, b), mid(b, c), mid(c, a)),
            )
        ]
    scale = np.asarray(axes_km, dtype=float)
    return "".join("v %r %r %r\n" % tuple(float(x) for x in p * scale) for p in v) + "".join(
        f"f {a + 1} {b + 1} {c + 1}\n" for a, b, c in faces
    )


def builtin_with(**changes) -> dict:
    """The built-in example as a JSON document, with top-level keys replaced."""
    doc = json.loads(spinfall.Scenario.builtin().to_json())
    doc.update(changes)
    return doc


def write_json(path: Path, doc) -> Path:
    path.write_text(json.dumps(doc, indent=1))
    return path


def read_csv(path: Path):
    """A CSV with a header as (header, rows of str)."""
    lines = Path(path).read_text().splitlines()
    return lines[0].split(","), [line.split(",") for line in lines[1:]]


def number(cell: str) -> float:
    """A CSV cell as a float (empty: NaN)."""
    return float(cell) if cell != "" else float("nan")


def same(a, b) -> bool:
    """Bit-for-bit equal float arrays (NaN equal to NaN)."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    return a.shape == b.shape and bool(np.array_equal(a, b, equal_nan=True))
