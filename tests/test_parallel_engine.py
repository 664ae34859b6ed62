"""The threaded engine gives the same report as the serial one, and the shortcuts the
mesh-level checks take agree with general-purpose references (shapely for polygon
intersections, numpy's own row sort)."""

from __future__ import annotations

import json
from pathlib import Path

import meshio
import numpy as np
import pytest
import shapely

from meshaudit import api
from meshaudit.engine import run as engine
from meshaudit.mesh.elements import ElementBlock, ElementMesh
from meshaudit.mesh.reading import load
from meshaudit.mesh_checks import duplicates, overlap
from meshaudit.outputs import json_report
from tests.finding_meshes import grid_points, grid_quads


def _big_planted_mesh() -> meshio.Mesh:
    """Two chunks' worth of quads (invented demo grid) with a reversed element, a
    dragged node (overlaps), a duplicated element and a strip of triangles."""
    nx, ny = 230, 160  # 36800 quads: more than one chunk of engine.CHUNK_SIZE
    rng = np.random.default_rng(7)
    pts = grid_points(nx, ny)
    pts[:, :2] += rng.uniform(-0.15, 0.15, (len(pts), 2))
    quads = grid_quads(nx, ny)
    quads[500] = quads[500][::-1]  # wound the other way
    pts[(nx + 1) * 80 + 100, :2] += (1.7, 0.4)  # dragged across its neighbours
    last = quads[-1]
    tris = np.array([[last[0], last[1], last[2]], [last[0], last[2], last[3]]])
    cells = [("quad", np.vstack([quads[:-1], quads[3]])), ("triangle", tris)]
    return meshio.Mesh(pts, cells)


def test_more_chunks_than_threads_same_report_as_one_thread():
    assert engine.CHUNK_SIZE < 36_800  # the mesh below must span several chunks
    elements = load(_big_planted_mesh())
    serial = engine.audit_elements(elements, workers=1)
    for workers in (2, 3):
        threaded = engine.audit_elements(elements, workers=workers)
        # byte-identical JSON: every metric, flag, breach order, finding and loop
        assert json_report.render(threaded, every_element=True) == json_report.render(
            serial, every_element=True
        )
    doc = json.loads(json_report.render(serial))
    kinds = {f["kind"] for f in doc["findings"]}
    # by construction: the planted defects are found at all
    assert {"inconsistent_winding", "duplicate_elements", "overlapping_elements"} <= kinds


def _random_convex_quads(rng: np.random.Generator, n: int) -> np.ndarray:
    """Quads with corners at increasing angles on ellipses around random centres:
    convex and counter-clockwise by construction, some touching, some apart."""
    angles = np.sort(rng.uniform(0, 2 * np.pi, (n, 4)), axis=1)
    radius = rng.uniform(0.3, 1.0, (n, 1))
    centre = rng.uniform(0, 3.0, (n, 1, 2))
    return centre + radius[..., None] * np.stack([np.cos(angles), np.sin(angles)], axis=-1)


@pytest.mark.parametrize("seed", [0, 1])
def test_separating_sides_never_hide_an_overlap_that_shapely_measures(seed):
    rng = np.random.default_rng(seed)
    corners = _random_convex_quads(rng, 400)
    # odd quads: the even one mirrored across its first side, so the two share that
    # side exactly, as neighbours in a mesh do (mirrored and reversed: still convex, CCW)
    a, b = corners[0::2, 0], corners[0::2, 1]
    along = (b - a) / np.linalg.norm(b - a, axis=1, keepdims=True)
    rel = corners[0::2] - a[:, None]
    mirrored = a[:, None] + 2 * (rel * along[:, None]).sum(-1, keepdims=True) * along[:, None] - rel
    mirrored[:, 0], mirrored[:, 1] = a, b
    corners[1::2] = mirrored[:, ::-1]
    points = np.column_stack([corners.reshape(-1, 2), np.zeros(1600)])
    conn = np.arange(1600).reshape(400, 4)
    mesh = ElementMesh(points, [ElementBlock("quad", conn, np.arange(1, 401), np.arange(400))])
    shapes = overlap.planar_shapes(mesh, np.eye(3)[:2])
    assert shapes.convex.all() and (shapes.sign == 1).all()  # by construction
    pairs = np.array([(i, j) for i in range(400) for j in range(i + 1, min(i + 12, 400))])
    apart = overlap.separated(mesh, shapes, pairs)
    polys = shapely.polygons(corners)
    common = shapely.area(shapely.intersection(polys[pairs[:, 0]], polys[pairs[:, 1]]))
    # shapely: a pair declared apart has no common area (beyond rounding) ...
    assert np.all(common[apart] < 1e-9)
    # ... and the test is not vacuous: both outcomes occur, neighbours included
    assert apart.sum() > 100 and (~apart).sum() > 100
    assert apart[np.flatnonzero(pairs[:, 1] == pairs[:, 0] + 1)[::2]].any()


def test_corner_sort_matches_numpy_row_sort():
    rng = np.random.default_rng(3)
    quads = rng.integers(0, 50, (500, 4))
    tris = rng.integers(0, 50, (300, 3))
    mesh = ElementMesh(
        np.zeros((50, 3)),
        [
            ElementBlock("quad", quads, np.arange(1, 501), np.arange(500)),
            ElementBlock("triangle", tris, np.arange(501, 801), np.arange(500, 800)),
        ],
    )
    got = duplicates.sorted_corners(mesh)
    assert np.array_equal(got[:500], np.sort(quads, axis=1))  # numpy's sort as reference
    assert np.array_equal(got[500:, 1:], np.sort(tris, axis=1))
    assert (got[500:, 0] == -1).all()


def test_all_findings_off_skips_the_mesh_checks_and_keeps_element_results(tmp_path):
    from meshaudit.judge.finding_kinds import KIND_NAMES

    profile = tmp_path / "elements_only.toml"
    lines = ['name = "elements-only"', 'extends = "standard"', "[findings]"]
    profile.write_text("\n".join(lines + [f'{k} = "off"' for k in KIND_NAMES]) + "\n")
    sample = Path(__file__).resolve().parents[1] / "samples" / "bracket_plate_defects.msh"
    full = api.audit(sample)
    bare = api.audit(sample, profile=profile)
    assert full.findings and not bare.findings  # the sample has a winding finding
    assert bare.free_edges is None
    for name, values in full.metrics.items():
        assert np.array_equal(values, bare.metrics[name], equal_nan=True), name
    assert np.array_equal(full.verdict, bare.verdict)
    doc = json.loads(json_report.render(bare))
    assert doc["findings"] == [] and doc["free_edge_loops"] == []


@pytest.mark.parametrize("dtype", [np.int32, np.int64, np.float64])
def test_unique_values_matches_numpy_unique(dtype):
    from meshaudit.arrays import unique_values

    rng = np.random.default_rng(5)
    for values in (rng.integers(-20, 20, 500).astype(dtype), np.zeros(0, dtype=dtype)):
        got = unique_values(values)
        assert got.dtype == values.dtype
        assert np.array_equal(got, np.unique(values))  # numpy's own as the reference
