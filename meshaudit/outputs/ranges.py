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

#: Below this magnitude a constant value is drawn on the range -0.5 to 0.5 (its half
#: would be subnormal: too coarse to cut into bins).
TINY = 2.0**-1000

#: Constant values of magnitude from 2^-20 to 2^40 are drawn on value -0.5 to value
#: + 0.5; the others on half to one and a half times the value (a range that scales
#: with it).
UNIT_BAND = (2.0**-20, 2.0**40)

_EPS = float(np.finfo(np.float64).eps)


def drawable_range(lo: float, hi: float, parts: int = 1) -> tuple[float, float]:
    """(lo, hi) made drawable: finite, within +-:data:`LIMIT`, lo < hi, and wide enough
    that ``parts`` equal steps between them are distinct floats.

    A range too narrow for that (one value everywhere, or values differing only by
    round-off) is widened about its middle m: to m -+ 0.5 where |m| is within
    :data:`UNIT_BAND` (or m is 0, or |m| is below :data:`TINY`), else to m -+ |m| / 2.
    Ends that are not finite are taken as -+ :data:`LIMIT` (NaN as 0).
    """
    lo, hi = (_clip(v) for v in (lo, hi))
    if hi < lo:
        lo, hi = hi, lo
    if not too_narrow(lo, hi, parts):
        return lo, hi
    mid = 0.5 * lo + 0.5 * hi
    size = abs(mid)
    if size == 0.0 or size < TINY or UNIT_BAND[0] <= size <= UNIT_BAND[1]:
        pad = 0.5
    else:
        pad = 0.5 * size
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
