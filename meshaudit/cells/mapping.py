"""The isoparametric map x(xi) = sum N_i(xi) x_i of an element and its Jacobian, from a
cell type's shape functions and their derivatives (see :mod:`meshaudit.cells.registry`).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from .registry import CellType


def map_points(cell: CellType, nodes: np.ndarray, ref: np.ndarray) -> np.ndarray:
    """Physical points (..., d) of reference points ``ref`` (..., dim); ``nodes`` (k, d)."""
    return cell.shape_functions(ref) @ nodes


def at_points(derivatives: np.ndarray, coords: np.ndarray) -> np.ndarray:
    """sum_k dN_k/dxi_a x_k: (n, m, 2, d) from derivatives (m, 2, k) and coords (n, k, d).

    One batched matrix product (much faster than the equivalent einsum).
    """
    m, _, k = derivatives.shape
    flat = derivatives.reshape(2 * m, k) @ coords
    return flat.reshape(coords.shape[0], m, 2, coords.shape[2])


def jacobian_determinants(derivatives: np.ndarray, p: np.ndarray) -> np.ndarray:
    """det J (n, m) at the m points whose shape derivatives (m, 2, k) are given.

    ``p`` (n, k, 2) are the nodes in the element's plane; J[a, b] = dx_b / dxi_a summed
    over the nodes, in length^2 per reference area.
    """
    jac = at_points(derivatives, p)
    return jac[..., 0, 0] * jac[..., 1, 1] - jac[..., 0, 1] * jac[..., 1, 0]
