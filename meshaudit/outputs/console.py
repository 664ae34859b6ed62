"""The terminal console every command prints with."""

from __future__ import annotations

import errno
from collections.abc import Iterable

from rich.console import Console, ConsoleOptions, RenderableType
from rich.segment import Segment

from .safe_text import terminal_safe


class PlainConsole(Console):
    """A rich console that takes every string literally (no markup) and never passes a
    control character of the text through: styles still come from rich itself."""

    def __init__(self, **kwargs) -> None:
        kwargs.setdefault("highlight", False)
        super().__init__(markup=False, **kwargs)

    def render(
        self, renderable: RenderableType, options: ConsoleOptions | None = None
    ) -> Iterable[Segment]:
        for segment in super().render(renderable, options):
            if segment.control is None:
                safe = terminal_safe(segment.text)
                if safe != segment.text:
                    segment = Segment(safe, segment.style)
            yield segment

    def on_broken_pipe(self) -> None:
        """Rich would exit with status 1; instead stop printing and let the caller decide
        (:func:`meshaudit.outputs.process.terminal_output` keeps the verdict's exit status)."""
        self.quiet = True
        raise BrokenPipeError(errno.EPIPE, "Broken pipe")


def terminal_console(log_width: int = 120) -> PlainConsole:
    """A :class:`PlainConsole` on standard output; ``log_width`` columns when standard output
    is not a terminal (logs read better unwrapped)."""
    console = PlainConsole()
    if not console.is_terminal:
        console = PlainConsole(width=log_width)
    return console
