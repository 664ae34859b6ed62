"""Compare two audits of a mesh (OLD and NEW revision): a regression gate for remeshing.

NEW regresses when, beyond the tolerances of :class:`meshaudit.config.Tolerances`:
more elements fail, the median element score drops, or the worst element score drops.
Elements are matched between the two meshes by element id (and type): the file's own
labels where it has them (gmsh tags, Abaqus labels, Nastran ids, see
:mod:`meshaudit.labels`); for formats that keep no element labels the id is a position,
so matching is meaningful when the element order was kept (e.g. a smoothing pass that only
moved nodes).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .config import Tolerances
from .report import Report, finite_or_none
from .verdicts import VERDICT_NAMES


@dataclass(frozen=True)
class GateCheck:
    """One regression criterion: the OLD and NEW values and whether NEW is within bounds."""

    name: str
    old: float | None
    new: float | None
    allowed: float
    passed: bool
    meaning: str


@dataclass
class Comparison:
    old: Report
    new: Report
    tolerances: Tolerances
    checks: list[GateCheck]
    shared: int  # elements matched by id and type
    worse: np.ndarray  # (k, 3): id, OLD score, NEW score; most worsened first
    better: np.ndarray  # (k, 3): id, OLD score, NEW score; most improved first
    verdict_changes: dict[str, int] = field(default_factory=dict)  # "ok->fail" -> count

    @property
    def regressed(self) -> bool:
        return not all(c.passed for c in self.checks)


def _median_and_worst(report: Report) -> tuple[float | None, float | None]:
    score = report.score[np.isfinite(report.score)]
    if score.size == 0:
        return None, None
    return float(np.median(score)), float(score.min())


def _drop_check(name: str, old: float | None, new: float | None, allowed: float) -> GateCheck:
    drop = (old - new) if old is not None and new is not None else 0.0
    return GateCheck(name, old, new, allowed, drop <= allowed, f"may drop by at most {allowed:g}")


def gate_checks(old: Report, new: Report, tol: Tolerances) -> list[GateCheck]:
    """The regression criteria, in report order."""
    n_old, n_new = int(old.failing.sum()), int(new.failing.sum())
    med_old, worst_old = _median_and_worst(old)
    med_new, worst_new = _median_and_worst(new)
    return [
        GateCheck(
            "failing_elements",
            n_old,
            n_new,
            tol.new_failing,
            n_new - n_old <= tol.new_failing,
            f"may rise by at most {tol.new_failing}",
        ),
        _drop_check("median_score", med_old, med_new, tol.median_score_drop),
        _drop_check("worst_score", worst_old, worst_new, tol.worst_score_drop),
    ]


def match_elements(old: Report, new: Report) -> tuple[np.ndarray, np.ndarray]:
    """Indices (into OLD, into NEW) of elements with the same id and cell type.

    Ids that repeat within either mesh are left unmatched.
    """
    o_ids, o_first, o_count = np.unique(old.ids, return_index=True, return_counts=True)
    n_ids, n_first, n_count = np.unique(new.ids, return_index=True, return_counts=True)
    o_keep, n_keep = o_count == 1, n_count == 1
    _, oi, ni = np.intersect1d(
        o_ids[o_keep], n_ids[n_keep], assume_unique=True, return_indices=True
    )
    rows_old, rows_new = o_first[o_keep][oi], n_first[n_keep][ni]
    same_type = old.types[rows_old] == new.types[rows_new]
    return rows_old[same_type], rows_new[same_type]


def compare(old: Report, new: Report, tol: Tolerances | None = None) -> Comparison:
    """Compare two reports (audited under the same profile) under ``tol``."""
    tol = tol or Tolerances()
    r_old, r_new = match_elements(old, new)
    s_old, s_new = old.score[r_old], new.score[r_new]
    with np.errstate(invalid="ignore"):
        change = s_new - s_old
    ids = old.ids[r_old]
    changed = np.isfinite(change)
    worse = np.flatnonzero(changed & (change < -tol.element_score_change))
    better = np.flatnonzero(changed & (change > tol.element_score_change))
    worse = worse[np.argsort(change[worse], kind="stable")]
    better = better[np.argsort(-change[better], kind="stable")]
    v_old, v_new = old.verdict[r_old], new.verdict[r_new]
    moved = v_old != v_new
    pairs, counts = np.unique(v_old[moved] * 3 + v_new[moved], return_counts=True)
    verdict_changes = {
        f"{VERDICT_NAMES[p // 3]}->{VERDICT_NAMES[p % 3]}": int(c) for p, c in zip(pairs, counts)
    }

    def table(rows: np.ndarray) -> np.ndarray:
        return np.column_stack([ids[rows], s_old[rows], s_new[rows]]).reshape(-1, 3)

    return Comparison(
        old=old,
        new=new,
        tolerances=tol,
        checks=gate_checks(old, new, tol),
        shared=int(r_old.size),
        worse=table(worse),
        better=table(better),
        verdict_changes=verdict_changes,
    )


def _element_rows(rows: np.ndarray, limit: int | None) -> list[dict[str, Any]]:
    shown = rows if limit is None else rows[:limit]
    return [
        {"id": int(i), "old_score": finite_or_none(a), "new_score": finite_or_none(b)}
        for i, a, b in shown
    ]


def to_dict(
    cmp: Comparison, limit: int | None = None, tolerance_source: str | None = None
) -> dict[str, Any]:
    """The comparison as plain data (schema ``meshaudit.compare/1``).

    ``tolerance_source``: the configuration file the tolerances came from, if any.
    """
    from . import __version__

    return {
        "schema": "meshaudit.compare/1",
        "tool": {"name": "meshaudit", "version": __version__},
        "old": {"summary": cmp.old.summary.to_dict(), "counts": cmp.old.verdict_counts()},
        "new": {"summary": cmp.new.summary.to_dict(), "counts": cmp.new.verdict_counts()},
        "profile": cmp.new.profile.to_dict(),
        "fail_on": cmp.new.fail_on,
        "verdict": "regressed" if cmp.regressed else "ok",
        "tolerances": {
            "new_failing": cmp.tolerances.new_failing,
            "median_score_drop": cmp.tolerances.median_score_drop,
            "worst_score_drop": cmp.tolerances.worst_score_drop,
            "element_score_change": cmp.tolerances.element_score_change,
            "source": tolerance_source or "meshaudit defaults, no published source",
        },
        "checks": [
            {
                "name": c.name,
                "old": c.old,
                "new": c.new,
                "allowed": c.allowed,
                "passed": c.passed,
                "meaning": c.meaning,
            }
            for c in cmp.checks
        ],
        "statistics": {"old": cmp.old.statistics(), "new": cmp.new.statistics()},
        "shared_elements": cmp.shared,
        "verdict_changes": cmp.verdict_changes,
        "worse": _element_rows(cmp.worse, limit),
        "better": _element_rows(cmp.better, limit),
        "worse_count": len(cmp.worse),
        "better_count": len(cmp.better),
    }
