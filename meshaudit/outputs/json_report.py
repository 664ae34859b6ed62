"""Machine-readable JSON report."""

from __future__ import annotations

import json
from typing import Any

import numpy as np

from .. import __version__
from ..report import Report

#: Bump when a field is renamed or removed; adding fields keeps the version.
SCHEMA = "meshaudit.report/1"


def to_dict(report: Report, every_element: bool = False) -> dict[str, Any]:
    """The JSON document as a dict: summary, profile, verdict, counts, statistics, mesh-level
    findings, free-edge loops, elements.

    Elements are the non-ok ones (worst first) unless ``every_element``; then all of them
    in read order. Non-finite numbers are written as null.
    """
    rows = report.index if every_element else report.worst(only_flagged=True)
    return {
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
        "elements": report.element_records(np.asarray(rows)),
    }


def render(report: Report, every_element: bool = False) -> str:
    """The JSON text: the document indented, each element record on one line.

    Element records go through the json module's C encoder (it only runs without
    indentation), which keeps a million-element listing to seconds.
    """
    doc = to_dict(report, every_element)
    elements = doc.pop("elements")
    head = json.dumps(doc, indent=1, allow_nan=False)
    encode = json.JSONEncoder(allow_nan=False, separators=(", ", ": ")).encode
    if not elements:
        body = "[]"
    else:
        body = "[\n  " + ",\n  ".join(map(encode, elements)) + "\n ]"
    return head[:-2] + f',\n "elements": {body}\n}}\n'
