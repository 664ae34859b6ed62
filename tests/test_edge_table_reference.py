"""The edge table against a brute-force reference: a plain Python dictionary of every
element side, keyed by its (smaller node, larger node), edges numbered in that order.

Outside reference: the definition of an edge table (common practice): each undirected
edge once, in lexicographic order of its two nodes, with how many element sides use it;
every side of every element mapped to its edge. Checked on hypothesis-generated meshes
(node numbers wide and narrow, so both the one-sort and the two-sort key paths run) and
on every bundled sample.
"""

from __future__ import annotations

from pathlib import Path

import meshio
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from meshaudit.mesh.reading import load
from meshaudit.mesh.topology import edge_table

SAMPLES = Path(__file__).resolve().parents[1] / "samples"


def brute_force_edges(cell_corners: list[list[int]]) -> tuple[list[tuple[int, int]], dict]:
    """(edges sorted by (low, high), {(element, local): edge number}) by dictionary."""
    sides = {}
    for e, corners in enumerate(cell_corners):
        k = len(corners)
        for i in range(k):
            a, b = corners[i], corners[(i + 1) % k]
            if a != b:
                sides[(e, i)] = (min(a, b), max(a, b))
    edges = sorted(set(sides.values()))
    number = {edge: i for i, edge in enumerate(edges)}
    return edges, {side: number[edge] for side, edge in sides.items()}


def check_against_reference(mesh: meshio.Mesh) -> None:
    elements = load(mesh)
    surface, _ = elements.surface_part()
    table = edge_table(surface)
    rows: list[list[int]] = [[] for _ in range(surface.n_elements)]
    for block in surface.blocks:
        k = block.cell.n_corners
        for index, corners in zip(block.index, block.connectivity[:, :k], strict=True):
            rows[int(index)] = [int(c) for c in corners]
    edges, side_edge = brute_force_edges(rows)
    assert [tuple(map(int, pair)) for pair in table.nodes] == edges
    got = {
        (int(e), int(loc)): int(g)
        for e, loc, g in zip(table.element, table.local, table.edge, strict=True)
    }
    assert got == side_edge
    counts = np.bincount(list(side_edge.values()), minlength=len(edges))
    assert table.uses.tolist() == counts.tolist()
    for s, t, e, loc in zip(table.start, table.end, table.element, table.local, strict=True):
        corners = rows[int(e)]
        assert (int(s), int(t)) == (corners[loc], corners[(loc + 1) % len(corners)])


@st.composite
def random_meshes(draw: st.DrawFn) -> meshio.Mesh:
    """Quads and triangles on a few nodes whose numbers are spread over a range as
    small as the node count or far wider (orphan nodes in between), shared at random,
    with repeated sides, collapsed sides and non-manifold edges among them."""
    used = draw(st.integers(4, 12))
    spread = draw(st.sampled_from([1, 7, 1000, 100_000]))
    n_points = used * spread
    quads = draw(st.lists(st.lists(st.integers(0, used - 1), min_size=4, max_size=4), max_size=8))
    tris = draw(st.lists(st.lists(st.integers(0, used - 1), min_size=3, max_size=3), max_size=8))
    if not quads and not tris:
        tris = [[0, 1, 2]]
    rng = np.random.default_rng(draw(st.integers(0, 2**16)))
    points = rng.random((n_points, 3))
    points[:, 2] = 0.0
    where = np.sort(rng.choice(n_points, size=used, replace=False))
    cells = []
    if quads:
        cells.append(("quad", where[np.array(quads)]))
    if tris:
        cells.append(("triangle", where[np.array(tris)]))
    return meshio.Mesh(points, cells)


@settings(max_examples=150, deadline=None)
@given(random_meshes())
def test_edge_table_matches_a_dictionary_of_sides(mesh):
    check_against_reference(mesh)


@pytest.mark.parametrize(
    "name", sorted(p.name for p in SAMPLES.iterdir() if p.suffix in (".msh", ".vtu"))
)
def test_edge_table_of_every_sample_matches_a_dictionary_of_sides(name):
    check_against_reference(meshio.read(SAMPLES / name))
