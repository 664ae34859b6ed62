"""Column form of element coordinates, for the fast metric kernels.

An (n, k, d) array of k nodes with d coordinates is split into k "points", each a tuple
of d contiguous (n,) arrays. Arithmetic on columns touches only (n,) arrays: no
(n, k, d) temporaries, no reductions over short axes, and every operation streams
through memory once, which is what makes a million-element kernel fast.

Where a shortcut below replaces the plain formula, it is an exact rearrangement: it
gives the same floating-point result (see each docstring), barring overflow or
underflow, which needs element sizes above about 1e75 or below 1e-75: the engine measures
larger and smaller ones at a power-of-two scale (:mod:`meshaudit.mesh.scale`).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .common import DEGENERATE_TOLERANCE

#: One point per element: its coordinates as (n,) arrays, x first.
Point = tuple[np.ndarray, ...]

#: np.degrees(x) is x times this constant, to the bit; the product is much cheaper.
DEGREES = 180.0 / np.pi

#: Elements per block when a node-major array is transposed into columns: a block of
#: source rows stays in cache while it is scattered into the columns.
_BLOCK = 1024


def node_columns(p: np.ndarray) -> np.ndarray:
    """``p`` (n, k, d) as a contiguous float64 (k, d, n) array: the same numbers, moved.

    No copy when ``p`` is already a (k, d, n) array seen as (n, k, d) (see
    :func:`as_elements`). Otherwise the transpose is copied in blocks of elements,
    about twice as fast as one strided copy of the whole array.
    """
    cols = np.moveaxis(p, 0, -1)
    if cols.dtype == np.float64 and cols.flags.c_contiguous:
        return cols
    out = np.empty(cols.shape, dtype=np.float64)
    for start in range(0, cols.shape[-1], _BLOCK):
        out[..., start : start + _BLOCK] = cols[..., start : start + _BLOCK]
    return out


def as_elements(cols: np.ndarray) -> np.ndarray:
    """A (k, d, n) column array seen as (n, k, d) elements, without a copy."""
    return np.moveaxis(cols, -1, 0)


def split(p: np.ndarray) -> tuple[Point, ...]:
    """Nodes of ``p`` (n, k, d) as k points of d contiguous (n,) float64 columns."""
    return tuple(tuple(node) for node in node_columns(p))


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


def square(a: Point) -> np.ndarray:
    """|a|^2, equal to ``dot(a, a)`` (a sum of squares is never -0.0, so no +0.0)."""
    total = a[0] * a[0]
    rest = (a[2], a[1]) if len(a) == 3 else a[1:]
    for u in rest:
        total += u * u
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


def extremes(values: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Element-wise (min, max) over a list of (n,) arrays (NaN propagates)."""
    lo, hi = values[0], values[0]
    for v in values[1:]:
        lo, hi = np.minimum(lo, v), np.maximum(hi, v)
    return lo, hi


def edges(x: tuple[Point, ...]) -> list[Point]:
    """Edge vectors of polygons with nodes ``x``: edge k is node k+1 minus node k."""
    return [sub(x[(k + 1) % len(x)], x[k]) for k in range(len(x))]


def degenerate_edges(
    vectors: list[Point], area: np.ndarray, diagonals: tuple[Point, ...] = ()
) -> np.ndarray:
    """Collapsed polygons: two corners at the same place (a (near) zero-length edge, or
    diagonal of a quad, given as ``diagonals``) or corners on one line (a (near) zero
    unsigned ``area``), from the edge vectors (in 3-D for the rule of
    :func:`meshaudit.metrics.common.degenerate`); lengths relative to the longest edge.

    The square root is taken of the longest and shortest squared length only: it is
    monotonic, so they are the longest and shortest lengths to the bit.
    """
    squares = [square(v) for v in vectors]
    shortest, longest = extremes(squares)
    for d in diagonals:
        shortest = np.minimum(shortest, square(d))
    shortest, longest = np.sqrt(shortest), np.sqrt(longest)
    with np.errstate(invalid="ignore"):
        return (
            ~(longest > 0.0)
            | (shortest <= DEGENERATE_TOLERANCE * longest)
            | ~(np.abs(area) > DEGENERATE_TOLERANCE * longest**2)
        )


