"""``--restore-outline``: outline nodes put back on the outline their neighbours continue.

Outside references: closed forms (the corner of a rectangle is where its two straight sides
meet; a node on a straight side lies on the line through its neighbours; a circle of
radius R), shapely (the orthogonal projection of a point onto a line, the polygon area and
validity of the restored plate), and the planted-defects sample's own table of what was
moved (samples/make_samples.py: plate corners (0, 0), (0, 60) and (120, 0)).
"""

from __future__ import annotations

import re
import subprocess
import sys

import meshio
import numpy as np
import pytest
from conftest import REPO, SAMPLES
from hypothesis import given, settings
from hypothesis import strategies as st
from repair_meshes import grid, outline, quad_mesh
from shapely.geometry import LineString, Point, Polygon

import meshaudit
from meshaudit.errors import InputError
from meshaudit.repair import RepairOptions
from meshaudit.repair import outline as ol

DEFECTS = SAMPLES / "bracket_plate_defects.msh"


def _corner_dragged(nx: int = 6, ny: int = 4) -> tuple[np.ndarray, np.ndarray, int]:
    points, quads = grid(nx, ny)
    points = points.astype(float)
    corner = nx  # node (nx, 0): the bottom-right corner of the plate
    points[corner] = [nx - 0.7, 0.7]  # dragged inward: its quad turns non-convex
    return points, quads, corner


def test_dragged_corner_goes_back_where_the_sides_meet():
    points, quads, corner = _corner_dragged()
    truth = np.array([6.0, 0.0])  # closed form: the sides y = 0 and x = 6 meet there
    before = meshaudit.audit(quad_mesh(points, quads))
    assert not before.passed
    result = meshaudit.fix(quad_mesh(points, quads), options=RepairOptions(restore=(corner,)))
    out = result.mesh.points
    np.testing.assert_allclose(out[corner, :2], truth, atol=1e-12)
    assert result.after.passed
    assert list(result.done["restored"]) == [corner]
    # every other outline node stays to the bit
    others = outline(points)
    others[corner] = False
    assert np.array_equal(out[others, :2], points[others])
    # shapely: the plate is a rectangle again, 6 x 4
    ring = out[[0, 6, 34, 28], :2]
    assert Polygon(ring).area == pytest.approx(24.0)


def test_node_off_a_straight_side_goes_to_its_projection():
    points, quads = grid(6, 4)
    points = points.astype(float)
    node = 3  # (3, 0), the middle of the bottom side
    points[node] = [3.2, 0.3]
    result = meshaudit.fix(quad_mesh(points, quads), options=RepairOptions(restore=(node,)))
    side = LineString([(0, 0), (6, 0)])
    expected = side.interpolate(side.project(Point(3.2, 0.3)))  # shapely: the projection
    np.testing.assert_allclose(result.mesh.points[node, :2], [expected.x, expected.y], atol=1e-12)


def _ring(n: int, radius: float = 10.0, width: float = 2.0) -> tuple[np.ndarray, np.ndarray]:
    """A ring of n quads between radius and radius + width (inner nodes first)."""
    t = np.linspace(0.0, 2 * np.pi, n, endpoint=False)
    inner = np.column_stack([radius * np.cos(t), radius * np.sin(t)])
    outer = (radius + width) / radius * inner
    points = np.vstack([inner, outer])
    i = np.arange(n)
    quads = np.column_stack([i, (i + 1) % n, n + (i + 1) % n, n + i])
    return points, quads


def test_node_off_a_circle_comes_back_close_to_the_circle():
    points, quads = _ring(32)
    radius, node = 10.0, 5
    h = 2 * np.pi * radius / 32
    pushed = points.copy()
    pushed[node] *= 1.1  # 1 unit off the circle, radially outward
    nb = ol.outline_neighbours(len(pushed), [("quad", quads)])
    x = ol.restore(pushed[:, [0, 1]].copy(), [("quad", quads)], np.array([node]), np.arange(64))
    r = np.linalg.norm(x[node])
    # closed form: the interpolating cubic lies within O(h^4 / R^3) of a circle of radius R
    assert abs(r - radius) < h**4 / radius**3
    assert abs(r - radius) < 0.01 * abs(np.linalg.norm(pushed[node]) - radius)
    assert sorted(nb[node]) == [4, 6]
    # the outline nodes in place are where their neighbours put them: none stands out
    assert not ol.astray(points, [("quad", quads)]).any()


