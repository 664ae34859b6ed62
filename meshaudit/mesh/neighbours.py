"""Which elements touch: shared edges of surface elements, shared faces of solids, and the
size ratio between neighbours built on them.

A **side group** is one edge (surface elements) or one face (solids) with every element
that has it: ``group`` (m,) numbers the side of each use, ``element`` (m,) the element
(report position) using it. Surface elements are grouped by the mesh's edge table
(:func:`meshaudit.mesh.topology.edge_table`, corner nodes only); solids by their faces'
corner nodes, sorted (a triangle face and a quadrilateral face never match). Surface
elements and solids are never neighbours of one another.

The face grouping is a small local helper (sorted corner rows, three corners packed in one
key and sorted as the edge table's keys are); the mesh-level checks of solids may build a
face table of their own.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .elements import ElementMesh
from .topology import EdgeTable

#: Sides with this many uses or more are worked out by their extremes: position sums of
#: squares stay exact in float64 (2^53) only below 2^26 uses.
EXACT_USES = 1 << 26


@dataclass(frozen=True)
class SideGroups:
    """Every (side, element) use: ``group`` (m,) side number, ``element`` (m,) report
    position of the element using it."""

    group: np.ndarray
    element: np.ndarray

    @classmethod
    def empty(cls) -> SideGroups:
        return cls(np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64))


def edge_groups(table: EdgeTable, positions: np.ndarray | None) -> SideGroups:
    """Side groups of the surface elements from their edge table; ``positions`` maps the
    table's element numbers to report positions (None: they are report positions)."""
    element = table.element.astype(np.int64)
    if positions is not None:
        element = positions[element]
    return SideGroups(table.edge.astype(np.int64), element)


def face_groups(mesh: ElementMesh) -> SideGroups:
    """Side groups of the solids of ``mesh``: one group per distinct face (its corner
    nodes as a set), from the solids' face table (:func:`meshaudit.mesh.faces.face_table`:
    sorted keys, no per-element loop; a triangle never matches a quadrilateral)."""
    from .faces import face_table

    table = face_table(mesh)
    if table.face.size == 0:
        return SideGroups.empty()
    return SideGroups(table.face.astype(np.int64), table.element.astype(np.int64))


def characteristic_length(size: np.ndarray, dimension: np.ndarray) -> np.ndarray:
    """h of each element: sqrt(area) for a surface element (``dimension`` 2), cbrt(|volume|)
    for a solid (3). In the mesh's length unit; 1 for the unit square and the unit cube."""
    h = np.where(dimension == 3, np.cbrt(np.abs(size)), np.sqrt(np.abs(size)))
    return h


def size_ratio(
    h: np.ndarray, sides: list[SideGroups], counted: np.ndarray | None = None
) -> np.ndarray:
    """size_ratio of each element: the largest max(h_e, h_n) / min(h_e, h_n) over its
    neighbours n (elements sharing an edge, solids a face), from the characteristic lengths
    ``h`` (:func:`characteristic_length`). 1 with no neighbour; at least 1 otherwise;
    infinite when one of the two sizes is 0 (a collapsed element).

    ``counted`` (n,) bool: elements whose size counts as a neighbour's (an invalid element,
    folded or collapsed, fails on its own and does not make its neighbours fail); None:
    all. How, with no per-element loop and no sort: a side with two uses (nearly all) finds
    its two elements from ``bincount`` sums of the use positions (see
    :func:`_worst_per_use`); a side with three or more uses (non-manifold) takes the largest
    and smallest h on it; each element then takes the worst over its uses, which lie
    together (element by element) in the side groups.
    """
    n = h.size
    ratio = np.ones(n)
    seen = h.astype(float, copy=True)
    if counted is not None:
        seen[~counted] = np.nan
    for side in sides:
        if side.group.size == 0:
            continue
        worst = _worst_per_use(h, seen, side)
        _worst_per_element(ratio, side.element, worst)
    ratio[np.isnan(h)] = np.nan
    return ratio


def _worst_per_use(h: np.ndarray, seen: np.ndarray, side: SideGroups) -> np.ndarray:
    """For every use of a side: the largest ratio between its element's h and the h of
    another element on that side (NaN: none counted).

    A side with two uses at positions p < q: the sums s = p + q and t = p^2 + q^2 (two
    ``bincount``, exact in float64 below 2^26 uses) give q - p = sqrt(2t - s^2), so both
    positions, with no sort and one gather per side rather than several per use."""
    group, element = side.group, side.element
    m = group.size
    k = int(group.max()) + 1
    uses = np.bincount(group, minlength=k)
    if m >= EXACT_USES:  # beyond exact float64 sums: every side by its extremes
        return _by_extremes(h, seen, side, np.arange(m), k)
    position = np.arange(m, dtype=np.float64)
    s = np.bincount(group, weights=position, minlength=k)
    t = np.bincount(group, weights=position * position, minlength=k)
    two = np.flatnonzero(uses == 2)
    s, t = s[two], t[two]
    d = np.sqrt(2.0 * t - s * s)
    p = ((s - d) * 0.5).astype(np.int64)
    q = ((s + d) * 0.5).astype(np.int64)
    a, b = seen[element[p]], seen[element[q]]
    side_ratio = np.full(k, np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        side_ratio[two] = np.fmax(a / b, b / a)
        worst = side_ratio[group]
        # an element left out (invalid) still reads its neighbour's size against its own
        out = np.zeros(0, dtype=np.int64)
        if np.isnan(seen).any():
            out = np.flatnonzero(np.isnan(seen[element]) & (uses[group] == 2))
        if out.size:
            pair_sum = np.zeros(k, dtype=np.int64)
            pair_sum[two] = p + q
            other = seen[element[pair_sum[group[out]] - out]]
            mine = h[element[out]]
            worst[out] = np.fmax(other / mine, mine / other)
    if (uses > 2).any():  # non-manifold sides: the extremes of every h on them
        many = np.flatnonzero(uses[group] > 2)
        worst[many] = _by_extremes(h, seen, side, many, k)
    worst[worst < 1.0] = 1.0  # -inf/h or h/inf: no other element counted
    return worst


def _by_extremes(
    h: np.ndarray, seen: np.ndarray, side: SideGroups, uses: np.ndarray, k: int
) -> np.ndarray:
    """The worst ratio of each of the ``uses`` against the largest and smallest counted h
    on its side (``ufunc.at`` over those uses only)."""
    g, e = side.group[uses], side.element[uses]
    high = np.full(k, -np.inf)
    low = np.full(k, np.inf)
    np.fmax.at(high, g, seen[e])
    np.fmin.at(low, g, seen[e])
    mine = h[e]
    with np.errstate(divide="ignore", invalid="ignore"):
        worst = np.fmax(high[g] / mine, mine / low[g])
    worst[worst < 1.0] = 1.0
    return worst


def _worst_per_element(ratio: np.ndarray, element: np.ndarray, worst: np.ndarray) -> None:
    """ratio[e] = max(ratio[e], worst over e's uses), in place; NaN uses are ignored."""
    if element.size > 1 and bool((element[1:] >= element[:-1]).all()):
        starts = np.flatnonzero(np.concatenate([[True], element[1:] != element[:-1]]))
        best = np.fmax.reduceat(worst, starts)
        rows = element[starts]
        ratio[rows] = np.fmax(ratio[rows], best)
    else:
        np.fmax.at(ratio, element, worst)
