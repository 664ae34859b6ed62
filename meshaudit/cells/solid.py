"""The solid cell types' reference data, taken from the tables the solid kernels export
(:mod:`meshaudit.metrics.solid`: ``tet_reference.REFERENCES``, ``hex_reference.REFERENCE``,
``wedge.WEDGE``, ``pyramid.PYRAMID``) and put in the one form every :class:`CellType`
has: shared with the kernels, not copied.

The three tables differ in small ways, which :func:`reference_data` evens out: the
corner count is ``n_corners`` or ``corners``; edges and faces are arrays or tuples; the
reference volume is stored or is the sum of the Gauss weights; shape-function derivatives
come as (m, 3, k) (tetrahedra, hexahedra) or (m, k, 3) (wedge, pyramid); the corner
triples list the three far corners (tetrahedra, hexahedra) or the corner first (wedge,
pyramid). Here: edges (e, 2) arrays, faces tuples of corner tuples (outward for a
positively oriented element), derivatives (m, 3, k), corner triples (c, 4) with the
corner first.

The kernels themselves are imported on their first call (:func:`lazy_kernel`): their
tables of Bernstein coefficients take a few hundredths of a second to build, which a
mesh without solids need not pay.
"""

from __future__ import annotations

import importlib
import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..metrics.solid import hex_reference, pyramid, tet_reference, wedge

Measured = tuple[dict[str, np.ndarray], dict[str, np.ndarray]]

#: meshio cell type -> (family, kernel module under meshaudit.metrics.solid, its table).
SOLIDS: dict[str, tuple[str, str, Any]] = {
    "tetra": ("tetra", "tetra", tet_reference.REFERENCES["tetra"]),
    "tetra10": ("tetra", "tetra", tet_reference.REFERENCES["tetra10"]),
    "hexahedron": ("hexahedron", "hexahedron", hex_reference.REFERENCE["hexahedron"]),
    "hexahedron20": ("hexahedron", "hexahedron", hex_reference.REFERENCE["hexahedron20"]),
    "hexahedron27": ("hexahedron", "hexahedron", hex_reference.REFERENCE["hexahedron27"]),
    "wedge": ("wedge", "wedge", wedge.WEDGE),
    "pyramid": ("pyramid", "pyramid", pyramid.PYRAMID),
}


@dataclass(frozen=True)
class SolidData:
    """One solid cell type's reference data in the registry's form."""

    nodes: np.ndarray  # (k, 3)
    n_corners: int
    edges: np.ndarray  # (e, 2)
    faces: tuple[tuple[int, ...], ...]
    gauss_points: np.ndarray  # (g, 3)
    gauss_weights: np.ndarray  # (g,)
    shape_functions: Callable[[np.ndarray], np.ndarray]  # (m, 3) -> (m, k)
    shape_derivatives: Callable[[np.ndarray], np.ndarray]  # (m, 3) -> (m, 3, k)
    corner_triples: np.ndarray  # (c, 4): corner, then the three far corners
    midside_edges: np.ndarray | None  # (s, 3) corner a, corner b, midside node
    volume: float  # of the reference element


def reference_data(table: Any) -> SolidData:
    """:class:`SolidData` from any of the kernels' reference tables."""
    nodes = np.asarray(table.nodes, dtype=np.float64)
    n_corners = int(getattr(table, "n_corners", getattr(table, "corners", len(nodes))))
    triples = np.asarray(table.corner_triples, dtype=np.int64)
    if triples.shape[1] == 3:  # the far corners only, row c for corner c
        triples = np.column_stack([np.arange(len(triples)), triples])
    derivatives = table.shape_derivatives
    probe = derivatives(nodes[:1])
    if probe.shape[1:] == (len(nodes), 3):  # (m, k, 3): turned to the registry's (m, 3, k)
        derivatives = _turned(derivatives)
    midside = np.asarray(getattr(table, "midside_edges", np.zeros((0, 3))), dtype=np.int64)
    weights = np.asarray(table.gauss_weights, dtype=np.float64)
    volume = getattr(table, "volume", getattr(table, "reference_volume", None))
    return SolidData(
        nodes=nodes,
        n_corners=n_corners,
        edges=np.asarray(table.edges, dtype=np.int64).reshape(-1, 2),
        faces=tuple(tuple(int(c) for c in face) for face in table.faces),
        gauss_points=np.asarray(table.gauss_points, dtype=np.float64),
        gauss_weights=weights,
        shape_functions=table.shape_functions,
        shape_derivatives=derivatives,
        corner_triples=triples,
        midside_edges=midside if len(midside) else None,
        volume=float(math.fsum(weights) if volume is None else volume),
    )


def _turned(derivatives: Callable[[np.ndarray], np.ndarray]) -> Callable[[np.ndarray], np.ndarray]:
    def turned(points: np.ndarray) -> np.ndarray:
        return np.ascontiguousarray(derivatives(points).transpose(0, 2, 1))

    return turned


def lazy_kernel(module: str, cell_type: str) -> Callable[[np.ndarray], Measured]:
    """``meshaudit.metrics.solid.<module>.measure(coords, cell_type)``, the module imported
    on the first call."""
    name = f"meshaudit.metrics.solid.{module}"

    def kernel(coords: np.ndarray) -> Measured:
        return importlib.import_module(name).measure(coords, cell_type)

    kernel.__name__ = f"measure_{cell_type}"
    return kernel


def _det3(jac: np.ndarray) -> np.ndarray:
    """det of (..., 3, 3) matrices, written out (no LAPACK call per element)."""
    a, b, c = jac[..., 0, :], jac[..., 1, :], jac[..., 2, :]
    return (
        a[..., 0] * (b[..., 1] * c[..., 2] - b[..., 2] * c[..., 1])
        + a[..., 1] * (b[..., 2] * c[..., 0] - b[..., 0] * c[..., 2])
        + a[..., 2] * (b[..., 0] * c[..., 1] - b[..., 1] * c[..., 0])
    ) + 0.0


def solid_jacobians(
    data: SolidData, undefined: tuple[int, ...] = ()
) -> Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]]:
    """det J (n, g) at the Gauss points and (n, k) at the nodes of elements (n, k, 3) in
    space, from the reference derivative tables (worked out once): in length^3 per unit
    reference volume, as the kernels measure it. Nodes listed in ``undefined`` read NaN
    (the pyramid's apex, where det J has no value: its limit depends on the direction)."""
    at_gauss = data.shape_derivatives(data.gauss_points)
    at_nodes = data.shape_derivatives(data.nodes)

    def jacobians(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        p = np.asarray(p, dtype=np.float64)
        gauss = _det3(np.einsum("mak,nkb->nmab", at_gauss, p))
        nodal = _det3(np.einsum("mak,nkb->nmab", at_nodes, p))
        if undefined:
            nodal[:, list(undefined)] = np.nan
        return gauss, nodal

    return jacobians
