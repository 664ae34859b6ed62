"""Mergeable statistics of one metric column: what a part sends instead of its values.

A part summarises a column in a :class:`Sketch`: exact counts (finite values, infinite
values, past the warn and the fail limit), exact minimum and maximum, and a histogram
of the finite values in buckets that keep the top 10 bits of the mantissa (a value's
bucket is the value with its other 42 mantissa bits set to zero, i.e. cut toward
zero). Sketches of parts add up bucket by bucket, so the whole mesh's sketch does not
depend on how it was cut.

Percentiles (the linear method of :func:`meshaudit.results.percentiles.linear_percentiles`)
are read from the merged histogram: each order statistic is its bucket's value, which is
the true value cut toward zero by less than 2^-10 of its magnitude (about 0.1 per cent),
and exact when the true value has at most 10 bits of mantissa after the leading one
(0, 0.5, 1, 45, 90, ...). The first and last order statistics are the exact minimum and
maximum. Counts, minimum and maximum are exact.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..judge.verdicts import FAIL, WARN
from ..results.report import PERCENTILES

#: Mantissa bits a bucket keeps (of 52).
KEPT_BITS = 10
_CUT = np.int64(~((1 << (52 - KEPT_BITS)) - 1))


@dataclass
class Sketch:
    """Summary of one metric column (see the module docstring)."""

    count: int  # finite values
    infinite: int
    past_warn: int
    past_fail: int
    low: float  # exact minimum of the finite values (nan when there are none)
    high: float
    buckets: np.ndarray  # (b,) float64 bucket values (value cut to KEPT_BITS), ascending
    counts: np.ndarray  # (b,) int64 values per bucket

    @staticmethod
    def of(values: np.ndarray, levels: np.ndarray | None) -> Sketch:
        """The sketch of ``values`` (n,) with their breach ``levels`` (n,) or None."""
        finite = values[np.isfinite(values)]
        n_inf = 0 if finite.size == values.size else int(np.count_nonzero(np.isinf(values)))
        past_warn = int(np.count_nonzero(levels >= WARN)) if levels is not None else 0
        past_fail = int(np.count_nonzero(levels == FAIL)) if levels is not None else 0
        if finite.size == 0:
            empty = np.zeros(0)
            return Sketch(0, n_inf, past_warn, past_fail, np.nan, np.nan, empty, empty.astype(int))
        cut = ((finite + 0.0).view(np.int64) & _CUT).view(np.float64)  # -0.0 made 0.0
        buckets, counts = np.unique(cut, return_counts=True)
        return Sketch(
            int(finite.size),
            n_inf,
            past_warn,
            past_fail,
            float(finite.min()),
            float(finite.max()),
            buckets,
            counts.astype(np.int64),
        )

    @staticmethod
    def merged(sketches: Sequence[Sketch]) -> Sketch:
        """One sketch of all the values the ``sketches`` summarise."""
        full = [s for s in sketches if s.count]
        lows = [s.low for s in full]
        highs = [s.high for s in full]
        if full:
            buckets, inverse = np.unique(
                np.concatenate([s.buckets for s in full]), return_inverse=True
            )
            counts = np.bincount(
                inverse.ravel(), weights=np.concatenate([s.counts for s in full])
            ).astype(np.int64)
        else:
            buckets, counts = np.zeros(0), np.zeros(0, dtype=np.int64)
        return Sketch(
            sum(s.count for s in sketches),
            sum(s.infinite for s in sketches),
            sum(s.past_warn for s in sketches),
            sum(s.past_fail for s in sketches),
            min(lows) if lows else np.nan,
            max(highs) if highs else np.nan,
            buckets,
            counts,
        )

    def order_statistic(self, rank: np.ndarray) -> np.ndarray:
        """Value of each 0-based ``rank`` among the finite values (see the module
        docstring: exact at the ends, else the bucket's value)."""
        ends = np.cumsum(self.counts)
        out = self.buckets[np.searchsorted(ends, rank, side="right")]
        out = np.clip(out, self.low, self.high)
        out[rank == 0] = self.low
        out[rank == self.count - 1] = self.high
        return out

    def statistics(self) -> dict[str, Any]:
        """The entry :meth:`meshaudit.results.report.Report.statistics` has for a metric."""
        entry: dict[str, Any] = {"count": self.count, "infinite": self.infinite}
        n = self.count
        if n:
            q = np.array([p for _, p in PERCENTILES]) / 100
            virtual = (n - 1) * q
            lower = np.minimum(np.floor(virtual), n - 1).astype(np.int64)
            upper = np.minimum(lower + 1, n - 1)
            gamma = virtual - lower
            a, b = self.order_statistic(lower), self.order_statistic(upper)
            with np.errstate(over="ignore", invalid="ignore"):
                blend = np.where(gamma >= 0.5, b - (b - a) * (1 - gamma), a + (b - a) * gamma)
            blend = np.where(a == b, a, blend)
            entry.update(zip((k for k, _ in PERCENTILES), map(float, blend)))
            entry["min"], entry["max"] = self.low, self.high
        else:
            entry.update({k: None for k, _ in PERCENTILES})
        entry["past_warn"] = self.past_warn
        entry["past_fail"] = self.past_fail
        return entry
