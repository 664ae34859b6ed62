"""Judge measured elements against a profile: breach levels per metric, a verdict and
the score (see :mod:`meshaudit.judge.score`)."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..metrics import METRIC_INFO, VALIDITY_FLAGS, WARNING_FLAGS
from ..metrics.quadratic import QUARTER_POINT_METRICS, without_quarter_points_name
from .profiles import Limit, Profile
from .score import banded, distance

OK, WARN, FAIL = 0, 1, 2
VERDICT_NAMES: tuple[str, ...] = ("ok", "warn", "fail")

#: Flags that make an element invalid: it fails whatever the profile says.
INVALID_FLAGS: tuple[str, ...] = tuple(f for f in VALIDITY_FLAGS if f != "reversed")

#: Metrics a quarter-point element breaches by construction (det J vanishes at its
#: corner, so det J's minima are near zero and the Gauss-point spread is large; the
#: midside node is a quarter of the edge off centre). For an element flagged
#: ``quarter_point`` a breach of one of them is lowered to warn when the same element
#: without its quarter-point nodes (moved to their chord midpoints, the rest kept) does
#: not breach that limit too: only what the quarter points cause is softened.
QUARTER_POINT_CAPPED: tuple[str, ...] = QUARTER_POINT_METRICS


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


def _quarter_point_capped(
    lvl: np.ndarray, metric: str, limit: Limit, metrics: dict[str, np.ndarray], quarter: np.ndarray
) -> np.ndarray:
    """Breach levels of ``metric`` with quarter-point elements capped at warn unless the
    element without its quarter points breaches at fail too (missing: not capped)."""
    twin = metrics.get(without_quarter_points_name(metric))
    if twin is None or not quarter.any():
        return lvl
    ceiling = np.maximum(np.int8(WARN), breach_level(twin, limit, METRIC_INFO[metric].worse))
    return np.where(quarter, np.minimum(lvl, ceiling), lvl)


def judge(
    family: str, metrics: dict[str, np.ndarray], flags: dict[str, np.ndarray], profile: Profile
) -> tuple[dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """Breach levels of every limited metric, the verdict (0 ok, 1 warn, 2 fail) and the
    score (:mod:`meshaudit.judge.score`: in the band of the verdict, lower the farther the
    limited metrics are from their ideals)."""
    n = len(metrics["area"])
    verdict = np.zeros(n, dtype=np.int8)
    distortion = np.zeros(n)
    levels: dict[str, np.ndarray] = {}
    for metric, limit in profile.limits.get(family, {}).items():
        worse = METRIC_INFO[metric].worse
        values = metrics.get(metric)
        if values is None:  # a metric measured later (size_ratio, from the neighbours)
            continue
        lvl = breach_level(values, limit, worse)
        t = distance(family, metric, values, limit, worse, lvl)
        if t is not None:
            distortion += t
        if metric in QUARTER_POINT_CAPPED and "quarter_point" in flags:
            lvl = _quarter_point_capped(lvl, metric, limit, metrics, flags["quarter_point"])
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


def judge_by_region(
    family: str,
    metrics: dict[str, np.ndarray],
    flags: dict[str, np.ndarray],
    profiles: Sequence[Profile],
    codes: np.ndarray,
) -> tuple[dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """Like :func:`judge` (levels, verdict, score), with element i
    judged and scored under ``profiles[codes[i]]``. Loops over the profiles, never over
    elements."""
    if len(profiles) == 1 or not codes.any():
        return judge(family, metrics, flags, profiles[0])
    n = len(codes)
    verdict = np.zeros(n, dtype=np.int8)
    score = np.zeros(n)
    levels: dict[str, np.ndarray] = {}
    for k, profile in enumerate(profiles):
        rows = np.flatnonzero(codes == k)
        if rows.size == 0:
            continue
        limited = profile.limits.get(family, {})
        needed = {"area", *limited, *map(without_quarter_points_name, limited)}  # all judge reads
        sub_metrics = {name: metrics[name][rows] for name in needed if name in metrics}
        sub_flags = {name: values[rows] for name, values in flags.items()}
        lv, v, s = judge(family, sub_metrics, sub_flags, profile)
        verdict[rows] = v
        score[rows] = s
        for name, lvl in lv.items():
            levels.setdefault(name, np.zeros(n, dtype=np.int8))[rows] = lvl
    return levels, verdict, score
