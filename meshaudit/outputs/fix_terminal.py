"""Terminal text of ``meshaudit fix``: what was repaired, the audit before and after, the
largest node move, what still fails and why, and the verdict line of the result."""

from __future__ import annotations

from typing import TYPE_CHECKING

from rich.console import Console
from rich.text import Text

from ..metrics import METRIC_NAMES, unit_of
from .terminal import _fmt, verdict_line

if TYPE_CHECKING:
    from ..repair.run import Repair

#: Repair name -> (what the terminal says, whether it lists node numbers).
DONE = {
    "bowties": ("bow-tie quads reordered", False),
    "merged": ("coincident nodes merged", True),
    "duplicates": ("duplicate elements dropped", False),
    "reversed": ("elements reversed", False),
    "orphans": ("orphan nodes dropped", True),
    "restored": ("outline nodes restored", True),
}
#: At most this many numbers listed per line.
LISTED = 12


def _some(values) -> str:
    shown = ", ".join(str(int(v)) for v in values[:LISTED])
    return shown + (f" (+{len(values) - LISTED} more)" if len(values) > LISTED else "")


def render(result: Repair, console: Console, written: str | None, quiet: bool = False) -> None:
    """Print the repair; ``written``: the file written, or None."""
    if not quiet:
        from rich.table import Table

        console.print(_repairs_table(result, written))
        console.print()
        before, after = result.before, result.after
        t = Table(title="Before and after", title_justify="left")
        for name in ("", "before", "after"):
            t.add_column(name, justify="left" if not name else "right")
        for label, b, a in _counts(before, after):
            t.add_row(label, b, a)
        console.print(t)
        console.print()
        console.print(_distributions(before, after))
        if result.remaining:
            console.print()
            still = Table(title="Still failing", title_justify="left")
            still.add_column("id", justify="right")
            still.add_column("type")
            still.add_column("why")
            for element, why in result.remaining.items():
                i = after.position_of(element)
                still.add_row(str(element), after.cell_types[after.type_codes[i]], why)
            console.print(still)
        for note in result.notes:
            console.print(f"note: {note}")
        console.print()
    if not result.acceptable:
        console.print(
            Text(
                "REFUSED  some element got worse than in the input: "
                f"{_some(result.worsened)}; nothing written",
                style="bold reverse",
            )
        )
        return
    console.print(verdict_line(result.after))


def _repairs_table(result: Repair, written: str | None):
    from rich.table import Table

    t = Table(title="Repairs", show_header=False, title_justify="left", box=None, pad_edge=False)
    t.add_column(style="bold")
    t.add_column(justify="right")
    t.add_column()
    for key, (label, nodes) in DONE.items():
        if key not in result.done:
            t.add_row(label, "0" if key == "restored" else "off", "")
            continue
        ids = result.done[key]
        kind = "nodes" if nodes else "elements"
        t.add_row(label, str(len(ids)), f"{kind} {_some(ids)}" if len(ids) else "")
    move = ""
    if result.moved_nodes:
        move = (
            f"largest move {result.worst_move:.3g} x the mean length of the edges at "
            f"node {result.worst_node}"
        )
    t.add_row("nodes moved", str(result.moved_nodes), move)
    t.add_row("written", "", written or "nothing (no -o given, or refused)")
    return t


def _counts(before, after) -> list[tuple[str, str, str]]:
    rows = []
    counted = before.verdict_counts(), after.verdict_counts()
    for name in ("fail", "warn", "ok"):
        rows.append((f"elements {name}", str(counted[0][name]), str(counted[1][name])))
    rows.append(
        (
            "failing mesh-level findings",
            _kinds(before.failing_findings),
            _kinds(after.failing_findings),
        )
    )
    rows.append(("worst score", _fmt(float(before.score.min())), _fmt(float(after.score.min()))))
    return rows


def _kinds(findings) -> str:
    return ", ".join(f"{f.kind} {f.count}" for f in findings) or "none"


def _distributions(before, after):
    from rich.table import Table

    t = Table(title="Metric distribution, before -> after", title_justify="left")
    t.add_column("metric")
    t.add_column("unit")
    for col in ("min", "median", "max", "past fail"):
        t.add_column(col, justify="right")
    sb, sa = before.statistics(), after.statistics()
    for name in METRIC_NAMES:
        if name not in sb or name not in sa or not sb[name]["count"]:
            continue
        b, a = sb[name], sa[name]
        cells = [f"{_stat(b, k)} -> {_stat(a, k)}" for k in ("min", "median", "max")]
        cells.append(f"{b['past_fail']} -> {a['past_fail']}")
        t.add_row(name, unit_of(name, before.dimensions), *cells)
    return t


def _stat(stats: dict, key: str) -> str:
    value = stats.get(key)
    if key == "max" and stats.get("infinite"):
        return f"inf ({stats['infinite']})"
    return _fmt(value)
