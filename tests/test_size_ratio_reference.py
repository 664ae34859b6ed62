"""size_ratio against a brute-force reference: for every element, every other element
sharing one of its edges (Python sets over the element sides), the largest
max(h_e, h_n) / min(h_e, h_n), an element left out (not counted) still reading its
neighbours against its own h, and 1 with no counted neighbour.

Outside reference: the definition of the size ratio between neighbours (common
practice). Checked on hypothesis-generated meshes (shared, free and non-manifold edges,
random sizes with zeros and left-out elements), with the blocks made tiny so that an
element's uses fall in several blocks, and with the side table's first/last uses both
given and worked out from position sums.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from meshaudit.mesh import neighbours
from meshaudit.mesh.elements import ElementBlock, ElementMesh
from meshaudit.mesh.topology import edge_table


def brute_force(corners: list[list[int]], h: np.ndarray, counted: np.ndarray) -> np.ndarray:
    sides: dict[tuple[int, int], set[int]] = {}
    for e, row in enumerate(corners):
        for i in range(len(row)):
            a, b = row[i], row[(i + 1) % len(row)]
            if a != b:
                sides.setdefault((min(a, b), max(a, b)), set()).add(e)
    out = np.ones(len(corners))
    for users in sides.values():
        for e in users:
            for other in users - {e}:
                if not counted[other]:
                    continue
                with np.errstate(divide="ignore", invalid="ignore"):
                    r = max(h[e] / h[other], h[other] / h[e])
                out[e] = max(out[e], r)
    return out


@st.composite
def cases(draw: st.DrawFn):
    n_nodes = draw(st.integers(3, 9))
    tris = draw(st.lists(st.lists(st.integers(0, n_nodes - 1), min_size=3, max_size=3), min_size=1))
    h = np.array(
        draw(
            st.lists(
                st.sampled_from([0.0, 0.5, 1.0, 2.0, 3.0, 7.0]),
                min_size=len(tris),
                max_size=len(tris),
            )
        )
    )
    counted = np.array(draw(st.lists(st.booleans(), min_size=len(tris), max_size=len(tris))))
    block = draw(st.sampled_from([1, 2, 3, 5, 1 << 18]))
    known = draw(st.booleans())
    return tris, h, counted, block, known


@settings(max_examples=200, deadline=None)
@given(cases())
def test_size_ratio_matches_brute_force(case):
    tris, h, counted, block, known = case
    conn = np.array(tris, dtype=np.int64)
    n = len(tris)
    mesh = ElementMesh(
        points=np.zeros((int(conn.max()) + 1, 3)),
        blocks=[ElementBlock("triangle", conn, np.arange(n), np.arange(n))],
    )
    table = edge_table(mesh)
    if not known:
        table = replace(table, first=None, last=None)
    old = neighbours.BLOCK
    neighbours.BLOCK = block
    try:
        got = neighbours.size_ratio(h, [neighbours.edge_groups(table, None)], counted)
    finally:
        neighbours.BLOCK = old
    want = brute_force(tris, h, counted)
    np.testing.assert_array_equal(got, want)


def test_judged_in_tiny_blocks_a_graded_strip_reads_the_closed_form(monkeypatch):
    # Closed form (common practice): a strip of unit-high quads whose widths double
    # from one to the next has h = sqrt(width), so each element reads sqrt(2) against
    # a neighbour; the two ends have one neighbour, the others two. Judged and
    # compared in blocks of 2 elements / 3 uses, so every block boundary is crossed.
    import meshio

    from meshaudit import audit
    from meshaudit.engine import size_pass

    monkeypatch.setattr(size_pass, "BLOCK", 2)
    monkeypatch.setattr(neighbours, "BLOCK", 3)
    widths = 2.0 ** np.arange(9)
    x = np.concatenate([[0.0], np.cumsum(widths)])
    pts = np.array([[xi, y, 0.0] for y in (0.0, 1.0) for xi in x])
    n = widths.size
    quads = np.array([[i, i + 1, n + 2 + i, n + 1 + i] for i in range(n)])
    report = audit(meshio.Mesh(pts, [("quad", quads)]))
    np.testing.assert_allclose(report.metrics["size_ratio"], np.sqrt(2.0), rtol=1e-12)


def test_judged_in_tiny_blocks_every_element_of_a_steep_strip_fails(monkeypatch):
    # The same strip, each width (1.5 f)^2 times the last (f the profile's fail limit):
    # every element reads 1.5 f against a neighbour, past the fail limit, so every
    # element's size_ratio breach level is 2 (fail), block after block.
    import meshio

    from meshaudit import audit
    from meshaudit.engine import size_pass
    from meshaudit.judge.profiles import load_profile

    monkeypatch.setattr(size_pass, "BLOCK", 2)
    monkeypatch.setattr(neighbours, "BLOCK", 3)
    fail = load_profile(None).limit("quad", "size_ratio").fail
    widths = (1.5 * fail) ** (2.0 * np.arange(7))
    x = np.concatenate([[0.0], np.cumsum(widths)])
    pts = np.array([[xi, y, 0.0] for y in (0.0, 1.0) for xi in x])
    n = widths.size
    quads = np.array([[i, i + 1, n + 2 + i, n + 1 + i] for i in range(n)])
    report = audit(meshio.Mesh(pts, [("quad", quads)]))
    np.testing.assert_allclose(report.metrics["size_ratio"], 1.5 * fail, rtol=1e-9)
    assert report.levels["size_ratio"].tolist() == [2] * n
    assert report.verdict_counts()["fail"] == n
