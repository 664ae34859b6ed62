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


def summary_table(outcomes: Sequence[Outcome]) -> Table:
    """One row per mesh. Paths are shown below their common directory (see
    :func:`heading`) and never cut: a long one wraps onto more lines. The profile gets a
    column only when the meshes were judged under different ones (else the heading names
    it). The verdict says why a mesh fails."""
    from rich import box

    common = common_directory([o.path for o in outcomes])
    profiles = {o.profile for o in outcomes if o.error is None}
    t = Table(box=box.SIMPLE_HEAD, pad_edge=False, show_edge=False)
    t.add_column("file", overflow="fold", ratio=3)
    for col in ("elements", "fail", "warn", "ok"):
        t.add_column(col, justify="right", no_wrap=True)
    t.add_column("worst", justify="right", no_wrap=True)
    if len(profiles) > 1:
        t.add_column("profile", overflow="fold")
    t.add_column("verdict", overflow="fold", ratio=2)
    for o in outcomes:
        path = shown_path(o.path, common)
        if o.error is not None:
            cells = [path, "-", "-", "-", "-", "-"] + (["-"] if len(profiles) > 1 else [])
            t.add_row(*cells, "cannot audit")
            continue
        counts = o.counts or {}
        worst = "-" if o.worst_score is None else f"{o.worst_score:.4g}"
        why = f": {o.why}" if o.why else ""
        t.add_row(
            path,
            f"{o.elements:,}",
            *(f"{counts.get(k, 0):,}" for k in ("fail", "warn", "ok")),
            worst,
            *([o.profile] if len(profiles) > 1 else []),
            STATUS_WORD[o.status] + why + _not_audited(o),
        )
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
        console.print(summary_table(outcomes))
    console.print(overall_line(outcomes), soft_wrap=True)
