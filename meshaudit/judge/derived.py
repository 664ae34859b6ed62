"""Shared pieces of the built-in limits (:mod:`meshaudit.judge.profiles`): how a derived
limit is rounded, and the midside-node limits every quadratic family shares.

Derived limits are rounded to five significant figures away from the ideal (up for a
ceiling, down for a floor), so the analytic shape at the anchor limit they are derived
from breaches neither rule.
"""

from __future__ import annotations

import math
from decimal import ROUND_CEILING, ROUND_FLOOR, Decimal

#: Midside-node limits (quadratic elements; linear ones read NaN and never breach).
#: Along: det J vanishes at a corner when its edge's midside node reaches the quarter
#: point, 0.25 (Henshell and Shaw 1975; Barsoum 1976, from memory); the warn and fail
#: limits keep a working margin below it. Across: a midside node at h off the chord bends
#: the edge's end tangents by atan(4 h / L) (14 deg at 0.0625, 31 deg at 0.15).
ALONG = "margin below the quarter point 0.25 where det J vanishes at the corner"
ACROSS = "{w} tilts the edge's end tangents {tw} deg off the chord, {f} tilts {tf} deg"


def outward(value: float, worse: str) -> float:
    """``value`` to five significant figures, rounded away from the ideal (see above)."""
    exact = Decimal(f"{value:.12g}")
    step = Decimal(1).scaleb(exact.adjusted() - 4)
    rounding = ROUND_CEILING if worse == "high" else ROUND_FLOOR
    return float(exact.quantize(step, rounding=rounding))


def midside(
    along: tuple[float, float], across: tuple[float, float], own: str
) -> dict[str, tuple[float, float, str]]:
    """Midside-offset limits with their reasons (``own``: the profile's own-choice source)."""
    tilt = [f"{math.degrees(math.atan(4.0 * h)):.0f}" for h in across]
    why = ACROSS.format(w=across[0], tw=tilt[0], f=across[1], tf=tilt[1])
    return {
        "midside_offset_along": (*along, f"{own}; {ALONG}"),
        "midside_offset_across": (*across, f"{own}; {why}"),
    }
