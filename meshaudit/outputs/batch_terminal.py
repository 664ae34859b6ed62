"""Terminal summary of ``meshaudit check`` over several meshes: one row per mesh."""

from __future__ import annotations

from collections.abc import Sequence

from rich.console import Console
from rich.table import Table
from rich.text import Text

from ..results.status import EXIT_FAIL, EXIT_PASS, Outcome, overall_status

STATUS_WORD = {EXIT_PASS: "pass", EXIT_FAIL: "FAIL"}


def summary_table(outcomes: Sequence[Outcome]) -> Table:
    t = Table(title="Meshes", title_justify="left")
    for col in ("file", "elements", "ok", "warn", "fail", "worst score", "profile", "verdict"):
        t.add_column(col, justify="left" if col in ("file", "profile", "verdict") else "right")
    for o in outcomes:
        if o.error is not None:
            t.add_row(o.path, "-", "-", "-", "-", "-", "-", "cannot audit")
            continue
        counts = o.counts or {}
        worst = "-" if o.worst_score is None else f"{o.worst_score:.4g}"
        t.add_row(
            o.path,
            f"{o.elements:,}",
            *(f"{counts.get(k, 0):,}" for k in ("ok", "warn", "fail")),
            worst,
            o.profile,
            STATUS_WORD[o.status] + _not_audited(o),
        )
    return t


def overall_line(outcomes: Sequence[Outcome]) -> Text:
    status = overall_status(outcomes)
    n_pass = sum(o.status == EXIT_PASS for o in outcomes)
    n_fail = sum(o.status == EXIT_FAIL for o in outcomes)
    n_bad = len(outcomes) - n_pass - n_fail
    word = "PASS" if status == EXIT_PASS else ("FAIL" if status == EXIT_FAIL else "ERROR")
    text = Text()
    text.append(word, style="bold" if status == EXIT_PASS else "bold reverse")
    text.append(
        f"  {len(outcomes)} meshes: {n_pass} pass, {n_fail} fail, {n_bad} cannot be audited"
    )
    return text


def _not_audited(o: Outcome) -> str:
    return f" (not audited: {o.not_audited})" if o.not_audited else ""


def render(outcomes: Sequence[Outcome], console: Console, quiet: bool = False) -> None:
    """The table (or, with ``quiet``, one line per mesh) and the overall verdict line."""
    if quiet:
        for o in outcomes:
            word = "ERROR" if o.error is not None else STATUS_WORD[o.status].upper()
            console.print(f"{word}  {o.path}{_not_audited(o)}", soft_wrap=True, markup=False)
    else:
        console.print(summary_table(outcomes))
    console.print(overall_line(outcomes), soft_wrap=True)