@dataclass(frozen=True)
class PolygonCorners:
    """Edge data at each corner of 2-D polygons, built once by :func:`polygon_corners`.

    At corner k, a = node k+1 - node k and b = node k-1 - node k: ``to_next[k]`` = a,
    ``cross[k]`` = det[a, b], ``dot[k]`` = a . b (may be -0.0), ``sq_next[k]`` = |a|^2
    and ``length[k]`` = |a| (the length of edge k). |b|^2 = ``sq_next[k-1]`` to the bit,
    as b is edge k-1 reversed (exact negation), so it is not stored twice.
    """

    to_next: list[Point]
    cross: list[np.ndarray]
    dot: list[np.ndarray]
    sq_next: list[np.ndarray]
    length: list[np.ndarray]

    def scaled_jacobian(self) -> np.ndarray:
        """min over corners of det[a, b] / (|a| |b|) (unscaled; in [-1, 1]).

        A corner with a zero-length edge has det[a, b] = 0 (the determinant of a zero
        vector) and counts as 0, not as the undefined 0/0: a collapsed corner breaches
        any positive limit. Never -0.0.
        """
        out = None
        with np.errstate(divide="ignore", invalid="ignore"):
            for k, cross in enumerate(self.cross):
                v = cross / (self.length[k] * self.length[k - 1])
                out = v if out is None else np.minimum(out, v)
            rows = np.flatnonzero(np.isnan(out))  # 0/0 at a corner with a zero edge
            if rows.size:
                fixed = np.zeros(rows.size)
                for k, cross in enumerate(self.cross):
                    v = cross[rows] / (self.length[k][rows] * self.length[k - 1][rows])
                    fixed = np.fmin(fixed, v)
                out[rows] = fixed
        out += 0.0
        return out

    def condition(self) -> np.ndarray:
        """max over corners of (|a|^2 + |b|^2) / (2 det[a, b]); inf where det <= 0.

        Taken as max_k((|a|^2 + |b|^2) / det) / 2, the same numbers (halving is exact),
        with inf written where any corner has det <= 0 instead of per corner.
        """
        out = None
        with np.errstate(divide="ignore", invalid="ignore"):
            for k, cross in enumerate(self.cross):
                v = (self.sq_next[k] + self.sq_next[k - 1]) / cross
                out = v if out is None else np.maximum(out, v)
        out *= 0.5
        np.copyto(out, np.inf, where=~self.convex)
        return out

    @cached_property
    def convex(self) -> np.ndarray:
        """True where det[a, b] > 0 at every corner: convex and counter-clockwise."""
        out = self.cross[0] > 0.0
        for cross in self.cross[1:]:
            out &= cross > 0.0
        return out

    def angle_range(self, orientation: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Smallest and largest interior angle in degrees, in [0, 360); 0 (never -0.0)
        at a corner with a zero-length edge.

        Same convention as :func:`meshaudit.metrics.common.interior_angles`. An element
        that is :attr:`convex` and measured counter-clockwise (``orientation`` +1) has
        all its angles in (0, 180), the larger the smaller their cotangent a . b / det,
        so only its two extreme corners get an arc tangent, as atan2(1, cot). The other
        elements take atan2(orientation det, a . b) at each corner. Both agree to
        round-off.
        """
        with np.errstate(divide="ignore", invalid="ignore"):
            cot = [d / c for d, c in zip(self.dot, self.cross)]
        cot_lo, cot_hi = extremes(cot)
        lo = np.arctan2(1.0, cot_hi)
        lo *= DEGREES
        hi = np.arctan2(1.0, cot_lo)
        hi *= DEGREES
        rows = np.flatnonzero(~(self.convex & (orientation > 0.0)))
        if rows.size:
            lo[rows], hi[rows] = self._angle_range_at(rows, orientation[rows])
        return lo, hi

    def _angle_range_at(
        self, rows: np.ndarray, orientation: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray]:
        angles = []
        for cross, dot_ in zip(self.cross, self.dot):
            ang = np.arctan2(orientation * cross[rows], dot_[rows] + 0.0) * DEGREES
            angles.append(np.where(ang < 0.0, ang + 360.0, ang + 0.0))  # no -0.0
        return extremes(angles)

    def longest_edge(self) -> np.ndarray:
        return extremes(self.length)[1]


def polygon_corners(x: tuple[Point, ...]) -> PolygonCorners:
    """Corner data of 2-D polygons with nodes ``x`` in order."""
    k = len(x)
    to_next = edges(x)
    to_prev = [sub(x[i - 1], x[i]) for i in range(k)]  # not -to_next[i-1]: signed zeros
    sq = [square(a) for a in to_next]
    return PolygonCorners(
        to_next=to_next,
        cross=[cross2(a, b) for a, b in zip(to_next, to_prev)],
        dot=[a[0] * b[0] + a[1] * b[1] for a, b in zip(to_next, to_prev)],
        sq_next=sq,
        length=[np.sqrt(s) for s in sq],
    )
