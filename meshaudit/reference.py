"""Reference-element data: node positions, shape-function derivatives and Gauss rules.

One small constant table per element family, in the spirit of a finite-element code.
The four-node quadrilateral lives on the reference square [-1, 1]^2 with node 1 at
(-1, -1) and the nodes counter-clockwise; the three-node triangle lives on the reference
triangle (0, 0), (1, 0), (0, 1).
"""

from __future__ import annotations

import numpy as np

#: Reference-square corner coordinates (xi, eta) of the four-node quad, node order 1..4.
QUAD_CORNERS = np.array([[-1.0, -1.0], [1.0, -1.0], [1.0, 1.0], [-1.0, 1.0]])

_G = 1.0 / np.sqrt(3.0)
#: 2x2 Gauss-Legendre points on [-1, 1]^2 (weights all 1); the rule a solver uses for a
#: full-integration bilinear quad.
QUAD_GAUSS_2X2 = np.array([[-_G, -_G], [_G, -_G], [_G, _G], [-_G, _G]])

#: Rows e0..e3 of the bilinear map written as x = e0 + e1*xi + e2*eta + e3*xi*eta
#: (Robinson's principal-axes form), as weights on the four corner nodes.
QUAD_AXES = (
    np.array(
        [
            [1.0, 1.0, 1.0, 1.0],
            [-1.0, 1.0, 1.0, -1.0],
            [-1.0, -1.0, 1.0, 1.0],
            [1.0, -1.0, 1.0, -1.0],
        ]
    )
    / 4.0
)


