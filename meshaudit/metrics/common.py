"""Small vectorised helpers shared by the metric kernels."""

from __future__ import annotations

import numpy as np

#: Relative tolerance under which a length, area or corner is taken as collapsed.
DEGENERATE_TOLERANCE = 1e-9


def cross2(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """z-component of the cross product of 2-D vectors (..., 2)."""
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def norm(v: np.ndarray) -> np.ndarray:
    """Euclidean length over the last axis."""
    return np.sqrt(np.einsum("...i,...i->...", v, v))


def corner_edges(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Edge vectors at each corner of polygons ``p`` (n, k, d).

    Returns (to_next, to_prev), each (n, k, d): node k+1 minus node k, node k-1 minus node k.
    """
    return np.roll(p, -1, axis=1) - p, np.roll(p, 1, axis=1) - p


def interior_angles(
    to_next: np.ndarray, to_prev: np.ndarray, orientation: np.ndarray
) -> np.ndarray:
    """Interior angles in degrees, in [0, 360): reflex corners read above 180.

    ``orientation`` (n,) is +1 or -1: the winding the element is measured in, so a
    clockwise element reads its ordinary angles and only true re-entrant corners exceed 180.
    """
    s = orientation[:, None]
    ang = np.degrees(
        np.arctan2(s * cross2(to_next, to_prev), np.einsum("nki,nki->nk", to_next, to_prev))
    )
    return np.where(ang < 0.0, ang + 360.0, ang)


def degenerate(coords3: np.ndarray, area: np.ndarray) -> np.ndarray:
    """Collapsed elements: a (near) zero-length edge or (near) zero area, measured in 3-D."""
    edges = norm(np.roll(coords3, -1, axis=1) - coords3)
    longest = edges.max(axis=1)
    with np.errstate(invalid="ignore"):
        return (
            ~(longest > 0.0)
            | (edges.min(axis=1) <= DEGENERATE_TOLERANCE * longest)
            | ~(np.abs(area) > DEGENERATE_TOLERANCE * longest**2)
        )
