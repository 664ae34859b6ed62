"""Reversed elements and bow-tie quads: repairs of a row's node order.

- :func:`reversed_rows`: the elements to reverse are those the audit flags ``reversed``
  (wound clockwise about +z on a planar mesh, every corner Jacobian negative on a solid)
  or ``flipped_normal`` (facing against the rest of their patch on a shell): a whole
  mesh wound the wrong way is then every element. They are reversed with the cell
  type's own mirror permutation (:func:`meshaudit.repair.cells.reversal`), which keeps
  the first node and maps midside nodes with their edges.
- :func:`bowtie_orders`: a linear quad whose corners are all in place but listed in the
  wrong order crosses itself (a bow-tie). Swapping its nodes 2 and 3 (or 3 and 4) gives a
  convex quad on the same four nodes; the swap is taken only when the new quad is strictly
  convex (every corner turns the same way) and it shares at least as many of its edges
  with other elements as the bow-tie did, i.e. it fits its neighbours better.
"""

from __future__ import annotations

import numpy as np

#: The two reorderings of a quad's nodes that can untwist a bow-tie (0-based positions).
BOWTIE_ORDERS = np.array([[0, 2, 1, 3], [0, 1, 3, 2]])


def reversed_rows(flags: dict[str, np.ndarray]) -> np.ndarray:
    """(n,) bool over report rows: the elements whose node order is to be reversed."""
    out = np.zeros_like(next(iter(flags.values())), dtype=bool)
    for name in ("reversed", "flipped_normal"):
        if name in flags:
            out |= flags[name]
    return out


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
