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
  ``flipped_normal`` flag says. Solids the same way, grouped by the direction they run
  around their shared faces, a group whose mean corner Jacobians add up negative is
  reversed: an inverted tetrahedron whose node order agrees with its neighbours' is
  untangled, not reversed. They are reversed with the cell type's own mirror permutation
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

from ..mesh.elements import ElementBlock, ElementMesh
from ..mesh.topology import flipped_elements, orientation_groups
from ..results.report import Report
from . import cells as C

#: The two reorderings of a quad's nodes that can untwist a bow-tie (0-based positions).
BOWTIE_ORDERS = np.array([[0, 2, 1, 3], [0, 1, 3, 2]])


def reversed_rows(mesh: ElementMesh, report: Report) -> np.ndarray:
    """(n,) bool over report rows: the elements whose node order is to be reversed."""
    out = _solid_rows(mesh)
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


def _solid_rows(mesh: ElementMesh) -> np.ndarray:
    """(n,) bool: solids of an orientation group whose mean corner Jacobians add up
    negative. Two solids sharing a face agree when they run its loop in opposite
    directions (each lists its faces counter-clockwise seen from outside)."""
    n = mesh.n_elements
    out = np.zeros(n, dtype=bool)
    solids = [b for b in mesh.blocks if b.cell.dimension == 3]
    if not solids:
        return out
    by_size: dict[int, list[tuple[np.ndarray, np.ndarray, np.ndarray]]] = {}
    volume = np.zeros(n)
    for b in solids:
        conn = b.connectivity
        for face in b.cell.faces:
            loop = conn[:, list(face)]
            start = loop.argmin(axis=1)
            rows = np.arange(len(loop))
            after = loop[rows, (start + 1) % loop.shape[1]]
            before = loop[rows, (start - 1) % loop.shape[1]]
            by_size.setdefault(len(face), []).append(
                (np.sort(loop, axis=1), b.index, after < before)
            )
        table = C.corner_table(b.cell_type)
        x = mesh.points[conn[:, table]]  # (n, c, 4, 3)
        e = x[:, :, 1:] - x[:, :, :1]
        triple = np.einsum("ncj,ncj->nc", e[:, :, 0], np.cross(e[:, :, 1], e[:, :, 2]))
        volume[b.index] = triple.mean(axis=1)
    firsts, seconds, sames = [], [], []
    for parts in by_size.values():
        keys = np.concatenate([k for k, _, _ in parts])
        owner = np.concatenate([o for _, o, _ in parts])
        turn = np.concatenate([t for _, _, t in parts])
        _, inverse, counts = np.unique(keys, axis=0, return_inverse=True, return_counts=True)
        inverse = inverse.ravel()
        shared = np.flatnonzero(counts[inverse] == 2)
        shared = shared[np.argsort(inverse[shared], kind="stable")]
        a, b2 = shared[0::2], shared[1::2]
        firsts.append(owner[a])
        seconds.append(owner[b2])
        sames.append(turn[a] == turn[b2])
    groups = orientation_groups(
        n, np.concatenate(firsts), np.concatenate(seconds), np.concatenate(sames)
    )
    solid = np.zeros(n, dtype=bool)
    for b in solids:
        solid[b.index] = True
    group = groups.patch.astype(np.int64) * 2 + (groups.sign > 0)
    total = np.bincount(group, weights=volume, minlength=2 * n)
    return solid & (total[group] < 0) & ~groups.twisted


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
