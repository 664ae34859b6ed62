"""Reversed elements and bow-tie quads: repairs of a row's node order.

- :func:`reversed_rows`: which elements have their nodes listed the wrong way round.
  A folded element (a node pulled across its neighbour) also reads clockwise, but its
  node order agrees with its neighbours': it is untangled by moving nodes, not reversed.
  So surface elements are grouped by the direction they run along their shared edges
  (elements of one group agree with each other, see
  :func:`meshaudit.mesh.topology.flipped_elements`). On a planar mesh judged against
  +z, a group whose signed area in x-y adds up negative is wound clockwise and all its
  elements are reversed (a whole mesh wound the wrong way is one such group); a lone
  reversed element is a group of its own. Without an absolute reference (shells, a
  plane containing z) the smaller group of each patch is reversed, as the audit's
  ``flipped_normal`` flag says. Solids: the audit's ``reversed`` flag (every corner
  Jacobian negative). They are reversed with the cell type's own mirror permutation
  (:func:`meshaudit.repair.cells.reversal`), which keeps the first node and maps midside
  nodes with their edges.
- :func:`bowtie_orders`: a linear quad whose corners are all in place but listed in the
  wrong order crosses itself (a bow-tie). Swapping its nodes 2 and 3 (or 3 and 4) gives a
  convex quad on the same four nodes; the swap is taken only when the new quad is strictly
  convex (every corner turns the same way) and it shares at least as many of its edges
  with other elements as the bow-tie did, i.e. it fits its neighbours better.
"""

from __future__ import annotations

import numpy as np

from ..cells.registry import CELL_TYPES
from ..mesh.elements import ElementBlock, ElementMesh
from ..mesh.topology import flipped_elements
from ..results.report import Report

#: The two reorderings of a quad's nodes that can untwist a bow-tie (0-based positions).
BOWTIE_ORDERS = np.array([[0, 2, 1, 3], [0, 1, 3, 2]])


def reversed_rows(mesh: ElementMesh, report: Report) -> np.ndarray:
    """(n,) bool over report rows: the elements whose node order is to be reversed."""
    dims = np.array([CELL_TYPES[t].dimension for t in report.cell_types], dtype=np.int8)
    out = report.flag("reversed") & (dims[report.type_codes] == 3)
    part, positions = mesh.surface_part()
    if not part.blocks:
        return out
    rows = positions if positions is not None else np.arange(part.n_elements)
    groups = flipped_elements(part)
    if report.summary.orientation != "+z":
        out[rows] |= report.flag("flipped_normal")[rows]
        return out
    area = np.concatenate([_signed_area(part.points, b) for b in part.blocks])
    group = groups.patch.astype(np.int64) * 2 + (groups.sign > 0)
    total = np.bincount(group, weights=area, minlength=2 * part.n_elements)
    out[rows] |= (total[group] < 0) & ~groups.twisted
    return out


def _signed_area(points: np.ndarray, block: ElementBlock) -> np.ndarray:
    """Shoelace area in x-y of each element's corner polygon (positive counter-clockwise)."""
    xy = points[block.connectivity[:, : block.cell.n_corners], :2]
    nxt = np.roll(xy, -1, axis=1)
    return 0.5 * (xy[..., 0] * nxt[..., 1] - nxt[..., 0] * xy[..., 1]).sum(axis=1)


def _corner_turns(xyz: np.ndarray) -> np.ndarray:
    """(n, 4, 3): cross product of the two edges at each corner of quads (n, 4, 3)."""
    nxt = np.roll(xyz, -1, axis=1) - xyz
    prv = np.roll(xyz, 1, axis=1) - xyz
    return np.cross(nxt, prv)


def _edge_keys(conn: np.ndarray, n_points: int) -> np.ndarray:
    """(n, 4) undirected edge keys of quads given as (n, 4) node rows."""
    a, b = conn, np.roll(conn, -1, axis=1)
    return np.minimum(a, b) * n_points + np.maximum(a, b)


def bowtie_orders(
    points: np.ndarray, quads: np.ndarray, other_keys: np.ndarray, n_points: int
) -> np.ndarray:
    """For each bow-tie quad (rows of ``quads``), the index into :data:`BOWTIE_ORDERS`
    of the reordering that repairs it, or -1 when none is safe.

    ``other_keys``: sorted edge keys (see :func:`_edge_keys`) of every other element's
    edges, to count how many of a quad's edges it shares with its neighbours.
    """
    n = len(quads)
    choice = np.full(n, -1, dtype=np.int64)
    if n == 0:
        return choice

    def shared(conn: np.ndarray) -> np.ndarray:
        keys = _edge_keys(conn, n_points)
        pos = np.searchsorted(other_keys, keys).clip(max=max(len(other_keys) - 1, 0))
        found = other_keys[pos] == keys if len(other_keys) else np.zeros_like(keys, bool)
        return found.sum(axis=1)

    now = shared(quads)
    best = now.copy()
    for k, order in enumerate(BOWTIE_ORDERS):
        conn = quads[:, order]
        turns = _corner_turns(points[conn])
        normal = turns.sum(axis=1)
        along = np.einsum("nck,nk->nc", turns, normal)
        convex = (along > 0).all(axis=1) & (np.einsum("nk,nk->n", normal, normal) > 0)
        count = shared(conn)
        take = convex & (count >= best) & (count >= now)
        take &= (choice < 0) | (count > best)
        choice[take] = k
        best = np.where(take, count, best)
    return choice


def quad_edge_keys(conn: np.ndarray, n_points: int) -> np.ndarray:
    """Flat edge keys of quads (n, 4) node rows (see :func:`bowtie_orders`)."""
    return _edge_keys(conn, n_points).ravel()
