"""int32 and int64 index arrays in the edge table give the same findings.

The edge table stores node and element numbers as int32 when the mesh is small enough
(half the memory at a million elements) and as int64 otherwise. The findings each path
gives are checked against outside references in test_findings.py (by-construction
defects, shapely overlaps); here the same defect meshes are audited with the int32
limit forced to zero, so every array is int64, and the two reports must agree exactly.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest

from meshaudit import audit
from meshaudit.mesh import topology
from meshaudit.mesh.reading import load
from tests.finding_meshes import NX, NY, grid_points, grid_quads, node, with_crack


def crack_mesh() -> meshio.Mesh:
    return with_crack(2, 4)[0]


def layered_mesh() -> meshio.Mesh:
    # By construction: two triangles on the corners of quad (2, 1) overlap it and give
    # its four edges a third element; a repeated quad is a duplicate element.
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    q = quads[1 * NX + 2]
    tris = np.array([q[[0, 1, 2]], q[[0, 2, 3]]])
    return meshio.Mesh(pts, [("quad", np.vstack([quads, quads[:1]])), ("triangle", tris)])


def shell_mesh() -> meshio.Mesh:
    # By construction: a curved shell with one quad reversed and a fin on one edge.
    pts = grid_points(NX, NY)
    pts3 = np.column_stack([pts, 0.2 * pts[:, 0] * pts[:, 1]])
    quads = grid_quads(NX, NY)
    quads[1 * NX + 3] = quads[1 * NX + 3][::-1]
    apex = len(pts3)
    pts3 = np.vstack([pts3, [[2.5, 2.0, 3.0]]])
    fin = [[node(2, 2), node(3, 2), apex]]
    return meshio.Mesh(pts3, [("quad", quads), ("triangle", fin)])


def summary(report) -> list:
    rows = [
        (
            f.kind,
            f.count,
            f.element_ids.tolist(),
            f.node_ids.tolist(),
            f.pairs.tolist(),
            f.edges.tolist(),
            f.message,
        )
        for f in report.findings
    ]
    free = report.free_edges
    rows.append((free.nodes.tolist(), free.element.tolist(), free.loop.tolist(), free.loops()))
    rows.append(report.flag_bits.tolist())
    return rows


@pytest.mark.parametrize("make", [crack_mesh, layered_mesh, shell_mesh])
def test_int32_and_int64_edge_tables_give_identical_findings(make, monkeypatch):
    narrow = topology.edge_table(load(make()))
    narrow_report = audit(make())
    monkeypatch.setattr(topology, "INT32_LIMIT", -1)
    wide = topology.edge_table(load(make()))
    assert narrow.start.dtype == np.int32 and narrow.element.dtype == np.int32
    assert wide.start.dtype == np.int64 and wide.element.dtype == np.int64
    wide_report = audit(make())
    assert narrow_report.findings  # every mesh here has defects to compare
    assert summary(wide_report) == summary(narrow_report)
    for report in (wide_report, narrow_report):
        assert report.free_edges.nodes.dtype == np.int64
        assert report.free_edges.element.dtype == np.int64
        assert all(f.element_index.dtype == np.int64 for f in report.findings)
