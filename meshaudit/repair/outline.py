"""Outline nodes put back on the outline of a surface mesh.

``meshaudit fix`` never moves the nodes of the part's outline: the outline is the geometry
the analyst drew. When a node of the outline was itself moved off it (a hand edit or a
mesher dragged a plate corner), the analyst can name it (``--restore-outline N``) and it is
put back where the outline on either side of it says it belongs.

A node of the outline is an end of exactly two free edges of the surface elements. Walking
along the free edges away from it, the nodes on one side are ``a0`` (next to it), ``a1``,
``a2``, on the other side ``b0``, ``b1``, ``b2``; ``a0 a1 b0 b1`` may not be restored too.

- **straight side**: when ``a0`` lies on the line through ``b1 b0``, or ``b0`` on the line
  through ``a1 a0`` (within :data:`STRAIGHT` of the chord ``a0 b0``), the node is on a
  straight side (its other neighbour may be a corner): it goes to its orthogonal projection
  onto ``a0 b0``. This is tried first.
- **corner**: when both sides are straight (``a2 a1 a0`` and ``b2 b1 b0`` turn by at most
  :data:`STRAIGHT_ANGLE`), the outline arriving from each side (``a1 -> a0`` and
  ``b1 -> b0``) turns by more than :data:`CORNER_ANGLE` and the two lines meet ahead of
  ``a0`` and of ``b0`` (within :data:`CORNER_REACH` chord lengths), the node goes where they
  meet: the corner of two straight sides is restored exactly.
- **smooth**: otherwise the node goes onto the cubic through ``a1, a0, b0, b1`` at
  parameters -2, -1, 1, 2 (evenly spaced nodes, the node in the gap at 0; Lagrange
  interpolation), at the parameter of its own projection onto the chord ``a0 b0`` (kept
  within [-0.8, 0.8]); at the middle (-a1 + 4 a0 + 4 b0 - b1)/6, within O(h^4) of a
  smooth curve.

:func:`off_outline` gives the same reconstruction for every outline node, so the fix can
say which outline nodes of a still-failing element lie off the outline their neighbours
continue (and suggest restoring them).
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from ..cells.registry import CELL_TYPES
from ..errors import InputError

#: The outline turns by more than this (degrees) between the two sides: a corner
#: (common practice for feature angles, no single source).
CORNER_ANGLE = 30.0
#: Three outline nodes turning by at most this many degrees are in line: a straight side
#: (meshaudit's own tolerance).
STRAIGHT_ANGLE = 1.0
#: A node within this fraction of the chord |a0 b0| of a line is on it (meshaudit's own).
STRAIGHT = 1e-3
#: A corner further than this many chord lengths |a0 b0| from the chord's midpoint is not
#: believed; the smooth rule is used instead (meshaudit's own guard).
CORNER_REACH = 4.0
#: An outline node further off its reconstruction than this fraction of the mean length of
#: its two outline edges is reported as off the outline (meshaudit's own threshold)...
OFF_OUTLINE = 0.05
#: ... when it is also this many times as far off as each neighbour along the outline (a
#: dragged node puts its neighbours' reconstructions about half as far off; equal values,
#: as at the corners of a regular polygon, name no node).
STANDS_OUT = 1.25


def _free_edges(blocks: list[tuple[str, np.ndarray]]) -> np.ndarray:
    """(m, 2) the corner edges used by exactly one surface element of ``blocks``."""
    edges = []
    for t, d in blocks:
        cell = CELL_TYPES[t]
        if cell.dimension == 2 and len(d):
            edges.append(np.sort(d[:, cell.edges].reshape(-1, 2), axis=1))
    if not edges:
        return np.zeros((0, 2), dtype=np.int64)
    keys, counts = np.unique(np.concatenate(edges), axis=0, return_counts=True)
    return keys[counts == 1]


def degrees(n_points: int, blocks: list[tuple[str, np.ndarray]]) -> np.ndarray:
    """(n_points,) int: how many free surface edges end at each node."""
    return np.bincount(_free_edges(blocks).ravel(), minlength=n_points)


def outline_neighbours(n_points: int, blocks: list[tuple[str, np.ndarray]]) -> np.ndarray:
    """(n_points, 2) int: the two nodes joined to each node by free edges of the surface
    elements of ``blocks``, or -1 -1 where a node is not an end of exactly two."""
    free = _free_edges(blocks)
    out = np.full((n_points, 2), -1, dtype=np.int64)
    ends = np.concatenate([free, free[:, ::-1]])  # (node, other end), both ways
    degree = np.bincount(ends[:, 0], minlength=n_points)
    ends = ends[degree[ends[:, 0]] == 2]
    ends = ends[np.argsort(ends[:, 0], kind="stable")]
    out[ends[0::2, 0], 0] = ends[0::2, 1]
    out[ends[1::2, 0], 1] = ends[1::2, 1]
    return out


def _step(nb: np.ndarray, node: np.ndarray, came: np.ndarray) -> np.ndarray:
    """The outline neighbour of ``node`` that is not ``came`` (-1 where there is none)."""
    first, second = nb[node, 0], nb[node, 1]
    return np.where(first == came, second, first)


def _distance_to_line(x: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance of each x from the line through a and b (rows)."""
    d = b - a
    length2 = np.einsum("ij,ij->i", d, d)
    t = np.einsum("ij,ij->i", x - a, d) / np.where(length2 > 0, length2, 1.0)
    return np.linalg.norm(a + t[:, None] * d - x, axis=1)


