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

from benchmarks.meshgen import PLANTED, distorted_block, distorted_plate, grid_shape
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


def test_benchmark_of_solids_writes_its_rows(tmp_path):
    env = dict(os.environ, PYTHONPATH=str(REPO))
    out, table = tmp_path / "bench", tmp_path / "table.md"
    argv = [sys.executable, "-m", "benchmarks.run", "--cells", "tetra,hexahedron"]
    argv += ["--sizes", "1500", "--out", str(out), "--markdown", str(table), "--no-plot"]
    done = subprocess.run(argv, cwd=REPO, env=env, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    rows = [line for line in table.read_text().splitlines() if line.startswith("| 1,500 |")]
    cells = [(r.split("|")[3].strip(), r.split("|")[4].strip()) for r in rows]
    expected = [("msh", "tetra"), ("vtu", "tetra"), ("msh", "hexahedron"), ("vtu", "hexahedron")]
    assert cells == expected
    # the audit the benchmark timed found the planted elements
    for cell in ("tetra", "hexahedron"):
        planted = distorted_block(1500, cell).info["planted"]
        for fmt in ("msh", "vtu"):
            doc = json.loads((out / f"block_{cell}_1500.{fmt}.report.json").read_text())
            flags = {e["index"]: set(e["flags"]) for e in doc["elements"]}
            assert "inverted" in flags[planted["inverted"]]
            assert "degenerate" in flags[planted["degenerate"]]


def _corner_determinants(p: np.ndarray, cells: np.ndarray, triples: list) -> np.ndarray:
    """det[a, b, c] of the edges from each corner to the three corners listed (n, c)."""
    out = []
    for corner, *far in triples:
        a, b, c = (p[cells[:, f]] - p[cells[:, corner]] for f in far)
        out.append(np.einsum("ij,ij->i", np.cross(a, b), c))
    return np.stack(out, axis=1)


def test_generated_block_fills_the_block_with_valid_solids():
    # Closed form: the block is 200 x 120 x 40 mm = 960,000 mm^3; the cubes' cut into
    # six tetrahedra fills it once, so the tetrahedra's volumes (numpy's determinants,
    # |det| / 6) add up to it. Every element but the planted two is positively oriented:
    # its corner determinants (the three edges leaving a corner, right-handed in meshio's
    # order: common practice) are positive.
    hex_triples = [[0, 1, 3, 4], [1, 2, 0, 5], [2, 3, 1, 6], [3, 0, 2, 7]]
    hex_triples += [[4, 7, 5, 0], [5, 4, 6, 1], [6, 5, 7, 2], [7, 6, 4, 3]]
    for cell, triples in (("tetra", [[0, 1, 2, 3]]), ("hexahedron", hex_triples)):
        mesh = distorted_block(3000, cell)
        nx, ny, nz = mesh.info["grid"]
        cells = mesh.cells_dict[cell]
        assert len(cells) == nx * ny * nz * (6 if cell == "tetra" else 1)
        planted = list(mesh.info["planted"].values())
        keep = np.ones(len(cells), dtype=bool)
        keep[planted] = False
        det = _corner_determinants(mesh.points, cells, triples)
        assert (det[keep] > 0.0).all()
        assert (det[planted[0]] < 0.0).all()  # mirrored: negative at every corner
        if cell == "tetra":
            original = cells.copy()
            original[planted[0]] = original[planted[0]][[0, 2, 1, 3]]
            volume = np.abs(_corner_determinants(mesh.points, original, triples))[:, 0] / 6.0
            volume[planted[1]] = 0.0  # collapsed: its share is missing
            assert volume.sum() < 960_000.0 < volume.sum() + 2.0 * volume.max()
