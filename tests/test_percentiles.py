"""Report percentiles against numpy.percentile (the reference: its default linear method).

The statistics pick order statistics by partitioning instead of sorting; every check here
compares with ``numpy.percentile`` or ``numpy.sort`` on the same data, value for value.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from benchmarks.meshgen import distorted_plate
from meshaudit import api
from meshaudit.metrics import METRIC_NAMES
from meshaudit.results.percentiles import SORT_BELOW, heavily_tied, linear_percentiles, partition_at
from meshaudit.results.report import PERCENTILES, metric_statistics

QS = [q for _, q in PERCENTILES]
FINITE = st.floats(-1e9, 1e9, allow_nan=False, allow_infinity=False)


def _numpy(values: np.ndarray, qs=QS) -> list[float]:
    """Reference: numpy.percentile, default (linear) method."""
    return [float(v) for v in np.percentile(values, qs)]


@settings(max_examples=200, deadline=None)
@given(
    values=arrays(np.float64, st.integers(1, 60), elements=FINITE),
    qs=st.lists(st.floats(0, 100), min_size=1, max_size=6),
)
def test_small_samples_match_numpy(values, qs):
    assert linear_percentiles(values.copy(), qs) == _numpy(values, qs)


@settings(max_examples=200, deadline=None)
@given(
    values=arrays(np.float64, st.integers(1, 80), elements=st.integers(-3, 3).map(float)),
    data=st.data(),
)
def test_partitions_put_the_sorted_value_at_each_wanted_position(values, data):
    """Heavy ties included (few distinct values); reference: numpy.sort."""
    n = values.size
    wanted = sorted(data.draw(st.sets(st.integers(0, n - 1), min_size=1, max_size=8)))
    work = values.copy()
    partition_at(work, wanted)
    assert work[wanted].tolist() == np.sort(values)[wanted].tolist()
    assert sorted(work.tolist()) == sorted(values.tolist())  # a reordering, nothing lost


@pytest.mark.parametrize(
    "name,tied",
    [("distinct", False), ("2% zeros", False), ("40% zeros", True), ("all equal", True)],
)
def test_large_columns_match_numpy_on_either_path(name, tied):
    """Above SORT_BELOW values: partitions for distinct values, a sort for heavily tied."""
    rng = np.random.default_rng(7)
    n = 3 * SORT_BELOW + 1
    values = rng.normal(10.0, 3.0, n)
    share = {"distinct": 0.0, "2% zeros": 0.02, "40% zeros": 0.4, "all equal": 1.0}[name]
    values[rng.random(n) < share] = 0.0
    assert heavily_tied(values) is tied
    assert linear_percentiles(values.copy(), QS) == _numpy(values)


def test_placeholders_past_the_count_are_left_out():
    """The sample is the ``count`` smallest; +inf placeholders stand for NaN/inf."""
    rng = np.random.default_rng(3)
    sample = rng.random(SORT_BELOW + 500)
    work = np.concatenate([sample, np.full(777, np.inf)])
    rng.shuffle(work)
    assert linear_percentiles(work, QS, count=sample.size) == _numpy(sample)


def test_report_statistics_match_numpy_per_metric():
    """Every metric column of an audited plate (100k elements, non-finite values planted)
    against numpy.percentile over its finite values; counts against numpy's isfinite/isinf.
    """
    report = api.audit(distorted_plate(100_000, seed=5))
    report.metrics["condition"][[3, 50_000]] = np.inf  # as a degenerate element gives
    report.metrics["warp"][7] = np.nan
    stats = metric_statistics(report.metrics, report.levels)  # what Report.statistics runs
    for name in METRIC_NAMES:
        values = report.metrics[name]
        finite = values[np.isfinite(values)]
        entry = stats[name]
        assert entry["count"] == finite.size
        assert entry["infinite"] == int(np.isinf(values).sum())
        got = [entry[k] for k, _ in PERCENTILES]
        assert got == (_numpy(finite) if finite.size else [None] * len(PERCENTILES))
