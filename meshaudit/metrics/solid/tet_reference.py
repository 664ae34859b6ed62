"""Reference data of the tetrahedra ``tetra`` (4 nodes) and ``tetra10`` (10 nodes).

Reference element: the unit tetrahedron with corners (0, 0, 0), (1, 0, 0), (0, 1, 0),
(0, 0, 1), of volume 1/6, in meshio's (= VTK's) node order. Its barycentric coordinates
are L0 = 1 - xi - eta - zeta, L1 = xi, L2 = eta, L3 = zeta. Corners 0, 1, 2 turn
counter-clockwise seen from corner 3: the right-hand normal of the base (0, 1, 2) points
towards corner 3, so the map of a positively oriented element has det J > 0.

tetra10 adds the midside nodes of the edges 0-1, 1-2, 2-0, 0-3, 1-3, 2-3 (nodes 4 to 9),
at the edge midpoints of the reference element. Shape functions: corners
N_i = L_i (2 L_i - 1), midside nodes N_ij = 4 L_i L_j.

det J is the Jacobian determinant of the map from this reference element, in length^3
per unit reference volume: 6 times the signed volume for a linear tetrahedron.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

#: Corners of the reference tetrahedron.
CORNERS = np.array([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]])

#: The six edges as pairs of corners, in the order of tetra10's midside nodes 4 to 9.
EDGES = np.array([[0, 1], [1, 2], [2, 0], [0, 3], [1, 3], [2, 3]])

#: The four faces, each turning counter-clockwise seen from outside a positively
#: oriented element (right-hand normal pointing out).
FACES = np.array([[0, 1, 3], [1, 2, 3], [2, 0, 3], [0, 2, 1]])

#: Corner Jacobian triples: at corner c, the edges towards the three corners listed, in
#: this order, form a right-handed frame for a positively oriented element (each row
#: is an even permutation of the corners, started at c).
CORNER_TRIPLES = np.array([[1, 2, 3], [2, 0, 3], [3, 0, 1], [0, 2, 1]])

#: For each edge of :data:`EDGES`, the two faces of :data:`FACES` that meet along it.
EDGE_FACES = np.array([[0, 3], [1, 3], [2, 3], [0, 2], [0, 1], [1, 2]])

#: Nodes of tetra10: the corners, then the midpoints of :data:`EDGES`.
TETRA10_NODES = np.vstack([CORNERS, 0.5 * (CORNERS[EDGES[:, 0]] + CORNERS[EDGES[:, 1]])])

#: One-point rule (the centroid, weight = the reference volume 1/6): exact for linear
#: polynomials, and det J of a linear tetrahedron is constant.
GAUSS_1 = np.array([[0.25, 0.25, 0.25]])
WEIGHTS_1 = np.array([1.0 / 6.0])

_A = (5.0 - np.sqrt(5.0)) / 20.0
_B = (5.0 + 3.0 * np.sqrt(5.0)) / 20.0

#: Four-point rule exact for polynomials of degree 2 (barycentric coordinates a, a, a, b
#: and permutations, a = (5 - sqrt 5)/20, b = (5 + 3 sqrt 5)/20, weights 1/24): the
#: usual full-integration rule of tetra10, whose stiffness integrand is of degree 2 on a
#: straight-sided element. Point i sits near corner i.
GAUSS_4 = np.array([[_A, _A, _A], [_B, _A, _A], [_A, _B, _A], [_A, _A, _B]])
WEIGHTS_4 = np.full(4, 1.0 / 24.0)


def barycentric(points: np.ndarray) -> np.ndarray:
    """Barycentric coordinates (m, 4) of reference points (m, 3)."""
    points = np.asarray(points, dtype=float).reshape(-1, 3)
    return np.column_stack([1.0 - points.sum(axis=1), points])


#: d L_i / d(xi, eta, zeta): (4, 3).
_DL = np.array([[-1.0, -1.0, -1.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]])


def tetra_shape_functions(points: np.ndarray) -> np.ndarray:
    """Linear shape functions N_i = L_i at reference points (m, 3): (m, 4)."""
    return barycentric(points)


def tetra_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i/d(xi, eta, zeta) of the linear tetrahedron at points (m, 3): (m, 3, 4)."""
    m = barycentric(points).shape[0]
    return np.broadcast_to(_DL.T, (m, 3, 4)).copy()


