"""All-or-nothing file output: every report is rendered to a temporary file, and only when
all have been rendered are they put in place.

Where each report goes is decided by :mod:`.destinations`: a regular file (or a new name)
is replaced by renaming its temporary file over the file the name resolves to (a link to
a regular file stays a link); a character device or a FIFO is opened and written; a
descriptor name (``/dev/stdout``) is written through the descriptor. Devices and
descriptors are written first and the renames come last, together, so an error or an
interruption before them replaces no file. Temporary files are hidden, short
(``.meshaudit-XXXXXXXX`` plus the report's extension, whatever the length of its name) and
removed on any failure or interruption.
"""

from __future__ import annotations

import os
import sys
import tempfile
from collections.abc import Callable, Sequence
from pathlib import Path

from ..errors import OutputError
from ..paths import reason
from .destinations import Destination, check_destinations
from .process import stopping_signals_held

#: A renderer writes one output to the (temporary) path it is given.
Renderer = Callable[[Path], None]
#: Prefix of every temporary report file.
TEMP_PREFIX = ".meshaudit-"
#: Longest extension a temporary file keeps (renderers that pick a format by extension
#: need it; the plot and mesh formats are all shorter).
MAX_SUFFIX = 16
#: Bytes copied at a time to a device or a descriptor.
COPY_BLOCK = 1 << 20


def check_destination(path: Path, inputs: Sequence[Path] = ()) -> None:
    """Raise :class:`OutputError` unless ``path`` can be written without replacing one of
    ``inputs`` (see :func:`.destinations.check_destinations` for several at once)."""
    check_destinations([path], [(Path(p), "an input") for p in inputs])


def _temporary(dest: Destination) -> Path:
    """A new empty hidden file beside the file ``dest`` replaces (in the temporary
    directory for devices and descriptors), keeping the report's extension."""
    suffix = dest.given.suffix
    if len(suffix) > MAX_SUFFIX:
        suffix = ""
    where = str(dest.path.parent) if dest.how == "replace" else tempfile.gettempdir()
    fd, tmp = tempfile.mkstemp(prefix=TEMP_PREFIX, suffix=suffix, dir=where)
    os.close(fd)
    return Path(tmp)


def _write_through(tmp: Path, dest: Destination) -> None:
    """Copy the rendered ``tmp`` into a device or a descriptor."""
    with open(tmp, "rb") as src:
        if dest.how == "descriptor":
            for stream in (sys.stdout, sys.stderr):  # keep earlier text before the report
                stream.flush()
            _copy(src, dest.fd)
            return
        fd = os.open(dest.path, os.O_WRONLY | os.O_NOCTTY)  # a FIFO waits for its reader
        try:
            _copy(src, fd)
        finally:
            os.close(fd)


def _copy(src, fd: int) -> None:
    while block := src.read(COPY_BLOCK):
        view = memoryview(block)
        while view:
            view = view[os.write(fd, view) :]


def write_all(
    outputs: Sequence[tuple[Path, Renderer]], protected: Sequence[tuple[Path, str]] = ()
) -> None:
    """Render every output to a temporary file, then put them all in place.

    The destinations are checked first (:func:`.destinations.check_destinations`, against
    each other and the ``protected`` inputs). If any renderer fails, or the process is
    interrupted, every temporary file is removed and no file is replaced; an ``OSError``
    (disk full, no permission) becomes an :class:`OutputError` naming the file.
    """
    dests = check_destinations([p for p, _ in outputs], protected)
    staged: list[tuple[Path, Destination]] = []
    current: Path = Path(".")
    try:
        for dest, (_, render) in zip(dests, outputs):
            current = dest.given
            with stopping_signals_held():  # a signal now must not orphan the new file
                staged.append((_temporary(dest), dest))
            render(staged[-1][0])
        for tmp, _ in staged:
            os.chmod(tmp, 0o644)
        for tmp, dest in staged:
            if dest.how != "replace":
                current = dest.given
                _write_through(tmp, dest)
        with stopping_signals_held():
            for tmp, dest in staged:
                if dest.how == "replace":
                    current = dest.given
                    os.replace(tmp, dest.path)
    except OSError as exc:
        raise OutputError(f"{current}: cannot write report: {reason(exc)}") from None
    finally:
        for tmp, _ in staged:
            tmp.unlink(missing_ok=True)


def write_text(path: Path, text: str) -> None:
    """Write ``text`` as UTF-8 (used by renderers)."""
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.write(text)
