"""Metrics of the three-node triangle, vectorised over elements.

Functions take corner coordinates ``p`` (n, 3, 2) in the element's plane. The reference
triangle is (0, 0), (1, 0), (0, 1), so det J = det[x2 - x1, x3 - x1] = 2 * signed area,
constant over the element.
"""

from __future__ import annotations

import numpy as np

from .common import corner_edges, cross2, degenerate, interior_angles, norm, score

_SQRT3 = np.sqrt(3.0)
#: Columns are the edge vectors of the unit equilateral triangle: the ideal shape.
_EQUILATERAL = np.array([[1.0, 0.5], [0.0, _SQRT3 / 2.0]])
_EQUILATERAL_INV = np.linalg.inv(_EQUILATERAL)


def jacobian_determinant(p: np.ndarray) -> np.ndarray:
    """det J = det[x2 - x1, x3 - x1] (twice the signed area), shape (n,)."""
    return cross2(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0])


def scaled_jacobian(p: np.ndarray) -> np.ndarray:
    """Knupp's scaled Jacobian of a triangle, in [-1, 1], 1 for the equilateral triangle.

    min over corners of det[a, b] / (|a| |b|), times 2 / sqrt(3) so that the equilateral
    triangle reads 1. Knupp (2001), citation from memory.
    """
    a, b = corner_edges(p)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (cross2(a, b) / (norm(a) * norm(b))).min(axis=1) * (2.0 / _SQRT3)


def condition(p: np.ndarray) -> np.ndarray:
    """Knupp's condition number |T|_F^2 / (2 det T), T = A W^-1, W the equilateral triangle.

    1 for the equilateral triangle, infinite for an inverted or collapsed one.
    """
    a = np.stack([p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]], axis=-1)  # columns = edges
    t = a @ _EQUILATERAL_INV
    det = t[:, 0, 0] * t[:, 1, 1] - t[:, 0, 1] * t[:, 1, 0]
    frob = np.einsum("nij,nij->n", t, t)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(det > 0.0, frob / (2.0 * det), np.inf)


def aspect_ratio(p: np.ndarray) -> np.ndarray:
    """Longest edge over shortest altitude, scaled so the equilateral triangle reads 1.

    aspect = sqrt(3) * L_max^2 / (4 * area). Common practice, no single source.
    """
    lengths = norm(np.roll(p, -1, axis=1) - p)
    area = np.abs(jacobian_determinant(p)) / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        return _SQRT3 * lengths.max(axis=1) ** 2 / (4.0 * area)


def measure(
    coords3: np.ndarray, p: np.ndarray
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """All triangle metrics and validity flags (see :func:`meshaudit.metrics.quad.measure`).

    Skew, taper and warp have no meaning for a triangle and are NaN.
    """
    n = p.shape[0]
    det = jacobian_determinant(p)
    area = 0.5 * norm(np.cross(coords3[:, 1] - coords3[:, 0], coords3[:, 2] - coords3[:, 0]))
    a, b = corner_edges(p)
    orientation = np.where(det < 0.0, -1.0, 1.0)
    angles = interior_angles(a, b, orientation)
    sj = scaled_jacobian(p)
    cond = condition(p)
    collapsed = degenerate(coords3, area)
    inverted = (det < 0.0) & ~collapsed
    invalid = collapsed | inverted
    nan = np.full(n, np.nan)
    metrics = {
        "area": area,
        "det_j_min": det,
        "det_j_max": det.copy(),
        "det_j_corner_min": det.copy(),
        "jacobian_ratio": np.where(det > 0.0, 1.0, np.inf),
        "scaled_jacobian": sj,
        "aspect_ratio": aspect_ratio(p),
        "skew": nan,
        "taper": nan.copy(),
        "warp": nan.copy(),
        "min_angle": angles.min(axis=1),
        "max_angle": angles.max(axis=1),
        "condition": cond,
        "score": score(sj, cond, None, invalid),
    }
    false = np.zeros(n, dtype=bool)
    flags = {
        "inverted": inverted,
        "reversed": inverted.copy(),
        "nonconvex": false,
        "self_intersecting": false.copy(),
        "degenerate": collapsed,
    }
    return metrics, flags
