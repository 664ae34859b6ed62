"""Which elements touch: shared edges of surface elements, shared faces of solids, and the
size ratio between neighbours built on them.

A **side group** is one edge (surface elements) or one face (solids) with every element
that has it: ``group`` (m,) numbers the side of each use, ``element`` (m,) the element
(report position) using it. Surface elements are grouped by the mesh's edge table
(:func:`meshaudit.mesh.topology.edge_table`, corner nodes only); solids by their faces'
corner nodes, sorted (a triangle face and a quadrilateral face never match). Surface
elements and solids are never neighbours of one another.

The face grouping is a small local helper (sorted corner rows, one lexicographic sort);
the mesh-level checks of solids may build a face table of their own.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .elements import ElementMesh
from .topology import EdgeTable, index_dtype


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
    nodes as a set). Sorted rows and one ``np.lexsort``, no per-element loop."""
    rows, elems = [], []
    for block in mesh.blocks:
        cell = block.cell
        if cell.dimension != 3 or len(block) == 0:
            continue
        for face in cell.faces:
            nodes = np.full((len(block), 4), -1, dtype=np.int64)
            nodes[:, : len(face)] = block.connectivity[:, list(face)]
            rows.append(nodes)
            elems.append(block.index)
    if not rows:
        return SideGroups.empty()
    faces = np.concatenate(rows)
    element = np.concatenate(elems).astype(np.int64)
    faces.sort(axis=1)  # the -1 of a triangle face comes first: triangles never match quads
    order = np.lexsort(faces.T[::-1])
    ordered = faces[order]
    new = np.empty(len(order), dtype=bool)
    new[0] = True
    np.any(ordered[1:] != ordered[:-1], axis=1, out=new[1:])
    group = np.empty(len(order), dtype=index_dtype(len(order)))
    group[order] = np.cumsum(new) - 1
    return SideGroups(group.astype(np.int64), element)


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
    all. How: for each side the largest and smallest h of the elements on it, then for each
    element the worst over its sides of (largest / h_e, h_e / smallest): the element itself
    is on each of its sides, so a side alone reads 1.
    """
    n = h.size
    ratio = np.ones(n)
    seen = h.copy()
    if counted is not None:
        seen[~counted] = np.nan
    for side in sides:
        if side.group.size == 0:
            continue
        k = int(side.group.max()) + 1
        values = seen[side.element]
        high = np.full(k, -np.inf)
        low = np.full(k, np.inf)
        np.fmax.at(high, side.group, values)
        np.fmin.at(low, side.group, values)
        own = h[side.element]
        with np.errstate(divide="ignore", invalid="ignore"):
            up = high[side.group] / own
            down = own / low[side.group]
        worst = np.fmax(up, down)
        # a side whose other elements are all left out reads -inf/h or h/inf: no neighbour
        worst[worst < 1.0] = 1.0
        np.fmax.at(ratio, side.element, worst)
    ratio[np.isnan(h)] = np.nan
    return ratio
