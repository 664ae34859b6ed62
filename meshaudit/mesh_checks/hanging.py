"""Hanging nodes: corner nodes lying inside another element's edge.

A non-conforming interface (a coarse element beside finer ones, with no tie between
them) shows as a free edge with corner nodes of other elements lying inside it: the two
sides share no node there, so they are not connected unless the solver constrains those
nodes. Definitions (lengths in the mesh's units, ``relative`` the coincident-node
tolerance):

- a *host* is a free edge (used by one element); on a shell also an edge used by
  several elements whose two ends both lie on free edges or are merged with nodes that
  do (a finer stiffener edge running along a skin edge), where the node must then be an
  end of a free edge;
- a corner node p is *hanging* on a host with ends a and b when p is not a corner of the
  host's element, is not a or b nor merged with them by the coincident-node check, its
  distance to the host is at most ``relative x min(L, s_p)`` (L the host's chord length,
  s_p the shortest edge at p), its closest point on the host lies strictly between the
  ends, and it is farther from each end than the coincident-node tolerance
  ``relative x min(s_p, s_end)``. A quadratic host is the parabola through its corners
  and midside node (closest point by Newton's method from the chord projection);
- the *interface* is the free hosts holding hanging nodes plus the free edges lying on
  a host (one end hanging on it, the other hanging on it too or at one of its ends).

Candidate pairs come from a grid: hosts are split into pieces no longer than a cell
(the median host length), each piece is entered in the cells its box (widened by the
tolerance and the quadratic bulge) covers, and nodes are looked up by cell. When the
pairs would outgrow a budget linear in the input, the crowded cells are bucketed again
on finer grids; pairs are tested in batches so memory stays bounded; a pile-up that no
finer grid separates is refused with a clear message.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from ..arrays import unique_values
from ..mesh.elements import ElementMesh
from ..mesh.topology import EdgeTable
from . import budget
from .budget import expand as _expand
from .edges import free_uses
from .nodes import shortest_edge_at

#: A cell is crowded when its pieces x its nodes exceed this.
CELL_PAIRS = 256
#: How many times crowded cells are bucketed again, each time on cells a quarter as large.
MAX_REFINE = 5
#: Pairs still crowding after the last refinement beyond which the check refuses the
#: mesh (a few seconds of work).
CROWDED_PAIRS = budget.CROWDED_PAIRS
#: Newton steps for the closest point on a quadratic edge.
NEWTON_STEPS = 8

_EMPTY = np.zeros(0, dtype=np.int64)


@dataclass(frozen=True)
class HangingNodes:
    """What the check found.

    ``node`` (k,) hanging node indices and ``host`` (k,) the host edge each lies on, as
    its corner nodes ``host_nodes`` (k, 2) (a node on two hosts has two rows);
    ``host_element`` (j, 2) pairs (hanging node, element position owning its host);
    ``users`` element positions using a hanging node (as any of their nodes);
    ``interface_uses`` edge-table use positions of the free edges on the interface and
    ``interface_nodes`` (i, 2) their nodes.
    """

    node: np.ndarray
    host_nodes: np.ndarray
    host_element: np.ndarray
    users: np.ndarray
    interface_uses: np.ndarray
    interface_nodes: np.ndarray

    @property
    def nodes(self) -> np.ndarray:
        """Hanging node indices, ascending, each once."""
        return unique_values(self.node)

    @property
    def hosts(self) -> np.ndarray:
        """Element positions owning a host edge, ascending."""
        return unique_values(self.host_element[:, 1])

    @property
    def elements(self) -> np.ndarray:
        """Element positions involved: host owners and users of the hanging nodes."""
        return unique_values(np.concatenate([self.host_element[:, 1], self.users]))

    @property
    def edges(self) -> np.ndarray:
        """(e, 2) node pairs to draw: the hosts and the interface edges, each once."""
        return _unique_rows(
            np.sort(np.concatenate([self.host_nodes, self.interface_nodes]), axis=1)
        )


def _unique_rows(pairs: np.ndarray) -> np.ndarray:
    """Distinct rows of non-negative integer pairs (k, 2), in ascending order."""
    if pairs.size == 0:
        return pairs.reshape(0, 2)
    width = np.int64(pairs.max()) + 1
    return np.stack(np.divmod(unique_values(pairs[:, 0] * width + pairs[:, 1]), width), axis=1)


def none_found() -> HangingNodes:
    empty2 = np.zeros((0, 2), dtype=np.int64)
    return HangingNodes(_EMPTY, empty2, empty2, _EMPTY, _EMPTY, empty2)


def hanging_nodes(
    mesh: ElementMesh,
    table: EdgeTable,
    rep: np.ndarray,
    relative: float,
    shell: bool,
    free_use: np.ndarray | None = None,
) -> HangingNodes:
    """Find the hanging nodes of ``mesh`` (definitions in the module text).

    ``table`` the edge table (duplicate elements left out), ``rep`` (n_points,) each
    node's representative in the clusters of the coincident-node check
    (:class:`~meshaudit.mesh_checks.nodes.NodeClusters`: nodes with one representative
    are one place), ``relative`` its tolerance. ``shell``: test
    every corner node and also shared edges whose ends lie on free edges, or are merged
    with nodes that do (T-joints); on a planar mesh the ends of free edges are enough (a
    node inside the part lying on a free edge means overlapping elements, which the
    overlap check reports).
    ``free_use``: :func:`~meshaudit.mesh_checks.edges.free_uses` of ``table``, worked
    out here unless given.
    """
    n = mesh.n_points
    if free_use is None:
        free_use = free_uses(table)
    if free_use.size == 0:
        return none_found()
    on_free = np.zeros(n, dtype=bool)
    on_free[table.start[free_use]] = True
    on_free[table.end[free_use]] = True
    host_use = free_use
    if shell:
        # a place is on a free edge when any node merged there is (an unmerged stiffener)
        near_free = on_free
        if bool((rep != np.arange(n)).any()):
            place = np.zeros(n, dtype=bool)
            place[rep[on_free]] = True
            near_free = place[rep]
        shared = np.take(table.uses >= 2, table.edge)
        shared &= near_free[table.start]
        shared &= near_free[table.end]
        inner = np.flatnonzero(shared)
        inner = inner[np.argsort(table.edge[inner], kind="stable")]
        first = np.ones(inner.size, dtype=bool)
        first[1:] = table.edge[inner[1:]] != table.edge[inner[:-1]]
        host_use = np.concatenate([free_use, inner[first]])
        corner = np.zeros(n, dtype=bool)
        corner[table.start] = True
        candidates = np.flatnonzero(corner)
    else:
        candidates = np.flatnonzero(on_free)
    hosts = _Hosts.build(mesh, table, host_use)
    node, host = _search(hosts, mesh.points, candidates, rep, relative)
    keep = (table.uses[table.edge[hosts.use[host]]] == 1) | on_free[node]
    node, host = node[keep], host[keep]
    node, host = _exact(mesh, table, hosts, node, host, relative)
    if node.size == 0:
        return none_found()
    return _assemble(mesh, table, hosts, node, host, rep, free_use)


@dataclass(frozen=True)
class _Hosts:
    """Host edges as curves x(t) = a + A t + B t^2 for t in [0, 1] (B = 0 when straight),
    with their chord length and bulge |B| / 4 (largest distance of the curve from its
    chord: x(t) - chord(t) = B (t^2 - t))."""

    use: np.ndarray  # (h,) edge-table use position
    element: np.ndarray  # (h,) element position of that use
    start: np.ndarray  # (h,) corner node at t = 0
    end: np.ndarray  # (h,) corner node at t = 1
    a: np.ndarray  # (h, 3)
    lin: np.ndarray  # (h, 3) A
    quad: np.ndarray  # (h, 3) B
    length: np.ndarray  # (h,)
    bulge: np.ndarray  # (h,)

    @staticmethod
    def build(mesh: ElementMesh, table: EdgeTable, use: np.ndarray) -> _Hosts:
        pts = mesh.points
        s, e = table.start[use].astype(np.int64), table.end[use].astype(np.int64)
        element = table.element[use].astype(np.int64)
        a, b = pts[s], pts[e]
        mid = _node_of(mesh, element, table.local[use].astype(np.int64), midside=True)
        m = np.where(mid[:, None] >= 0, pts[np.maximum(mid, 0)], 0.5 * (a + b))
        lin = 4.0 * m - 3.0 * a - b
        quad = 2.0 * (a + b) - 4.0 * m
        bulge = 0.25 * np.linalg.norm(quad, axis=1)
        return _Hosts(use, element, s, e, a, lin, quad, np.linalg.norm(b - a, axis=1), bulge)

    def b(self, rows: np.ndarray) -> np.ndarray:
        return self.a[rows] + self.lin[rows] + self.quad[rows]


def _node_of(
    mesh: ElementMesh, element: np.ndarray, column: np.ndarray, midside: bool = False
) -> np.ndarray:
    """Node ``column`` of each element (-1 past its corners), or with ``midside`` the
    midside node of side ``column`` (meshio order: k corners, then the midside node of
    side i at k + i; -1 for linear elements)."""
    out = np.full(element.size, -1, dtype=np.int64)
    for block in mesh.blocks:
        k = block.cell.n_corners
        width = block.connectivity.shape[1]
        if element.size == 0 or (midside and width < 2 * k):
            continue
        rows = np.minimum(np.searchsorted(block.index, element), len(block) - 1)
        col = column + k if midside else column
        inside = (block.index[rows] == element) & (col < (width if midside else k))
        out[inside] = block.connectivity[rows[inside], col[inside]]
    return out


# -- candidate pairs --------------------------------------------------------------------


def _search(
    hosts: _Hosts, points: np.ndarray, candidates: np.ndarray, rep: np.ndarray, relative: float
) -> tuple[np.ndarray, np.ndarray]:
    """Unique (node, host) pairs passing the cheap tests: node not an end of the host nor
    merged with one, within bulge + relative x L of the host's chord."""
    rows = np.flatnonzero(hosts.length > 0.0)  # a side collapsed to a point has no inside
    if rows.size == 0 or candidates.size == 0:
        return _EMPTY, _EMPTY
    # nodes merged by the coincident check are one place: one tester per group (its
    # smallest node), the result is then handed to every candidate of the group
    group = rep[candidates]
    merged = bool((group != candidates).any())
    if merged:
        is_tester = np.zeros(rep.size, dtype=bool)
        is_tester[group] = True
        testers = np.flatnonzero(is_tester)
    else:
        testers = candidates
    margin = hosts.bulge[rows] + relative * hosts.length[rows]
    found_n, found_h = [_EMPTY], [_EMPTY]
    for node_pos, piece in _grid_pairs(hosts.a[rows], hosts.b(rows), margin, points[testers]):
        p, h = testers[node_pos], rows[piece]
        keep = (rep[hosts.start[h]] != p) & (rep[hosts.end[h]] != p)
        p, h = p[keep], h[keep]
        dist = _chord_distance(points[p], hosts.a[h], hosts.b(h))
        keep = dist <= hosts.bulge[h] + relative * hosts.length[h]
        found_n.append(p[keep])
        found_h.append(h[keep])
    n_hosts = np.int64(hosts.length.size)
    key = unique_values(np.concatenate(found_n) * n_hosts + np.concatenate(found_h))
    p, h = np.divmod(key, n_hosts)
    if not merged or p.size == 0:
        return p, h
    hit = np.zeros(rep.size, dtype=bool)
    hit[p] = True
    members = candidates[hit[group]]  # candidates whose group's tester was found
    lo = np.searchsorted(p, rep[members], side="left")
    row, at = _expand(lo, np.searchsorted(p, rep[members], side="right") - lo)
    return members[row], h[at]


