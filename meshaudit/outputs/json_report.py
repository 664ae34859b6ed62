"""Machine-readable JSON report."""

from __future__ import annotations

import os
from collections.abc import Iterator
from typing import Any

import numpy as np

from .. import __version__
from ..results.report import Report, json_text
from .json_elements import element_lines

#: Bump when a field is renamed or removed; adding fields keeps the version.
SCHEMA = "meshaudit.report/1"
#: Element lines rendered at a time by :func:`pieces` (bounds the text held in memory).
ROWS_PER_PIECE = 32_768


def to_dict(report: Report, every_element: bool = False) -> dict[str, Any]:
    """The JSON document as a dict: summary, profile, verdict, counts, statistics, mesh-level
    findings, free-edge loops, elements.

    Elements are the non-ok ones (worst first) unless ``every_element``; then all of them
    in read order. Non-finite numbers are written as null.
    """
    doc, rows = _document(report, every_element)
    doc["elements"] = report.element_records(rows)
    return doc


def _document(report: Report, every_element: bool) -> tuple[dict[str, Any], np.ndarray]:
    """:func:`to_dict` without its last key, "elements"; and the rows that key lists."""
    rows = report.index if every_element else report.worst(only_flagged=True)
    doc = {
        "schema": SCHEMA,
        "tool": {"name": "meshaudit", "version": __version__},
        "summary": report.summary.to_dict(),
        "profile": report.profile.to_dict(),
        "regions": report.region_summary(),
        "region_breakdown": report.region_breakdown(),
        "fail_on": report.fail_on,
        "verdict": "pass" if report.passed else "fail",
        "not_audited": dict(report.summary.skipped),
        "counts": report.verdict_counts(),
        "flag_counts": report.flag_counts(),
        "statistics": report.statistics(),
        "notes": list(report.notes),
        "findings": [f.to_dict() for f in report.findings],
        "free_edge_loops": [] if report.free_edges is None else report.free_edges.loops(),
        **(
            {}
            if report.boundary_surfaces is None
            else {"solid_surfaces": report.boundary_surfaces.records()}
        ),
        "elements_listed": "all" if every_element else "not ok",
    }
    if report.materials is not None:  # only with a material: the default report is unchanged
        from ..results.time_step import time_step_summary

        doc["materials"] = report.materials
        doc["time_step"] = time_step_summary(report)
    return doc, np.asarray(rows)


def render(report: Report, every_element: bool = False) -> str:
    """The JSON text of :func:`to_dict`: the document indented, each element record on
    one line (written column by column, see :mod:`.json_elements`)."""
    return "".join(pieces(report, every_element))


def write(path: str | os.PathLike[str], report: Report, every_element: bool = False) -> None:
    """Write :func:`render`'s text to ``path`` (UTF-8) piece by piece, so that listing
    every element of a large mesh never holds the whole text in memory."""
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.writelines(pieces(report, every_element))


def pieces(report: Report, every_element: bool = False) -> Iterator[str]:
    """:func:`render`'s text in pieces: the head, then the element lines in slices of
    :data:`ROWS_PER_PIECE`."""
    doc, rows = _document(report, every_element)
    yield json_text(doc, indent=1)[:-2] + ',\n "elements": '
    if rows.size == 0:
        yield "[]\n}\n"
        return
    for start in range(0, rows.size, ROWS_PER_PIECE):
        lines = element_lines(report, rows[start : start + ROWS_PER_PIECE])
        yield ("[\n  " if start == 0 else ",\n  ") + ",\n  ".join(lines)
    yield "\n ]\n}\n"
