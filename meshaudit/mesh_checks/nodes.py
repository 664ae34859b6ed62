"""Node checks: nodes no cell uses, and distinct nodes at (nearly) the same place.

Distinct nodes at one place are grouped into *clusters*: the connected groups of the
relation "closer than the smaller of the two nodes' tolerances". Each cluster is told by
its *representative*, its smallest node index, so everything downstream (cracks,
hanging nodes) maps a node to its place with one array lookup, and a pile of k nodes at
one point costs k, not k^2: exactly coincident nodes are grouped by sorting their
coordinates, and only distinct places are compared with one another.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..arrays import unique_values
from ..mesh.elements import ElementMesh
from ..mesh.topology import connected_labels
from . import budget

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


#: Nodes looked at per block by :func:`near_anchors` (temporaries of a few MB).
BLOCK = 1 << 18


def near_anchors(
    points: np.ndarray, nodes: np.ndarray, anchors: np.ndarray, bound: float
) -> np.ndarray:
    """The nodes of the mask ``nodes`` (n_points,) that may lie within ``bound`` of one of
    the ``anchors`` (indices into ``points``): those whose position along the sweep's
    direction is within ``bound`` of an anchor's (a necessary condition, the direction
    being a unit vector). Returns node indices, ascending.

    How, with no sort of every node: the anchors' positions are marked in a table of
    cells at least ``bound`` wide (about 64 per anchor), each mark spread to the cells
    beside it, so a node within ``bound`` of an anchor lies in a marked cell; a node in
    a marked cell is then checked by a binary search among the anchors' sorted
    positions. Nodes are read block by block (:data:`BLOCK`), contiguous rows."""
    if anchors.size == 0:
        return np.zeros(0, dtype=np.int64)
    fixed = np.sort(points[anchors] @ _PROBE)
    low = float(fixed[0]) - bound
    high = float(fixed[-1]) + bound
    count = int(min(64 * fixed.size + 16, 1 << 26))
    width = max((high - low) / count, bound, np.finfo(float).tiny)
    count = int(np.floor((high - low) / width)) + 1
    marked = np.zeros(count + 2, dtype=bool)
    cell = np.floor((fixed - low) / width).astype(np.int64) + 1
    marked[cell - 1] = True
    marked[cell] = True
    marked[np.minimum(cell + 1, count + 1)] = True
    out = [np.zeros(0, dtype=np.int64)]
    for start in range(0, nodes.size, BLOCK):
        block = slice(start, start + BLOCK)
        key = points[block] @ _PROBE  # contiguous rows: no gather
        where = (key - low) / width
        inside = (where >= 0.0) & (where < count)
        spot = np.where(inside, where, -1.0).astype(np.int64) + 1
        maybe = np.flatnonzero(marked[spot] & inside & nodes[block])
        if maybe.size == 0:
            continue
        key = key[maybe]
        at = np.searchsorted(fixed, key)
        above = fixed[np.minimum(at, fixed.size - 1)]
        below = fixed[np.maximum(at - 1, 0)]
        near = np.abs(above - key) <= bound
        near |= np.abs(key - below) <= bound
        maybe += start
        out.append(maybe[near])
    return np.concatenate(out)


@dataclass(frozen=True)
class NodeClusters:
    """Distinct nodes at one place, grouped.

    ``rep`` (n_points,): each node's representative, the smallest node index of its
    cluster (the node itself when it is in none). ``members`` (m,): the nodes in some
    cluster, ascending (representatives included).
    """

    rep: np.ndarray
    members: np.ndarray

    @staticmethod
    def none(n_points: int) -> NodeClusters:
        return NodeClusters(np.arange(n_points, dtype=np.int64), np.zeros(0, dtype=np.int64))

    @property
    def count(self) -> int:
        """Number of clusters."""
        return int(np.count_nonzero(self.rep[self.members] == self.members))

    @property
    def pairs(self) -> np.ndarray:
        """(m - count, 2) rows (representative, node), one per node of a cluster other
        than its representative (k - 1 rows for a cluster of k), ascending."""
        others = self.members[self.rep[self.members] != self.members]
        pairs = np.stack([self.rep[others], others], axis=1)
        return pairs[np.lexsort((pairs[:, 1], pairs[:, 0]))]


def coincident_clusters(
    points: np.ndarray,
    nodes: np.ndarray,
    bound: float,
    local: Callable[[np.ndarray], np.ndarray],
    keys: tuple[str, ...] = ("coincident_nodes",),
) -> NodeClusters:
    """Cluster ``nodes`` (indices into ``points``): two nodes are at one place when they
    are closer than the smaller of their tolerances, and clusters are the connected
    groups of that relation.

    ``bound`` is a length no node's tolerance exceeds; ``local(idx)`` returns the
    tolerances (length units) of nodes ``idx``, worked out only where needed. Sort and
    sweep: the nodes are sorted along one generic direction and exactly coincident
    nodes are grouped (one per distinct point goes on); two points within tolerance are
    within it along that direction too, so each is compared only with the following
    points until the gap passes the bound. When those candidate pairs would pass the
    budget (:func:`~meshaudit.mesh_checks.budget.allowance` of the points) the sweep is
    done again with each point's own tolerance, and a pile-up of distinct points within
    tolerance that still passes it stops the audit (``keys``: the finding kinds that
    need the clusters, named in the message).
    """
    n_points = points.shape[0]
    if nodes.size < 2:
        return NodeClusters.none(n_points)
    key = points[nodes] @ _PROBE
    order = np.argsort(key)  # ties may come in any order: exact copies are sorted below
    nodes, key = nodes[order], key[order]
    copy_of, copy = _exact_copies(key, points, nodes)
    if copy.size:
        site = np.ones(nodes.size, dtype=bool)
        site[copy] = False
        sites = np.flatnonzero(site)  # one position per distinct point, ascending key
        site_key = key[sites]
    else:
        sites, site_key = None, key
    limit = budget.allowance(site_key.size)
    first, second = _sweep(site_key, bound, limit)
    if first is None:  # crowded at the bound: each place's own tolerance
        tol = local(nodes)
        np.maximum.at(tol, copy_of, tol[copy])  # a place: the loosest of its nodes
        first, second = _sweep(site_key, tol if sites is None else tol[sites], limit)
        if first is None:
            crowd = int(second[0]) if sites is None else sites[int(second[0])]
            budget.refuse(
                "coincident-node check",
                int(second[1]),
                "node",
                points[nodes[crowd]],
                "thousands of distinct nodes piled within the merge tolerance",
                keys,
            )
    a, b = (first, second) if sites is None else (sites[first], sites[second])
    a, b = _within(points, nodes, a, b, bound)
    if a.size:
        involved = np.zeros(nodes.size, dtype=bool)
        involved[np.concatenate([a, b])] = True
        involved[copy[involved[copy_of]]] = True  # a place's copies count for its tolerance
        idx = np.flatnonzero(involved)
        tol = np.zeros(nodes.size)
        tol[idx] = local(nodes[idx])
        np.maximum.at(tol, copy_of, tol[copy])
        a, b = _within(points, nodes, a, b, tol)
    a = np.concatenate([nodes[copy_of], nodes[a]])
    b = np.concatenate([nodes[copy], nodes[b]])
    if a.size == 0:
        return NodeClusters.none(n_points)
    return NodeClusters(connected_labels(n_points, a, b), unique_values(np.concatenate([a, b])))


def _exact_copies(
    key: np.ndarray, points: np.ndarray, nodes: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """(first, copy): positions in ``nodes`` (sorted by ``key``; equal points have equal
    keys) of the nodes at exactly the place of an earlier one (``copy``) and of that
    place's first node (``first``). Only runs of equal keys are sorted again, by their
    coordinates."""
    tied = np.zeros(key.size, dtype=bool)
    same_key = key[1:] == key[:-1]
    tied[1:] = same_key
    tied[:-1] |= same_key
    run = np.flatnonzero(tied)
    if run.size == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty
    p = points[nodes[run]]
    order = np.lexsort((p[:, 2], p[:, 1], p[:, 0], key[run]))
    run, p = run[order], p[order]
    same = (p[1:] == p[:-1]).all(axis=1)
    starts = np.concatenate([[True], ~same])
    head = run[np.flatnonzero(starts)][np.cumsum(starts) - 1]
    return head[1:][same], run[1:][same]


def _sweep(
    key: np.ndarray, tol: float | np.ndarray, limit: int
) -> tuple[np.ndarray, np.ndarray] | tuple[None, np.ndarray]:
    """(i, j), i < j: positions of sorted ``key`` with key[j] - key[i] <= tol (one for
    all, or tol[i]); or, when they would be more than ``limit``, (None, [a crowded
    position, pairs so far])."""
    n = key.size
    active = np.arange(n - 1)
    first, second = [np.zeros(0, dtype=np.int64)], [np.zeros(0, dtype=np.int64)]
    step, total = 1, 0
    scalar = np.ndim(tol) == 0
    while active.size:
        active = active[active + step < n]
        gap = key[active + step] - key[active]
        active = active[gap <= (tol if scalar else tol[active])]
        total += active.size
        if total > limit:
            return None, np.array([active[active.size // 2], total])
        first.append(active)
        second.append(active + step)
        step += 1
    return np.concatenate(first), np.concatenate(second)


def _within(
    points: np.ndarray, nodes: np.ndarray, a: np.ndarray, b: np.ndarray, tol: float | np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """The pairs (a, b) of positions in ``nodes`` whose points are at most tol (one for
    all, or min(tol[a], tol[b])) apart."""
    if a.size == 0:
        return a, b
    dist = np.linalg.norm(points[nodes[a]] - points[nodes[b]], axis=1)
    close = dist <= (tol if np.ndim(tol) == 0 else np.minimum(tol[a], tol[b]))
    return a[close], b[close]


def without_degenerate(clusters: NodeClusters, mesh: ElementMesh) -> NodeClusters:
    """``clusters`` without those whose nodes are all corners of one element: nodes of
    one element at one place make a degenerate element (the element metrics report it),
    not an unmerged node. Only elements touching a clustered node are looked at."""
    members = clusters.members
    if members.size == 0:
        return clusters
    rep = clusters.rep
    n = np.int64(rep.size)
    clustered = np.zeros(rep.size, dtype=bool)
    clustered[members] = True
    size = np.zeros(rep.size, dtype=np.int64)
    np.add.at(size, rep[members], 1)
    codes = []
    for block in mesh.blocks:
        corners = block.connectivity[:, : block.cell.n_corners]
        touch = clustered[corners].any(axis=1)
        near, rows = corners[touch], block.index[touch].astype(np.int64)
        for column in near.T:
            on = clustered[column]
            codes.append(rows[on] * n + column[on])
    # distinct clustered corners per element, then how many of each cluster it holds
    row, node = np.divmod(unique_values(np.concatenate(codes)), n)
    held, count = np.unique(row * n + rep[node], return_counts=True)
    label = held % n
    inside = label[count == size[label]]
    if inside.size == 0:
        return clusters
    drop = np.zeros(rep.size, dtype=bool)
    drop[inside] = True
    dropped = drop[rep[members]]
    new_rep = rep.copy()
    new_rep[members[dropped]] = members[dropped]
    return NodeClusters(new_rep, members[~dropped])