def test_the_dragged_node_is_the_one_named():
    points, quads, corner = _corner_dragged()
    astray = ol.astray(np.column_stack([points, np.zeros(len(points))]), [("quad", quads)])
    assert np.flatnonzero(astray).tolist() == [corner]
    result = meshaudit.fix(quad_mesh(points, quads))
    assert not result.after.passed
    (why,) = result.remaining.values()
    assert f"--restore-outline {corner} puts it back" in why


def test_regular_polygon_corners_are_not_named():
    # closed form: every corner of a regular octagon is equally far from where its
    # neighbours' edges put it, so none stands out
    t = np.linspace(0.0, 2 * np.pi, 8, endpoint=False)
    inner = np.column_stack([np.cos(t), np.sin(t)])
    points = np.vstack([inner, 2 * inner])
    i = np.arange(8)
    quads = np.column_stack([i, (i + 1) % 8, 8 + (i + 1) % 8, 8 + i])
    assert not ol.astray(points, [("quad", quads)]).any()


def test_planted_defects_sample_is_restored_and_passes(tmp_path):
    # samples/make_samples.py: the three plate corners (0, 0), (0, 60), (120, 0) were moved
    raw = meshio.read(DEFECTS)
    result = meshaudit.fix(DEFECTS)
    named = sorted(
        int(n)
        for why in result.remaining.values()
        for group in re.findall(r"--restore-outline ([\d,]+)", why)
        for n in group.split(",")
    )
    corners = [(0.0, 0.0), (0.0, 60.0), (120.0, 0.0)]
    assert len(named) == 3
    fixed = meshaudit.fix(DEFECTS, options=RepairOptions(restore=tuple(named)))
    assert fixed.after.passed
    out = fixed.mesh.points[:, :2]
    for p in corners:
        assert np.min(np.linalg.norm(out - p, axis=1)) < 1e-12  # exactly back
    # the restored nodes are the ones the file had moved, and nothing else on the outline
    moved = np.flatnonzero(np.any(out != raw.points[:, :2], axis=1))
    assert len(moved) == 3
    path = tmp_path / "fixed.msh"
    meshio.write(path, fixed.mesh, "gmsh")
    assert meshaudit.audit(path).passed


@pytest.mark.parametrize(
    "numbers, words",
    [
        ("200", "not on an outline"),
        ("9999", "no node of that number"),
        ("44,45", "restore one of them at a time"),
        ("x", "node numbers separated by commas"),
    ],
)
def test_bad_restore_is_one_line_and_status_2(numbers, words):
    res = subprocess.run(
        [sys.executable, "-m", "meshaudit", "fix", str(DEFECTS), "--restore-outline", numbers],
        capture_output=True,
        text=True,
        cwd=REPO,
    )
    assert res.returncode == 2
    assert words in res.stderr and "Traceback" not in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1


def test_solid_nodes_cannot_be_restored():
    from repair_meshes import hex_block

    points, hexes = hex_block(2)
    mesh = meshio.Mesh(points, [("hexahedron", hexes)])
    with pytest.raises(InputError, match="not on an outline"):
        meshaudit.fix(mesh, options=RepairOptions(restore=(0,)))


@settings(max_examples=60, deadline=None)
@given(
    nx=st.integers(3, 7),
    ny=st.integers(3, 7),
    pick=st.integers(0, 10_000),
    dx=st.floats(-0.4, 0.4),
    dy=st.floats(-0.4, 0.4),
)
def test_any_outline_node_of_a_rectangle_goes_back_onto_its_side(nx, ny, pick, dx, dy):
    # Closed form: a rectangle's outline is four straight sides; a corner goes back to
    # where its two sides meet, any other outline node onto its own side's line.
    points, quads = grid(nx, ny)
    points = points.astype(float)
    ring = np.flatnonzero(outline(points))
    node = int(ring[pick % len(ring)])
    home = points[node].copy()
    moved = points.copy()
    moved[node] += [dx, dy]
    x = ol.restore(moved, [("quad", quads)], np.array([node]), np.arange(len(points)))
    on_x = home[0] in (0.0, nx)
    on_y = home[1] in (0.0, ny)
    if on_x and on_y:
        np.testing.assert_allclose(x[node], home, atol=1e-12)
    elif on_x:
        assert abs(x[node, 0] - home[0]) < 1e-12
    else:
        assert abs(x[node, 1] - home[1]) < 1e-12
    others = np.arange(len(points)) != node
    assert np.array_equal(x[others], moved[others])
