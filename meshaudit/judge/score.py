"""The element score: one number in [0, 1] that agrees with the element's verdict.

meshaudit's own composite, not a published metric. For an element judged under a profile
(the profile of its region, limits of its family)::

    score = (2 - v + 2^-T) / 3,   0 for an invalid element

where v is the element's final verdict (0 ok, 1 warn, 2 fail) and T >= 0 its distortion.
Since 0 < 2^-T <= 1, ok elements score in (2/3, 1], warn elements in [1/3, 2/3] and
failing elements in [0, 1/3) (in fact below 1/6: past a fail limit T > 1); invalid
elements (inverted, non-convex, self-intersecting, degenerate) score exactly 0. So every
failing element scores below every warn element, and every warn element below every ok
one, and 1 means every limited metric at its ideal (the square, the equilateral triangle,
the ideal solids: see :data:`SOLID_IDEAL`).

Within its band the score falls as T grows. T sums, over the metrics the profile limits,
how far each value x has moved from the metric's ideal x* toward its fail limit L (the
warn limit when the profile gives no fail limit)::

    t = (x - x*) / (L - x*),  at least 0

so t is 0 at the ideal, 1 at the fail limit and larger past it, and every limited metric
moves the score, not only the worst one. A value of infinity (an element folded at a
Gauss point) gives t = infinity and the bottom of its band; NaN (a metric undefined for
the element, e.g. midside offsets of a linear element) gives t = 0. Metrics the profile
does not limit do not count. Metrics with no ideal value (area, det J: sizes, not shapes)
count as t = L / x for x > 0 and infinity for x <= 0. A limit at or on the good side of
the ideal (a user profile that every element breaches) counts t = 1 where it is breached
and 0 elsewhere.
"""

from __future__ import annotations

import math

import numpy as np

from ..cells.registry import CELL_TYPES
from .profiles import Limit

#: Ideal value of each shape metric, per element family: the square, the equilateral
#: triangle and the ideal solids (the regular tetrahedron, the cube, the right prism and the
#: pyramid with all edges equal) read these. Metrics not listed (area, volume, det J) have
#: no ideal value.
_COMMON_IDEAL = {
    "jacobian_ratio": 1.0,
    "scaled_jacobian": 1.0,
    "aspect_ratio": 1.0,
    "skew": 0.0,
    "taper": 0.0,
    "warp": 0.0,
    "condition": 1.0,
    "midside_offset_along": 0.0,
    "midside_offset_across": 0.0,
    "edge_ratio": 1.0,
    "mean_ratio": 1.0,
    "radius_ratio": 1.0,
    "bending_error_distortion": 0.0,
    "size_ratio": 1.0,
}
#: The regular tetrahedron's dihedral angle, arccos(1/3) = 70.53 deg.
REGULAR_DIHEDRAL = math.degrees(math.acos(1.0 / 3.0))
#: Angles of the ideal solids. The wedge and the pyramid mix faces: their smallest face
#: angle is ideally 60 (the equilateral triangles) and their largest 90 (the square
#: faces), the values their ideal element reads, so that element scores 1.
SOLID_IDEAL: dict[str, dict[str, float]] = {
    "tetra": {
        "min_angle": 60.0,
        "max_angle": 60.0,
        "min_dihedral": REGULAR_DIHEDRAL,
        "max_dihedral": REGULAR_DIHEDRAL,
    },
    "hexahedron": {
        "min_angle": 90.0,
        "max_angle": 90.0,
        "min_dihedral": 90.0,
        "max_dihedral": 90.0,
    },
    "wedge": {"min_angle": 60.0, "max_angle": 90.0},
    "pyramid": {"min_angle": 60.0, "max_angle": 90.0},
}
IDEAL: dict[str, dict[str, float]] = {
    cell.family: {**_COMMON_IDEAL, **cell.ideal} for cell in CELL_TYPES.values()
}
for _family, _angles in SOLID_IDEAL.items():
    IDEAL[_family] = {**IDEAL.get(_family, _COMMON_IDEAL), **_angles}

#: Width of each verdict's band of scores.
BAND = 1.0 / 3.0
#: Where the bands meet: below 2/3 an element warns, below 1/3 it fails.
BAND_EDGES: tuple[tuple[str, float], ...] = (("warn", 2.0 * BAND), ("fail", BAND))


def distance(
    family: str, metric: str, values: np.ndarray, limit: Limit, worse: str, breached: np.ndarray
) -> np.ndarray | None:
    """t of every element for one limited metric (see the module docstring), or None
    when the limit has neither a warn nor a fail value. ``breached``: its breach level."""
    ref = limit.fail if limit.fail is not None else limit.warn
    if ref is None:
        return None
    ideal = IDEAL.get(family, {}).get(metric)
    with np.errstate(invalid="ignore", divide="ignore"):
        if ideal is None:  # a size (area, det J): no ideal value, larger is better
            if not (worse == "low" and ref > 0.0):
                return (breached > 0).astype(float)
            t = np.where(values > 0.0, ref / values, np.inf)
            return np.fmax(np.where(np.isnan(values), 0.0, t), 0.0)  # NaN counts 0
        span = ref - ideal if worse == "high" else ideal - ref
        if not span > 0.0:
            return (breached > 0).astype(float)
        t = values - ideal if worse == "high" else ideal - values
        t /= span
    return np.fmax(t, 0.0, out=t)  # NaN (undefined) counts 0


def banded(distortion: np.ndarray, verdict: np.ndarray, invalid: np.ndarray) -> np.ndarray:
    """score = (2 - verdict + 2^-distortion) / 3, and 0 where ``invalid``."""
    score = np.exp2(-distortion)
    score += 2.0 - verdict
    score *= BAND
    score[invalid] = 0.0
    return score


def rebanded(score: np.ndarray, rows: np.ndarray, old: np.ndarray, new: np.ndarray) -> None:
    """Move ``score[rows]`` (in place) from the band of verdicts ``old`` to that of ``new``,
    keeping its place within the band: for a verdict raised after scoring (a shell
    element whose normal disagrees with its neighbours')."""
    score[rows] -= (new - old.astype(float)) * BAND
