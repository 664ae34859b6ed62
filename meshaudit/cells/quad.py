"""The reference square [-1, 1]^2: node positions, Gauss rules and shape functions of the
quadrilaterals (four-node bilinear, eight-node serendipity, nine-node Lagrange).

Node order follows meshio: node 1 at (-1, -1) and the corners counter-clockwise, then the
midside nodes of edges 1-2, 2-3, 3-4, 4-1, then the centre (quad9). Shape functions take
reference points (..., 2) and return (..., k); their derivatives take (m, 2) and return
(m, 2, k): dN/dxi, dN/deta. Standard forms (common practice).
"""

from __future__ import annotations

import numpy as np

#: Reference-square corner coordinates (xi, eta) of the four-node quad, node order 1..4.
QUAD_CORNERS = np.array([[-1.0, -1.0], [1.0, -1.0], [1.0, 1.0], [-1.0, 1.0]])

_G = 1.0 / np.sqrt(3.0)
#: 2x2 Gauss-Legendre points on [-1, 1]^2 (weights all 1); the rule a solver uses for a
#: full-integration bilinear quad.
QUAD_GAUSS_2X2 = np.array([[-_G, -_G], [_G, -_G], [_G, _G], [-_G, _G]])
QUAD_WEIGHTS_2X2 = np.ones(4)

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

#: Reference positions of the quad8 / quad9 nodes on [-1, 1]^2.
QUAD9_NODES = np.array(
    [[-1, -1], [1, -1], [1, 1], [-1, 1], [0, -1], [1, 0], [0, 1], [-1, 0], [0, 0]], dtype=float
)
QUAD8_NODES = QUAD9_NODES[:8]

_G3 = np.sqrt(0.6)
_GAUSS_1D = np.array([-_G3, 0.0, _G3])
_WEIGHTS_1D = np.array([5.0, 8.0, 5.0]) / 9.0
#: 3x3 Gauss-Legendre rule on [-1, 1]^2 (exact to degree 5 in each variable): the full
#: rule a solver uses for quad8 and quad9, and exact for their area when flat.
QUAD_GAUSS_3X3 = np.array([[x, y] for y in _GAUSS_1D for x in _GAUSS_1D])
QUAD_WEIGHTS_3X3 = np.array([wx * wy for wy in _WEIGHTS_1D for wx in _WEIGHTS_1D])

#: Corner pairs of the four edges, in the element's winding (edge i: corner i -> i + 1).
QUAD_EDGES = np.array([[0, 1], [1, 2], [2, 3], [3, 0]])
#: (corner a, corner b, midside node) of every edge of quad8 and quad9.
QUAD_MIDSIDE_EDGES = np.array([[0, 1, 4], [1, 2, 5], [2, 3, 6], [3, 0, 7]])

#: Area of the reference square.
REFERENCE_AREA = 4.0


def quad_shape_functions(ref: np.ndarray) -> np.ndarray:
    """Bilinear shape functions N_i(xi, eta) = (1 + xi xi_i)(1 + eta eta_i) / 4.

    ``ref`` (..., 2) reference points; returns (..., 4).
    """
    ref = np.asarray(ref, dtype=float)
    xi, eta = ref[..., 0, None], ref[..., 1, None]
    return (1.0 + xi * QUAD_CORNERS[:, 0]) * (1.0 + eta * QUAD_CORNERS[:, 1]) / 4.0


def quad_shape_derivatives(ref: np.ndarray) -> np.ndarray:
    """Derivatives dN_i/dxi and dN_i/deta of the bilinear quad, shape ``(..., 2, 4)``."""
    ref = np.asarray(ref, dtype=float)
    xi, eta = ref[..., 0, None], ref[..., 1, None]
    dxi = QUAD_CORNERS[:, 0] * (1.0 + eta * QUAD_CORNERS[:, 1]) / 4.0
    deta = QUAD_CORNERS[:, 1] * (1.0 + xi * QUAD_CORNERS[:, 0]) / 4.0
    return np.stack(np.broadcast_arrays(dxi, deta), axis=-2)


def quad8_shape_functions(ref: np.ndarray) -> np.ndarray:
    """Serendipity shape functions at ``ref`` (..., 2): (..., 8).

    Corners: N = (1 + xi xi_i)(1 + eta eta_i)(xi xi_i + eta eta_i - 1) / 4;
    midsides with xi_i = 0: N = (1 - xi^2)(1 + eta eta_i) / 2, and with eta_i = 0:
    N = (1 + xi xi_i)(1 - eta^2) / 2.
    """
    ref = np.asarray(ref, dtype=float)
    xi, eta = ref[..., 0], ref[..., 1]
    xs, es = QUAD_CORNERS[:, 0], QUAD_CORNERS[:, 1]
    x, e = xi[..., None], eta[..., None]
    corners = (1 + x * xs) * (1 + e * es) * (x * xs + e * es - 1) / 4
    mid_xi = (1 - xi**2)[..., None] * (1 + e * np.array([-1.0, 1.0])) / 2  # nodes 5, 7
    mid_eta = (1 - eta**2)[..., None] * (1 + x * np.array([1.0, -1.0])) / 2  # nodes 6, 8
    return np.concatenate(
        [corners, mid_xi[..., :1], mid_eta[..., :1], mid_xi[..., 1:], mid_eta[..., 1:]], axis=-1
    )


def quad8_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i/dxi, dN_i/deta of the serendipity quad at ``points`` (m, 2): (m, 2, 8)."""
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


def _lagrange_1d(s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Quadratic 1-D Lagrange functions at nodes -1, 1, 0 and their derivatives, (..., 3)."""
    s = s[..., None]
    values = np.concatenate([s * (s - 1) / 2, s * (s + 1) / 2, 1 - s**2], axis=-1)
    slopes = np.concatenate([s - 0.5, s + 0.5, -2 * s], axis=-1)
    return values, slopes


def _lagrange(s: np.ndarray) -> np.ndarray:
    """1-D quadratic Lagrange polynomials at nodes -1, +1, 0 (last axis)."""
    return np.stack([s * (s - 1) / 2, s * (s + 1) / 2, 1 - s**2], axis=-1)


#: Which 1-D function (0: node -1, 1: node 1, 2: node 0) each quad9 node uses in xi, eta.
_QUAD9_XI = np.array([0, 1, 1, 0, 2, 1, 2, 0, 2])
_QUAD9_ETA = np.array([0, 0, 1, 1, 0, 2, 1, 2, 2])


def quad9_shape_functions(ref: np.ndarray) -> np.ndarray:
    """Biquadratic Lagrange shape functions at ``ref`` (..., 2): (..., 9)."""
    ref = np.asarray(ref, dtype=float)
    return _lagrange(ref[..., 0])[..., _QUAD9_XI] * _lagrange(ref[..., 1])[..., _QUAD9_ETA]


def quad9_shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i/dxi, dN_i/deta of the biquadratic Lagrange quad at ``points`` (m, 2): (m, 2, 9)."""
    fx, dfx = _lagrange_1d(points[:, 0])
    fy, dfy = _lagrange_1d(points[:, 1])
    dxi = dfx[:, _QUAD9_XI] * fy[:, _QUAD9_ETA]
    deta = fx[:, _QUAD9_XI] * dfy[:, _QUAD9_ETA]
    return np.stack([dxi, deta], axis=1)