def tetra10_shape_functions(points: np.ndarray) -> np.ndarray:
    """tetra10 shape functions at reference points (m, 3): (m, 10), meshio's order."""
    lam = barycentric(points)
    corners = lam * (2.0 * lam - 1.0)
    mids = 4.0 * lam[:, EDGES[:, 0]] * lam[:, EDGES[:, 1]]
    return np.hstack([corners, mids])


def tetra10_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN/d(xi, eta, zeta) of tetra10 at reference points (m, 3): (m, 3, 10).

    dN_i = (4 L_i - 1) dL_i, dN_ij = 4 (L_i dL_j + L_j dL_i).
    """
    lam = barycentric(points)
    corners = (4.0 * lam - 1.0)[:, None, :] * _DL.T[None]
    i, j = EDGES[:, 0], EDGES[:, 1]
    mids = 4.0 * (lam[:, None, i] * _DL.T[None, :, j] + lam[:, None, j] * _DL.T[None, :, i])
    return np.concatenate([corners, mids], axis=2)


@dataclass(frozen=True)
class SolidReference:
    """What the engine needs to know about one solid cell type.

    ``nodes`` (k, 3) reference coordinates in meshio's node order; ``n_corners``;
    ``edges`` (e, 2) pairs of corner indices; ``faces`` corner indices of each face,
    outward-oriented for a positively oriented element; ``gauss_points`` (g, 3) and
    ``gauss_weights`` (g,) of the usual full-integration rule (the weights sum to the
    reference volume); ``shape_functions(points)`` (m, k) and
    ``shape_derivatives(points)`` (m, 3, k) at reference points (m, 3);
    ``corner_triples`` (c, 3): at corner c the edges to these corners, in this order,
    form the corner matrix; ``midside_edges`` (s, 3): corner a, corner b, midside node
    (empty for a linear cell); ``volume``: of the reference element.
    """

    cell_type: str
    nodes: np.ndarray
    n_corners: int
    edges: np.ndarray
    faces: np.ndarray
    gauss_points: np.ndarray
    gauss_weights: np.ndarray
    shape_functions: Callable[[np.ndarray], np.ndarray]
    shape_derivatives: Callable[[np.ndarray], np.ndarray]
    corner_triples: np.ndarray
    midside_edges: np.ndarray
    volume: float


TETRA = SolidReference(
    cell_type="tetra",
    nodes=CORNERS,
    n_corners=4,
    edges=EDGES,
    faces=FACES,
    gauss_points=GAUSS_1,
    gauss_weights=WEIGHTS_1,
    shape_functions=tetra_shape_functions,
    shape_derivatives=tetra_shape_derivatives,
    corner_triples=CORNER_TRIPLES,
    midside_edges=np.zeros((0, 3), dtype=int),
    volume=1.0 / 6.0,
)

TETRA10 = SolidReference(
    cell_type="tetra10",
    nodes=TETRA10_NODES,
    n_corners=4,
    edges=EDGES,
    faces=FACES,
    gauss_points=GAUSS_4,
    gauss_weights=WEIGHTS_4,
    shape_functions=tetra10_shape_functions,
    shape_derivatives=tetra10_shape_derivatives,
    corner_triples=CORNER_TRIPLES,
    midside_edges=np.column_stack([EDGES, np.arange(4, 10)]),
    volume=1.0 / 6.0,
)

#: Reference data per meshio cell type.
REFERENCES: dict[str, SolidReference] = {"tetra": TETRA, "tetra10": TETRA10}