def quad_shape_functions(xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    """Bilinear shape functions N_i(xi, eta) = (1 + xi xi_i)(1 + eta eta_i) / 4.

    Returns an array of shape ``xi.shape + (4,)``.
    """
    xi = np.asarray(xi, dtype=float)[..., None]
    eta = np.asarray(eta, dtype=float)[..., None]
    return (1.0 + xi * QUAD_CORNERS[:, 0]) * (1.0 + eta * QUAD_CORNERS[:, 1]) / 4.0


def quad_shape_derivatives(xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    """Derivatives dN_i/dxi and dN_i/deta, shape ``xi.shape + (2, 4)``."""
    xi = np.asarray(xi, dtype=float)[..., None]
    eta = np.asarray(eta, dtype=float)[..., None]
    dxi = QUAD_CORNERS[:, 0] * (1.0 + eta * QUAD_CORNERS[:, 1]) / 4.0
    deta = QUAD_CORNERS[:, 1] * (1.0 + xi * QUAD_CORNERS[:, 0]) / 4.0
    return np.stack(np.broadcast_arrays(dxi, deta), axis=-2)


#: Linear triangle: constant derivatives of N1 = 1 - xi - eta, N2 = xi, N3 = eta.
TRIANGLE_DERIVATIVES = np.array([[-1.0, 1.0, 0.0], [-1.0, 0.0, 1.0]])


# -- quadratic elements ---------------------------------------------------------------
# Node order follows meshio: corners first (as for the linear element), then the midside
# nodes of edges 1-2, 2-3, 3-4, 4-1 (triangle: 1-2, 2-3, 3-1), then the centre (quad9).

#: Reference positions of the quad8 / quad9 nodes on [-1, 1]^2.
QUAD9_NODES = np.array(
    [[-1, -1], [1, -1], [1, 1], [-1, 1], [0, -1], [1, 0], [0, 1], [-1, 0], [0, 0]], dtype=float
)
QUAD8_NODES = QUAD9_NODES[:8]
#: Reference positions of the triangle6 nodes on the triangle (0, 0), (1, 0), (0, 1).
TRIANGLE6_NODES = np.array([[0, 0], [1, 0], [0, 1], [0.5, 0], [0.5, 0.5], [0, 0.5]], dtype=float)

_G3 = np.sqrt(0.6)
_GAUSS_1D = np.array([-_G3, 0.0, _G3])
_WEIGHTS_1D = np.array([5.0, 8.0, 5.0]) / 9.0
#: 3x3 Gauss-Legendre rule on [-1, 1]^2 (exact to degree 5 in each variable): the full
#: rule a solver uses for quad8 and quad9, and exact for their area when flat.
QUAD_GAUSS_3X3 = np.array([[x, y] for y in _GAUSS_1D for x in _GAUSS_1D])
QUAD_WEIGHTS_3X3 = np.array([wx * wy for wy in _WEIGHTS_1D for wx in _WEIGHTS_1D])

#: Three-point interior rule on the reference triangle, exact for polynomials of degree 2
#: (weights 1/6 sum to the reference area 1/2). det J of a triangle6 is a polynomial of
#: degree 2 (each entry of J is linear), so this rule integrates it exactly: the area of a
#: flat triangle6 comes out exact. It is also the rule a solver uses for its stiffness.
TRIANGLE_GAUSS_3 = np.array([[1 / 6, 1 / 6], [2 / 3, 1 / 6], [1 / 6, 2 / 3]])
TRIANGLE_WEIGHTS_3 = np.full(3, 1.0 / 6.0)


def _lagrange_1d(s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Quadratic 1-D Lagrange functions at nodes -1, 1, 0 and their derivatives, (..., 3)."""
    s = s[..., None]
    values = np.concatenate([s * (s - 1) / 2, s * (s + 1) / 2, 1 - s**2], axis=-1)
    slopes = np.concatenate([s - 0.5, s + 0.5, -2 * s], axis=-1)
    return values, slopes


#: Which 1-D function (0: node -1, 1: node 1, 2: node 0) each quad9 node uses in xi, eta.
_QUAD9_XI = np.array([0, 1, 1, 0, 2, 1, 2, 0, 2])
_QUAD9_ETA = np.array([0, 0, 1, 1, 0, 2, 1, 2, 2])


def quad9_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i/dxi, dN_i/deta of the biquadratic Lagrange quad at ``points`` (m, 2): (m, 2, 9)."""
    fx, dfx = _lagrange_1d(points[:, 0])
    fy, dfy = _lagrange_1d(points[:, 1])
    dxi = dfx[:, _QUAD9_XI] * fy[:, _QUAD9_ETA]
    deta = fx[:, _QUAD9_XI] * dfy[:, _QUAD9_ETA]
    return np.stack([dxi, deta], axis=1)


def quad8_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i/dxi, dN_i/deta of the serendipity quad at ``points`` (m, 2): (m, 2, 8).

    Corners: N = (1 + xi xi_i)(1 + eta eta_i)(xi xi_i + eta eta_i - 1) / 4;
    midsides with xi_i = 0: N = (1 - xi^2)(1 + eta eta_i) / 2, and with eta_i = 0:
    N = (1 + xi xi_i)(1 - eta^2) / 2.
    """
    x, y = points[:, 0:1], points[:, 1:2]
    xc, yc = QUAD_CORNERS[:, 0], QUAD_CORNERS[:, 1]
    cx = xc * (1 + y * yc) * (2 * x * xc + y * yc) / 4
    cy = yc * (1 + x * xc) * (x * xc + 2 * y * yc) / 4
    ex = np.array([0.0, 1.0, 0.0, -1.0])  # xi_i of midsides 5..8 (0: on an xi edge)
    ey = np.array([-1.0, 0.0, 1.0, 0.0])
    on_x = ex == 0.0
    mx = np.where(on_x, -x * (1 + y * ey), ex * (1 - y**2) / 2)
    my = np.where(on_x, ey * (1 - x**2) / 2, -y * (1 + x * ex))
    return np.stack([np.hstack([cx, mx]), np.hstack([cy, my])], axis=1)


def triangle6_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i/dxi, dN_i/deta of the quadratic triangle at ``points`` (m, 2): (m, 2, 6).

    With L1 = 1 - xi - eta, L2 = xi, L3 = eta: corners N = L(2L - 1), midsides N = 4 La Lb.
    """
    x, y = points[:, 0], points[:, 1]
    l1 = 1 - x - y
    zero = np.zeros_like(x)
    dxi = [1 - 4 * l1, 4 * x - 1, zero, 4 * (l1 - x), 4 * y, -4 * y]
    deta = [1 - 4 * l1, zero, 4 * y - 1, -4 * x, 4 * x, 4 * (l1 - y)]
    return np.stack([np.stack(dxi, axis=-1), np.stack(deta, axis=-1)], axis=1)


#: (corner a, corner b, midside node) of every edge of the quadratic elements.
QUAD_MIDSIDE_EDGES = np.array([[0, 1, 4], [1, 2, 5], [2, 3, 6], [3, 0, 7]])
TRIANGLE_MIDSIDE_EDGES = np.array([[0, 1, 3], [1, 2, 4], [2, 0, 5]])
