"""Compare two audits of a mesh (OLD and NEW revision): a regression gate for remeshing.

NEW regresses when, beyond the tolerances of :class:`Tolerances`:
more elements fail, the median element score drops, the worst element score drops, or a
mesh-level finding of warn or fail severity is new or grew (more places with unmerged nodes, a
new crack, more duplicate elements...).

Element-by-element changes need the two meshes to correspond. An element of NEW is the
same element as one of OLD when it has the same number, the same cell type and the same
nodes (by node number, in any order, so reversing a reversed element keeps it). When fewer
than half of the elements of the smaller mesh are the same (two unrelated meshes, a
remesh with new numbering), the comparison says so plainly and compares distributions,
counts and findings only.

Element numbers are the file's own labels where it has them (gmsh tags, Abaqus labels,
Nastran ids, see :mod:`meshaudit.mesh.labels`), else a stated position convention; node
numbers likewise.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..judge.verdicts import VERDICT_NAMES
from ..mesh.elements import ElementMesh
from .report import Report, finite_or_none

#: Severities of findings a revision must not add or grow (``info`` marks them intended).
GATED_SEVERITIES = ("warn", "fail")

#: Finding kinds that restate per-element flags (reversed elements): the
#: ``failing_elements`` check counts those elements already, under its own tolerance.
RESTATED_KINDS = frozenset({"inconsistent_winding"})

#: Share of the smaller mesh's elements that must be the same elements in both revisions
#: for element-by-element changes to be compared (meshaudit's own rule, no published source).
CORRESPONDENCE_SHARE = 0.5


@dataclass(frozen=True)
class Tolerances:
    """How much worse NEW may be than OLD before ``meshaudit compare`` fails.

    All defaults: meshaudit default, no published source.
    """

    #: NEW may have at most this many more failing elements than OLD (count, >= 0).
    new_failing: int = 0
    #: The median element score (0..1) may drop by at most this much.
    median_score_drop: float = 0.02
    #: The worst (lowest) element score (0..1) may drop by at most this much.
    worst_score_drop: float = 0.05
    #: A shared element whose score changes by more than this is listed as worse/better.
    element_score_change: float = 0.05


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
    shared: int  # elements compared one by one (same number, type and nodes)
    worse: np.ndarray  # (k, 3): id, OLD score, NEW score; most worsened first
    better: np.ndarray  # (k, 3): id, OLD score, NEW score; most improved first
    verdict_changes: dict[str, int] = field(default_factory=dict)  # "ok->fail" -> count
    #: "elements" (element-by-element changes compared), "distributions" (the meshes do
    #: not correspond) or "numbers" (matched by number and type only: no meshes given)
    correspondence: str = "numbers"
    #: finding kind -> (OLD count, NEW count), for kinds of warn or fail severity
    finding_counts: dict[str, tuple[int, int]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

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


def finding_counts(old: Report, new: Report) -> dict[str, tuple[int, int]]:
    """(OLD count, NEW count) of every finding kind of warn or fail severity in either
    (kinds in :data:`RESTATED_KINDS` left out)."""

    def counts(report: Report) -> dict[str, int]:
        return {
            f.kind: f.count
            for f in report.findings
            if f.severity in GATED_SEVERITIES and f.kind not in RESTATED_KINDS
        }

    a, b = counts(old), counts(new)
    return {kind: (a.get(kind, 0), b.get(kind, 0)) for kind in dict.fromkeys([*a, *b])}


def _findings_check(counts: dict[str, tuple[int, int]]) -> GateCheck:
    grown = {k: c for k, c in counts.items() if c[1] > c[0]}
    meaning = "no mesh-level finding may appear or grow"
    if grown:
        meaning += " (" + ", ".join(f"{k} {a}->{b}" for k, (a, b) in grown.items()) + ")"
    old = sum(a for a, _ in counts.values())
    new = sum(b for _, b in counts.values())
    return GateCheck("mesh_findings", old, new, 0, not grown, meaning)


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
        _findings_check(finding_counts(old, new)),
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


def node_numbers(mesh: ElementMesh) -> np.ndarray:
    """Node number of every node of ``mesh`` as reports show it."""
    return mesh.numbering.node_numbers(np.arange(mesh.n_points, dtype=np.int64))


def _sorted_nodes(mesh: ElementMesh, rows: np.ndarray) -> list[np.ndarray]:
    """Node numbers of elements ``rows`` (report order), sorted within each element,
    as one (m, k) array per cell type present (elements of other types are -1 rows)."""
    labels = node_numbers(mesh)
    width = max(b.connectivity.shape[1] for b in mesh.blocks)
    out = np.full((rows.size, width), -1, dtype=np.int64)
    for block in mesh.blocks:
        # rows whose element lies in this block: report index = block.index
        start = int(block.index[0])
        inside = (rows >= start) & (rows < start + len(block))
        if inside.any():
            conn = block.connectivity[rows[inside] - start]
            out[inside, : conn.shape[1]] = np.sort(labels[conn], axis=1)
    return out


def same_elements(
    old_mesh: ElementMesh, new_mesh: ElementMesh, r_old: np.ndarray, r_new: np.ndarray
) -> np.ndarray:
    """Which matched pairs (rows ``r_old`` of OLD, ``r_new`` of NEW) are the same element:
    the same node numbers, in any order."""
    a = _sorted_nodes(old_mesh, r_old)
    b = _sorted_nodes(new_mesh, r_new)
    return (a == b).all(axis=1)


def compare(
    old: Report,
    new: Report,
    tol: Tolerances | None = None,
    old_mesh: ElementMesh | None = None,
    new_mesh: ElementMesh | None = None,
) -> Comparison:
    """Compare two reports (audited under the same profile) under ``tol``.

    With the element arrays both were measured on (``old_mesh``, ``new_mesh``), elements
    are compared one by one only when the meshes correspond (see the module docstring);
    without them, elements with the same number and type are compared as they are.
    """
    tol = tol or Tolerances()
    r_old, r_new = match_elements(old, new)
    notes: list[str] = []
    correspondence = "numbers"
    if old_mesh is not None and new_mesh is not None:
        same = same_elements(old_mesh, new_mesh, r_old, r_new)
        smaller = min(len(old), len(new))
        n_same = int(same.sum())
        if n_same < CORRESPONDENCE_SHARE * smaller:
            correspondence = "distributions"
            notes.append(
                f"OLD and NEW do not correspond: only {n_same:,} of {smaller:,} elements have "
                "the same number, type and nodes in both, so elements are not compared one "
                "by one; the checks compare distributions, counts and findings only"
            )
            r_old, r_new = r_old[:0], r_new[:0]
        else:
            correspondence = "elements"
            if n_same < r_old.size:
                notes.append(
                    f"{r_old.size - n_same:,} element(s) with the same number have other "
                    "nodes in NEW (remeshed or renumbered there): not compared one by one"
                )
            r_old, r_new = r_old[same], r_new[same]
        unmatched = len(new) - r_new.size
        if correspondence == "elements" and unmatched:
            notes.append(f"{unmatched:,} element(s) of NEW have no counterpart in OLD")
    else:
        notes.append("elements matched by number and type only (the meshes were not compared)")
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
        correspondence=correspondence,
        finding_counts=finding_counts(old, new),
        notes=notes,
    )


def _element_rows(rows: np.ndarray, limit: int | None) -> list[dict[str, Any]]:
    shown = rows if limit is None else rows[:limit]
    return [
        {"id": int(i), "old_score": finite_or_none(a), "new_score": finite_or_none(b)}
        for i, a, b in shown
    ]


def _time_steps(cmp: Comparison) -> dict[str, Any]:
    """``{"time_step": {"old": ..., "new": ...}}`` (each the summary of
    :func:`meshaudit.results.time_step.time_step_summary`, null without a material) when
    either revision was audited with a material, else nothing."""
    from .time_step import time_step_summary

    if cmp.old.materials is None and cmp.new.materials is None:
        return {}
    return {"time_step": {"old": time_step_summary(cmp.old), "new": time_step_summary(cmp.new)}}


def to_dict(
    cmp: Comparison, limit: int | None = None, tolerance_source: str | None = None
) -> dict[str, Any]:
    """The comparison as plain data (schema ``meshaudit.compare/1``).

    ``tolerance_source``: the configuration file the tolerances came from, if any.
    """
    from .. import __version__

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
        **_time_steps(cmp),
        "correspondence": cmp.correspondence,
        "notes": list(cmp.notes),
        "findings": {k: {"old": a, "new": b} for k, (a, b) in cmp.finding_counts.items()},
        "shared_elements": cmp.shared,
        "verdict_changes": cmp.verdict_changes,
        "worse": _element_rows(cmp.worse, limit),
        "better": _element_rows(cmp.better, limit),
        "worse_count": len(cmp.worse),
        "better_count": len(cmp.better),
    }
