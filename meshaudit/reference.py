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
