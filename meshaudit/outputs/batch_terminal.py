"""Terminal summary of ``meshaudit check`` over several meshes: one row per mesh."""

from __future__ import annotations

import os
from collections.abc import Sequence

from rich.console import Console
from rich.table import Table
from rich.text import Text

from ..results.status import EXIT_FAIL, EXIT_PASS, Outcome, overall_status

STATUS_WORD = {EXIT_PASS: "pass", EXIT_FAIL: "FAIL"}


def common_directory(paths: Sequence[str]) -> str:
    """The directory every path lies in ('' when they share none, or for a single path
    with no directory): the table shows the paths below it, whole."""
    dirs = [os.path.dirname(p) for p in paths]
    if len(paths) < 2 or not all(dirs):
        return ""
    try:
        common = os.path.commonpath(dirs)
    except ValueError:  # absolute and relative paths mixed
        return ""
    return common if common not in ("", ".") else ""


def shown_path(path: str, common: str) -> str:
    return os.path.relpath(path, common) if common else path


def summary_table(outcomes: Sequence[Outcome], width: int = 120) -> Table:
    """One row per mesh, fitted to ``width`` columns. Paths are shown below their common
    directory (see :func:`heading`) and never cut: a long one wraps onto more lines. The
    profile gets a column only when the meshes were judged under different ones (else the
    heading names it). The verdict, beside the name, says why a mesh fails (ok = elements
    - fail - warn)."""
    from rich import box

    common = common_directory([o.path for o in outcomes])
    profiles = {o.profile for o in outcomes if o.error is None}
    several = len(profiles) > 1
    rows = []
    for o in outcomes:
        path = shown_path(o.path, common)
        if o.error is not None:
            rows.append([path, "cannot audit", "-", "-", "-", "-"] + (["-"] if several else []))
            continue
        counts = o.counts or {}
        worst = "-" if o.worst_score is None else f"{o.worst_score:.4g}"
        why = f": {o.why}" if o.why else ""
        rows.append(
            [
                path,
                STATUS_WORD[o.status] + why + _not_audited(o),
                f"{o.elements:,}",
                *(f"{counts.get(k, 0):,}" for k in ("fail", "warn")),
                worst,
                *([o.profile] if several else []),
            ]
        )
    heads = ["file", "verdict", "elements", "fail", "warn", "worst"] + (
        ["profile"] if several else []
    )
    # the number columns (and profile) take what they need; file and verdict share the
    # rest (3 characters between columns: the padding and the rule)
    need = [max(len(h), *(len(r[k]) for r in rows)) for k, h in enumerate(heads)]
    rest = width - sum(need[2:]) - 3 * (len(heads) - 1)
    file_width = max(min(need[0], int(rest * 0.55)), 8)
    verdict_width = max(min(need[1], rest - file_width), 8)
    t = Table(box=box.SIMPLE_HEAD, pad_edge=False, show_edge=False)
    t.add_column("file", overflow="fold", width=file_width)
    t.add_column("verdict", overflow="fold", width=verdict_width)
    for col in heads[2:]:
        t.add_column(col, justify="left" if col == "profile" else "right", no_wrap=True)
    for r in rows:
        t.add_row(*r)
    return t


def heading(outcomes: Sequence[Outcome]) -> Text:
    """'Meshes in DIR, profile P': the common directory (whole, wrapped if long) and the
    profile when every mesh shares it."""
    common = common_directory([o.path for o in outcomes])
    profiles = {o.profile for o in outcomes if o.error is None}
    text = Text("Meshes", style="italic")
    if common:
        text.append(f" in {common}")
    if len(profiles) == 1:
        text.append(f", profile {profiles.pop()}")
    return text


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
            why = f" ({o.why})" if o.why else ""
            line = f"{word}  {o.path}{why}{_not_audited(o)}"
            console.print(line, soft_wrap=True, markup=False)
    else:
        console.print(heading(outcomes), overflow="fold")
        console.print(summary_table(outcomes, console.width))
    console.print(overall_line(outcomes), soft_wrap=True)
