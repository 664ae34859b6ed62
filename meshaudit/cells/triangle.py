"""The reference triangle (0, 0), (1, 0), (0, 1): node positions, Gauss rules and shape
functions of the linear and the quadratic triangle.

Node order follows meshio: the corners counter-clockwise, then the midside nodes of edges
1-2, 2-3, 3-1 (triangle6). With L1 = 1 - xi - eta, L2 = xi, L3 = eta the shape functions
are L1, L2, L3 (linear) and L(2L - 1) at the corners, 4 La Lb at the midsides (quadratic);
common practice. Shape functions take reference points (..., 2) and return (..., k);
their derivatives take (m, 2) and return (m, 2, k).
"""

from __future__ import annotations

import numpy as np

#: Corners of the reference triangle.
TRIANGLE_CORNERS = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]])
#: Reference positions of the triangle6 nodes.
TRIANGLE6_NODES = np.array([[0, 0], [1, 0], [0, 1], [0.5, 0], [0.5, 0.5], [0, 0.5]], dtype=float)

#: One-point rule at the centroid of the reference triangle: what a solver uses for a
#: linear (constant-strain) triangle; det J is constant there anyway (common practice).
TRIANGLE_GAUSS_1 = np.array([[1.0 / 3.0, 1.0 / 3.0]])
TRIANGLE_WEIGHTS_1 = np.array([0.5])

#: Three-point interior rule on the reference triangle, exact for polynomials of degree 2
#: (weights 1/6 sum to the reference area 1/2). det J of a triangle6 is a polynomial of
#: degree 2 (each entry of J is linear), so this rule integrates it exactly: the area of a
#: flat triangle6 comes out exact. It is also the rule a solver uses for its stiffness.
TRIANGLE_GAUSS_3 = np.array([[1 / 6, 1 / 6], [2 / 3, 1 / 6], [1 / 6, 2 / 3]])
TRIANGLE_WEIGHTS_3 = np.full(3, 1.0 / 6.0)

#: Corner pairs of the three edges, in the element's winding.
TRIANGLE_EDGES = np.array([[0, 1], [1, 2], [2, 0]])
#: (corner a, corner b, midside node) of every edge of triangle6.
TRIANGLE_MIDSIDE_EDGES = np.array([[0, 1, 3], [1, 2, 4], [2, 0, 5]])

#: Linear triangle: constant derivatives of N1 = 1 - xi - eta, N2 = xi, N3 = eta.
TRIANGLE_DERIVATIVES = np.array([[-1.0, 1.0, 0.0], [-1.0, 0.0, 1.0]])

#: Area of the reference triangle.
REFERENCE_AREA = 0.5


def triangle_shape_functions(ref: np.ndarray) -> np.ndarray:
    """N = (1 - xi - eta, xi, eta) at ``ref`` (..., 2): (..., 3)."""
    ref = np.asarray(ref, dtype=float)
    xi, eta = ref[..., 0], ref[..., 1]
    return np.stack([1 - xi - eta, xi, eta], axis=-1)


def triangle_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """The constant derivatives of the linear triangle at ``points`` (m, 2): (m, 2, 3)."""
    return np.broadcast_to(TRIANGLE_DERIVATIVES, (len(points), 2, 3)).copy()


def triangle6_shape_functions(ref: np.ndarray) -> np.ndarray:
    """Quadratic triangle shape functions at ``ref`` (..., 2): (..., 6)."""
    ref = np.asarray(ref, dtype=float)
    l1, l2, l3 = 1 - ref[..., 0] - ref[..., 1], ref[..., 0], ref[..., 1]
    return np.stack(
        [
            l1 * (2 * l1 - 1),
            l2 * (2 * l2 - 1),
            l3 * (2 * l3 - 1),
            4 * l1 * l2,
            4 * l2 * l3,
            4 * l3 * l1,
        ],
        axis=-1,
    )


def triangle6_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i/dxi, dN_i/deta of the quadratic triangle at ``points`` (m, 2): (m, 2, 6)."""
    x, y = points[:, 0], points[:, 1]
    l1 = 1 - x - y
    zero = np.zeros_like(x)
    dxi = [1 - 4 * l1, 4 * x - 1, zero, 4 * (l1 - x), 4 * y, -4 * y]
    deta = [1 - 4 * l1, zero, 4 * y - 1, -4 * x, 4 * x, 4 * (l1 - y)]
    return np.stack([np.stack(dxi, axis=-1), np.stack(deta, axis=-1)], axis=1)
