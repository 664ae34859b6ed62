"""Terminal rendering with rich: summary, metric distributions, worst elements, verdict.

rich's table module is imported by the functions that draw tables, so that a ``--quiet``
run (the verdict line only) does not load it.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from rich.console import Console, Group
from rich.text import Text

from ..metrics import METRIC_INFO, METRIC_NAMES, unit_of
from ..results.report import PERCENTILES, Report
from .terminal_findings import findings_table, loops_line, verdict_suffix

if TYPE_CHECKING:
    from rich.table import Table


def _fmt(x: float | None) -> str:
    if x is None:
        return "-"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if math.isnan(x):
        return "-"
    return f"{x:.4g}"


def verdict_line(report: Report) -> Text:
    counts = report.verdict_counts()
    n = len(report)
    word = "PASS" if report.passed else "FAIL"
    gate = "warn" if report.fail_on == "warn" else "fail"
    text = Text()
    text.append(word, style="bold reverse" if not report.passed else "bold")
    skipped = report.summary.skipped_text()
    not_audited = f"; not audited: {skipped}" if skipped else ""
    text.append(
        f"  {report.summary.source}: {counts['fail']} of {n} elements fail, "
        f"{counts['warn']} warn, {counts['ok']} ok{verdict_suffix(report)}{not_audited}; "
        f"profile {report.profile.name}, gate on {gate}"
    )
    return text


def summary_table(report: Report) -> Table:
    from rich.table import Table

    s = report.summary
    t = Table(title="Mesh", show_header=False, title_justify="left", box=None, pad_edge=False)
    t.add_column(style="bold")
    t.add_column()
    t.add_row("file", s.source)
    t.add_row("nodes", f"{s.n_points:,}")
    t.add_row("elements", s.elements_text())
    t.add_row("not audited", s.skipped_text() or "none")
    if s.element_numbers:
        t.add_row("element numbers", s.element_numbers)
        t.add_row("node numbers", s.node_numbers)
    t.add_row("geometry", s.geometry_text())
    t.add_row("profile", f"{report.profile.name} ({report.profile.origin})")
    if report.region_names:
        t.add_row("region limits", _regions_text(report))
    breakdown = report.region_breakdown()
    if breakdown:
        t.add_row("regions", breakdown_text(breakdown))
    flags = report.flag_counts()
    t.add_row("flags", ", ".join(f"{k} {v}" for k, v in flags.items()) or "none")
    t.add_row("free-edge loops", loops_line(report))
    for note in report.notes:
        t.add_row("note", note)
    return t


def _regions_text(report: Report) -> str:
    parts = []
    for name, info in report.region_summary().items():
        limits = info["profile"]["description"]
        if info["elements"]:
            parts.append(f"{name}: {info['elements']:,} element(s), limits {limits}")
        else:
            parts.append(f"{name}: not in this mesh")
    return "\n".join(parts)


def breakdown_text(breakdown: list[dict]) -> str:
    """One line per region of the file: its elements, verdict counts and the profiles that
    judged it (names from the file shown as they are: see :func:`summary_table`)."""
    lines = []
    for entry in breakdown:
        c = entry["counts"]
        judged = ", ".join(entry["profiles"])
        lines.append(
            f"{entry['region']}: {entry['elements']:,} elements, {c['fail']} fail, "
            f"{c['warn']} warn ({judged})"
        )
    return "\n".join(lines)


def distribution_table(report: Report) -> Table:
    from rich.table import Table

    stats = report.statistics()
    t = Table(title="Metric distribution", title_justify="left")
    t.add_column("metric")
    t.add_column("unit")
    for key, _ in PERCENTILES:
        t.add_column(key, justify="right")
    t.add_column("past warn", justify="right")
    t.add_column("past fail", justify="right")
    for name in METRIC_NAMES:
        st = stats[name]
        if st["count"] == 0 and st["infinite"] == 0:
            continue
        cells = [_fmt(st[key]) for key, _ in PERCENTILES]
        if st["infinite"]:
            cells[-1] = f"inf ({st['infinite']})"
        unit = unit_of(name, report.dimensions)
        t.add_row(name, unit, *cells, str(st["past_warn"]), str(st["past_fail"]))
    return t


def worst_table(report: Report, top: int) -> Table | None:
    rows = report.worst(top)
    if rows.size == 0:
        return None
    from rich.table import Table

    t = Table(
        title=f"Worst elements (top {rows.size} of {int((report.verdict > 0).sum())} not ok)",
        title_justify="left",
    )
    for col in ("id", "type", "verdict", "score", "flags", "past its limit (value, limit, level)"):
        t.add_column(col, justify="right" if col in ("id", "score") else "left")
    for i in rows:
        rec = report.breached(int(i))
        breached = ", ".join(
            f"{m} {_fmt(v)} {'>' if METRIC_INFO[m].worse == 'high' else '<'} {_fmt(lim)} ({lvl})"
            for m, (v, lvl, lim) in rec.items()
        )
        validity = [f for f in report.flags_of(int(i)) if f not in rec]
        t.add_row(
            str(int(report.ids[i])),
            report.cell_types[int(report.type_codes[i])],
            report.verdict_names[i],
            _fmt(float(report.score[i])),
            ", ".join(validity) or "-",
            breached or "-",
        )
    return t


def render(report: Report, console: Console, top: int = 10, quiet: bool = False) -> None:
    """Print the report; with ``quiet`` only the one-line verdict.

    The verdict line is never wrapped, so a CI log can grep it whatever the path length.
    """
    if not quiet:
        parts = [summary_table(report), Text(), distribution_table(report)]
        findings = findings_table(report)
        if findings is not None:
            parts += [Text(), findings]
        worst = worst_table(report, top) if top > 0 else None
        if worst is not None:
            parts += [Text(), worst]
        console.print(Group(*parts, Text()))
    console.print(verdict_line(report), soft_wrap=True)
