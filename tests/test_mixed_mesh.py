"""A mesh with quad, quad8, quad9, triangle and triangle6 blocks audits in one run.

Checks the reports against one another and against outside facts: shapely's polygon
area for the straight-sided elements, the quarter-point rule (Henshell and Shaw 1975;
Barsoum 1976) for the element built that way, and a negative det J (Jacobian sign
convention, common practice) for the one pulled past the quarter point.
"""

from __future__ import annotations

import csv
import io
import json

import meshio
import numpy as np
import pytest
import shapely

from meshaudit import audit

CORNERS = {"quad": 4, "quad8": 4, "quad9": 4, "triangle": 3, "triangle6": 3}
NODE_COUNT = {"quad": 4, "quad8": 8, "quad9": 9, "triangle": 3, "triangle6": 6}


def element(cell_type: str, corners: np.ndarray) -> np.ndarray:
    """Nodes of a straight-sided element of ``cell_type`` on the given corners."""
    k = CORNERS[cell_type]
    mids = (corners + np.roll(corners, -1, axis=0)) / 2.0
    nodes = [corners]
    if NODE_COUNT[cell_type] > k:
        nodes.append(mids)
    if cell_type == "quad9":
        nodes.append(corners.mean(axis=0, keepdims=True))
    return np.vstack(nodes)


def bracket_strip() -> tuple[meshio.Mesh, dict[str, list[int]]]:
    """A row of elements of every type (invented 'bracket plate' strip), 3 per type.

    In the quad8 block the 2nd element has a quarter-point midside node and the 3rd a
    node pulled past it. Returns the mesh and the element positions per type.
    """
    points, cells, where, pos = [], [], {}, 0
    x0 = 0.0
    for cell_type in ("quad", "quad8", "quad9", "triangle", "triangle6"):
        conn = []
        for j in range(3):
            c = np.array([[x0, 0.0], [x0 + 1.0, 0.1 * j], [x0 + 1.1, 1.0], [x0, 0.9]])
            c = c[: CORNERS[cell_type]]
            nodes = element(cell_type, c)
            if cell_type == "quad8" and j == 1:
                nodes[4] = c[0] + 0.25 * (c[1] - c[0])
            if cell_type == "quad8" and j == 2:
                nodes[4] = c[0] + 0.2 * (c[1] - c[0])
            start = sum(len(p) for p in points)
            points.append(nodes)
            conn.append(list(range(start, start + len(nodes))))
            x0 += 1.5
        cells.append((cell_type, conn))
        where[cell_type] = list(range(pos, pos + 3))
        pos += 3
    return meshio.Mesh(np.vstack(points), cells), where


def test_every_type_audits_in_one_run_with_the_right_verdicts():
    mesh, where = bracket_strip()
    report = audit(mesh)
    assert report.summary.element_counts == dict.fromkeys(CORNERS, 3)
    assert list(report.types) == [t for t in CORNERS for _ in range(3)]
    # Quarter point: det J = 0 at the corner, reported as a warning.
    qp = where["quad8"][1]
    assert "quarter_point" in report.flags_of(qp) and report.verdict_names[qp] == "warn"
    # Past it: det J < 0 at the corner, the element fails and so does the mesh.
    past = where["quad8"][2]
    assert report.metrics["det_j_corner_min"][past] < 0.0
    assert report.verdict_names[past] == "fail" and not report.passed
    # Midside metrics are defined for quadratic elements only.
    quadratic = np.isin(report.types, ["quad8", "quad9", "triangle6"])
    assert np.all(np.isnan(report.metrics["midside_offset_along"][~quadratic]))
    assert np.all(np.isfinite(report.metrics["midside_offset_along"][quadratic]))


def test_straight_sided_areas_match_shapely():
    # Outside reference: shapely's polygon area of the corners (straight edges).
    mesh, where = bracket_strip()
    report = audit(mesh)
    for cell_type, rows in where.items():
        for block_row, i in enumerate(rows):
            if cell_type == "quad8" and block_row == 2:
                continue  # folded past the quarter point: |det J| counts the fold twice
            conn = next(b for b in mesh.cells if b.type == cell_type).data[block_row]
            corners = mesh.points[conn[: CORNERS[cell_type]], :2]
            expected = shapely.Polygon(corners).area
            assert report.metrics["area"][i] == pytest.approx(expected, rel=1e-12)


def test_json_csv_and_terminal_reports_agree(tmp_path, run_cli):
    mesh, where = bracket_strip()
    path = tmp_path / "bracket_strip.vtu"
    meshio.write(path, mesh)
    js, cs = tmp_path / "r.json", tmp_path / "r.csv"
    done = run_cli("check", path, "--json", js, "--csv", cs, "--all")
    assert done.returncode == 1, done.stderr  # one element fails
    doc = json.loads(js.read_text())
    rows = list(csv.DictReader(io.StringIO(cs.read_text())))
    assert doc["summary"]["elements_by_type"] == dict.fromkeys(CORNERS, 3)
    assert len(rows) == len(doc["elements"]) == 15
    for rec, row in zip(doc["elements"], rows):
        assert rec["type"] == row["type"] and rec["verdict"] == row["verdict"]
        assert set(rec["flags"]) == set(filter(None, row["flags"].split(";")))
        along = rec["metrics"]["midside_offset_along"]
        assert (along is None) == (row["midside_offset_along"] == "")
    assert doc["flag_counts"]["quarter_point"] == 1
    qp = where["quad8"][1]
    assert "quarter_point" in doc["elements"][qp]["flags"]
    assert "quarter_point" in done.stdout
    assert "quad8" in done.stdout and "triangle6" in done.stdout
