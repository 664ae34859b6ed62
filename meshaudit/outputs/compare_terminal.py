"""Terminal rendering of ``meshaudit compare``: distributions side by side, changed
elements, regression checks and a verdict line."""

from __future__ import annotations

import numpy as np
from rich.console import Console, Group
from rich.table import Table
from rich.text import Text

from ..metrics import METRIC_INFO, METRIC_NAMES, unit_of
from ..results.compare import Comparison
from ..results.report import PERCENTILES
from .display import fmt, legend, narrow, with_unit, zero_tolerances
from .terminal import _fmt


def distributions(cmp: Comparison, short: bool = False) -> Table:
    """Two rows per metric, OLD above NEW: min, p5, median, p95, max, count past fail.
    ``short``: short names and units (see :mod:`meshaudit.outputs.display`), numbers fold
    before a name is cut. Round-off prints as 0 (tolerances from OLD's and NEW's sizes)."""
    from rich import box

    stats = {"OLD": cmp.old.statistics(), "NEW": cmp.new.statistics()}
    zero = {
        "OLD": zero_tolerances(cmp.old.metrics, cmp.old.dimensions),
        "NEW": zero_tolerances(cmp.new.metrics, cmp.new.dimensions),
    }
    dims = cmp.old.dimensions | cmp.new.dimensions
    names = [
        n for n in METRIC_NAMES if any(s[n]["count"] + s[n]["infinite"] for s in stats.values())
    ]
    t = Table(title="Metric distribution, OLD and NEW", title_justify="left")
    if short:
        t.box, t.pad_edge, t.show_edge = box.SIMPLE_HEAD, False, False
        cells = [with_unit(n, unit_of(n, dims)) for n in names]
        t.add_column("metric", no_wrap=True, min_width=max(map(len, cells), default=6))
    else:
        t.add_column("metric", no_wrap=True)
        t.add_column("unit", no_wrap=True)
    t.add_column("mesh", no_wrap=True)
    for key, _ in PERCENTILES:
        t.add_column(key, justify="right", overflow="fold")
    t.add_column("past fail" if not short else "fail", justify="right", overflow="fold")
    for name in names:
        for rev, s in stats.items():
            st = s[name]
            cells = [fmt(st[k], zero[rev][name]) for k, _ in PERCENTILES]
            if st["infinite"]:
                cells[-1] = f"inf ({st['infinite']})"
            first = rev == "OLD"
            unit = unit_of(name, dims)
            head = [with_unit(name, unit) if first else ""] if short else []
            if not short:
                head = [name if first else "", METRIC_INFO[name].unit if first else ""]
            t.add_row(*head, rev, *cells, str(st["past_fail"]), end_section=not first)
    return t


def changed_elements(rows: np.ndarray, title: str, top: int) -> Table | None:
    if len(rows) == 0 or top == 0:
        return None
    t = Table(title=f"{title} (top {min(top, len(rows))} of {len(rows)})", title_justify="left")
    for col in ("id", "OLD score", "NEW score", "change"):
        t.add_column(col, justify="right")
    for i, a, b in rows[:top]:
        t.add_row(str(int(i)), _fmt(a), _fmt(b), f"{b - a:+.4g}")
    return t


def findings(cmp: Comparison) -> Table | None:
    """Mesh-level findings of warn or fail severity, OLD and NEW counts."""
    if not cmp.finding_counts:
        return None
    t = Table(title="Mesh-level findings", title_justify="left")
    for col in ("kind", "OLD", "NEW", "result"):
        t.add_column(col, justify="right" if col in ("OLD", "NEW") else "left")
    for kind, (a, b) in cmp.finding_counts.items():
        t.add_row(kind, f"{a:,}", f"{b:,}", "WORSE" if b > a else "ok")
    return t


def checks(cmp: Comparison) -> Table:
    t = Table(title="Regression checks", title_justify="left")
    for col in ("check", "OLD", "NEW", "rule", "result"):
        t.add_column(col, justify="right" if col in ("OLD", "NEW") else "left")
    for c in cmp.checks:
        t.add_row(c.name, _fmt(c.old), _fmt(c.new), c.meaning, "ok" if c.passed else "WORSE")
    return t


def verdict_line(cmp: Comparison) -> Text:
    text = Text()
    if cmp.regressed:
        text.append("REGRESSED", style="bold reverse")
        failed = ", ".join(c.name for c in cmp.checks if not c.passed)
        text.append(f"  {cmp.new.summary.source} is worse than {cmp.old.summary.source}: ")
        text.append(failed)
    else:
        text.append("OK", style="bold")
        text.append(
            f"  {cmp.new.summary.source} is no worse than {cmp.old.summary.source} "
            "within the tolerances"
        )
    return text


def time_steps(cmp: Comparison) -> list[Text]:
    """'time step OLD: smallest ...' and the same for NEW, when either was audited with a
    material (see :func:`meshaudit.results.time_step.time_step_text`)."""
    from ..results.time_step import time_step_summary, time_step_text

    if cmp.old.materials is None and cmp.new.materials is None:
        return []
    lines = []
    for rev, report in (("OLD", cmp.old), ("NEW", cmp.new)):
        summary = time_step_summary(report)
        text = time_step_text(summary) if summary is not None else "no material"
        lines.append(Text(f"time step {rev}: {text}"))
    return lines


def render(cmp: Comparison, console: Console, top: int = 10, quiet: bool = False) -> None:
    if quiet:
        console.print(verdict_line(cmp), soft_wrap=True)
        return
    changes = ", ".join(f"{k} {v}" for k, v in cmp.verdict_changes.items()) or "none"
    if cmp.correspondence == "distributions":
        head = Text("elements not compared one by one (the meshes do not correspond)")
    else:
        head = Text(f"{cmp.shared:,} elements compared one by one; verdict changes: {changes}")
    short = narrow(console.width)
    parts: list = [distributions(cmp, short), Text(), head]
    if short:
        names = [n for n in METRIC_NAMES if n in cmp.new.metrics]
        parts[1:1] = [Text(legend(names, ["length^2"]))]
    parts += time_steps(cmp)
    for note in cmp.notes:
        parts.append(Text(f"note: {note}"))
    found = findings(cmp)
    if found is not None:
        parts += [Text(), found]
    for rows, title in ((cmp.worse, "Elements that got worse"), (cmp.better, "Got better")):
        table = changed_elements(rows, title, top)
        if table is not None:
            parts += [Text(), table]
    parts += [Text(), checks(cmp), Text(), verdict_line(cmp)]
    console.print(Group(*parts))
