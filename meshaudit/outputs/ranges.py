"""Value ranges a histogram or a colour scale can be drawn over, whatever the values.

A metric can hold one value everywhere (a uniform grid), values that differ only by
round-off (1e-16 apart), values near the largest float, or nothing finite at all. A
histogram of such a range cannot be cut into equal bins, and a colour scale over it
overflows; :func:`drawable_range` widens or clips the range so both always work.
"""

from __future__ import annotations

import numpy as np

#: Largest magnitude of a drawn range: its width, at most twice this, stays finite.
LIMIT = 2.0**1020

#: Below this magnitude (and at 0) a constant value is drawn on the range -0.5 to 0.5
#: (half of it would be subnormal: too coarse to cut into bins).
TINY = 2.0**-1000

_EPS = float(np.finfo(np.float64).eps)


def drawable_range(lo: float, hi: float, parts: int = 1) -> tuple[float, float]:
    """(lo, hi) made drawable: finite, within +-:data:`LIMIT`, lo < hi, and wide enough
    that ``parts`` equal steps between them are distinct floats.

    A range too narrow for that (one value everywhere, or values differing only by
    round-off) is widened about its middle m to m/2 .. 3m/2 (-0.5 .. 0.5 where |m| is
    below :data:`TINY`, 0 included), so the value sits in the middle whatever its size.
    Ends that are not finite are taken as -+ :data:`LIMIT` (NaN as 0).
    """
    lo, hi = (_clip(v) for v in (lo, hi))
    if hi < lo:
        lo, hi = hi, lo
    if not too_narrow(lo, hi, parts):
        return lo, hi
    mid = 0.5 * lo + 0.5 * hi
    pad = 0.5 * abs(mid) if abs(mid) >= TINY else 0.5
    return _clip(mid - pad), _clip(mid + pad)


def too_narrow(lo: float, hi: float, parts: int = 1) -> bool:
    """Whether ``parts`` equal steps from ``lo`` to ``hi`` (finite) would not all be
    distinct, well-resolved floats: one value, or values apart by round-off only."""
    scale = max(abs(lo), abs(hi))
    return not (hi - lo > 64.0 * max(parts, 1) * _EPS * scale and hi - lo > TINY)


def _clip(value: float) -> float:
    value = float(value)
    if np.isnan(value):
        return 0.0
    return min(max(value, -LIMIT), LIMIT)


def clipped_for_colour(values: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """``values`` with everything beyond the range (infinities too) pulled to one range
    width past its ends, NaN kept: they take the end colours all the same, and the colour
    arithmetic (value - lo) / (hi - lo) cannot overflow."""
    width = hi - lo
    with np.errstate(invalid="ignore"):
        return np.clip(np.asarray(values, dtype=float), lo - width, hi + width)
