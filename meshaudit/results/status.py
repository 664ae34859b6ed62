"""Exit statuses of the command line, and the outcome of one mesh among several.

One mesh: 0 no element fails (with ``fail_on = "warn"``: none warns either), 1 some element
fails or a mesh-level finding fails the mesh, 2 the input cannot be audited. Several
meshes (worst wins): 2 when any input cannot be audited, else 1 when any mesh fails, else
0. ``compare``: 0 NEW is no worse than OLD, 1 NEW regressed, 2 cannot audit.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .report import Report

EXIT_PASS, EXIT_FAIL, EXIT_UNUSABLE = 0, 1, 2


def exit_status(passed: bool) -> int:
    """0 for a mesh (or comparison) that passes, 1 for one that fails."""
    return EXIT_PASS if passed else EXIT_FAIL


@dataclass
class Outcome:
    """The result of checking one mesh among several."""

    path: str
    status: int
    elements: int = 0
    counts: dict[str, int] | None = None
    worst_score: float | None = None
    profile: str = ""
    error: str | None = None
    not_audited: str = ""  # cells not audited, e.g. '120 tetra, 40 line'
    why: str = ""  # why it fails: '3 elements fail; finding coincident_nodes (fail)'


def failure_reason(report: Report) -> str:
    """Why a report fails its gate, in words ('' when it passes): the count of elements
    past the gate and the mesh-level findings that fail it."""
    if report.passed:
        return ""
    parts = []
    failing = int(report.failing.sum())
    if failing:
        word = "fail" if report.fail_on == "fail" else "warn or fail"
        parts.append(f"{failing:,} element{'s' if failing != 1 else ''} {word}")
    for f in report.failing_findings:
        parts.append(f"{f.kind} ({f.severity}, {f.count:,})")
    return "; ".join(parts)


def overall_status(outcomes: Sequence[Outcome]) -> int:
    """2 if any input is unusable, else 1 if any mesh fails, else 0."""
    return max((o.status for o in outcomes), default=EXIT_UNUSABLE)
