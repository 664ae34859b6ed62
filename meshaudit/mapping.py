"""Shape functions N_i of every supported cell type: the map x(xi, eta) = sum N_i x_i.

Used to push reference-element grid lines through an element's own map (explain figures).
Reference elements and node order as in :mod:`meshaudit.reference` (meshio's order):
quads on [-1, 1]^2, triangles on (0, 0), (1, 0), (0, 1). Standard forms (common practice):
bilinear, 8-node serendipity, 9-node Lagrange, linear and quadratic triangles.
"""

from __future__ import annotations

import numpy as np

from .reference import QUAD_CORNERS, quad_shape_functions


def _quad8(xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    xs, es = QUAD_CORNERS[:, 0], QUAD_CORNERS[:, 1]
    x, e = xi[..., None], eta[..., None]
    corners = (1 + x * xs) * (1 + e * es) * (x * xs + e * es - 1) / 4
    mid_xi = (1 - xi**2)[..., None] * (1 + e * np.array([-1.0, 1.0])) / 2  # nodes 5, 7
    mid_eta = (1 - eta**2)[..., None] * (1 + x * np.array([1.0, -1.0])) / 2  # nodes 6, 8
    return np.concatenate(
        [corners, mid_xi[..., :1], mid_eta[..., :1], mid_xi[..., 1:], mid_eta[..., 1:]], axis=-1
    )


def _lagrange(s: np.ndarray) -> np.ndarray:
    """1-D quadratic Lagrange polynomials at nodes -1, +1, 0 (last axis)."""
    return np.stack([s * (s - 1) / 2, s * (s + 1) / 2, 1 - s**2], axis=-1)


#: quad9 node k sits at 1-D node (a_k, b_k) of the (-1, +1, 0) lists in xi and eta.
_QUAD9_A = np.array([0, 1, 1, 0, 2, 1, 2, 0, 2])
_QUAD9_B = np.array([0, 0, 1, 1, 0, 2, 1, 2, 2])


def _quad9(xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    return _lagrange(xi)[..., _QUAD9_A] * _lagrange(eta)[..., _QUAD9_B]


def _triangle(xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    return np.stack([1 - xi - eta, xi, eta], axis=-1)


def _triangle6(xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    l1, l2, l3 = 1 - xi - eta, xi, eta
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


SHAPE_FUNCTIONS = {
    "quad": quad_shape_functions,
    "quad8": _quad8,
    "quad9": _quad9,
    "triangle": _triangle,
    "triangle6": _triangle6,
}


def shape_functions(cell_type: str, ref: np.ndarray) -> np.ndarray:
    """N_i at reference points ``ref`` (..., 2): shape (..., k), k nodes of ``cell_type``."""
    ref = np.asarray(ref, dtype=float)
    return SHAPE_FUNCTIONS[cell_type](ref[..., 0], ref[..., 1])


def map_points(cell_type: str, nodes: np.ndarray, ref: np.ndarray) -> np.ndarray:
    """Physical points (..., d) of reference points ``ref`` (..., 2); ``nodes`` (k, d)."""
    return shape_functions(cell_type, ref) @ nodes
