"""The stable time step of the mesh: the smallest steps and the elements that set them
(an explicit run takes the smallest element step of the whole mesh)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from ..mesh_checks.stiffness import SMALL_STEP_FRACTION

if TYPE_CHECKING:
    from .report import Report

#: The unit the time steps are in, in words.
TIME_UNIT = "the time unit of the material's consistent units (s for N, m, kg or N, mm, tonne)"


def time_step_summary(report: Report, n: int = 5) -> dict[str, Any] | None:
    """The ``n`` smallest stable time steps with their elements, the median, and how
    many elements have none (step 0: not valid; null: no material). None without a
    material."""
    if report.materials is None:
        return None
    steps = report.metrics["stable_time_step"]
    valid = np.flatnonzero(np.isfinite(steps) & (steps > 0))
    order = valid[np.argsort(steps[valid], kind="stable")[:n]]
    return {
        "unit": TIME_UNIT,
        "smallest": [
            {"element_id": int(report.ids[i]), "index": int(i), "stable_time_step": float(steps[i])}
            for i in order
        ],
        "median": float(np.median(steps[valid])) if valid.size else None,
        "invalid_elements": int(np.count_nonzero(steps == 0)),
        "without_material": int(np.count_nonzero(np.isnan(steps))),
        "small_step_fraction": SMALL_STEP_FRACTION,
    }


def time_step_text(summary: dict[str, Any]) -> str:
    """One line: 'smallest 2.74e-07 (element 12), 2.8e-07 (element 4); median 7.5e-07'."""
    parts = [
        f"{s['stable_time_step']:.4g} (element {s['element_id']})" for s in summary["smallest"]
    ]
    text = "smallest " + ", ".join(parts) if parts else "no element has one"
    if summary["median"] is not None:
        text += f"; median {summary['median']:.4g}"
    if summary["invalid_elements"]:
        text += f"; {summary['invalid_elements']:,} invalid elements read 0"
    if summary["without_material"]:
        text += f"; {summary['without_material']:,} without a material"
    return text
