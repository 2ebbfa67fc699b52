"""Wall time of ``Field.evaluate`` against ``spinfall gravity --points`` on the demo body.

Run from the repository root with a release build of both (the figures mean nothing in the dev
profile):

    pip install ./python            # release extension
    cargo build --release --bin spinfall
    python python/benches/evaluate_timing.py --bin target/release/spinfall [--points 20000]

Both evaluate the same points (uniform in a 16 km cube around the 5,120-face demo body, about a
tenth of them inside) with the direct field and full output (potential, acceleration, gradient
tensor, Laplacian, inside flag). Prints the best of ``--repeats`` runs as ns per facet per
point. The command line's figure includes its start-up (reading the shape), parsing the points
CSV and writing CSV; it is also given with a one-point run's time subtracted.
"""

import argparse
import subprocess
import tempfile
import time
from pathlib import Path

import numpy as np

import spinfall


def best_of(repeats, run):
    best = float("inf")
    for _ in range(repeats):
        start = time.perf_counter()
        run()
        best = min(best, time.perf_counter() - start)
    return best


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--bin", default="target/release/spinfall")
    parser.add_argument("--points", type=int, default=20000)
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()

    shape = spinfall.Shape.builtin()
    field = spinfall.Field(shape, density_kg_m3=1900.0)
    points = np.random.default_rng(1).uniform(-8000.0, 8000.0, size=(args.points, 3))
    work = shape.face_count * len(points)

    field.evaluate(points[:100])  # warm-up
    py_s = best_of(args.repeats, lambda: field.evaluate(points))

    with tempfile.TemporaryDirectory() as tmp:
        many = Path(tmp) / "points.csv"
        many.write_text("x_m,y_m,z_m\n" + "".join(f"{x!r},{y!r},{z!r}\n" for x, y, z in points.tolist()))
        one = Path(tmp) / "one.csv"
        one.write_text("x_m,y_m,z_m\n9000.0,0.0,0.0\n")

        def cli(path):
            subprocess.run(
                [args.bin, "gravity", "builtin:quillon", "--density", "1900", "--points", str(path), "--csv"],
                check=True,
                stdout=subprocess.DEVNULL,
                stderr=subprocess.DEVNULL,
            )

        cli_s = best_of(args.repeats, lambda: cli(many))
        fixed_s = best_of(args.repeats, lambda: cli(one))

    print(f"{shape.face_count} facets x {len(points)} points, best of {args.repeats}")
    print(f"Field.evaluate:           {py_s:8.4f} s  {py_s / work * 1e9:6.2f} ns per facet per point")
    print(f"spinfall gravity --points {cli_s:8.4f} s  {cli_s / work * 1e9:6.2f} ns per facet per point")
    print(
        f"  minus a one-point run   {cli_s - fixed_s:8.4f} s  "
        f"{(cli_s - fixed_s) / work * 1e9:6.2f} ns per facet per point"
    )


if __name__ == "__main__":
    main()
