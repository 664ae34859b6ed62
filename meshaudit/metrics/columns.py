"""Column form of element coordinates, for the fast metric kernels.

An (n, k, d) array of k nodes with d coordinates is split into k "points", each a tuple
of d contiguous (n,) arrays. Arithmetic on columns touches only (n,) arrays: no
(n, k, d) temporaries, no reductions over short axes, and every operation streams
through memory once, which is what makes a million-element kernel fast.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .common import DEGENERATE_TOLERANCE

#: One point per element: its coordinates as (n,) arrays, x first.
Point = tuple[np.ndarray, ...]


def split(p: np.ndarray) -> tuple[Point, ...]:
    """Nodes of ``p`` (n, k, d) as k points of d contiguous (n,) float64 columns."""
    cols = np.ascontiguousarray(np.moveaxis(p, 0, -1), dtype=np.float64)  # (k, d, n)
    return tuple(tuple(node) for node in cols)


def sub(a: Point, b: Point) -> Point:
    """a - b."""
    return tuple(u - v for u, v in zip(a, b))


def dot(a: Point, b: Point) -> np.ndarray:
    """a . b of 2-D or 3-D points.

    Summed in the order numpy's einsum uses for such short axes ((x + z) + y in 3-D,
    from +0.0 so a zero dot is never -0.0), so the column form rounds exactly as the
    array form does.
    """
    total = a[0] * b[0]
    if len(a) == 3:
        total += a[2] * b[2]
        total += a[1] * b[1]
    else:
        for u, v in zip(a[1:], b[1:]):
            total += u * v
    total += 0.0
    return total


def length(a: Point) -> np.ndarray:
    """|a|."""
    return np.sqrt(dot(a, a))


def cross2(a: Point, b: Point) -> np.ndarray:
    """z-component of the cross product of 2-D points."""
    return a[0] * b[1] - a[1] * b[0]


def cross3(a: Point, b: Point) -> Point:
    """Cross product of 3-D points."""
    return (a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0])


def degenerate(x: tuple[Point, ...], area: np.ndarray) -> np.ndarray:
    """Collapsed polygons (nodes ``x`` in 3-D): a (near) zero-length edge or zero area.

    Same rule as :func:`meshaudit.metrics.common.degenerate`.
    """
    edges = [length(sub(x[(k + 1) % len(x)], x[k])) for k in range(len(x))]
    longest, shortest = edges[0], edges[0]
    for e in edges[1:]:
        longest, shortest = np.maximum(longest, e), np.minimum(shortest, e)
    with np.errstate(invalid="ignore"):
        return (
            ~(longest > 0.0)
            | (shortest <= DEGENERATE_TOLERANCE * longest)
            | ~(np.abs(area) > DEGENERATE_TOLERANCE * longest**2)
        )


@dataclass(frozen=True)
class PolygonCorners:
    """Edge data at each corner of 2-D polygons, built once by :func:`polygon_corners`.

    At corner k, a = node k+1 - node k and b = node k-1 - node k: ``cross[k]`` =
    det[a, b], ``dot[k]`` = a . b, ``sq_next[k]`` = |a|^2, ``sq_prev[k]`` = |b|^2 and
    ``length[k]`` = |a| (the length of edge k).
    """

    cross: list[np.ndarray]
    dot: list[np.ndarray]
    sq_next: list[np.ndarray]
    sq_prev: list[np.ndarray]
    length: list[np.ndarray]

    def scaled_jacobian(self) -> np.ndarray:
        """min over corners of det[a, b] / (|a| |b|) (unscaled; in [-1, 1])."""
        n = len(self.cross)
        out = None
        with np.errstate(divide="ignore", invalid="ignore"):
            for k in range(n):
                v = self.cross[k] / (self.length[k] * np.sqrt(self.sq_prev[k]))
                out = v if out is None else np.minimum(out, v)
        return out

    def condition(self) -> np.ndarray:
        """max over corners of (|a|^2 + |b|^2) / (2 det[a, b]); inf where det <= 0."""
        out = None
        with np.errstate(divide="ignore", invalid="ignore"):
            for k in range(len(self.cross)):
                d = self.cross[k]
                v = np.where(d > 0.0, (self.sq_next[k] + self.sq_prev[k]) / (2.0 * d), np.inf)
                out = v if out is None else np.maximum(out, v)
        return out

    def angle_range(self, orientation: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Smallest and largest interior angle in degrees, in [0, 360).

        Same convention as :func:`meshaudit.metrics.common.interior_angles`.
        """
        lo = hi = None
        for k in range(len(self.cross)):
            ang = np.degrees(np.arctan2(orientation * self.cross[k], self.dot[k]))
            ang = np.where(ang < 0.0, ang + 360.0, ang)
            lo = ang if lo is None else np.minimum(lo, ang)
            hi = ang if hi is None else np.maximum(hi, ang)
        return lo, hi

    def longest_edge(self) -> np.ndarray:
        out = self.length[0]
        for v in self.length[1:]:
            out = np.maximum(out, v)
        return out


def polygon_corners(x: tuple[Point, ...]) -> PolygonCorners:
    """Corner data of 2-D polygons with nodes ``x`` in order."""
    k = len(x)
    to_next = [sub(x[(i + 1) % k], x[i]) for i in range(k)]
    to_prev = [sub(x[i - 1], x[i]) for i in range(k)]  # not -to_next[i-1]: signed zeros
    sq = [dot(a, a) for a in to_next]
    return PolygonCorners(
        cross=[cross2(a, b) for a, b in zip(to_next, to_prev)],
        dot=[dot(a, b) for a, b in zip(to_next, to_prev)],
        sq_next=sq,
        sq_prev=[dot(b, b) for b in to_prev],
        length=[np.sqrt(s) for s in sq],
    )
