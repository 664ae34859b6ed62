"""Reference hexahedra: the cube [-1, 1]^3 and meshio's node orders on it.

meshio's node orders are VTK's (checked in the tests against meshio's gmsh conversion
tables and scikit-fem's meshio converter):

- corners 0-3 on the face zeta = -1, counter-clockwise seen from +zeta: (-1, -1, -1),
  (1, -1, -1), (1, 1, -1), (-1, 1, -1); corners 4-7 the same on zeta = +1;
- ``hexahedron20`` and ``hexahedron27``: nodes 8-19 at the midpoints of the edges 0-1,
  1-2, 2-3, 3-0, 4-5, 5-6, 6-7, 7-4, 0-4, 1-5, 2-6, 3-7;
- ``hexahedron27``: nodes 20-25 at the centres of the faces xi = -1, xi = +1, eta = -1,
  eta = +1, zeta = -1, zeta = +1, node 26 at the centre.

With this order the map from the reference cube has a positive det J for an element laid
out like the reference cube: corners 0-3 counter-clockwise about the direction from that
face to the opposite one.

Shape functions (standard isoparametric forms; O. C. Zienkiewicz and R. L. Taylor, The
Finite Element Method, vol. 1, cited from memory):

- ``hexahedron``: N_i = (1 + xi xi_i)(1 + eta eta_i)(1 + zeta zeta_i) / 8;
- ``hexahedron20`` (serendipity): corners
  N_i = (1 + xi xi_i)(1 + eta eta_i)(1 + zeta zeta_i)(xi xi_i + eta eta_i + zeta zeta_i - 2) / 8,
  a midside node with xi_i = 0: N_i = (1 - xi^2)(1 + eta eta_i)(1 + zeta zeta_i) / 4
  (likewise for eta_i = 0 and zeta_i = 0);
- ``hexahedron27`` (triquadratic Lagrange): N_i = l(xi; xi_i) l(eta; eta_i) l(zeta; zeta_i)
  with l(t; -1) = t (t - 1) / 2, l(t; 0) = 1 - t^2, l(t; 1) = t (t + 1) / 2.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Corners of the reference cube in meshio's order.
CORNERS = np.array(
    [
        [-1.0, -1.0, -1.0],
        [1.0, -1.0, -1.0],
        [1.0, 1.0, -1.0],
        [-1.0, 1.0, -1.0],
        [-1.0, -1.0, 1.0],
        [1.0, -1.0, 1.0],
        [1.0, 1.0, 1.0],
        [-1.0, 1.0, 1.0],
    ]
)

#: The 12 edges as corner pairs; the midside node of edge e is node 8 + e.
EDGES = np.array(
    [[0, 1], [1, 2], [2, 3], [3, 0], [4, 5], [5, 6], [6, 7], [7, 4], [0, 4], [1, 5], [2, 6], [3, 7]]
)

#: The 6 faces, corners counter-clockwise seen from outside a positively oriented element
#: (right-hand normal outward), in the order of the hexahedron27 face nodes: xi = -1,
#: xi = +1, eta = -1, eta = +1, zeta = -1, zeta = +1. Face f's centre node is 20 + f.
FACES = np.array(
    [[0, 4, 7, 3], [1, 2, 6, 5], [0, 1, 5, 4], [3, 7, 6, 2], [0, 3, 2, 1], [4, 5, 6, 7]]
)


def _corner_triples() -> np.ndarray:
    """For each corner its neighbours along xi, eta and zeta, two swapped where needed so
    that the three edge vectors leaving the corner are right-handed on the reference cube."""
    out = []
    for c in CORNERS:
        along = [
            int(np.flatnonzero((CORNERS == c * np.where(np.arange(3) == a, -1, 1)).all(axis=1))[0])
            for a in range(3)
        ]
        if -c[0] * c[1] * c[2] < 0:  # det of the directions -c_a e_a
            along = [along[1], along[0], along[2]]
        out.append(along)
    return np.array(out)


#: Neighbours (a, b, c) of each corner such that det[x_a - x, x_b - x, x_c - x] > 0 for a
#: positively oriented element (1 on the unit cube): the corner Jacobian's three edges.
CORNER_TRIPLES = _corner_triples()


def _edge_faces() -> np.ndarray:
    """(12, 2): the two faces meeting at each edge; the first runs along the edge from
    its first corner to its second in its own (outward) winding."""
    out = []
    for p, q in EDGES:
        first = second = -1
        for f, face in enumerate(FACES):
            for k in range(4):
                a, b = face[k], face[(k + 1) % 4]
                if (a, b) == (p, q):
                    first = f
                elif (a, b) == (q, p):
                    second = f
        out.append((first, second))
    return np.array(out)


#: Faces meeting at each edge of :data:`EDGES` (first: the one running p -> q).
EDGE_FACES = _edge_faces()

_G2 = 1.0 / np.sqrt(3.0)
_G3 = np.sqrt(0.6)


def _tensor_rule(points_1d, weights_1d) -> tuple[np.ndarray, np.ndarray]:
    """Tensor-product rule, xi running fastest, then eta, then zeta."""
    z, y, x = np.meshgrid(points_1d, points_1d, points_1d, indexing="ij")
    wz, wy, wx = np.meshgrid(weights_1d, weights_1d, weights_1d, indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    return points, (wx * wy * wz).ravel()


#: 2 x 2 x 2 Gauss rule (exact for degree 3 in each variable), weights summing to 8.
GAUSS_2, WEIGHTS_2 = _tensor_rule(np.array([-_G2, _G2]), np.array([1.0, 1.0]))
#: 3 x 3 x 3 Gauss rule (exact for degree 5 in each variable), weights summing to 8.
GAUSS_3, WEIGHTS_3 = _tensor_rule(
    np.array([-_G3, 0.0, _G3]), np.array([5.0 / 9.0, 8.0 / 9.0, 5.0 / 9.0])
)

#: Midside nodes of hexahedron20 and hexahedron27: (corner a, corner b, node on a-b).
MIDSIDE_EDGES = np.column_stack([EDGES, 8 + np.arange(12)])

_MIDSIDES = 0.5 * (CORNERS[EDGES[:, 0]] + CORNERS[EDGES[:, 1]])
_FACE_CENTRES = np.array(
    [[-1.0, 0, 0], [1.0, 0, 0], [0, -1.0, 0], [0, 1.0, 0], [0, 0, -1.0], [0, 0, 1.0]]
)
NODES_8 = CORNERS
NODES_20 = np.vstack([CORNERS, _MIDSIDES])
NODES_27 = np.vstack([CORNERS, _MIDSIDES, _FACE_CENTRES, np.zeros((1, 3))])


def _linear(nodes: np.ndarray, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Trilinear shape functions (m, 8) and derivatives (m, 3, 8)."""
    factors = 1.0 + points[:, None, :] * nodes[None, :, :]  # (m, 8, 3)
    values = factors.prod(axis=2) / 8.0
    grads = np.empty((len(points), 3, len(nodes)))
    for a in range(3):
        others = [b for b in range(3) if b != a]
        grads[:, a] = nodes[None, :, a] * factors[..., others].prod(axis=2) / 8.0
    return values, grads


