"""The command line's progress bar: rich, on stderr, only on an interactive terminal.

The core reports progress through a plain callback (see
:data:`meshaudit.engine.run.ProgressCallback`) and never prints. :func:`stage_bar` turns those
calls into a transient bar on stderr, one line per stage, when stderr is a terminal; in a
pipeline, a log or with ``--quiet`` it yields ``None`` and nothing is drawn.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any

#: Stage name -> what the bar says.
LABELS = {
    "read": "reading the mesh",
    "measure": "measuring elements",
    "write": "writing reports",
}


def wanted(quiet: bool, stream: Any = None) -> bool:
    """Draw a bar? Only when ``stream`` (default stderr) is a terminal and not ``quiet``."""
    stream = sys.stderr if stream is None else stream
    isatty = getattr(stream, "isatty", None)
    return not quiet and callable(isatty) and bool(isatty())


@contextmanager
def stage_bar(enabled: bool) -> Iterator[Callable[[str, int, int], None] | None]:
    """Yield a progress callback drawing a transient rich bar on stderr, or None."""
    if not enabled:
        yield None
        return
    from rich.console import Console
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        SpinnerColumn,
        TextColumn,
        TimeElapsedColumn,
    )

    console = Console(stderr=True)
    if not console.is_terminal:  # e.g. TERM=dumb or a redirected stderr after all
        yield None
        return
    columns = (
        SpinnerColumn(),
        TextColumn("{task.description}"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
    )
    with Progress(*columns, console=console, transient=True) as bar:
        tasks: dict[str, Any] = {}

        def update(stage: str, done: int, total: int) -> None:
            if stage not in tasks:
                for task_id in tasks.values():  # a new stage: the earlier ones are over
                    task = bar.tasks[task_id]
                    bar.update(task_id, completed=task.total or 1, total=task.total or 1)
                label = LABELS.get(stage, stage)
                tasks[stage] = bar.add_task(label, total=total or None)
            bar.update(tasks[stage], completed=done, total=total or None)

        yield update
