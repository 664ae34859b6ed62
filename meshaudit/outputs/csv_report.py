"""One CSV row per element, every element, in read order."""

from __future__ import annotations

import os
from collections.abc import Iterator

import numpy as np

from ..metrics import METRIC_NAMES
from ..results.report import Report

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
#: The region of the file each element is in (see :mod:`meshaudit.mesh.regions`), last;
#: the JSON records' ``file_region`` (their ``region`` is the region whose limits judged it).
COLUMNS = LEADING + TRAILING + ("file_region",)


#: Rows formatted at a time by :func:`pieces` (bounds the text held in memory).
ROWS_PER_PIECE = 65_536


def _numbers(values: np.ndarray) -> list[str]:
    """Format floats with 10 significant digits (-0.0 as 0); NaN (not defined) becomes
    empty, an infinity ``inf`` or ``-inf``: the words the JSON report writes as strings,
    where it writes null for the empty cell.

    Python's own ``%`` formatting over the column's floats: the same text as numpy's
    ``char.mod`` gives, several times faster.
    """
    nan = np.flatnonzero(np.isnan(values))
    if nan.size == values.size:  # e.g. midside metrics of linear elements
        return [""] * values.size
    out = list(map("%.10g".__mod__, (values.astype(np.float64) + 0.0).tolist()))
    for k in nan.tolist():
        out[k] = ""
    return out


def _texts(values: np.ndarray) -> list[str]:
    """Text cells, quoted (doubled quotes inside) when they hold a comma, a quote or a line
    break; the distinct values are formatted once."""
    uniq, inverse = np.unique(values.astype(str), return_inverse=True)
    cells = []
    for text in uniq.tolist():
        if any(c in text for c in ',"\r\n'):
            text = '"' + text.replace('"', '""') + '"'
        cells.append(text)
    return np.asarray(cells, dtype=object)[inverse.ravel()].tolist()


def render(report: Report) -> str:
    """The CSV text: a header line, then one line per element in read order."""
    return "".join(pieces(report))


def write(path: str | os.PathLike[str], report: Report) -> None:
    """Write :func:`render`'s text to ``path`` (UTF-8) piece by piece, so that a large
    mesh's table is never held in memory whole."""
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.writelines(pieces(report))


def pieces(report: Report) -> Iterator[str]:
    """:func:`render`'s text in pieces: the header, then :data:`ROWS_PER_PIECE` rows at a
    time."""
    yield ",".join(COLUMNS) + "\n"
    types, verdicts, flags = report.types, report.verdict_names, report.flag_strings(";")
    for start in range(0, len(report), ROWS_PER_PIECE):
        rows = slice(start, start + ROWS_PER_PIECE)
        cols = [
            list(map(str, report.index[rows].tolist())),
            list(map(str, report.ids[rows].tolist())),
            types[rows].tolist(),
            verdicts[rows].tolist(),
            _numbers(report.score[rows]),
            flags[rows].tolist(),
            *(_numbers(report.centroids[rows, k]) for k in range(3)),
            *(_numbers(report.metrics[m][rows]) for m in TRAILING),
            _texts(report.file_region_labels(rows)),
        ]
        yield "\n".join(map(",".join, zip(*cols))) + "\n"
