"""What the repairs need to know about each cell type, worked out from the cell table.

- :func:`reversal`: the node permutation that mirrors an element (reverses its
  orientation) and keeps its first node, for every cell type of
  :data:`meshaudit.cells.registry.CELL_TYPES`, quadratic and solid cells included. It is
  read off the reference nodes: exchanging the first two reference coordinates mirrors
  the reference element onto itself; the node that lands on node j's place is taken as the
  new node j. The mirrored element's map is the old one composed with that mirror, so
  det J changes sign everywhere (a test checks it on every cell type).
- :func:`corner_table`: per corner, the corner and the far ends of the edges leaving it
  (two for a surface cell, in its winding; three for a solid, right-handed: the cell
  table's ``corner_triples``). The corner matrices of Knupp's algebraic metrics are built
  on them.
- :func:`ideal_inverse`: per corner, the inverse of the same corner matrix on the ideal
  element (square, cube, equilateral triangle, regular tetrahedron, a wedge of an
  equilateral triangle one side high, the reference pyramid), so that ``A W^-1`` is a
  rotation times a scale on the ideal shape.
- :func:`corner_weights`: the linear map from corner displacements to the displacement
  of every node (midside, face and centre nodes follow their corners).
"""

from __future__ import annotations

from functools import cache

import numpy as np

from ..cells.registry import CELL_TYPES, CellType

#: Equilateral triangle and regular tetrahedron from the unit right-angled ones.
_TRIANGLE_TO_IDEAL = np.array([[1.0, 0.5], [0.0, np.sqrt(3.0) / 2.0]])
_TETRA_TO_IDEAL = np.array(
    [[1.0, 0.5, 0.5], [0.0, np.sqrt(3.0) / 2.0, np.sqrt(3.0) / 6.0], [0.0, 0.0, np.sqrt(2.0 / 3.0)]]
)


def _cell(name: str) -> CellType:
    return CELL_TYPES[name]


@cache
def reversal(name: str) -> np.ndarray:
    """Permutation p (k,) such that ``connectivity[:, p]`` is the mirrored element."""
    ref = _cell(name).reference_nodes
    mirrored = ref.copy()
    mirrored[:, [0, 1]] = ref[:, [1, 0]]
    dist = np.abs(mirrored[:, None, :] - ref[None, :, :]).max(axis=2)
    perm = dist.argmin(axis=1)
    if not np.allclose(dist[np.arange(len(ref)), perm], 0.0) or len(set(perm)) != len(ref):
        raise ValueError(f"{name}: the reference element has no mirror on its first two axes")
    return perm.astype(np.int64)


@cache
def corner_table(name: str) -> np.ndarray:
    """(c, 1 + dimension) local node numbers: corner, then the far ends of its edges."""
    cell = _cell(name)
    if cell.dimension == 3:
        return np.asarray(cell.corner_triples, dtype=np.int64)
    c = cell.n_corners
    i = np.arange(c)
    return np.stack([i, (i + 1) % c, (i - 1) % c], axis=1)


@cache
def ideal_corners(name: str) -> np.ndarray:
    """Corner coordinates of the ideal element, (n_corners, dimension)."""
    cell = _cell(name)
    corners = cell.corners.astype(float)
    if cell.family == "triangle":
        return corners @ _TRIANGLE_TO_IDEAL.T
    if cell.family.startswith("tetra"):
        return corners @ _TETRA_TO_IDEAL.T
    if cell.family.startswith("wedge"):
        out = corners.copy()
        out[:, :2] = corners[:, :2] @ _TRIANGLE_TO_IDEAL.T
        out[:, 2] = corners[:, 2] / 2.0  # height from -1..1 to one side
        return out
    return corners


@cache
def ideal_inverse(name: str) -> np.ndarray:
    """(c, dimension, dimension): inverse corner matrix of the ideal element per corner,
    each scaled to unit determinant so the metrics do not depend on the reference size."""
    table = corner_table(name)
    ideal = ideal_corners(name)
    w = np.stack([ideal[table[:, j]] - ideal[table[:, 0]] for j in range(1, table.shape[1])], -1)
    d = w.shape[-1]
    det = np.linalg.det(w)
    w = w / np.abs(det)[:, None, None] ** (1.0 / d)
    return np.linalg.inv(w)


@cache
def corner_weights(name: str) -> np.ndarray:
    """(k, n_corners): node displacement = weights @ corner displacements.

    The corner rows are the identity; every other node takes the linear (bi-, trilinear)
    interpolation of its corners at its reference position, so an edge's midside node
    moves by the mean of its two ends and keeps the edge's bulge.
    """
    cell = _cell(name)
    twin = _linear_twin(cell)
    return twin.shape_functions(cell.reference_nodes)


def _linear_twin(cell: CellType) -> CellType:
    for other in CELL_TYPES.values():
        if (
            other.family == cell.family
            and other.n_nodes == other.n_corners == cell.n_corners
            and other.dimension == cell.dimension
        ):
            return other
    raise ValueError(f"{cell.name}: no linear cell type with its corners")
