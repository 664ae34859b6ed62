"""Terminal rendering with rich: summary, metric distributions, worst elements, verdict.

rich's table module is imported by the functions that draw tables, so that a ``--quiet``
run (the verdict line only) does not load it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from rich.console import Console, Group
from rich.text import Text

from ..metrics import METRIC_INFO, METRIC_NAMES, unit_of
from ..results.report import PERCENTILES, Report
from .display import fmt, label, legend, narrow, with_unit, zero_tolerances
from .terminal_findings import findings_table, loops_line, surfaces_line
from .verdict_text import verdict_words

if TYPE_CHECKING:
    from rich.table import Table


def _fmt(x: float | None) -> str:
    """A number in 4 significant figures (no round-off rule: see :func:`display.fmt`)."""
    return fmt(x)


def verdict_line(report: Report) -> Text:
    word, rest = verdict_words(report)
    text = Text()
    text.append(word, style="bold reverse" if not report.passed else "bold")
    text.append(rest)
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
    t.add_row("element pass", "compiled (C)" if s.kernel == "compiled" else "numpy")
    t.add_row("profile", f"{report.profile.name} ({report.profile.origin})")
    if report.region_names:
        t.add_row("region limits", _regions_text(report))
    breakdown = report.region_breakdown()
    if breakdown:
        t.add_row("regions", breakdown_text(breakdown))
    if report.materials is not None:
        from ..results.time_step import time_step_summary, time_step_text

        t.add_row("material", _materials_text(report.materials))
        t.add_row("time step", time_step_text(time_step_summary(report)))
    flags = report.flag_counts()
    t.add_row("flags", ", ".join(f"{k} {v}" for k, v in flags.items()) or "none")
    t.add_row("free-edge loops", loops_line(report))
    if report.boundary_surfaces is not None:
        t.add_row("solid surfaces", surfaces_line(report))
    for note in report.notes:
        t.add_row("note", note)
    return t


def _materials_text(materials: dict) -> str:
    return "\n".join(
        f"{name}: E={m['E']:g}, nu={m['nu']:g}, rho={m['rho']:g}, t={m['t']:g}, plane {m['plane']}"
        for name, m in materials.items()
    )


def _regions_text(report: Report) -> str:
    parts = []
    for name, info in report.region_summary().items():
        limits = info["profile"]["description"]
        if info["elements"]:
            parts.append(f"{name}: {info['elements']:,} element(s), limits {limits}")
        else:
            parts.append(f"{name}: not in this mesh")
    return "\n".join(parts)


#: Regions the terminal summary lists one by one (the worst first); the JSON lists all.
SHOWN_REGIONS = 12


def breakdown_text(breakdown: list[dict]) -> str:
    """One line per region of the file: its elements, verdict counts and the profiles that
    judged it; at most :data:`SHOWN_REGIONS`, those with the most failing (then warning)
    elements first, in file order otherwise."""
    lines = []
    shown = breakdown
    if len(breakdown) > SHOWN_REGIONS:
        ranked = sorted(
            range(len(breakdown)),
            key=lambda k: (-breakdown[k]["counts"]["fail"], -breakdown[k]["counts"]["warn"], k),
        )
        shown = [breakdown[k] for k in sorted(ranked[:SHOWN_REGIONS])]
    for entry in shown:
        c = entry["counts"]
        judged = ", ".join(entry["profiles"])
        lines.append(
            f"{entry['region']}: {entry['elements']:,} elements, {c['fail']} fail, "
            f"{c['warn']} warn ({judged})"
        )
    if len(shown) < len(breakdown):
        lines.append(
            f"and {len(breakdown) - len(shown)} more regions (the JSON report's "
            "region_breakdown lists every one)"
        )
    return "\n".join(lines)


def distribution_table(report: Report, short: bool = False) -> Table:
    """Each metric's min, p5, median, p95, max and counts past its limits; ``short``: the
    short names of :mod:`meshaudit.outputs.display` (a legend follows the table)."""
    from rich import box
    from rich.table import Table

    stats = report.statistics()
    zero = zero_tolerances(report.metrics, report.dimensions)
    t = Table(title="Metric distribution", title_justify="left")
    names = shown_metrics(report)
    if short:  # names never cut: the numbers fold first, then the units join the names
        t.box, t.pad_edge, t.show_edge = box.SIMPLE_HEAD, False, False
        cells = [with_unit(n, unit_of(n, report.dimensions)) for n in names]
        t.add_column("metric", no_wrap=True, min_width=max(map(len, cells), default=6))
    else:
        t.add_column("metric", no_wrap=True)
        t.add_column("unit", no_wrap=True)
    for key, _ in PERCENTILES:
        t.add_column(key, justify="right", overflow="fold")
    t.add_column("past warn" if not short else "warn", justify="right", overflow="fold")
    t.add_column("past fail" if not short else "fail", justify="right", overflow="fold")
    for name in names:
        st = stats[name]
        values = [fmt(st[key], zero[name]) for key, _ in PERCENTILES]
        if st["infinite"]:
            values[-1] = f"inf ({st['infinite']})"
        unit = unit_of(name, report.dimensions)
        head = [with_unit(name, unit)] if short else [name, unit]
        t.add_row(*head, *values, str(st["past_warn"]), str(st["past_fail"]))
    if short:
        t.caption = "warn, fail: elements past each limit; inf (n): n infinite values"
        t.caption_justify = "left"
    return t


def shown_metrics(report: Report) -> list[str]:
    """The metrics the distribution table lists: those with a value somewhere."""
    stats = report.statistics()
    return [n for n in METRIC_NAMES if stats[n]["count"] or stats[n]["infinite"]]


def worst_table(report: Report, top: int, short: bool = False) -> Table | None:
    rows = report.worst(top)
    if rows.size == 0:
        return None
    from rich.table import Table

    zero = zero_tolerances(report.metrics, report.dimensions)
    t = Table(
        title=f"Worst elements (top {rows.size} of {int((report.verdict > 0).sum())} not ok)",
        title_justify="left",
    )
    for col in ("id", "type", "verdict", "score", "flags", "past its limit (value, limit, level)"):
        t.add_column(col, justify="right" if col in ("id", "score") else "left")
    for i in rows:
        rec = report.breached(int(i))
        breached = ", ".join(
            f"{label(m, short)} {fmt(v, zero[m])} {'>' if METRIC_INFO[m].worse == 'high' else '<'}"
            f" {fmt(lim)} ({lvl})"
            for m, (v, lvl, lim) in rec.items()
        )
        validity = [f for f in report.flags_of(int(i)) if f not in rec]
        t.add_row(
            str(int(report.ids[i])),
            report.cell_types[int(report.type_codes[i])],
            report.verdict_names[i],
            fmt(float(report.score[i])),
            ", ".join(validity) or "-",
            breached or "-",
        )
    return t


def render(report: Report, console: Console, top: int = 10, quiet: bool = False) -> None:
    """Print the report; with ``quiet`` only the one-line verdict.

    The verdict line is never wrapped, so a CI log can grep it whatever the path length.
    """
    if not quiet:
        short = narrow(console.width)
        parts = [summary_table(report), Text(), distribution_table(report, short)]
        findings = findings_table(report)
        if findings is not None:
            parts += [Text(), findings]
        worst = worst_table(report, top, short) if top > 0 else None
        if worst is not None:
            parts += [Text(), worst]
        if short:
            names = shown_metrics(report)
            units = [unit_of(n, report.dimensions) for n in names]
            parts += [Text(), Text(legend(names, units))]
        console.print(Group(*parts, Text()))
    console.print(verdict_line(report), soft_wrap=True)