def _chord_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance from each point p to the segment a-b."""
    ab = b - a
    t = np.einsum("ij,ij->i", p - a, ab) / np.maximum(np.einsum("ij,ij->i", ab, ab), 1e-300)
    return np.linalg.norm(a + ab * np.clip(t, 0.0, 1.0)[:, None] - p, axis=1)


def _grid_pairs(
    a: np.ndarray,
    b: np.ndarray,
    margin: np.ndarray,
    xyz: np.ndarray,
    cell: float | None = None,
    depth: int = 0,
) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """Batches (rows of ``xyz``, rows of the segments): every point within ``margin`` of
    segment a-b comes with it at least once (some farther ones too, and some twice)."""
    length = np.linalg.norm(b - a, axis=1)
    median = float(np.median(length))
    cell = _fit_cell(a, b, margin, length, median if cell is None else min(cell, median), xyz)
    grid = _Grid.build(a, b, margin, length, cell)
    node_cell = xyz - grid.origin
    node_cell *= 1.0 / cell
    np.floor(node_cell, out=node_cell)
    inside = np.all((node_cell >= 0) & (node_cell < grid.dims), axis=1)
    node_rows = np.flatnonzero(inside)
    ijk = node_cell[inside].astype(np.int64)
    del node_cell, inside
    near = grid.near(ijk)
    node_rows, node_key = node_rows[near], grid.flat(ijk[near])
    # only nodes in cells some piece covers; those few are then sorted by cell
    cells = unique_values(grid.key)
    at = np.minimum(np.searchsorted(cells, node_key), cells.size - 1)
    used = cells[at] == node_key
    node_rows, node_key = node_rows[used], node_key[used]
    order = np.argsort(node_key, kind="stable")
    node_rows, node_key = node_rows[order], node_key[order]
    lo = np.searchsorted(node_key, grid.key, side="left")
    count = np.searchsorted(node_key, grid.key, side="right") - lo
    total = int(count.sum())
    seg = grid.segment[grid.piece]
    if total > budget.allowance(grid.key.size + node_rows.size) and depth < MAX_REFINE:
        by_cell = np.sort(grid.key)
        pieces = np.searchsorted(by_cell, grid.key, "right") - np.searchsorted(by_cell, grid.key)
        crowded = pieces * count > CELL_PAIRS
        if crowded.any():
            yield from _batches(seg[~crowded], lo[~crowded], count[~crowded], node_rows)
            # the pieces entered in crowded cells and the nodes there, on a finer grid
            sub = unique_values(grid.piece[crowded])
            cells = unique_values(grid.key[crowded])
            at = np.minimum(np.searchsorted(cells, node_key), cells.size - 1)
            sub_nodes = node_rows[cells[at] == node_key]
            owner = grid.segment[sub]
            for n_pos, p_pos in _grid_pairs(
                grid.p0[sub], grid.p1[sub], margin[owner], xyz[sub_nodes], cell / 4.0, depth + 1
            ):
                yield sub_nodes[n_pos], owner[p_pos]
            return
    if depth >= MAX_REFINE and total > CROWDED_PAIRS:
        budget.refuse(
            "hanging-node check",
            total,
            "node/edge",
            xyz[node_rows[lo[int(np.argmax(count))]]],
            "edges and nodes piled on one another",
            ["hanging_nodes"],
        )
    yield from _batches(seg, lo, count, node_rows)


def _fit_cell(
    a: np.ndarray,
    b: np.ndarray,
    margin: np.ndarray,
    length: np.ndarray,
    cell: float,
    xyz: np.ndarray,
) -> float:
    """``cell`` doubled until the grid entries stay within a budget linear in the input
    (a few very long segments among short ones) and the cell numbers fit in int64."""
    cell = max(cell, float(margin.max()) / 4.0, 1e-300)
    limit = 64 * a.shape[0] + 16 * xyz.shape[0] + 4096
    span = np.maximum(a, b).max(axis=0) - np.minimum(a, b).min(axis=0) + 2.0 * margin.max()
    step = np.abs(b - a)
    for _ in range(2100):  # enough doublings to go from 1e-300 past any float extent
        pieces = np.maximum(np.ceil(length / cell), 1.0)
        across = np.floor((step / pieces[:, None] + 2.0 * margin[:, None]) / cell) + 2.0
        entries = float((pieces * across.prod(axis=1)).sum())
        cells = float(np.prod(np.floor(span / cell) + 2.0))
        if entries <= limit and cells < 2.0**60:
            break
        cell *= 2.0
    return cell


@dataclass(frozen=True)
class _Grid:
    """Segments cut into pieces no longer than ``cell`` and the grid cells each piece's
    box (widened by its margin) covers (neighbouring pieces may share a cell: their
    pairs come twice and are made unique later)."""

    segment: np.ndarray  # (k,) segment of each piece
    p0: np.ndarray  # (k, 3) piece start
    p1: np.ndarray  # (k, 3) piece end
    piece: np.ndarray  # (e,) piece of each entry
    key: np.ndarray  # (e,) flat cell number of each entry
    origin: np.ndarray  # (3,) corner of cell (0, 0, 0)
    dims: np.ndarray  # (3,) cells per axis

    @staticmethod
    def build(
        a: np.ndarray, b: np.ndarray, margin: np.ndarray, length: np.ndarray, cell: float
    ) -> _Grid:
        count = np.maximum(np.ceil(length / cell), 1.0).astype(np.int64)
        segment, k = _expand(np.zeros(count.size, dtype=np.int64), count)
        step = (b - a)[segment] / count[segment, None]
        p0 = a[segment] + step * k[:, None]
        p1 = p0 + step
        low = np.minimum(p0, p1) - margin[segment, None]
        high = np.maximum(p0, p1) + margin[segment, None]
        origin = low.min(axis=0) - 0.5 * cell  # a flat mesh's plane sits mid-cell
        dims = np.floor((high.max(axis=0) - origin) / cell).astype(np.int64) + 1
        first = np.floor((low - origin) / cell).astype(np.int64)
        span = np.floor((high - origin) / cell).astype(np.int64) - first + 1
        piece, r = _expand(np.zeros(segment.size, dtype=np.int64), span.prod(axis=1))
        ijk = np.stack(
            [
                first[piece, 0] + r % span[piece, 0],
                first[piece, 1] + (r // span[piece, 0]) % span[piece, 1],
                first[piece, 2] + r // (span[piece, 0] * span[piece, 1]),
            ],
            axis=1,
        )
        grid = _Grid(segment, p0, p1, piece, np.zeros(0, dtype=np.int64), origin, dims)
        return _Grid(segment, p0, p1, piece, grid.flat(ijk), origin, dims)

    def flat(self, ijk: np.ndarray, dims: np.ndarray | None = None) -> np.ndarray:
        dims = self.dims if dims is None else dims
        return (ijk[:, 0] * dims[1] + ijk[:, 1]) * dims[2] + ijk[:, 2]

    def near(self, ijk: np.ndarray) -> np.ndarray:
        """(n,) bool: cell ``ijk`` (n, 3) lies in a block of 2^s x 2^s x 2^s cells that
        some piece covers, s the smallest shift giving at most a few cells per node: a
        cheap first cut (one flag lookup per node) before the exact cell lookup."""
        limit = 4 * ijk.shape[0] + (1 << 20)
        shift = 0
        while np.prod((self.dims >> shift) + 1) > limit:
            shift += 1
        dims = (self.dims >> shift) + 1
        flags = np.zeros(int(np.prod(dims)), dtype=bool)
        k, j = np.divmod(self.key, self.dims[2])
        i, j = np.divmod(k, self.dims[1])
        flags[
            self.flat(np.stack([i, j, np.remainder(self.key, self.dims[2])], axis=1) >> shift, dims)
        ] = True
        return flags[self.flat(ijk >> shift, dims)]


def _batches(
    seg: np.ndarray, lo: np.ndarray, count: np.ndarray, node_rows: np.ndarray
) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """(node rows, segment rows) of every grid entry x node in its cell, about
    :data:`~meshaudit.mesh_checks.budget.BATCH` pairs at a time."""
    for row, at in budget.batches(lo, count):
        yield node_rows[at], seg[row]


# -- exact test and what the finding needs ----------------------------------------------


def _exact(
    mesh: ElementMesh,
    table: EdgeTable,
    hosts: _Hosts,
    node: np.ndarray,
    host: np.ndarray,
    relative: float,
) -> tuple[np.ndarray, np.ndarray]:
    """The pairs meeting the definition in the module text."""
    if node.size == 0:
        return node, host
    own = np.zeros(node.size, dtype=bool)  # a corner of the host's own element
    for column in range(4):
        own |= _node_of(mesh, hosts.element[host], np.full(node.size, column)) == node
    node, host = node[~own], host[~own]
    points = mesh.points
    p = points[node]
    a, lin, quad = hosts.a[host], hosts.lin[host], hosts.quad[host]
    ab = lin + quad
    t = np.einsum("ij,ij->i", p - a, ab) / np.maximum(np.einsum("ij,ij->i", ab, ab), 1e-300)
    t = np.clip(t, 0.0, 1.0)
    for _ in range(NEWTON_STEPS):  # closest point: (x(t) - p) . x'(t) = 0
        tt = t[:, None]
        r = a + (lin + quad * tt) * tt - p
        d1 = lin + 2.0 * quad * tt
        f = np.einsum("ij,ij->i", r, d1)
        fp = np.einsum("ij,ij->i", d1, d1) + 2.0 * np.einsum("ij,ij->i", r, quad)
        fp = np.where(fp > 0.0, fp, np.einsum("ij,ij->i", d1, d1))
        t = np.clip(t - f / np.maximum(fp, 1e-300), 0.0, 1.0)
    tt = t[:, None]
    dist = np.linalg.norm(a + (lin + quad * tt) * tt - p, axis=1)
    start, end = hosts.start[host], hosts.end[host]
    involved = np.zeros(mesh.n_points, dtype=bool)
    involved[np.concatenate([node, start, end])] = True
    live = table.nodes[table.uses > 0]
    shortest = shortest_edge_at(points, live[involved[live[:, 0]] | involved[live[:, 1]]])
    s_p = shortest[node]
    tol = relative * np.minimum(hosts.length[host], s_p)
    to_a = np.linalg.norm(p - points[start], axis=1)
    to_b = np.linalg.norm(p - points[end], axis=1)
    near_a = to_a <= relative * np.minimum(s_p, shortest[start])
    near_b = to_b <= relative * np.minimum(s_p, shortest[end])
    keep = (dist <= tol) & (t > 0.0) & (t < 1.0) & ~near_a & ~near_b
    return node[keep], host[keep]


def _assemble(
    mesh: ElementMesh,
    table: EdgeTable,
    hosts: _Hosts,
    node: np.ndarray,
    host: np.ndarray,
    rep: np.ndarray,
    free_use: np.ndarray,
) -> HangingNodes:
    n_hosts = np.int64(hosts.length.size)
    host_nodes = np.stack([hosts.start[host], hosts.end[host]], axis=1)
    # elements owning each host: the one element of a free edge, all users of a shared one
    free_host = table.uses[table.edge[hosts.use[host]]] == 1
    owner = [np.stack([node[free_host], hosts.element[host[free_host]]], axis=1)]
    if not free_host.all():
        shared_edge = table.edge[hosts.use[host[~free_host]]].astype(np.int64)
        edges_ = unique_values(shared_edge)
        uses = np.flatnonzero(np.isin(table.edge, edges_))
        by_edge = np.argsort(table.edge[uses], kind="stable")
        uses = uses[by_edge]
        lo = np.searchsorted(table.edge[uses], shared_edge, side="left")
        hi = np.searchsorted(table.edge[uses], shared_edge, side="right")
        row, at = _expand(lo, hi - lo)
        owner.append(
            np.stack([node[~free_host][row], table.element[uses[at]].astype(np.int64)], axis=1)
        )
    host_element = _unique_rows(np.concatenate(owner))
    hanging = np.zeros(mesh.n_points, dtype=bool)
    hanging[node] = True
    users = [b.index[hanging[b.connectivity].any(axis=1)] for b in mesh.blocks]
    # the interface: free hosts with hanging nodes and the free edges lying on a host
    ends_node = np.concatenate([table.start[free_use], table.end[free_use]]).astype(np.int64)
    ends_other = np.concatenate([table.end[free_use], table.start[free_use]]).astype(np.int64)
    ends_use = np.concatenate([free_use, free_use])
    order = np.argsort(ends_node, kind="stable")
    ends_node, ends_other, ends_use = ends_node[order], ends_other[order], ends_use[order]
    lo = np.searchsorted(ends_node, node, side="left")
    row, at = _expand(lo, np.searchsorted(ends_node, node, side="right") - lo)
    q, h = ends_other[at], host[row]
    hits = np.sort(node * n_hosts + host)
    pos = np.minimum(np.searchsorted(hits, q * n_hosts + h), hits.size - 1)
    on_host = (rep[q] == rep[hosts.start[h]]) | (rep[q] == rep[hosts.end[h]])
    on_host |= hits[pos] == q * n_hosts + h
    interface = unique_values(np.concatenate([hosts.use[host[free_host]], ends_use[at[on_host]]]))
    interface_nodes = np.stack([table.start[interface], table.end[interface]], axis=1)
    return HangingNodes(
        node=node,
        host_nodes=host_nodes,
        host_element=host_element,
        users=unique_values(np.concatenate(users)).astype(np.int64),
        interface_uses=interface.astype(np.int64),
        interface_nodes=interface_nodes.astype(np.int64),
    )
