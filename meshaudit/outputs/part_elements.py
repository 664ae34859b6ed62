"""Per-element reports of a partitioned mesh: one file per part, plus an index.

A :class:`PartWriter` goes with the audit's tasks (see
:func:`meshaudit.distributed.audit_parts`): each part's worker calls it on the part's
report, which writes the part's elements (the columns of the CSV report, see
:mod:`.csv_report`, ``index`` being the position in the whole mesh; Parquet with
``columnar``) to a temporary name beside its final one, ``STEM.partNNNNN.csv``. The
driver then calls :meth:`PartWriter.finish`, which puts every part file and the index
``STEM.parts.csv`` in place together, or :meth:`PartWriter.discard`, which removes them.
The index has one row per part: part number, part file, element report file, first
index, elements, and the part's ok / warn / fail counts.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import OutputError
from ..paths import reason
from ..results.report import Report

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


@dataclass(frozen=True)
class PartWriter:
    """Writes the element reports of a partitioned mesh's parts into ``directory``
    (one every worker can write to), named after ``stem``."""

    directory: str
    stem: str
    columnar: bool = False

    def check(self) -> None:
        """Refuse a directory that does not exist, or Parquet without pyarrow."""
        if not os.path.isdir(self.directory):
            raise OutputError(f"{self.directory}: element report directory does not exist")
        if self.columnar:
            try:
                import pyarrow.parquet  # noqa: F401
            except ImportError:
                raise OutputError(
                    "columnar element reports need pyarrow (pip install pyarrow)"
                ) from None

    def name(self, index: int) -> str:
        """Final path of part ``index``'s element report."""
        suffix = "parquet" if self.columnar else "csv"
        return os.path.join(self.directory, f"{self.stem}.part{index:05d}.{suffix}")

    def __call__(self, report: Report, offset: int, index: int) -> str:
        """Write part ``index``'s report (first element at ``offset`` in the whole mesh)
        to its temporary name; returns the final name."""
        final = self.name(index)
        tmp = _temporary(final)
        out = shifted(report, offset)
        try:
            if self.columnar:
                _write_parquet(tmp, out)
            else:
                from . import csv_report

                csv_report.write(tmp, out)
        except OSError as exc:
            _remove(tmp)
            raise OutputError(f"{final}: cannot write: {reason(exc)}") from None
        return final

    def finish(self, parts: Sequence[Any], results: Sequence[Any], firsts: Sequence[int]) -> None:
        """Write the index and put every part's report in place (``results``: what each
        part's task returned, with ``index``, ``elements``, ``verdicts``, ``element_file``)."""
        from . import atomic

        files = [r.element_file for r in results if r.element_file]
        text = index_text(parts, results, firsts)
        index = Path(self.directory) / f"{self.stem}.parts.csv"
        try:
            atomic.write_all([(index, lambda p: atomic.write_text(p, text))])
        except BaseException:
            self.discard(len(parts))
            raise
        for final in files:
            try:
                os.replace(_temporary(final), final)
            except OSError as exc:
                raise OutputError(f"{final}: cannot write: {reason(exc)}") from None

    def discard(self, n: int) -> None:
        """Remove the temporary files of parts 0..n-1."""
        for k in range(n):
            _remove(_temporary(self.name(k)))


def _write_parquet(path: str, report: Report) -> None:
    """The CSV report's columns as a Parquet table (pyarrow)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    from .csv_report import TRAILING

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


def index_text(parts: Sequence[Any], results: Sequence[Any], firsts: Sequence[int]) -> str:
    """The index CSV of the part element reports."""
    lines = [",".join(INDEX_COLUMNS)]
    for path, result, first in zip(parts, results, firsts):
        ok, warn, fail = (int(v) for v in result.verdicts)
        name = os.path.basename(result.element_file or "")
        lines.append(
            f"{result.index},{_csv(str(path))},{_csv(name)},{first},{result.elements},{ok},{warn},{fail}"
        )
    return "\n".join(lines) + "\n"


def _csv(text: str) -> str:
    return '"' + text.replace('"', '""') + '"' if any(c in text for c in ',"\n') else text


def _temporary(path: str) -> str:
    """The temporary name a part report is written to before it is put in place."""
    head, tail = os.path.split(path)
    return os.path.join(head, f".{tail}.partial")


def _remove(path: str) -> None:
    try:
        os.remove(path)
    except OSError:
        pass
