"""Metrics of the three-node triangle, vectorised over elements.

Functions take corner coordinates ``p`` (n, 3, 2) in the element's plane. The reference
triangle is (0, 0), (1, 0), (0, 1), so det J = det[x2 - x1, x3 - x1] = 2 * signed area,
constant over the element.

Implementation: like the quad kernel, the arithmetic runs on node columns (see
:mod:`meshaudit.metrics.columns`) and shares its corner data (edge lengths, corner
determinants, the angle shortcut for convex elements).
"""

from __future__ import annotations

import numpy as np

from .columns import (
    Point,
    PolygonCorners,
    cross2,
    cross3,
    degenerate_edges,
    edges,
    polygon_corners,
    split,
    sub,
)
from .columns import length as length_columns

_SQRT3 = np.sqrt(3.0)
#: Columns are the edge vectors of the unit equilateral triangle: the ideal shape.
_EQUILATERAL = np.array([[1.0, 0.5], [0.0, _SQRT3 / 2.0]])


def jacobian_determinant(p: np.ndarray) -> np.ndarray:
    """det J = det[x2 - x1, x3 - x1] (twice the signed area), shape (n,)."""
    return _det(split(p))


def _det(x: tuple[Point, ...]) -> np.ndarray:
    return cross2(sub(x[1], x[0]), sub(x[2], x[0]))


def scaled_jacobian(p: np.ndarray) -> np.ndarray:
    """Knupp's scaled Jacobian of a triangle, in [-1, 1], 1 for the equilateral triangle.

    min over corners of det[a, b] / (|a| |b|), times 2 / sqrt(3) so that the equilateral
    triangle reads 1. Knupp (2001), citation from memory.
    """
    return _scaled_jacobian(polygon_corners(split(p)))


def _scaled_jacobian(corners: PolygonCorners) -> np.ndarray:
    out = corners.scaled_jacobian()
    out *= 2.0 / _SQRT3
    return out


def condition(p: np.ndarray) -> np.ndarray:
    """Knupp's condition number |T|_F^2 / (2 det T), T = A W^-1, W the equilateral triangle.

    1 for the equilateral triangle, infinite for an inverted or collapsed one. Worked out
    as (l1^2 + l2^2 + l3^2) / (2 sqrt3 det A) from the edge lengths l and det A = det J,
    the same number to round-off.
    """
    x = split(p)
    return _condition(polygon_corners(x), _det(x))


def _condition(corners: PolygonCorners, det: np.ndarray) -> np.ndarray:
    sq = corners.sq_next
    total = (sq[0] + sq[1]) + sq[2]
    with np.errstate(divide="ignore", invalid="ignore"):
        total /= det * (2.0 * _SQRT3)
    np.copyto(total, np.inf, where=~(det > 0.0))
    return total


def aspect_ratio(p: np.ndarray) -> np.ndarray:
    """Longest edge over shortest altitude, scaled so the equilateral triangle reads 1.

    aspect = sqrt(3) * L_max^2 / (4 * area). Common practice, no single source.
    """
    x = split(p)
    return _aspect_ratio(polygon_corners(x), _det(x))


def _aspect_ratio(corners: PolygonCorners, det: np.ndarray) -> np.ndarray:
    """Infinite for a triangle of zero area, one collapsed to a point included."""
    area = np.abs(det) / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        out = _SQRT3 * corners.longest_edge() ** 2 / (4.0 * area)
    flat = np.flatnonzero(area == 0.0)
    out[flat] = np.inf  # L^2 / 0, or the 0/0 of a point
    return out


def _area_and_collapse(x3d: tuple[Point, ...]) -> tuple[np.ndarray, np.ndarray]:
    """(area, collapsed) from the nodes in space (see :func:`columns.degenerate_edges`).

    In a plane z = c the normal is (+-0, +-0, det) and its length |det| (barring
    underflow), and the z parts add nothing to the edge lengths: 2-D columns suffice.
    """
    if all(bool((pt[2] == x3d[0][2][:1]).all()) for pt in x3d):
        xy = tuple(pt[:2] for pt in x3d)
        area = np.abs(_det(xy))
        area *= 0.5
        return area, degenerate_edges(edges(xy), area)
    area = 0.5 * length_columns(cross3(sub(x3d[1], x3d[0]), sub(x3d[2], x3d[0])))
    return area, degenerate_edges(edges(x3d), area)


def measure(
    coords3: np.ndarray, p: np.ndarray
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """All triangle metrics but the score, and validity flags (see
    :func:`meshaudit.metrics.quad.measure`).

    Skew, taper and warp have no meaning for a triangle and are NaN.
    """
    n = p.shape[0]
    x = split(p)
    det = _det(x)
    det += 0.0  # a collapsed triangle's zero is never -0.0
    area, collapsed = _area_and_collapse(split(coords3))
    corners = polygon_corners(x)
    orientation = 1.0 - 2.0 * (det < 0.0)
    min_angle, max_angle = corners.angle_range(orientation)
    sj = _scaled_jacobian(corners)
    cond = _condition(corners, det)
    inverted = (det < 0.0) & ~collapsed
    nan = np.full(n, np.nan)
    metrics = {
        "area": area,
        "det_j_min": det,
        "det_j_max": det.copy(),
        "det_j_corner_min": det.copy(),
        "jacobian_ratio": np.where(det > 0.0, 1.0, np.inf),
        "scaled_jacobian": sj,
        "aspect_ratio": _aspect_ratio(corners, det),
        "skew": nan,
        "taper": nan.copy(),
        "warp": nan.copy(),
        "min_angle": min_angle,
        "max_angle": max_angle,
        "condition": cond,
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
