"""The one-line verdict as plain text, and printing it without a terminal library.

``meshaudit check --quiet`` prints only this line; it is written here with ``print`` so
that a quiet run imports no terminal library (rich is loaded only to draw tables and the
progress bar). On an interactive terminal the word PASS is bold and FAIL bold and
reversed (ANSI SGR codes 1 and 7), as the full report shows them; with ``NO_COLOR`` set,
``TERM=dumb`` or into a pipe or file, the line is plain. The text is made safe for a
terminal (:func:`meshaudit.outputs.safe_text.terminal_safe`) and never wrapped, so a CI
log can grep it whatever the path length.
"""

from __future__ import annotations

import os
import sys
from typing import TextIO

from ..results.report import Report
from .safe_text import terminal_safe
from .terminal_findings import verdict_suffix


def verdict_words(report: Report) -> tuple[str, str]:
    """("PASS" or "FAIL", the rest of the line after it, starting with two spaces)."""
    counts = report.verdict_counts()
    n = report.summary.n_elements
    word = "PASS" if report.passed else "FAIL"
    gate = "warn" if report.fail_on == "warn" else "fail"
    skipped = report.summary.skipped_text()
    not_audited = f"; not audited: {skipped}" if skipped else ""
    rest = (
        f"  {report.summary.source}: {counts['fail']} of {n} elements fail, "
        f"{counts['warn']} warn, {counts['ok']} ok{verdict_suffix(report)}{not_audited}; "
        f"profile {report.profile.name}, gate on {gate}"
    )
    return word, rest


def _styled(stream: TextIO) -> bool:
    """Bold on an interactive terminal only, and not when the user asks for no colour."""
    if os.environ.get("NO_COLOR") or os.environ.get("TERM") == "dumb":
        return False
    isatty = getattr(stream, "isatty", None)
    return bool(isatty and isatty())


def print_verdict(report: Report, stream: TextIO | None = None) -> None:
    """Print the verdict line on ``stream`` (standard output by default)."""
    out = sys.stdout if stream is None else stream
    word, rest = verdict_words(report)
    word, rest = terminal_safe(word), terminal_safe(rest)
    if _styled(out):
        code = "1" if report.passed else "1;7"
        word = f"\x1b[{code}m{word}\x1b[0m"
    out.write(word + rest + "\n")