def _serendipity(nodes: np.ndarray, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """20-node serendipity shape functions (m, 20) and derivatives (m, 3, 20)."""
    m = len(points)
    values, grads = np.empty((m, 20)), np.empty((m, 3, 20))
    for i, node in enumerate(nodes):
        f = 1.0 + points * node  # (m, 3): 1 + t t_i
        if i < 8:
            s = points @ node - 2.0
            values[:, i] = f.prod(axis=1) * s / 8.0
            for a in range(3):
                others = f[:, [b for b in range(3) if b != a]].prod(axis=1)
                grads[:, a, i] = node[a] * others * (s + f[:, a]) / 8.0
        else:
            zero = int(np.flatnonzero(node == 0.0)[0])
            q = f.copy()
            q[:, zero] = 1.0 - points[:, zero] ** 2
            values[:, i] = q.prod(axis=1) / 4.0
            for a in range(3):
                others = q[:, [b for b in range(3) if b != a]].prod(axis=1)
                slope = -2.0 * points[:, a] if a == zero else node[a]
                grads[:, a, i] = slope * others / 4.0
    return values, grads


def _quadratic_1d(t: np.ndarray, node: float) -> tuple[np.ndarray, np.ndarray]:
    """1-D quadratic Lagrange polynomial on the nodes -1, 0, 1 and its derivative."""
    if node < 0:
        return t * (t - 1.0) / 2.0, t - 0.5
    if node > 0:
        return t * (t + 1.0) / 2.0, t + 0.5
    return 1.0 - t * t, -2.0 * t


def _triquadratic(nodes: np.ndarray, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """27-node Lagrange shape functions (m, 27) and derivatives (m, 3, 27)."""
    m = len(points)
    values, grads = np.empty((m, 27)), np.empty((m, 3, 27))
    for i, node in enumerate(nodes):
        pairs = [_quadratic_1d(points[:, a], node[a]) for a in range(3)]
        values[:, i] = pairs[0][0] * pairs[1][0] * pairs[2][0]
        for a in range(3):
            term = pairs[a][1]
            for b in range(3):
                if b != a:
                    term = term * pairs[b][0]
            grads[:, a, i] = term
    return values, grads


@dataclass(frozen=True)
class ReferenceCell:
    """Reference data of one hexahedral cell type on [-1, 1]^3 (volume 8).

    ``nodes`` (k, 3) in meshio's order; ``edges`` (12, 2) and ``faces`` (6, 4) as corner
    indices, faces outward for a positively oriented element; ``gauss_points`` (g, 3) and
    ``gauss_weights`` (g,) the usual full-integration rule (2 x 2 x 2 for the trilinear
    hexahedron, 3 x 3 x 3 for the quadratic ones); ``corner_triples`` (8, 3) the corners'
    right-handed neighbours (corner Jacobians); ``midside_edges`` (s, 3) (corner a,
    corner b, midside node), empty for the linear cell.
    """

    cell_type: str
    nodes: np.ndarray
    n_corners: int
    edges: np.ndarray
    faces: np.ndarray
    gauss_points: np.ndarray
    gauss_weights: np.ndarray
    corner_triples: np.ndarray
    midside_edges: np.ndarray
    reference_volume: float = 8.0

    def shape_functions(self, points: np.ndarray) -> np.ndarray:
        """Shape functions (m, k) at reference ``points`` (m, 3)."""
        return _SHAPES[self.cell_type](self.nodes, np.asarray(points, dtype=float))[0]

    def shape_derivatives(self, points: np.ndarray) -> np.ndarray:
        """dN_k / dxi_a (m, 3, k) at reference ``points`` (m, 3): J = derivatives @ x."""
        return _SHAPES[self.cell_type](self.nodes, np.asarray(points, dtype=float))[1]


_SHAPES = {
    "hexahedron": _linear,
    "hexahedron20": _serendipity,
    "hexahedron27": _triquadratic,
}


def _cell(cell_type: str, nodes: np.ndarray, linear: bool) -> ReferenceCell:
    return ReferenceCell(
        cell_type=cell_type,
        nodes=nodes,
        n_corners=8,
        edges=EDGES,
        faces=FACES,
        gauss_points=GAUSS_2 if linear else GAUSS_3,
        gauss_weights=WEIGHTS_2 if linear else WEIGHTS_3,
        corner_triples=CORNER_TRIPLES,
        midside_edges=np.zeros((0, 3), dtype=int) if linear else MIDSIDE_EDGES,
    )


#: Reference data per meshio cell type.
REFERENCE: dict[str, ReferenceCell] = {
    "hexahedron": _cell("hexahedron", NODES_8, True),
    "hexahedron20": _cell("hexahedron20", NODES_20, False),
    "hexahedron27": _cell("hexahedron27", NODES_27, False),
}
