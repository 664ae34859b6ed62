"""Node checks: nodes no cell uses, and distinct nodes at (nearly) the same place."""

from __future__ import annotations

import itertools

import numpy as np

from ..elements import ElementMesh
from ..topology import CORNERS_PER_FAMILY

#: Direction the nodes are sorted along when looking for coincident pairs: irrational
#: ratios, so no row or column of a structured grid projects onto a single value.
_PROBE = np.array([1.0, 0.6180339887498949, 0.4142135623730950])
_PROBE = _PROBE / np.linalg.norm(_PROBE)


def orphan_nodes(mesh: ElementMesh) -> np.ndarray:
    """Indices (0-based, ascending) of nodes that no cell uses, audited or not."""
    used = mesh.used_nodes()
    used[mesh.other_nodes] = True
    return np.flatnonzero(~used)


def shortest_edge_at(points: np.ndarray, edge_nodes: np.ndarray) -> np.ndarray:
    """(n_points,) length of the shortest non-zero edge at each node (inf where none)."""
    lengths = np.linalg.norm(points[edge_nodes[:, 1]] - points[edge_nodes[:, 0]], axis=1)
    lengths[lengths == 0.0] = np.inf
    shortest = np.full(points.shape[0], np.inf)
    np.minimum.at(shortest, edge_nodes[:, 0], lengths)
    np.minimum.at(shortest, edge_nodes[:, 1], lengths)
    return shortest


def coincident_pairs(points: np.ndarray, nodes: np.ndarray, tolerance: np.ndarray) -> np.ndarray:
    """(k, 2) pairs (a < b) of ``nodes`` closer than the smaller of their ``tolerance``.

    ``tolerance`` is per node (n_points,), in length units. Sort-and-sweep: the nodes are
    sorted along one generic direction; two nodes within tolerance are within it along
    that direction too, so each node is compared only with the following nodes until
    the gap passes its own tolerance. Cost: one sort of the nodes plus the candidates.
    """
    if nodes.size < 2:
        return np.zeros((0, 2), dtype=np.int64)
    key = points[nodes] @ _PROBE
    order = np.argsort(key)  # ties may come in any order: the sweep takes equal keys
    sorted_nodes = nodes[order]
    sorted_key = key[order]
    tol = tolerance[sorted_nodes]
    n = sorted_nodes.size
    active = np.arange(n - 1)
    first, second = [], []
    step = 1
    while active.size:
        active = active[active + step < n]
        gap = sorted_key[active + step] - sorted_key[active]
        active = active[gap <= tol[active]]
        first.append(sorted_nodes[active])
        second.append(sorted_nodes[active + step])
        step += 1
    a, b = np.concatenate(first), np.concatenate(second)
    dist = np.linalg.norm(points[a] - points[b], axis=1)
    close = dist <= np.minimum(tolerance[a], tolerance[b])
    pairs = np.sort(np.stack([a[close], b[close]], axis=1), axis=1)
    return pairs[np.lexsort((pairs[:, 1], pairs[:, 0]))]


def drop_same_element(pairs: np.ndarray, mesh: ElementMesh) -> np.ndarray:
    """``pairs`` whose two nodes are not corners of one element: nodes of one element at
    the same place make a degenerate element (the element metrics report it), not an
    unmerged node. Only elements touching a paired node are looked at."""
    if pairs.size == 0:
        return pairs
    n = np.int64(mesh.n_points)
    paired = np.zeros(mesh.n_points, dtype=bool)
    paired[pairs] = True
    inside = []
    for block in mesh.blocks:
        corners = block.connectivity[:, : CORNERS_PER_FAMILY[block.family]]
        near = corners[paired[corners].any(axis=1)]
        for i, j in itertools.combinations(range(corners.shape[1]), 2):
            a, b = near[:, i], near[:, j]
            inside.append(np.minimum(a, b) * n + np.maximum(a, b))
    key = pairs[:, 0] * n + pairs[:, 1]
    return pairs[~np.isin(key, np.concatenate(inside))]
