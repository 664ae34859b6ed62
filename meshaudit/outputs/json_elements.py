"""Element records of the JSON report written straight to text, column by column.

:func:`element_lines` gives, for each element, the same line ``json.dumps`` writes for
its :meth:`meshaudit.results.report.Report.element_records` dict (separators ", " and ": ",
ASCII only): every number goes through the same ``repr`` the json module uses, every
name through the json module's own string encoder. It skips building one dict per
element and walking it again in the encoder, which at a few thousand listed elements
of a million-element mesh halves the cost of the listing.
"""

from __future__ import annotations

import json

import numpy as np

from ..judge.verdicts import VERDICT_NAMES
from ..metrics import METRIC_NAMES
from ..results.report import FLAG_NAMES, Report

_text = json.JSONEncoder(allow_nan=False, separators=(", ", ": ")).encode

#: One element record with a slot per value, keys in the order of ``element_records``.
_TEMPLATE = (
    '{"index": %s, "id": %s, "type": %s, "verdict": %s, "score": %s, "flags": %s, '
    '"centroid": [%s, %s, %s], "metrics": {'
    + ", ".join(f"{_text(m)}: %s" for m in METRIC_NAMES)
    + '}, "breaches": %s, "region": %s, "file_region": %s}'
)


def element_lines(report: Report, rows: np.ndarray) -> list[str]:
    """The JSON text of the record of each element in ``rows`` (one line each)."""
    rows = np.asarray(rows, dtype=np.int64)
    if rows.size == 0:
        return []
    metrics = {m: numbers(report.metrics[m][rows]) for m in METRIC_NAMES}
    centroids = report.centroids[rows].astype(np.float64)
    if not np.isfinite(centroids).all():  # as the json module: no NaN or infinity
        raise ValueError("Out of range float values are not JSON compliant: centroid")
    bits = report.flag_bits[rows]
    uniq, inverse = np.unique(bits, return_inverse=True)
    flags = [_text([n for k, n in enumerate(FLAG_NAMES) if int(u) >> k & 1]) for u in uniq]
    region_codes = report.region_codes
    regions = (
        ["null"] * rows.size
        if region_codes is None
        else _pick((None, *report.region_names), region_codes[rows])
    )
    columns = [
        list(map(str, report.positions(rows).tolist())),
        list(map(str, report.ids[rows].tolist())),
        _pick(report.cell_types, report.type_codes[rows]),
        _pick(VERDICT_NAMES, report.verdict[rows]),
        metrics["score"],
        [flags[f] for f in inverse.ravel().tolist()],
        *(numbers(centroids[:, k]) for k in range(3)),
        *(metrics[m] for m in METRIC_NAMES),
        _breaches(report, rows, metrics),
        regions,
        _pick((None, *report.file_region_names), np.asarray(report.file_region_codes_of(rows))),
    ]
    return [_TEMPLATE % values for values in zip(*columns)]


def numbers(values: np.ndarray) -> list[str]:
    """JSON text of each float, as :func:`meshaudit.results.report.json_floats` gives it to the json
    module: its repr (-0.0 written 0.0), ``null`` where not defined (NaN), the string
    ``"inf"`` or ``"-inf"`` where infinite (JSON has no infinite number)."""
    values = values.astype(np.float64) + 0.0
    if np.isnan(values).all():  # e.g. midside metrics of linear elements
        return ["null"] * values.size
    out = list(map(float.__repr__, values.tolist()))
    for k in np.flatnonzero(~np.isfinite(values)).tolist():
        v = values[k]
        out[k] = "null" if np.isnan(v) else ('"inf"' if v > 0 else '"-inf"')
    return out


def _pick(names: tuple[str | None, ...], codes: np.ndarray) -> list[str]:
    """JSON text of ``names[code]`` for each code (each name encoded once)."""
    encoded = [_text(n) for n in names]
    return [encoded[c] for c in codes.tolist()]


def _breaches(report: Report, rows: np.ndarray, metrics: dict[str, list[str]]) -> list[str]:
    """JSON text of each element's breaches object: metric -> value, level and limit."""
    parts: list[list[str]] = [[] for _ in range(rows.size)]
    levels = [_text(v) for v in VERDICT_NAMES]
    limit_text: dict[tuple[type, float | None], str] = {}  # keyed by type too: 4 and 4.0
    for metric, lvl in report.levels.items():
        codes = lvl[rows]
        hit = np.flatnonzero(codes)
        if hit.size == 0:
            continue
        limits = report.breached_limits(metric, rows[hit], codes[hit])
        values, key = metrics[metric], _text(metric)
        for k, level, limit in zip(hit.tolist(), codes[hit].tolist(), limits):
            lim = limit_text.get((type(limit), limit))
            if lim is None:
                lim = limit_text[type(limit), limit] = _text(limit)
            parts[k].append(
                f'{key}: {{"value": {values[k]}, "level": {levels[level]}, "limit": {lim}}}'
            )
    return ["{" + ", ".join(p) + "}" for p in parts]
