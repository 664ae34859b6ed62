"""Edge adjacency and orientation groups (meshaudit.mesh.topology)."""

from __future__ import annotations

import meshio
import numpy as np
import pytest
import shapely

from meshaudit.mesh.reading import load
from meshaudit.mesh.topology import connected_labels, edge_table, flipped_elements


def grid(nx: int, ny: int, lift: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """A structured nx x ny grid of unit quads, counter-clockwise; z = lift * x * y."""
    xs, ys = np.meshgrid(np.arange(nx + 1.0), np.arange(ny + 1.0))
    pts = np.column_stack([xs.ravel(), ys.ravel(), lift * (xs * ys).ravel()])
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    a = (j * (nx + 1) + i).ravel()
    cells = np.column_stack([a, a + 1, a + nx + 2, a + nx + 1])
    return pts, cells


def test_edge_counts_of_a_grid_match_the_counting_formula():
    # Counting formula (common practice): an nx x ny grid has nx(ny+1) + ny(nx+1) edges,
    # 2(nx+ny) of them on the boundary.
    nx, ny = 5, 3
    pts, cells = grid(nx, ny)
    table = edge_table(load(meshio.Mesh(pts, [("quad", cells)])))
    assert table.n_edges == nx * (ny + 1) + ny * (nx + 1)
    assert int((table.uses == 1).sum()) == 2 * (nx + ny)
    assert int((table.uses > 2).sum()) == 0


def test_free_edges_trace_the_outline_shapely_draws():
    # Outside reference: shapely's union of the element polygons; its boundary length
    # equals the total length of the edges used once.
    pts, cells = grid(4, 3)
    cells = cells[[0, 1, 2, 3, 4, 6, 7, 8, 9, 10, 11]]  # a hole where element 5 was
    table = edge_table(load(meshio.Mesh(pts, [("quad", cells)])))
    free = table.nodes[table.uses == 1]
    free_length = np.linalg.norm(pts[free[:, 0]] - pts[free[:, 1]], axis=1).sum()
    outline = shapely.unary_union([shapely.Polygon(pts[c, :2]) for c in cells])
    assert free_length == pytest.approx(outline.boundary.length)


def test_connected_labels_finds_components():
    # Two paths 0-1-2 and 3-4 and an isolated vertex 5 (graph fact).
    lab = connected_labels(6, np.array([0, 1, 3]), np.array([1, 2, 4]))
    assert list(lab) == [0, 0, 0, 3, 3, 5]


def test_flipping_one_element_of_a_curved_shell_flags_that_element_only():
    # Fact of the trade: neighbours sharing an edge in the same direction disagree; the
    # odd one out in an otherwise consistent shell is the flipped element.
    pts, cells = grid(4, 4, lift=0.2)
    cells[6] = cells[6][::-1]
    groups = flipped_elements(load(meshio.Mesh(pts, [("quad", cells)])))
    assert np.flatnonzero(groups.flipped).tolist() == [6]
    assert not groups.twisted.any()


def test_two_separate_patches_are_judged_separately():
    # Each patch has its own orientation: a whole patch wound the other way is no clash.
    pts, cells = grid(3, 1)
    far = pts + np.array([10.0, 0.0, 0.0])
    cells2 = cells[:, ::-1] + len(pts)
    mesh = meshio.Mesh(np.vstack([pts, far]), [("quad", np.vstack([cells, cells2]))])
    groups = flipped_elements(load(mesh))
    assert not groups.flipped.any()
    assert groups.patch.tolist() == [0, 0, 0, 3, 3, 3]  # smallest element index of each


def test_a_moebius_band_cannot_be_oriented():
    # Topology fact: the Moebius band is non-orientable; a strip of quads with its ends
    # glued after a half twist must be reported as such, not as a flipped element.
    n = 12
    t = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    ring = []
    for s in (-0.3, 0.3):
        ring.append(
            np.column_stack(
                [
                    (1 + s * np.cos(t / 2)) * np.cos(t),
                    (1 + s * np.cos(t / 2)) * np.sin(t),
                    s * np.sin(t / 2),
                ]
            )
        )
    pts = np.vstack(ring)  # nodes 0..n-1 inner edge, n..2n-1 outer edge
    i = np.arange(n)
    cells = np.column_stack([i, (i + 1) % n, (i + 1) % n + n, i + n])
    cells[-1] = [n - 1, n, 0, 2 * n - 1]  # the half twist swaps the two rails
    groups = flipped_elements(load(meshio.Mesh(pts, [("quad", cells)])))
    assert groups.twisted.all()
    assert not groups.flipped.any()


@pytest.mark.parametrize("bound", [50, 2**62])
def test_unique_keys_agrees_with_numpy_unique(bound):
    # Reference: numpy.unique (both the packed-sort path and the argsort fallback).
    from meshaudit.mesh.topology import unique_keys

    rng = np.random.default_rng(3)
    key = rng.integers(0, 50, size=2000).astype(np.int64)
    uniq, inverse, counts = unique_keys(key, bound)
    ref = np.unique(key, return_inverse=True, return_counts=True)
    assert np.array_equal(uniq, ref[0])
    assert np.array_equal(inverse, ref[1].ravel())
    assert np.array_equal(counts, ref[2])


@pytest.mark.parametrize("bound", [37, 10**12, 2**50, 2**62])
def test_sort_keys_is_numpy_stable_argsort_for_any_key_width(bound):
    # numpy's stable argsort as the reference; wide bounds take the two-pass path that
    # node-pair keys of meshes with millions of nodes need
    from meshaudit.mesh.topology import sort_keys

    rng = np.random.default_rng(11)
    key = rng.integers(0, bound, 20_000)
    key[::5] = key[3]  # plenty of ties: their order must be the original order
    order, sorted_key = sort_keys(key, bound)
    reference = np.argsort(key, kind="stable")
    assert np.array_equal(order, reference)
    assert np.array_equal(sorted_key, key[reference])
