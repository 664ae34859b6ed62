"""One table of the cell types meshaudit audits: everything every stage needs to know
about an element type, in one :class:`CellType` entry per meshio cell type.

Reading takes the node count from it, the engine the dimension, the corner count and the
kernel, the topology and the mesh-level checks the corners and edges, explain and the
plots the reference nodes, the Gauss rule and the shape functions. A new cell type is one
new entry in :data:`CELL_TYPES` (its reference data in a module of this package, its
kernel in :mod:`meshaudit.metrics`), and nothing else in the pipeline names it.

Surface cells (dimension 2): ``quad``, ``quad8``, ``quad9``, ``triangle``, ``triangle6``.
Solids (dimension 3, :mod:`meshaudit.cells.solid` adapts the kernels' own reference
tables): ``tetra``, ``tetra10``, ``hexahedron``, ``hexahedron20``, ``hexahedron27``,
``wedge``, ``pyramid``.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from ..metrics import bernstein
from ..metrics import quad as quad_kernel
from ..metrics import triangle as triangle_kernel
from . import quad as Q
from . import solid as S
from . import triangle as T
from .mapping import jacobian_determinants

#: Metrics and flags of a chunk of elements: ({metric name: (n,)}, {flag name: (n,) bool}).
Measured = tuple[dict[str, np.ndarray], dict[str, np.ndarray]]

#: A family kernel. Dimension 2: ``kernel(corners (n, c, 3), local (n, c, 2))``, the corner
#: nodes in space and laid in the element's measuring plane (see
#: :func:`meshaudit.mesh.frames.to_local`). Dimension 3: ``kernel(coords (n, k, 3))``, every
#: node in space, no measuring plane. Returns the metrics of :data:`meshaudit.metrics.METRICS`
#: it measures (the engine fills the others with NaN) and its flags (the engine reads a
#: validity flag the kernel does not return as False).
Kernel = Callable[..., Measured]

#: det J of elements at the Gauss points (n, g) and at the reference nodes (n, k), from
#: their nodes laid in their measuring plane (n, k, 2) (surface cells) or in space
#: (n, k, 3) (solids), as the audit measures them.
Jacobians = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]]


@dataclass(frozen=True, eq=False)
class CellType:
    """Everything about one meshio cell type.

    ``reference_nodes`` (k, dimension): the nodes on the reference element, meshio's node
    order, corners first. ``edges`` (e, 2): corner pairs; for a surface cell the boundary
    loop corner i -> i + 1, in the element's winding. ``faces``: the corner loops of the
    faces, each counter-clockwise seen from outside the element (a surface cell is its own
    one face). ``gauss_points`` (g, dimension) and ``gauss_weights`` (g,): the rule a solver
    integrates the element with, where det J is reported. ``shape_functions`` maps
    reference points (m, dimension) to (m, k); ``shape_derivatives`` points (m,
    dimension) to (m, dimension, k). ``corner_triples`` (solids, (c, 4)): a corner and
    the far ends of the three edges leaving it, right-handed for a positively oriented
    element (the corner Jacobians).
    """

    name: str  # meshio cell type
    family: str  # metric family: selects the profile limits and the score's ideal shape
    dimension: int  # 2: a surface, measured in a plane; 3: a solid
    n_corners: int
    reference_nodes: np.ndarray
    edges: np.ndarray
    faces: tuple[tuple[int, ...], ...]
    gauss_points: np.ndarray
    gauss_weights: np.ndarray
    shape_functions: Callable[[np.ndarray], np.ndarray]
    shape_derivatives: Callable[[np.ndarray], np.ndarray]
    kernel: Kernel  # the family kernel, on the corner nodes (see Kernel)
    jacobians: Jacobians
    reference_measure: float  # area (volume) of the reference element
    #: Ideal values of the shape metrics that differ between families (the square's
    #: and the equilateral triangle's angles); see meshaudit.judge.score.
    ideal: Mapping[str, float] = field(default_factory=dict)
    #: Quadratic surface cells: (corner a, corner b, midside node) of every edge, and the
    #: Bernstein space that holds det J (see meshaudit.metrics.quadratic).
    midside_edges: np.ndarray | None = None
    jacobian_space: bernstein.BernsteinSpace | None = None
    corner_triples: np.ndarray | None = None

    @property
    def n_nodes(self) -> int:
        return int(self.reference_nodes.shape[0])

    @property
    def corners(self) -> np.ndarray:
        """Reference coordinates of the corners, (n_corners, dimension)."""
        return self.reference_nodes[: self.n_corners]

    @property
    def is_quadratic(self) -> bool:
        """Whether the cell has nodes beyond its corners (its edges may be curved)."""
        return self.n_nodes > self.n_corners


def _quad_jacobians(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    return quad_kernel.gauss_jacobians(p), quad_kernel.corner_jacobians(p)


def _triangle_jacobians(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    det = triangle_kernel.jacobian_determinant(p)  # constant over the element
    return det[:, None], np.repeat(det[:, None], 3, axis=1)


def _tabled_jacobians(shape_derivatives, gauss: np.ndarray, nodes: np.ndarray) -> Jacobians:
    """det J of any isoparametric cell, from derivative tables worked out once."""
    at_gauss, at_nodes = shape_derivatives(gauss), shape_derivatives(nodes)

    def jacobians(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return jacobian_determinants(at_gauss, p), jacobian_determinants(at_nodes, p)

    return jacobians


_SQUARE = MappingProxyType({"min_angle": 90.0, "max_angle": 90.0})
_EQUILATERAL = MappingProxyType({"min_angle": 60.0, "max_angle": 60.0})

QUAD = CellType(
    name="quad",
    family="quad",
    dimension=2,
    n_corners=4,
    reference_nodes=Q.QUAD_CORNERS,
    edges=Q.QUAD_EDGES,
    faces=((0, 1, 2, 3),),
    gauss_points=Q.QUAD_GAUSS_2X2,
    gauss_weights=Q.QUAD_WEIGHTS_2X2,
    shape_functions=Q.quad_shape_functions,
    shape_derivatives=Q.quad_shape_derivatives,
    kernel=quad_kernel.measure,
    jacobians=_quad_jacobians,
    reference_measure=Q.REFERENCE_AREA,
    ideal=_SQUARE,
)


def _quadratic_quad(name: str, nodes: np.ndarray, functions, derivatives) -> CellType:
    return CellType(
        name=name,
        family="quad",
        dimension=2,
        n_corners=4,
        reference_nodes=nodes,
        edges=Q.QUAD_EDGES,
        faces=((0, 1, 2, 3),),
        gauss_points=Q.QUAD_GAUSS_3X3,
        gauss_weights=Q.QUAD_WEIGHTS_3X3,
        shape_functions=functions,
        shape_derivatives=derivatives,
        kernel=quad_kernel.measure,
        jacobians=_tabled_jacobians(derivatives, Q.QUAD_GAUSS_3X3, nodes),
        reference_measure=Q.REFERENCE_AREA,
        ideal=_SQUARE,
        midside_edges=Q.QUAD_MIDSIDE_EDGES,
        jacobian_space=bernstein.SQUARE,
    )


QUAD8 = _quadratic_quad("quad8", Q.QUAD8_NODES, Q.quad8_shape_functions, Q.quad8_shape_derivatives)
QUAD9 = _quadratic_quad("quad9", Q.QUAD9_NODES, Q.quad9_shape_functions, Q.quad9_shape_derivatives)

TRIANGLE = CellType(
    name="triangle",
    family="triangle",
    dimension=2,
    n_corners=3,
    reference_nodes=T.TRIANGLE_CORNERS,
    edges=T.TRIANGLE_EDGES,
    faces=((0, 1, 2),),
    gauss_points=T.TRIANGLE_GAUSS_1,
    gauss_weights=T.TRIANGLE_WEIGHTS_1,
    shape_functions=T.triangle_shape_functions,
    shape_derivatives=T.triangle_shape_derivatives,
    kernel=triangle_kernel.measure,
    jacobians=_triangle_jacobians,
    reference_measure=T.REFERENCE_AREA,
    ideal=_EQUILATERAL,
)

TRIANGLE6 = CellType(
    name="triangle6",
    family="triangle",
    dimension=2,
    n_corners=3,
    reference_nodes=T.TRIANGLE6_NODES,
    edges=T.TRIANGLE_EDGES,
    faces=((0, 1, 2),),
    gauss_points=T.TRIANGLE_GAUSS_3,
    gauss_weights=T.TRIANGLE_WEIGHTS_3,
    shape_functions=T.triangle6_shape_functions,
    shape_derivatives=T.triangle6_shape_derivatives,
    kernel=triangle_kernel.measure,
    jacobians=_tabled_jacobians(
        T.triangle6_shape_derivatives, T.TRIANGLE_GAUSS_3, T.TRIANGLE6_NODES
    ),
    reference_measure=T.REFERENCE_AREA,
    ideal=_EQUILATERAL,
    midside_edges=T.TRIANGLE_MIDSIDE_EDGES,
    jacobian_space=bernstein.TRIANGLE,
)


def _solid(name: str) -> CellType:
    """A solid's entry, from the reference table its kernel exports."""
    family, module, table = S.SOLIDS[name]
    data = S.reference_data(table)
    return CellType(
        name=name,
        family=family,
        dimension=3,
        n_corners=data.n_corners,
        reference_nodes=data.nodes,
        edges=data.edges,
        faces=data.faces,
        gauss_points=data.gauss_points,
        gauss_weights=data.gauss_weights,
        shape_functions=data.shape_functions,
        shape_derivatives=data.shape_derivatives,
        kernel=S.lazy_kernel(module, name),
        # the pyramid's apex has no det J: its limit there depends on the direction
        jacobians=S.solid_jacobians(data, (4,) if name == "pyramid" else ()),
        reference_measure=data.volume,
        midside_edges=data.midside_edges,
        corner_triples=data.corner_triples,
    )


SOLID_CELLS: tuple[CellType, ...] = tuple(_solid(name) for name in S.SOLIDS)

#: meshio cell type -> its :class:`CellType`: the cell types meshaudit audits.
CELL_TYPES: Mapping[str, CellType] = MappingProxyType(
    {cell.name: cell for cell in (QUAD, TRIANGLE, QUAD8, QUAD9, TRIANGLE6, *SOLID_CELLS)}
)

#: The metric families, in table order.
FAMILIES: tuple[str, ...] = tuple(dict.fromkeys(cell.family for cell in CELL_TYPES.values()))
