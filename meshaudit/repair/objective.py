"""The two objectives node moves minimise, with their gradients, over whole arrays.

Every corner of every element has a corner matrix A: the edges leaving the corner as
columns, ``(3, d)``, d = 2 for a surface cell, 3 for a solid. Its determinant ``sigma``
is ``det A`` for a solid and ``(a x b) . n`` for a surface cell, n the unit normal at the
corner node (the plane's normal on a planar mesh): the corner Jacobian of Knupp's
algebraic metrics.

- **Untangling** (Knupp 2001, "Hexahedral and tetrahedral mesh untangling", Engineering
  with Computers 17, 261-268; pages from memory): ``sum_corners |sigma - beta| - (sigma -
  beta)``, i.e. 2 max(0, beta - sigma). It is zero once every corner Jacobian reaches the
  small positive threshold ``beta`` and pushes up the smallest ones until then.
- **Shape**: the inverse mean ratio of each corner, ``|T|_F^2 / (d h(sigma_T)^(2/d))``,
  T = A W^-1 with W the ideal element's corner matrix (see
  :func:`meshaudit.repair.cells.ideal_inverse`): 1 for the ideal shape, larger for worse,
  and in 2-D equal to Knupp's condition number of the corner. ``h(s) = (s + sqrt(s^2 +
  4 delta^2)) / 2`` replaces ``sigma_T`` so the function stays finite through a fold
  (Escobar, Rodriguez, Montenegro, Montero and Gonzalez-Yuste 2003, "Simultaneous
  untangling and smoothing of tetrahedral meshes", CMAME 192, 2775-2787; from memory);
  with delta tiny against the corner's size it is the plain metric on a valid mesh.

Both are sums over corners; their gradients are the sums of each corner's gradient with
respect to its nodes, scattered onto the nodes with :func:`numpy.bincount`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np


@dataclass(frozen=True, eq=False)
class Corners:
    """All corners of the elements that take part, as flat arrays.

    ``nodes`` (m, 1 + d): global node index of the corner and of its edges' far ends;
    ``winv`` (m, d, d): the ideal corner matrix's inverse; ``normal`` (m, 3): the unit
    normal at the corner for surface corners (unused for solids); ``dim`` d.
    """

    nodes: np.ndarray
    winv: np.ndarray
    normal: np.ndarray
    dim: int

    def __len__(self) -> int:
        return int(self.nodes.shape[0])

    @cached_property
    def weights(self) -> list[list[np.ndarray]]:
        """``weights[i][j]``: W^-1[i, j] of every corner as a contiguous (m, 1) column."""
        d = self.dim
        return [
            [np.ascontiguousarray(self.winv[:, i, j, None]) for j in range(d)] for i in range(d)
        ]


def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.stack(
        [
            a[:, 1] * b[:, 2] - a[:, 2] * b[:, 1],
            a[:, 2] * b[:, 0] - a[:, 0] * b[:, 2],
            a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0],
        ],
        axis=1,
    )


def edge_columns(c: Corners, x: np.ndarray) -> list[np.ndarray]:
    """The d edge vectors (m, 3) of each corner from node coordinates ``x`` (n, 3)."""
    base = x[c.nodes[:, 0]]
    return [x[c.nodes[:, j]] - base for j in range(1, c.dim + 1)]


def _det_and_cofactors(cols: list[np.ndarray], normal: np.ndarray):
    """sigma (m,) and d sigma / d column j (m, 3) for each column."""
    if len(cols) == 2:
        a, b = cols
        sigma = np.einsum("ij,ij->i", _cross(a, b), normal)
        return sigma, [_cross(b, normal), _cross(normal, a)]
    a, b, e = cols
    bc, ca, ab = _cross(b, e), _cross(e, a), _cross(a, b)
    return np.einsum("ij,ij->i", a, bc), [bc, ca, ab]


def corner_jacobians(c: Corners, x: np.ndarray) -> np.ndarray:
    """sigma of every corner (m,): the corner Jacobian determinant (length^d)."""
    return _det_and_cofactors(edge_columns(c, x), c.normal)[0]


def _scatter(c: Corners, grads: list[np.ndarray], n: int) -> np.ndarray:
    """Sum the corner gradients (per column, (m, 3)) onto the nodes: (n, 3)."""
    out = np.zeros((n, 3))
    total = np.zeros_like(grads[0])
    for j, g in enumerate(grads, start=1):
        total += g
        for k in range(3):
            out[:, k] += np.bincount(c.nodes[:, j], weights=g[:, k], minlength=n)
    for k in range(3):
        out[:, k] -= np.bincount(c.nodes[:, 0], weights=total[:, k], minlength=n)
    return out


def untangle(c: Corners, x: np.ndarray, beta: float | np.ndarray) -> tuple[float, np.ndarray]:
    """Knupp's untangling function and its gradient with respect to x (n, 3); ``beta``
    one threshold or one per corner (m,)."""
    cols = edge_columns(c, x)
    sigma, cof = _det_and_cofactors(cols, c.normal)
    short = sigma < beta
    value = float(2.0 * np.sum((beta - sigma)[short]))
    weight = np.where(short, -2.0, 0.0)[:, None]
    return value, _scatter(c, [weight * g for g in cof], x.shape[0])


def regularised(sigma: np.ndarray, eps: np.ndarray) -> tuple[np.ndarray, ...]:
    """h = (sigma + sqrt(sigma^2 + 4 eps^2)) / 2, dh/dsigma and dh/deps."""
    root = np.sqrt(sigma * sigma + 4.0 * eps * eps)
    return (sigma + root) / 2.0, (1.0 + sigma / root) / 2.0, 2.0 * eps / root


def shape(c: Corners, x: np.ndarray, delta: float) -> tuple[float, np.ndarray]:
    """Sum of the corners' inverse mean ratios and its gradient with respect to x.

    ``delta`` is relative: the regularisation is delta x the corner's own scale
    (|T|_F^d / d^(d/2), the determinant of a perfect corner of the same size).
    """
    d = c.dim
    cols = edge_columns(c, x)
    # T = A W^-1: column j of T is sum_i A[:, i] W^-1[i, j]
    w = c.weights
    t = [sum(cols[i] * w[i][j] for i in range(d)) for j in range(d)]
    sigma, cof = _det_and_cofactors(t, c.normal)
    norm2 = sum(np.einsum("ij,ij->i", tj, tj) for tj in t)
    scale = (norm2 / d) ** (d / 2.0)
    h, dh_sigma, dh_eps = regularised(sigma, delta * scale)
    hp = h ** (2.0 / d)
    eta = norm2 / (d * hp)
    d_h = -(2.0 / d) * eta / h
    # eps = delta (norm2 / d)^(d/2): d eps / d norm2 = eps d / (2 norm2)
    d_norm2 = 1.0 / (d * hp) + d_h * dh_eps * delta * scale * d / (2.0 * norm2)
    d_sigma = d_h * dh_sigma
    grad_t = [2.0 * d_norm2[:, None] * tj + d_sigma[:, None] * cj for tj, cj in zip(t, cof)]
    # back to A: dF/dA[:, i] = sum_j dF/dT[:, j] W^-1[i, j]
    grad_a = [sum(grad_t[j] * w[i][j] for j in range(d)) for i in range(d)]
    return float(eta.sum()), _scatter(c, grad_a, x.shape[0])
