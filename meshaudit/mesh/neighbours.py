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
from .faces import FaceTable, face_table
from .topology import EdgeTable, index_dtype

#: Sides with this many uses or more are worked out by their extremes: position sums of
#: squares stay exact in float64 (2^53) only below 2^26 uses.
EXACT_USES = 1 << 26


@dataclass(frozen=True)
class SideGroups:
    """Every (side, element) use: ``group`` (m,) side number, ``element`` (m,) report
    position of the element using it (int32 or int64). ``first`` and ``last`` (sides,):
    each side's first and last use, when the table they come from knows them (None:
    worked out from sums of the use positions, see :func:`_worst_per_use`)."""

    group: np.ndarray
    element: np.ndarray
    first: np.ndarray | None = None
    last: np.ndarray | None = None

    @classmethod
    def empty(cls) -> SideGroups:
        return cls(np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64))


def edge_groups(table: EdgeTable, positions: np.ndarray | None) -> SideGroups:
    """Side groups of the surface elements from their edge table; ``positions`` maps the
    table's element numbers to report positions (None: they are report positions)."""
    element = table.element  # int32 where the table holds it so: no wider copy
    if positions is not None:
        element = positions[element]
    return SideGroups(table.edge, element, table.first, table.last)


def face_groups(
    mesh: ElementMesh, table: FaceTable | None = None, positions: np.ndarray | None = None
) -> SideGroups:
    """Side groups of the solids of ``mesh``: one group per distinct face (its corner
    nodes as a set), from the solids' face table (:func:`meshaudit.mesh.faces.face_table`:
    sorted keys, no per-element loop; a triangle never matches a quadrilateral).

    ``table``: that table when it is built already, of every solid of ``mesh`` (e.g. by
    the mesh-level checks, of the solid part: then ``positions`` (s,) maps its element
    numbers to report positions), so that it is not built twice."""
    if table is None:
        table = face_table(mesh)
    if table.face.size == 0:
        return SideGroups.empty()
    element = table.element
    if positions is not None and not np.array_equal(positions, np.arange(positions.size)):
        element = positions.astype(index_dtype(mesh.n_elements))[element]
    return SideGroups(table.face, element, table.first, table.last)


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
    all. How, with no per-element loop and no sort: a side with two uses (nearly all)
    knows its two elements (the side table's first and last use, or ``bincount`` sums of
    the use positions, see :func:`_pairs`) and gets one ratio; a side with three or more
    uses (non-manifold) takes the largest and smallest h on it; each element then takes
    the worst over its uses. The uses are gone through in blocks of :data:`BLOCK` (a loop
    over blocks, not elements), so the temporaries stay small whatever the mesh size.
    """
    n = h.size
    ratio = np.ones(n)
    seen = h.astype(float, copy=True)
    if counted is not None:
        seen[~counted] = np.nan
    for side in sides:
        if side.group.size == 0:
            continue
        _worst_over_side(ratio, h, seen, side)
    ratio[np.isnan(h)] = np.nan
    return ratio


#: Uses (and sides) handled per block by :func:`size_ratio`: 2^18, so each temporary is
#: a few hundred KiB to 2 MiB (reused from the heap, in the CPU cache).
BLOCK = 1 << 18


def _pairs(side: SideGroups, uses: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(p, q) (sides,): the first and last use of each side (meaningful where it has two).

    From the side table when it has them; otherwise, for a side with two uses at
    positions p < q, the sums s = p + q and t = p^2 + q^2 (two ``bincount``, exact in
    float64 below 2^26 uses) give q - p = sqrt(2t - s^2); beyond 2^26 uses by
    ``ufunc.at`` extremes of the positions."""
    k = uses.size
    if side.first is not None and side.last is not None and side.first.size == k:
        return side.first, side.last
    m = side.group.size
    if m >= EXACT_USES:
        position = np.arange(m, dtype=np.int64)
        p = np.full(k, m, dtype=np.int64)
        q = np.full(k, -1, dtype=np.int64)
        np.minimum.at(p, side.group, position)
        np.maximum.at(q, side.group, position)
        return p, q
    position = np.arange(m, dtype=np.float64)
    s = np.bincount(side.group, weights=position, minlength=k)
    t = np.bincount(side.group, weights=position * position, minlength=k)
    del position
    d = np.sqrt(np.maximum(2.0 * t - s * s, 0.0))
    p = ((s - d) * 0.5).astype(np.int64)
    q = ((s + d) * 0.5).astype(np.int64)
    return p, q


def _worst_over_side(ratio: np.ndarray, h: np.ndarray, seen: np.ndarray, side: SideGroups) -> None:
    """ratio[e] = max(ratio[e], the worst ratio over e's uses of the sides ``side``), in
    place: an element's h against the h of every other counted element on its side
    (NaN: none counted, ignored)."""
    group, element = side.group, side.element
    k = int(group.max()) + 1
    uses = np.bincount(group, minlength=k)
    p, q = _pairs(side, uses)
    side_ratio = np.full(k, np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        for lo in range(0, k, BLOCK):
            two = np.flatnonzero(uses[lo : lo + BLOCK] == 2)
            two += lo
            first = element[p[two].astype(np.intp)].astype(np.intp)
            last = element[q[two].astype(np.intp)].astype(np.intp)
            a, b = seen[first], seen[last]
            side_ratio[two] = np.fmax(a / b, b / a)
    many = uses > 2
    high = low = None
    if many.any():  # non-manifold sides: the extremes of every counted h on them
        on = np.flatnonzero(many[group])
        high, low = np.full(k, -np.inf), np.full(k, np.inf)
        np.fmax.at(high, group[on], seen[element[on]])
        np.fmin.at(low, group[on], seen[element[on]])
        del on
    invalid = np.isnan(seen)
    some_invalid = bool(invalid.any())
    ordered = element.size < 2 or bool((element[1:] >= element[:-1]).all())
    for lo in range(0, group.size, BLOCK):
        # indices as numpy's own index type once per block (int32 would be cast
        # again by every gather)
        g = group[lo : lo + BLOCK].astype(np.intp)
        e = element[lo : lo + BLOCK].astype(np.intp)
        with np.errstate(divide="ignore", invalid="ignore"):
            worst = side_ratio[g]
            if some_invalid:  # an element left out still reads its neighbour against itself
                out = np.flatnonzero(invalid[e])
                out = out[uses[g[out]] == 2]
                if out.size:
                    mine = h[e[out]]
                    gg = g[out]
                    other_use = p[gg].astype(np.int64) + q[gg] - (out + lo)
                    other = seen[element[other_use]]
                    worst[out] = np.fmax(other / mine, mine / other)
            if high is not None:
                nm = np.flatnonzero(many[g])
                if nm.size:
                    mine = h[e[nm]]
                    worst[nm] = np.fmax(high[g[nm]] / mine, mine / low[g[nm]])
        worst[worst < 1.0] = 1.0  # -inf/h or h/inf: no other element counted
        _worst_per_element(ratio, e, worst, ordered)


def _worst_per_element(
    ratio: np.ndarray, element: np.ndarray, worst: np.ndarray, ordered: bool
) -> None:
    """ratio[e] = max(ratio[e], worst over e's uses), in place; NaN uses are ignored.
    ``ordered``: ``element`` ascends (uses element by element), so one ``reduceat``."""
    if ordered and element.size > 1:
        starts = np.flatnonzero(np.concatenate([[True], element[1:] != element[:-1]]))
        best = np.fmax.reduceat(worst, starts)
        rows = element[starts]
        ratio[rows] = np.fmax(ratio[rows], best)
    else:
        np.fmax.at(ratio, element, worst)
