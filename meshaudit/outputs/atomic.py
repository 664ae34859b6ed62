"""All-or-nothing file output: every report is rendered to a temporary file beside its
destination, and only when all have been rendered are they renamed into place."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable, Sequence
from pathlib import Path

from ..errors import OutputError

#: A renderer writes one output to the (temporary) path it is given.
Renderer = Callable[[Path], None]


def check_destination(path: Path, inputs: Sequence[Path] = ()) -> None:
    """Raise :class:`OutputError` unless ``path`` can be written without harm."""
    parent = path.parent if str(path.parent) else Path(".")
    if path.exists() and path.is_dir():
        raise OutputError(f"{path}: is a directory")
    if not parent.is_dir():
        raise OutputError(f"{path}: directory {parent} does not exist")
    if not os.access(parent, os.W_OK):
        raise OutputError(f"{path}: directory {parent} is not writable")
    for src in inputs:
        if path.resolve() == src.resolve():
            raise OutputError(f"{path}: refusing to overwrite the input file")


def write_all(outputs: Sequence[tuple[Path, Renderer]]) -> None:
    """Render every output to a temporary file, then rename them all into place.

    If any renderer fails, every temporary file is removed and nothing is replaced; an
    ``OSError`` (disk full, no permission) becomes an :class:`OutputError` naming the file.
    """
    staged: list[tuple[Path, Path]] = []
    dest = Path(".")
    try:
        for dest, render in outputs:
            fd, tmp = tempfile.mkstemp(
                prefix=f".{dest.name}.",
                suffix=dest.suffix or ".tmp",
                dir=dest.parent if str(dest.parent) else ".",
            )
            os.close(fd)
            staged.append((Path(tmp), dest))
            render(Path(tmp))
        for tmp, _ in staged:
            os.chmod(tmp, 0o644)
        for tmp, dest in staged:
            os.replace(tmp, dest)
    except BaseException as exc:
        for tmp, _ in staged:
            tmp.unlink(missing_ok=True)
        if isinstance(exc, OSError):
            reason = exc.strerror or type(exc).__name__
            raise OutputError(f"{dest}: cannot write report: {reason}") from None
        raise


def write_text(path: Path, text: str) -> None:
    """Write ``text`` as UTF-8 (used by renderers)."""
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.write(text)
