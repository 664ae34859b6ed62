"""Smoke test of the benchmark (no timing assertion: speed is measured, not tested).

Runs ``python -m benchmarks.run`` at a thousand elements in a temporary directory and
checks that it writes a table with one row per format, and that the generated mesh is
what the generator promises: a structured grid of the asked size with the planted bad
elements where it says (checked with shapely, a reference outside the project).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import shapely

from benchmarks.meshgen import PLANTED, distorted_plate, grid_shape
from tests.conftest import REPO


def test_benchmark_writes_its_table(tmp_path):
    env = dict(os.environ, PYTHONPATH=str(REPO))
    out = tmp_path / "bench"
    table = tmp_path / "table.md"
    done = subprocess.run(
        [
            sys.executable,
            "-m",
            "benchmarks.run",
            "--sizes",
            "1000",
            "--out",
            str(out),
            "--markdown",
            str(table),
            "--no-plot",
        ],
        cwd=REPO,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert done.returncode == 0, done.stderr
    assert (out / "plate_1000.msh").stat().st_size > 0
    assert (out / "plate_1000.vtu").stat().st_size > 0
    lines = table.read_text().splitlines()
    header = next(line for line in lines if line.startswith("| elements"))
    rows = [line for line in lines if line.startswith("| 1,000 |")]
    assert [r.split("|")[3].strip() for r in rows] == ["msh", "vtu"]
    columns = [c.strip() for c in header.strip("|").split("|")]
    for row in rows:
        cells = dict(zip(columns, (c.strip() for c in row.strip("|").split("|"))))
        # the audit found the planted elements: it exits 1, so the table row exists
        assert float(cells["audit s"]) > 0 and float(cells["bare read s"]) > 0
        assert float(cells["peak MB"]) > 0
        assert int(cells["not ok"]) >= len(distorted_plate(1000).info["planted"])
    assert "cores" in lines[0] and "numpy" in lines[0]
    # the audit the benchmark timed found every planted bad element (made by hand to be
    # invalid: reversed, bow-tie, collapsed, re-entrant; see the shapely test below)
    planted = distorted_plate(1000).info["planted"]
    for fmt in ("msh", "vtu"):
        report = json.loads((out / f"plate_1000.{fmt}.report.json").read_text())
        failing = {e["index"] for e in report["elements"] if e["verdict"] == "fail"}
        assert set(planted.values()) <= failing


def test_generated_plate_has_the_planted_defects():
    mesh = distorted_plate(2000, seed=3)
    nx, ny = grid_shape(2000)
    cells = mesh.cells_dict["quad"]
    assert nx * ny == 2000 and cells.shape == (2000, 4)
    pts = mesh.points[:, :2]
    polys = shapely.polygons(pts[cells])
    planted = mesh.info["planted"]
    assert set(planted) == set(PLANTED)
    moved = cells[planted["non-convex"], 2]
    spoiled = set(planted.values()) | set(np.flatnonzero((cells == moved).any(axis=1)).tolist())
    # shapely: every untouched element is a valid, convex, counter-clockwise polygon
    ok = np.array([i not in spoiled for i in range(len(cells))])
    assert shapely.is_valid(polys[ok]).all()
    assert (shapely.area(polys[ok]) > 0).all()
    assert np.allclose(shapely.area(shapely.convex_hull(polys[ok])), shapely.area(polys[ok]))
    assert shapely.is_ccw(shapely.get_exterior_ring(polys[ok])).all()
    # common practice: a bow-tie is not a valid polygon; a reversed one winds clockwise;
    # a collapsed one repeats a node; the pushed-in one is not convex
    assert not shapely.is_valid(polys[planted["bow-tie"]])
    assert not shapely.is_ccw(shapely.get_exterior_ring(polys[planted["reversed"]]))
    assert len(set(cells[planted["collapsed"]].tolist())) == 3
    concave = polys[planted["non-convex"]]
    assert shapely.area(shapely.convex_hull(concave)) > shapely.area(concave) * 1.01
