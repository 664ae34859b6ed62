"""Terminal pieces for the mesh-level findings: the findings table, the free-edge loop
and solid-surface lines of the summary and the findings part of the verdict line."""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..mesh_checks.findings import Finding
from ..results.report import Report

if TYPE_CHECKING:
    from rich.table import Table

#: How many ids a table cell names.
SHOWN_IDS = 6
#: How many loops the summary line describes one by one.
SHOWN_LOOPS = 6
#: Order of the loop kinds on the summary line: the part's boundary first.
LOOP_ORDER = {"outer": 0, "boundary": 0, "hole": 1, "crack": 2, "interface": 3}
#: How a loop kind reads on that line, where the bare name needs a word more.
LOOP_WORDS = {"interface": "non-conforming interface"}


def _ids(values: object, word: str) -> str:
    ids = [int(v) for v in values]  # type: ignore[attr-defined]
    if not ids:
        return ""
    more = f" +{len(ids) - SHOWN_IDS}" if len(ids) > SHOWN_IDS else ""
    return f"{word} " + ", ".join(map(str, ids[:SHOWN_IDS])) + more


def involved(finding: Finding) -> str:
    """Element ids and node indices of a finding, shortened."""
    parts = [_ids(finding.element_ids, "elements"), _ids(finding.node_ids, "nodes")]
    return "; ".join(p for p in parts if p) or "-"


def findings_table(report: Report) -> Table | None:
    """One row per finding kind that occurs; None for a clean mesh."""
    if not report.findings:
        return None
    from rich.table import Table  # on use: a --quiet run draws no table

    t = Table(title="Mesh-level findings", title_justify="left")
    kinds = max(len(f.kind) for f in report.findings)
    t.add_column("kind", no_wrap=True, min_width=kinds)  # a kind is never cut
    t.add_column("severity", no_wrap=True)
    for col in ("count", "involved", "what"):
        t.add_column(col, justify="right" if col == "count" else "left")
    order = {"fail": 0, "warn": 1, "info": 2}
    for f in sorted(report.findings, key=lambda f: order.get(f.severity, 3)):
        t.add_row(
            f.kind,
            f.severity,
            f"{f.count:,} {f.counts}",
            involved(f),
            f.message,
            style="bold" if f in report.failing_findings else None,
        )
    return t


def loops_line(report: Report) -> str:
    """Summary of the free-edge loops, e.g. '2: outer 14 edges (length 14); hole 4 edges
    (length 4)': the part's boundary first, then cracks and non-conforming interfaces."""
    free = report.free_edges
    if report.summary.frame == "solid":
        return "none (no surface elements: see the solids' surfaces)"
    if free is None:
        return "not checked"
    if free.n_loops == 0:
        return "none (closed surface)"
    shown = sorted(free.loops(), key=lambda r: LOOP_ORDER.get(str(r["kind"]), 4))[:SHOWN_LOOPS]
    parts = [
        f"{LOOP_WORDS.get(str(rec['kind']), rec['kind'])} {rec['edges']} edges "
        f"(length {rec['length']:.4g})"
        + (
            f", {rec['crack_edges']} on a crack"
            if rec["crack_edges"] and rec["kind"] != "crack"
            else ""
        )
        for rec in shown
    ]
    more = f", and {free.n_loops - SHOWN_LOOPS} more" if free.n_loops > SHOWN_LOOPS else ""
    return f"{free.n_loops}: " + "; ".join(parts) + more


def surfaces_line(report: Report) -> str:
    """Summary of the solids' free-face surfaces, e.g. '2: skin 54 faces (area 54,
    volume 27); void 6 faces (area 6, volume 1)'; skins first, then voids, cracks and
    non-conforming interfaces (the order they are numbered in)."""
    surfaces = report.boundary_surfaces
    if surfaces is None:
        return "not checked"
    if surfaces.n_surfaces == 0:
        return "none"
    parts = []
    for rec in surfaces.records()[:SHOWN_LOOPS]:
        kind = str(rec["kind"])
        size = f"area {rec['area']:.4g}"
        if kind in ("skin", "void"):
            size += f", volume {abs(float(rec['volume'])):.4g}"  # type: ignore[arg-type]
        parts.append(f"{LOOP_WORDS.get(kind, kind)} {rec['faces']} faces ({size})")
    more = surfaces.n_surfaces - SHOWN_LOOPS
    tail = f", and {more} more" if more > 0 else ""
    return f"{surfaces.n_surfaces}: " + "; ".join(parts) + tail


def verdict_suffix(report: Report) -> str:
    """'; 2 mesh-level findings (1 failing)' or '' for a clean mesh."""
    if not report.findings:
        return ""
    failing = len(report.failing_findings)
    return f"; {len(report.findings)} mesh-level finding(s), {failing} failing"
