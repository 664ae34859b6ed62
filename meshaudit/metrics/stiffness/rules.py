"""Reference tables of the element stiffness: shape-function derivatives at the Gauss
points a solver integrates the stiffness with (the cell type's own rule, see
:mod:`meshaudit.cells.registry`), and a finer rule for the mass and the exact energy
integrals.

The finer rule is 4 Gauss-Legendre points per direction on the square and the cube, and
the same rule collapsed onto the triangle, the tetrahedron, the wedge's triangle and the
pyramid (the Duffy map): it integrates every product of two shape functions times det J
of a straight-sided element exactly, and of a curved one to rounding accuracy in practice.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

import numpy as np

from ...cells.registry import CELL_TYPES, CellType

#: Cell types whose masses are lumped by the diagonal of the consistent mass matrix scaled
#: to the element's mass (Hinton, Rock and Zienkiewicz 1976, Earthquake Engineering and
#: Structural Dynamics 4, "A note on mass lumping and related processes in the finite
#: element method", from memory): the row sums of a quadratic element's consistent mass
#: matrix are zero or negative at its corners (the six-node triangle's are zero), so a
#: row-sum mass has no inverse there. Every other cell type takes the row sums.
DIAGONAL_LUMPED = frozenset(
    {"quad8", "quad9", "triangle6", "tetra10", "hexahedron20", "hexahedron27"}
)

_POINTS_1D, _WEIGHTS_1D = np.polynomial.legendre.leggauss(4)


def _unit_interval() -> tuple[np.ndarray, np.ndarray]:
    """The 4-point Gauss rule on [0, 1]."""
    return (_POINTS_1D + 1.0) / 2.0, _WEIGHTS_1D / 2.0


def _tensor(*rules: tuple[np.ndarray, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    grids = np.meshgrid(*(p for p, _ in rules), indexing="ij")
    weights = np.meshgrid(*(w for _, w in rules), indexing="ij")
    points = np.stack([g.ravel() for g in grids], axis=1)
    return points, np.prod(np.stack([w.ravel() for w in weights]), axis=0)


def fine_rule(cell: CellType) -> tuple[np.ndarray, np.ndarray]:
    """(points (q, dimension), weights (q,)) on the cell type's reference element."""
    line = (_POINTS_1D, _WEIGHTS_1D)
    unit = _unit_interval()
    family = cell.family
    if family == "quad":
        return _tensor(line, line)
    if family == "hexahedron":
        return _tensor(line, line, line)
    if family in ("triangle", "wedge"):
        p, w = _tensor(unit, unit)
        tri = np.column_stack([p[:, 0], p[:, 1] * (1.0 - p[:, 0])])
        tw = w * (1.0 - p[:, 0])
        if family == "triangle":
            return tri, tw
        q = np.repeat(tri, 4, axis=0)
        z = np.tile(_POINTS_1D, len(tri))
        return np.column_stack([q, z]), np.repeat(tw, 4) * np.tile(_WEIGHTS_1D, len(tri))
    if family == "tetra":
        p, w = _tensor(unit, unit, unit)
        u, v, s = p.T
        points = np.column_stack([u, v * (1.0 - u), s * (1.0 - u) * (1.0 - v)])
        return points, w * (1.0 - u) ** 2 * (1.0 - v)
    if family == "pyramid":
        p, w = _tensor(line, line, unit)
        x, y, z = p.T
        return np.column_stack([x * (1.0 - z), y * (1.0 - z), z]), w * (1.0 - z) ** 2
    raise KeyError(cell.name)


@dataclass(frozen=True)
class Tables:
    """One cell type's reference tables. Stiffness: shape derivatives ``derivatives``
    (g, dimension, k) at its own Gauss points, weights ``weights`` (g,), and the shape
    functions ``functions`` (g, k) there (where the Gauss points lie in the element). Mass
    and exact integrals: shape functions ``fine_functions`` (q, k), derivatives
    ``fine_derivatives`` (q, dimension, k), weights ``fine_weights`` (q,)."""

    derivatives: np.ndarray
    weights: np.ndarray
    functions: np.ndarray
    fine_functions: np.ndarray
    fine_derivatives: np.ndarray
    fine_weights: np.ndarray
    diagonal_lumped: bool


@cache
def tables(name: str) -> Tables:
    """The :class:`Tables` of meshio cell type ``name`` (worked out once)."""
    cell = CELL_TYPES[name]
    points, weights = fine_rule(cell)
    return Tables(
        derivatives=cell.shape_derivatives(cell.gauss_points),
        weights=np.asarray(cell.gauss_weights, dtype=np.float64),
        functions=cell.shape_functions(cell.gauss_points),
        fine_functions=cell.shape_functions(points),
        fine_derivatives=cell.shape_derivatives(points),
        fine_weights=weights,
        diagonal_lumped=name in DIAGONAL_LUMPED,
    )
