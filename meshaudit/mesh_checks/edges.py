"""Edge checks over the edge table: free-edge loops and cracks, non-manifold edges,
neighbours that disagree about orientation, and the winding of planar elements."""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..arrays import unique_values
from ..mesh.topology import EdgeTable, connected_labels
from .nodes import NodeClusters


def kept_table(table: EdgeTable, keep: np.ndarray) -> EdgeTable:
    """The edge table without the elements where ``keep`` is False (e.g. duplicates)."""
    if keep.all():
        return table
    sel = keep[table.element]
    edge = table.edge[sel]
    return replace(
        table,
        start=table.start[sel],
        end=table.end[sel],
        element=table.element[sel],
        local=table.local[sel],
        edge=edge,
        uses=np.bincount(edge, minlength=table.n_edges),
        first=None,
        last=None,
    )


def free_uses(table: EdgeTable) -> np.ndarray:
    """Positions (ascending) of the edge uses whose edge no other element uses: the free
    edges. (A flag per edge gathered per use: several times faster on large meshes than
    gathering the use counts.)"""
    return np.flatnonzero(np.take(table.uses == 1, table.edge))


@dataclass(frozen=True)
class FreeEdges:
    """Edges used by one element, chained into loops, as plain arrays a plot can draw.

    A loop is a connected chain of free edges. Edges on a non-conforming interface
    (a free edge holding hanging nodes and the free edges lying on it, see
    :mod:`meshaudit.mesh_checks.hanging`) are chained only with one another, into
    ``interface`` loops; the other free edges make the part's boundary: on a planar mesh
    a loop that runs counter-clockwise (seen from the plane normal, elements on its
    left) is an ``outer`` boundary, one running clockwise a ``hole``; on a shell every
    loop is a ``boundary``. A loop made only of crack edges is a ``crack``.
    """

    nodes: np.ndarray  # (m, 2) int64 node indices, in the direction the element runs
    element: np.ndarray  # (m,) int64 element position using the edge
    loop: np.ndarray  # (m,) int64 loop number 0..n_loops-1
    crack: np.ndarray  # (m,) bool: lies on another free edge (unmerged nodes)
    interface: np.ndarray  # (m,) bool: on a non-conforming interface (hanging nodes)
    xyz: np.ndarray  # (m, 2, 3) end coordinates, for drawing
    loop_kind: np.ndarray  # (n_loops,) object: "outer", "hole", "boundary", "crack", "interface"
    loop_edges: np.ndarray  # (n_loops,) int64 number of edges
    loop_length: np.ndarray  # (n_loops,) float64 total length
    loop_area: np.ndarray  # (n_loops,) float64 enclosed signed area (planar), else NaN
    loop_cracks: np.ndarray  # (n_loops,) int64 crack edges in the loop

    @property
    def n_loops(self) -> int:
        return int(self.loop_kind.shape[0])

    def loops(self) -> list[dict[str, object]]:
        """One plain record per loop (for reports)."""
        return [
            {
                "loop": k,
                "kind": str(self.loop_kind[k]),
                "edges": int(self.loop_edges[k]),
                "length": float(self.loop_length[k]),
                "area": None if np.isnan(self.loop_area[k]) else float(self.loop_area[k]),
                "crack_edges": int(self.loop_cracks[k]),
            }
            for k in range(self.n_loops)
        ]


def free_edges(
    table: EdgeTable,
    points: np.ndarray,
    clusters: NodeClusters | None = None,
    sign: np.ndarray | None = None,
    normal: np.ndarray | None = None,
    interface: np.ndarray | None = None,
    uses: np.ndarray | None = None,
) -> FreeEdges:
    """Free edges, their loops and which of them are cracks.

    ``clusters``: distinct nodes at one place (see :mod:`meshaudit.mesh_checks.nodes`;
    None: no two nodes are); a free edge is a crack edge when another free edge joins
    the same two places. ``sign``/``normal``: element winding
    and plane normal of a planar mesh (None for shells, or to add them later with
    :func:`with_winding`); without them every loop is a ``boundary``. ``interface``:
    edge-table use positions of the free edges on a non-conforming interface
    (:attr:`HangingNodes.interface_uses <meshaudit.mesh_checks.hanging.HangingNodes>`):
    they make ``interface`` loops of their own. ``uses``: :func:`free_uses` of
    ``table``, worked out here unless given.
    """
    if uses is None:
        uses = free_uses(table)
    a, b = table.start[uses].astype(np.int64), table.end[uses].astype(np.int64)
    element = table.element[uses].astype(np.int64)
    n_points = points.shape[0]
    if clusters is None or clusters.members.size == 0:
        ra, rb = a, b
    else:
        ra, rb = clusters.rep[a], clusters.rep[b]
    crack = crack_flags(ra, rb, n_points)
    on_interface = np.zeros(uses.size, dtype=bool)
    if interface is not None and interface.size:
        on_interface[np.searchsorted(uses, interface)] = True
    free = chained(a, b, element, crack, on_interface, points)
    if normal is not None and sign is not None:
        free = with_winding(free, points, sign, normal)
    return free


