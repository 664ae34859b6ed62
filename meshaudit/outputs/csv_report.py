"""One CSV row per element, every element, in read order."""

from __future__ import annotations

import numpy as np

from ..metrics import METRIC_NAMES
from ..report import Report

LEADING = (
    "index",
    "id",
    "type",
    "verdict",
    "score",
    "flags",
    "centroid_x",
    "centroid_y",
    "centroid_z",
)
#: Metric columns after the leading ones ("score" already leads).
TRAILING = tuple(m for m in METRIC_NAMES if m != "score")
COLUMNS = LEADING + TRAILING


def _numbers(values: np.ndarray) -> np.ndarray:
    """Format floats with 10 significant digits; NaN (not defined) becomes empty."""
    out = np.char.mod("%.10g", values).astype(object)
    out[np.isnan(values)] = ""
    return out


def render(report: Report) -> str:
    cols = [
        np.char.mod("%d", report.index).astype(object),
        np.char.mod("%d", report.ids).astype(object),
        report.types,
        report.verdict_names,
        _numbers(report.score),
        report.flag_strings(";"),
        *(_numbers(report.centroids[:, k]) for k in range(3)),
        *(_numbers(report.metrics[m]) for m in TRAILING),
    ]
    lines = [",".join(COLUMNS)]
    lines.extend(",".join(row) for row in zip(*cols))
    return "\n".join(lines) + "\n"
