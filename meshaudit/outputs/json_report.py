"""Machine-readable JSON report."""

from __future__ import annotations

import json
from typing import Any

import numpy as np

from .. import __version__
from ..report import Report
from .json_elements import element_lines

#: Bump when a field is renamed or removed; adding fields keeps the version.
SCHEMA = "meshaudit.report/1"


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
        "fail_on": report.fail_on,
        "verdict": "pass" if report.passed else "fail",
        "counts": report.verdict_counts(),
        "flag_counts": report.flag_counts(),
        "statistics": report.statistics(),
        "notes": list(report.notes),
        "findings": [f.to_dict() for f in report.findings],
        "free_edge_loops": [] if report.free_edges is None else report.free_edges.loops(),
        "elements_listed": "all" if every_element else "not ok",
    }
    return doc, np.asarray(rows)


def render(report: Report, every_element: bool = False) -> str:
    """The JSON text of :func:`to_dict`: the document indented, each element record on
    one line (written column by column, see :mod:`.json_elements`)."""
    doc, rows = _document(report, every_element)
    head = json.dumps(doc, indent=1, allow_nan=False)
    lines = element_lines(report, rows)
    body = "[\n  " + ",\n  ".join(lines) + "\n ]" if lines else "[]"
    return head[:-2] + f',\n "elements": {body}\n}}\n'
