"""Per-element reports of a partitioned mesh: one file per part, plus an index.

Each part's worker writes its elements (the columns of the CSV report, see
:mod:`meshaudit.outputs.csv_report`; ``index`` is the position in the whole mesh) to a
temporary name beside its final one; the driver puts every part file and the index in
place together once the audit is done, or removes them all (see :func:`settle`).
The index (CSV) has one row per part: part number, part file, element report file,
first index, elements, and the part's ok / warn / fail counts.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass, fields
from typing import TYPE_CHECKING

import numpy as np

from ..errors import OutputError
from ..paths import reason
from ..results.report import Report

if TYPE_CHECKING:
    from .work import PartResult, PartTask

INDEX_COLUMNS = (
    "part",
    "part_file",
    "element_file",
    "first_index",
    "elements",
    "ok",
    "warn",
    "fail",
)


@dataclass
class _Shifted(Report):
    """A part's report whose ``index`` counts from the part's first position in the
    whole mesh."""

    offset: int = 0

    @property
    def index(self) -> np.ndarray:
        return np.arange(len(self), dtype=np.int64) + self.offset


def shifted(report: Report, offset: int) -> Report:
    """``report`` with its ``index`` starting at ``offset``."""
    values = {f.name: getattr(report, f.name) for f in fields(Report)}
    return _Shifted(**values, offset=offset)


def write_part(report: Report, offset: int, index: int, task: PartTask) -> str:
    """Write part ``index``'s element report to its temporary name; return the final one."""
    from .work import part_name, temporary

    assert task.element_dir is not None
    final = os.path.join(task.element_dir, part_name(task.element_stem, index, task.columnar))
    tmp = temporary(final)
    out = shifted(report, offset)
    try:
        if task.columnar:
            _write_parquet(tmp, out)
        else:
            from ..outputs import csv_report

            csv_report.write(tmp, out)
    except OSError as exc:
        _remove(tmp)
        raise OutputError(f"{final}: cannot write: {reason(exc)}") from None
    return final


def _write_parquet(path: str, report: Report) -> None:
    """The CSV report's columns as a Parquet table (pyarrow)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    from ..outputs.csv_report import TRAILING

    columns = {
        "index": report.index,
        "id": report.ids,
        "type": report.types.astype(str),
        "verdict": report.verdict_names.astype(str),
        "score": report.score,
        "flags": report.flag_strings(";").astype(str),
        "centroid_x": report.centroids[:, 0],
        "centroid_y": report.centroids[:, 1],
        "centroid_z": report.centroids[:, 2],
    }
    columns.update({m: np.asarray(report.metrics[m]) for m in TRAILING})
    pq.write_table(pa.table(columns), path)


def columnar_available() -> bool:
    """Whether Parquet element reports can be written (pyarrow installed)."""
    try:
        import pyarrow.parquet  # noqa: F401
    except ImportError:
        return False
    return True


def index_text(parts: Sequence[str], results: Sequence[PartResult], firsts: Sequence[int]) -> str:
    """The index CSV of the part element reports."""
    lines = [",".join(INDEX_COLUMNS)]
    for path, result, first in zip(parts, results, firsts):
        ok, warn, fail = (int(v) for v in result.verdicts)
        name = os.path.basename(result.element_file or "")
        lines.append(
            f"{result.index},{_csv(path)},{_csv(name)},{first},{result.elements},{ok},{warn},{fail}"
        )
    return "\n".join(lines) + "\n"


def _csv(text: str) -> str:
    return '"' + text.replace('"', '""') + '"' if any(c in text for c in ',"\n') else text


def settle(files: Sequence[str], keep: bool) -> None:
    """Put the part element reports in place (``keep``), or remove their temporary files."""
    from .work import temporary

    if not keep:
        for final in files:
            _remove(temporary(final))
        return
    for final in files:
        try:
            os.replace(temporary(final), final)
        except OSError as exc:
            raise OutputError(f"{final}: cannot write: {reason(exc)}") from None


def _remove(path: str) -> None:
    try:
        os.remove(path)
    except OSError:
        pass
