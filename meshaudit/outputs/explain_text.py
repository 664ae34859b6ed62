"""Terminal rendering of one element's explanation (rich) and its JSON form."""

from __future__ import annotations

import math

from rich.console import Console, Group
from rich.table import Table
from rich.text import Text

from ..results.explain import Explanation
from ..results.report import json_text
from .terminal import _fmt


def _limit(x: float | None) -> str:
    return "-" if x is None else f"{x:g}"


def nodes_table(ex: Explanation) -> Table:
    title = f"Nodes (node = {ex.node_numbering or 'node number'})"
    t = Table(title=title, title_justify="left")
    for col in ("position", "node", "x", "y", "z", "det J at node"):
        t.add_column(col, justify="right")
    corners = len(ex.det_j_nodes)
    for k, (n, c) in enumerate(zip(ex.node_numbers, ex.coordinates)):
        det = _fmt(float(ex.det_j_nodes[k])) if k < corners else "-"
        t.add_row(str(k + 1), str(int(n)), *(f"{v:.6g}" for v in c), det)
    return t


AXES = ("xi", "eta", "zeta")


def _where(ex: Explanation) -> str:
    return "space" if ex.measured_in == "space" else f"the {ex.measured_in}"


def gauss_table(ex: Explanation) -> Table:
    t = Table(title=f"det J at the Gauss points (measured in {_where(ex)})", title_justify="left")
    for col in ("point", *AXES[: ex.dimension], "det J"):
        t.add_column(col, justify="right")
    for k, (g, d) in enumerate(zip(ex.gauss_points, ex.det_j_gauss)):
        t.add_row(str(k + 1), *(f"{v:+.6f}" for v in g), _fmt(float(d)))
    return t


def bound_line(ex: Explanation) -> Text:
    """det J over the whole element, one line."""
    b = ex.det_j_bound
    axes = AXES[: ex.dimension]
    where = [b[a] for a in axes]
    at = (
        f"at ({', '.join(axes)}) = ({', '.join(f'{v:+.4f}' for v in where)})"
        if all(math.isfinite(v) for v in where)
        else "inside the element (found by subdivision)"
    )
    text = (
        f"det J over the whole element: at least {_fmt(b['lower'])}; smallest value found "
        f"{_fmt(b['upper'])} {at}"
    )
    if b["undecided"]:
        text += "; sign of the minimum undecided (reported as inverted)"
    return Text(text)


def metrics_table(ex: Explanation) -> Table:
    t = Table(title=f"Metrics against profile {ex.profile}", title_justify="left")
    for col in ("metric", "value", "unit", "warn", "fail", "level", "why"):
        t.add_column(col, justify="right" if col in ("value", "warn", "fail") else "left")
    for m in ex.metrics:
        style = "bold" if m.level == "fail" else ("italic" if m.level == "warn" else "")
        t.add_row(
            m.name,
            _fmt(m.value),
            m.unit,
            _limit(m.warn),
            _limit(m.fail),
            m.level,
            m.reason or "-",
            style=style,
        )
    return t


def headline(ex: Explanation) -> Text:
    text = Text()
    text.append(f"element {ex.id}", style="bold")
    numbering = f"; numbered by {ex.element_numbering}" if ex.element_numbering else ""
    text.append(f" ({ex.cell_type}, index {ex.index}{numbering}): ")
    text.append(ex.verdict.upper(), style="bold reverse" if ex.verdict == "fail" else "bold")
    flags = ", ".join(ex.flags) or "none"
    text.append(f"; flags: {flags}")
    return text


def render(ex: Explanation, console: Console) -> None:
    """Print the explanation."""
    parts: list = [headline(ex), Text(), nodes_table(ex), Text(), gauss_table(ex)]
    if ex.det_j_bound:
        parts.append(bound_line(ex))
    parts.append(Text())
    parts.append(metrics_table(ex))
    if ex.flag_reasons:
        parts.append(Text())
        for flag, why in ex.flag_reasons.items():
            parts.append(Text(f"{flag}: {why}"))
    if ex.findings:
        parts.append(Text())
        parts += [Text(f"mesh-level finding: {line}") for line in ex.findings]
    ids = ", ".join(str(int(i)) for i in ex.neighbour_ids) or "none"
    parts += [Text(), Text(f"neighbours (share a node): {ids}")]
    console.print(Group(*parts))


def render_json(ex: Explanation) -> str:
    return json_text(ex.to_dict(), indent=1) + "\n"
