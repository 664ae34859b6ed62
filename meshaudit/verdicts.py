"""Judge measured elements against a profile: breach levels per metric, a verdict and
the score (see :mod:`meshaudit.score`)."""

from __future__ import annotations

import numpy as np

from .metrics import METRIC_INFO, VALIDITY_FLAGS, WARNING_FLAGS
from .profiles import Limit, Profile
from .score import banded, distance

OK, WARN, FAIL = 0, 1, 2
VERDICT_NAMES: tuple[str, ...] = ("ok", "warn", "fail")

#: Flags that make an element invalid: it fails whatever the profile says.
INVALID_FLAGS: tuple[str, ...] = tuple(f for f in VALIDITY_FLAGS if f != "reversed")

#: Metrics a quarter-point element breaches by construction (det J vanishes at its
#: corner, so the Gauss-point det J spread is large and the midside node is a quarter of
#: the edge off centre). For an element flagged ``quarter_point`` their breaches are
#: reported at warn level at most: the element is reported as what it is, not failed.
QUARTER_POINT_CAPPED: tuple[str, ...] = (
    "det_j_min",
    "det_j_corner_min",
    "jacobian_ratio",
    "midside_offset_along",
)


def breach_level(values: np.ndarray, limit: Limit, worse: str) -> np.ndarray:
    """0 within limits, 1 past the warn limit, 2 past the fail limit (int8, NaN never breaches).

    "Past" is strictly beyond: a value equal to a limit does not breach it.
    """
    level = np.zeros(values.shape, dtype=np.int8)
    for threshold, code in ((limit.warn, WARN), (limit.fail, FAIL)):
        if threshold is None:
            continue
        with np.errstate(invalid="ignore"):
            past = values > threshold if worse == "high" else values < threshold
        level = np.maximum(level, np.where(past, np.int8(code), np.int8(0)))
    return level


def judge(
    family: str, metrics: dict[str, np.ndarray], flags: dict[str, np.ndarray], profile: Profile
) -> tuple[dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """Breach levels of every limited metric, the verdict (0 ok, 1 warn, 2 fail) and the
    score (:mod:`meshaudit.score`: in the band of the verdict, lower the farther the
    limited metrics are from their ideals)."""
    n = len(metrics["area"])
    verdict = np.zeros(n, dtype=np.int8)
    distortion = np.zeros(n)
    levels: dict[str, np.ndarray] = {}
    for metric, limit in profile.limits.get(family, {}).items():
        worse = METRIC_INFO[metric].worse
        values = metrics[metric]
        lvl = breach_level(values, limit, worse)
        t = distance(family, metric, values, limit, worse, lvl)
        if t is not None:
            distortion += t
        if metric in QUARTER_POINT_CAPPED and "quarter_point" in flags:
            lvl = np.where(flags["quarter_point"], np.minimum(lvl, np.int8(WARN)), lvl)
        levels[metric] = lvl
        np.maximum(verdict, lvl, out=verdict)
    for name in WARNING_FLAGS:
        if name in flags:
            verdict[flags[name] & (verdict < WARN)] = WARN
    invalid = np.zeros(n, dtype=bool)
    for name in INVALID_FLAGS:
        invalid |= flags[name]
    verdict[invalid] = FAIL
    return levels, verdict, banded(distortion, verdict, invalid)