def crack_flags(ra: np.ndarray, rb: np.ndarray, n_points: int) -> np.ndarray:
    """(m,) bool: which free edges, their ends at places ``ra``, ``rb`` (m,) (node
    numbers below ``n_points``), join the same two places as another free edge (a crack
    edge; an edge whose two ends are at one place is none)."""
    key = np.minimum(ra, rb) * np.int64(n_points) + np.maximum(ra, rb)
    _, inverse, counts = np.unique(key, return_inverse=True, return_counts=True)
    return (counts[inverse.ravel()] > 1) & (ra != rb)


def chained(
    a: np.ndarray,
    b: np.ndarray,
    element: np.ndarray,
    crack: np.ndarray,
    on_interface: np.ndarray,
    points: np.ndarray,
) -> FreeEdges:
    """Free edges ``a`` -> ``b`` (node indices into ``points``) of ``element``, chained
    into loops (the rules of :func:`free_edges`, without the winding): interface edges
    chained only with one another; a loop of crack edges alone is a ``crack``."""
    n_points = points.shape[0]
    # interface edges are chained on their own: their nodes get numbers n..2n-1
    shift = on_interface * np.int64(n_points)
    size = 2 * n_points if on_interface.any() else n_points
    node_label = connected_labels(size, a + shift, b + shift)
    loop_ids, loop = np.unique(node_label[a + shift], return_inverse=True)
    loop = loop.ravel()
    n_loops = loop_ids.size
    xyz = np.stack([points[a], points[b]], axis=1)
    length = np.linalg.norm(xyz[:, 1] - xyz[:, 0], axis=1)
    n_edges = np.bincount(loop, minlength=n_loops)
    cracks = np.bincount(loop, weights=crack, minlength=n_loops).astype(np.int64)
    kind = np.full(n_loops, "boundary", dtype=object)
    kind[(cracks == n_edges) & (n_edges > 0)] = "crack"
    kind[np.bincount(loop, weights=on_interface, minlength=n_loops) > 0] = "interface"
    return FreeEdges(
        nodes=np.stack([a, b], axis=1),
        element=element,
        loop=loop,
        crack=crack,
        interface=on_interface,
        xyz=xyz,
        loop_kind=kind,
        loop_edges=n_edges.astype(np.int64),
        loop_length=np.bincount(loop, weights=length, minlength=n_loops),
        loop_area=np.full(n_loops, np.nan),
        loop_cracks=cracks,
    )


def with_winding(
    free: FreeEdges, points: np.ndarray, sign: np.ndarray, normal: np.ndarray
) -> FreeEdges:
    """``free`` with the loops of a planar mesh classed by the area they enclose, seen
    from ``normal`` with every element's edges taken the way the element winds
    (``sign`` per element): ``outer`` (counter-clockwise), ``hole`` (clockwise) or, as
    before, ``crack`` or ``interface``."""
    n_loops = free.n_loops
    if free.element.size == 0:
        return free
    a, b = free.nodes[:, 0], free.nodes[:, 1]
    centre = points[a].mean(axis=0)
    twice = np.cross(points[a] - centre, points[b] - centre) @ normal
    area = 0.5 * np.bincount(free.loop, weights=twice * sign[free.element], minlength=n_loops)
    kind = np.where(area >= 0.0, "outer", "hole").astype(object)
    for kept in ("crack", "interface"):
        kind[free.loop_kind == kept] = kept
    return replace(free, loop_kind=kind, loop_area=area)


def non_manifold_edges(table: EdgeTable) -> tuple[np.ndarray, np.ndarray]:
    """(edges, elements): unique edges used three or more times, and the elements using them."""
    edges = np.flatnonzero(table.uses > 2)
    on = np.take(table.uses > 2, table.edge)
    return edges, unique_values(table.element[on]).astype(np.int64)


def forward_runs(table: EdgeTable) -> np.ndarray:
    """(n_edges,) how many uses of each edge run from its smaller node to the larger."""
    return np.bincount(table.edge[table.forward], minlength=table.n_edges)


def same_direction_pairs(
    table: EdgeTable, flip: np.ndarray | None = None, runs: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(edges, first, second): manifold interior edges both elements run the same way.

    On a shell that means opposite normals. With ``flip`` (bool per element: count the
    element as wound the other way) it finds planar elements folded onto a neighbour.
    One count per edge finds them (``runs``: :func:`forward_runs` of ``table``, counted
    here unless given; with ``flip`` only the flipped elements' uses are counted again);
    only the edges found are then sorted.
    """
    if runs is None:
        runs = forward_runs(table)
    if flip is not None and flip.any():  # only the flipped elements' uses change
        turned = np.flatnonzero(flip[table.element])
        change = np.where(table.start[turned] < table.end[turned], -1, 1)
        runs = runs.copy()
        np.add.at(runs, table.edge[turned], change)
    clash = np.flatnonzero((table.uses == 2) & (runs != 1))
    mask = np.zeros(table.n_edges, dtype=bool)
    mask[clash] = True
    on = np.flatnonzero(mask[table.edge])
    on = on[np.argsort(table.edge[on], kind="stable")]
    first, second = table.element[on[0::2]], table.element[on[1::2]]
    return clash, first.astype(np.int64), second.astype(np.int64)
