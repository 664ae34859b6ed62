"""The overlap check's box grid and pairs against brute-force references.

- The grid: for any subset of query elements, the pairs it hands out are exactly the
  pairs of boxes meeting with positive width on both axes, found by comparing every
  box with every other (numpy, all pairs): hypothesis-generated boxes of sizes over six
  orders of magnitude, a few huge ones among them, and random query subsets.
- The finding: on every planar sample (and the sample with planted defects moved so
  that two elements overlap), the overlapping pairs are those shapely finds comparing
  every element polygon with every other (common area above ``overlap_fraction`` of the
  smaller area, elements not sharing their node set).
"""

from __future__ import annotations

from pathlib import Path

import meshio
import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from meshaudit import audit
from meshaudit.mesh_checks import overlap
from tests.finding_meshes import boxes_meeting

SAMPLES = Path(__file__).resolve().parents[1] / "samples"


@st.composite
def boxes_and_queries(draw: st.DrawFn):
    n = draw(st.integers(2, 120))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    low = rng.uniform(0, 100, size=(n, 2))
    side = 10.0 ** rng.uniform(-3, draw(st.sampled_from([0.5, 1.5, 2.5])), size=(n, 2))
    boxes = np.hstack([low, low + side])
    around = np.flatnonzero(rng.random(n) < draw(st.sampled_from([0.05, 0.3, 1.0])))
    return boxes, around


@settings(max_examples=150, deadline=None)
@given(boxes_and_queries())
def test_grid_pairs_of_any_query_subset_match_all_pairs_brute_force(case):
    boxes, around = case
    grid = overlap.BoxGrid.build(boxes)
    got = {tuple(p) for p in grid.pairs_near(around).tolist()}
    meet = boxes_meeting(boxes, 1e-9 * grid.h)
    asked = np.zeros(len(boxes), dtype=bool)
    asked[around] = True
    meet &= asked[:, None]
    expected = {(int(a), int(b)) for a, b in zip(*np.nonzero(meet), strict=True)}
    assert got == expected


def shapely_overlaps(mesh: meshio.Mesh, fraction: float = 1e-3) -> set[tuple[int, int]]:
    """Pairs (by position among the quads and triangles) whose polygons share more
    than ``fraction`` of the smaller area, their node sets differing: every pair (a
    polygon crossing itself is taken as shapely's ``make_valid`` repairs it)."""
    rows = [c for block in mesh.cells if block.type in ("quad", "triangle") for c in block.data]
    polys = [shapely.make_valid(shapely.Polygon(mesh.points[r, :2])) for r in rows]
    out = set()
    for i in range(len(polys)):
        for j in range(i + 1, len(polys)):
            if set(rows[i]) == set(rows[j]):
                continue
            common = polys[i].intersection(polys[j]).area
            if common > fraction * min(polys[i].area, polys[j].area) > 0:
                out.add((i, j))
    return out


def planar_samples() -> list[str]:
    return ["bracket_plate.msh", "bracket_plate_defects.msh"]


@pytest.mark.parametrize("name", planar_samples())
@pytest.mark.parametrize("pushed", [False, True])
def test_overlapping_pairs_of_the_samples_match_shapely_all_pairs(name, pushed):
    mesh = meshio.read(SAMPLES / name)
    quads = next(b for b in mesh.cells if b.type == "quad").data
    if pushed:  # move one interior node far over its neighbours: overlaps by construction
        used = np.bincount(quads.ravel(), minlength=len(mesh.points))
        node = int(np.flatnonzero(used == 4)[len(np.flatnonzero(used == 4)) // 2])
        around = quads[(quads == node).any(axis=1)]
        spread = np.ptp(mesh.points[around.ravel(), :2], axis=0)
        mesh.points[node, :2] += 0.8 * spread
    report = audit(mesh)
    want = shapely_overlaps(mesh)
    found = [f for f in report.findings if f.kind == "overlapping_elements"]
    got = set()
    if found:
        position = {int(i): k for k, i in enumerate(report.ids)}
        pairs = [(position[int(a)], position[int(b)]) for a, b in found[0].pairs]
        got = {(min(a, b), max(a, b)) for a, b in pairs}
    if pushed:
        assert want  # the moved node makes elements overlap
    assert got == want