def _turn(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Angle in degrees between directions u and v (rows); 180 where one is zero."""
    norms = np.linalg.norm(u, axis=1) * np.linalg.norm(v, axis=1)
    cos = np.einsum("ij,ij->i", u, v) / np.where(norms > 0, norms, 1.0)
    return np.where(norms > 0, np.degrees(np.arccos(np.clip(cos, -1.0, 1.0))), 180.0)


def reconstruct(points: np.ndarray, nb: np.ndarray, nodes: np.ndarray) -> tuple[np.ndarray, ...]:
    """Where each of ``nodes`` (outline nodes: ``nb`` rows not -1) belongs (see the module
    docstring). Returns ``(position (k, d), a1, a0, b0, b1)``; position is NaN where the
    four neighbours are not four distinct outline nodes."""
    a0, b0 = nb[nodes, 0], nb[nodes, 1]
    a1 = np.where(a0 >= 0, _step(nb, np.maximum(a0, 0), nodes), -1)
    b1 = np.where(b0 >= 0, _step(nb, np.maximum(b0, 0), nodes), -1)
    a2 = np.where(a1 >= 0, _step(nb, np.maximum(a1, 0), a0), -1)
    b2 = np.where(b1 >= 0, _step(nb, np.maximum(b1, 0), b0), -1)
    ring = np.stack([a1, a0, b0, b1, nodes], axis=1)
    srt = np.sort(ring, axis=1)
    ok = (ring >= 0).all(axis=1) & (srt[:, 1:] != srt[:, :-1]).all(axis=1)
    wide = np.stack([a2, b2], axis=1)
    ok_wide = ok & (wide >= 0).all(axis=1) & (a2 != b2)
    ok_wide &= ~(wide[:, :, None] == ring[:, None, :]).any(axis=(1, 2))
    q = np.where(ok[:, None], ring[:, :4], 0)
    p1, p0, r0, r1 = (points[q[:, i]] for i in range(4))
    p2 = points[np.where(ok_wide, a2, 0)]
    r2 = points[np.where(ok_wide, b2, 0)]
    x = points[nodes]
    chord = r0 - p0
    length2 = np.einsum("ij,ij->i", chord, chord)
    tol = STRAIGHT * np.sqrt(length2)

    # On a straight side ending at the other neighbour: the projection onto a0 b0.
    s_raw = np.einsum("ij,ij->i", x - p0, chord) / np.where(length2 > 0, length2, 1.0)
    on_line = p0 + np.clip(s_raw, 0.0, 1.0)[:, None] * chord
    straight_side = (_distance_to_line(p0, r1, r0) <= tol) | (_distance_to_line(r0, p1, p0) <= tol)

    # Smooth: the cubic through p1, p0, r0, r1 at parameters -2, -1, 1, 2 (the node in the
    # gap at 0, evenly spaced), at the node's own parameter along p0 -> r0.
    u = np.clip(2.0 * s_raw - 1.0, -0.8, 0.8)[:, None]
    smooth = (
        -(u + 1) * (u - 1) * (u - 2) / 12 * p1
        + (u + 2) * (u - 1) * (u - 2) / 6 * p0
        - (u + 2) * (u + 1) * (u - 2) / 6 * r0
        + (u + 2) * (u + 1) * (u - 1) / 12 * r1
    )

    # Corner: two straight sides (a2 a1 a0 and b2 b1 b0 in line) turning by more than
    # CORNER_ANGLE, their lines meeting ahead of a0 and of b0.
    da, db = p0 - p1, r0 - r1
    sides = ok_wide & (_turn(p1 - p2, da) <= STRAIGHT_ANGLE)
    sides &= _turn(r1 - r2, db) <= STRAIGHT_ANGLE
    turned = _turn(da, -db) > CORNER_ANGLE
    # Least squares for p0 + t da = r0 + u db (exact in a plane; closest points in space).
    m = np.stack([da, -db], axis=2)  # (k, d, 2)
    mtm = np.einsum("kji,kjl->kil", m, m)
    det = mtm[:, 0, 0] * mtm[:, 1, 1] - mtm[:, 0, 1] * mtm[:, 1, 0]
    rhs = np.einsum("kji,kj->ki", m, r0 - p0)
    safe = np.where(np.abs(det) > 0, det, 1.0)
    t = (mtm[:, 1, 1] * rhs[:, 0] - mtm[:, 0, 1] * rhs[:, 1]) / safe
    u = (mtm[:, 0, 0] * rhs[:, 1] - mtm[:, 1, 0] * rhs[:, 0]) / safe
    meet = 0.5 * ((p0 + t[:, None] * da) + (r0 + u[:, None] * db))
    near = np.linalg.norm(meet - 0.5 * (p0 + r0), axis=1) <= CORNER_REACH * np.sqrt(length2)
    corner = sides & turned & (np.abs(det) > 0) & (t > 0) & (u > 0) & near

    position = np.where(straight_side[:, None], on_line, np.where(corner[:, None], meet, smooth))
    position[~ok] = np.nan
    return position, a1, a0, b0, b1


def node_indices(node_ids: np.ndarray, numbers: Iterable[int]) -> np.ndarray:
    """Indices of the nodes numbered ``numbers`` (the file's node numbers); an unknown
    number is bad input."""
    wanted = np.asarray(list(numbers), dtype=np.int64)
    order = np.argsort(node_ids, kind="stable")
    at = np.minimum(np.searchsorted(node_ids[order], wanted), len(order) - 1)
    found = node_ids[order[at]] == wanted if len(order) else np.zeros(len(wanted), bool)
    if not found.all():
        raise InputError(f"--restore-outline {int(wanted[~found][0])}: no node of that number")
    return order[at]


def restore(
    points: np.ndarray,
    blocks: list[tuple[str, np.ndarray]],
    nodes: np.ndarray,
    node_ids: np.ndarray,
) -> np.ndarray:
    """``points`` with each of ``nodes`` (indices) put back on the outline (see the module
    docstring); a node that is not on an outline, or whose neighbours along it are
    restored too, is bad input (named by its number in ``node_ids``)."""
    nodes = np.unique(np.asarray(nodes, dtype=np.int64))
    out = points.copy()
    if nodes.size == 0:
        return out
    nb = outline_neighbours(len(points), blocks)
    off = nb[nodes, 0] < 0
    if off.any():
        n = int(nodes[off][0])
        found = int(degrees(len(points), blocks)[n])
        raise InputError(
            f"--restore-outline {int(node_ids[n])}: the node is not on an outline of the "
            f"surface elements (it ends {found} free edges, not 2)"
        )
    position, *around = reconstruct(points, nb, nodes)
    restored = np.zeros(len(points), dtype=bool)
    restored[nodes] = True
    near = np.stack(around, axis=1)
    clash = (near >= 0) & restored[np.maximum(near, 0)]
    bad = clash.any(axis=1) | np.isnan(position).any(axis=1)
    if bad.any():
        n = int(nodes[bad][0])
        raise InputError(
            f"--restore-outline {int(node_ids[n])}: the two outline nodes on each side of it "
            "must be distinct and not restored themselves (restore one of them at a time)"
        )
    out[nodes] = position
    if points.shape[1] == 3 and np.all(points[:, 2] == points[0, 2]):
        out[nodes, 2] = points[0, 2]  # a planar mesh facing z keeps z to the bit
    return out


def off_outline(points: np.ndarray, blocks: list[tuple[str, np.ndarray]]) -> np.ndarray:
    """(n_points,) float: how far each outline node lies from where its outline neighbours
    put it, divided by the mean length of its two outline edges; NaN for other nodes."""
    return _off(points, outline_neighbours(len(points), blocks))


def _off(points: np.ndarray, nb: np.ndarray) -> np.ndarray:
    """:func:`off_outline` for the outline neighbours ``nb``."""
    out = np.full(len(points), np.nan)
    nodes = np.flatnonzero(nb[:, 0] >= 0)
    if nodes.size == 0:
        return out
    position, _, a0, b0, _ = reconstruct(points, nb, nodes)
    x = points[nodes]
    size = 0.5 * (np.linalg.norm(x - points[a0], axis=1) + np.linalg.norm(x - points[b0], axis=1))
    out[nodes] = np.linalg.norm(position - x, axis=1) / np.where(size > 0, size, np.inf)
    return out


def astray(points: np.ndarray, blocks: list[tuple[str, np.ndarray]]) -> np.ndarray:
    """(n_points,) bool: outline nodes that lie off the outline: more than
    :data:`OFF_OUTLINE` from where their neighbours put them, and :data:`STANDS_OUT` times
    as far off as both neighbours along the outline (a node dragged off the outline also
    puts its neighbours' reconstructions off; the node itself is the one furthest off)."""
    nb = outline_neighbours(len(points), blocks)
    off = np.nan_to_num(_off(points, nb), nan=0.0)
    beside = np.where(nb >= 0, off[np.maximum(nb, 0)], np.inf)
    return (off > OFF_OUTLINE) & (off >= STANDS_OUT * beside.max(axis=1))
