"""What the inspection outputs need beside the report: the mesh itself.

The report holds per-element numbers; a picture, an annotated mesh or a one-element
explanation also needs node coordinates and connectivity (and, for writing the mesh back,
the meshio mesh as read, with its line and vertex blocks). :func:`meshaudit.audit_mesh`
reads once and keeps all three together in an :class:`AuditedMesh`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..cells.registry import CellType
from ..mesh.elements import ElementMesh
from .report import Report

if TYPE_CHECKING:
    import meshio


@dataclass
class AuditedMesh:
    """A report together with the element arrays and the meshio mesh it was measured on."""

    report: Report
    elements: ElementMesh
    raw: meshio.Mesh | None = None


def corner_table(elements: ElementMesh) -> np.ndarray:
    """Corner node indices of every element in report order, shape (n, w), int64: w = 4,
    or the largest corner count of a solid in the mesh (8 with hexahedra).

    Elements with fewer corners repeat their last corner in the columns left, so for a
    surface mesh every row is a closed polygon that can be drawn as is (the repeated vertex
    adds a zero-length edge).
    """
    width = max([4, *(b.cell.n_corners for b in elements.blocks)])
    table = np.empty((elements.n_elements, width), dtype=np.int64)
    for block in elements.blocks:
        k = block.cell.n_corners
        corners = block.connectivity[:, :k]
        table[block.index, :k] = corners
        if k < width:
            table[block.index, k:] = corners[:, k - 1 : k]
    return table


def corner_count(elements: ElementMesh) -> np.ndarray:
    """Number of distinct corners (3 or 4) of every element in report order."""
    counts = np.empty(elements.n_elements, dtype=np.int8)
    for block in elements.blocks:
        counts[block.index] = block.cell.n_corners
    return counts


def element_nodes(elements: ElementMesh, i: int) -> np.ndarray:
    """All node indices (0-based, file order) of the element at report index ``i``."""
    for block in elements.blocks:
        start = int(block.index[0])
        if start <= i < start + len(block):
            return block.connectivity[i - start].copy()
    raise IndexError(i)


def neighbours(table: np.ndarray, i: int) -> np.ndarray:
    """Report indices of the elements sharing at least one node with element ``i``."""
    mine = np.unique(table[i])
    touching = np.isin(table, mine).any(axis=1)
    touching[i] = False
    return np.flatnonzero(touching)


#: Points per edge when a quadratic element's curved outline is sampled.
EDGE_SAMPLES = 6


def _boundary_reference(cell: CellType, per_edge: int) -> np.ndarray:
    """Reference points around the element, ``per_edge`` per edge, 4 * per_edge in all
    (the triangle repeats its last point to pad to the quad's count)."""
    t = np.linspace(0.0, 1.0, per_edge, endpoint=False)[:, None]
    c = cell.corners
    ring = np.vstack([a + t * (b - a) for a, b in zip(c, np.roll(c, -1, axis=0))])
    pad = 4 * per_edge - len(ring)
    return np.vstack([ring, np.repeat(ring[-1:], pad, axis=0)]) if pad else ring


def has_curved_cells(elements: ElementMesh) -> bool:
    """Whether any block is quadratic (its edges may be curved)."""
    return any(b.cell.is_quadratic for b in elements.blocks)


def outline_points(elements: ElementMesh, xy: np.ndarray) -> np.ndarray:
    """Outline of every element in report order, (n, 4 * EDGE_SAMPLES, 2): each edge
    sampled through the element's own map, so quadratic elements show their curved
    edges. ``xy`` (n_points, 2) are the node positions on the page."""
    out = np.empty((elements.n_elements, 4 * EDGE_SAMPLES, 2))
    for block in elements.blocks:
        ref = _boundary_reference(block.cell, EDGE_SAMPLES)
        weights = block.cell.shape_functions(ref)  # (m, k)
        out[block.index] = np.einsum("mk,nkd->nmd", weights, xy[block.connectivity])
    return out
