"""Where a report goes, and whether it may go there.

A report destination is one of three kinds:

- ``replace``: a regular file, or a name not yet taken. The report is rendered to a
  temporary file beside the file the name resolves to and renamed over it, so a symbolic
  link to a regular file keeps being a link and its target gets the report.
- ``device``: a character device or a FIFO (``/dev/null``, a named pipe), directly or
  through links. It is opened and written, never replaced by a regular file.
- ``descriptor``: standard output or error, or another open descriptor, named as
  ``/dev/stdout``, ``/dev/stderr``, ``/dev/fd/N`` or ``/proc/self/fd/N`` (directly or
  through links). The report is written to that descriptor, wherever the shell pointed it.

Anything else (a directory, a block device, a socket) is refused. So are two reports
resolving to one file and a report that would replace an input of the run: the mesh,
the configuration file or the profile file in use.
"""

from __future__ import annotations

import os
import re
import stat
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from ..errors import OutputError
from ..paths import lookup, reason, same_file

#: Names of open descriptors: /dev/fd/N, /proc/self/fd/N, /proc/<this process>/fd/N.
_DESCRIPTOR = re.compile(r"/(?:dev/fd|proc/self/fd|proc/(\d+)/fd)/(\d+)")
#: Links followed at most when looking for a descriptor name (the kernel's own limit).
MAX_LINKS = 40


@dataclass(frozen=True)
class Destination:
    """A checked report destination (see the module docstring for ``how``)."""

    given: Path  # the name as the user gave it
    how: str  # "replace", "device" or "descriptor"
    path: Path  # replace: the file renamed over; device: the path opened
    fd: int = -1  # descriptor: the descriptor written to


def descriptor_named(path: str | os.PathLike[str]) -> int | None:
    """The descriptor ``path`` names (through links), or None."""
    here = os.path.abspath(path)
    for _ in range(MAX_LINKS):
        match = _DESCRIPTOR.fullmatch(here)
        if match and (match.group(1) is None or int(match.group(1)) == os.getpid()):
            return int(match.group(2))
        try:
            link = os.readlink(here)
        except OSError:
            return None
        here = os.path.normpath(os.path.join(os.path.dirname(here), link))
    return None


def resolve(path: Path) -> Destination:
    """Where ``path`` would be written; :class:`OutputError` when it must not be."""
    try:
        return _resolve(path)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write report: {reason(exc)}") from None


def _resolve(path: Path) -> Destination:
    fd = descriptor_named(path)
    if fd is not None:
        try:
            os.fstat(fd)
        except OSError:
            raise OutputError(f"{path}: descriptor {fd} is not open") from None
        return Destination(path, "descriptor", path, fd)
    st = lookup(path)
    if st is not None:
        mode = st.st_mode
        if stat.S_ISDIR(mode):
            raise OutputError(f"{path}: is a directory")
        if stat.S_ISCHR(mode) or stat.S_ISFIFO(mode):
            return Destination(path, "device", Path(os.path.realpath(path)))
        if not stat.S_ISREG(mode):
            kind = "a block device" if stat.S_ISBLK(mode) else "a socket"
            raise OutputError(
                f"{path}: is {kind}; reports go to regular files, character devices "
                "(such as /dev/null) and FIFOs only"
            )
    real = Path(os.path.realpath(path))
    parent = real.parent
    shown = parent if os.path.islink(path) else (path.parent if str(path.parent) else Path("."))
    if not parent.is_dir():
        raise OutputError(f"{path}: directory {shown} does not exist")
    if not os.access(parent, os.W_OK):
        raise OutputError(f"{path}: directory {shown} is not writable")
    if len(os.fsencode(real.name)) > _name_max(parent):
        raise OutputError(f"{path}: cannot write report: file name too long")
    return Destination(path, "replace", real)


def _name_max(directory: Path) -> int:
    """The longest file name (bytes) ``directory`` takes; 255 when the system does not say."""
    try:
        return os.pathconf(directory, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):  # AttributeError: no pathconf here
        return 255


def check_destinations(
    paths: Sequence[Path], protected: Sequence[tuple[Path, str]] = ()
) -> list[Destination]:
    """Resolve every destination and refuse (:class:`OutputError`) a run that would
    write two reports to one file or replace a protected input.

    ``protected`` holds (path, role) pairs, e.g. (mesh, "the mesh"). Reports written
    through a device or a descriptor may share it (each is written in turn).
    """
    out = [resolve(Path(p)) for p in paths]
    replaced = [d for d in out if d.how == "replace"]
    for i, dest in enumerate(replaced):
        for earlier in replaced[:i]:
            if same_file(dest.path, earlier.path):
                raise OutputError(
                    f"two reports would be written to the same file: {earlier.given} "
                    f"and {dest.given}"
                )
        for src, role in protected:
            if same_file(dest.path, src):
                raise OutputError(
                    f"{dest.given}: refusing to overwrite the input file {src} ({role})"
                )
    return out


def protected_inputs(
    meshes: Sequence[str | os.PathLike[str]],
    config: Path | None = None,
    profile: object = None,
) -> list[tuple[Path, str]]:
    """(path, role) of the files a run reads: its meshes, the configuration file in use
    and the profile file in use (a path given as text, or the file a loaded profile came
    from)."""
    out = [(Path(m), "the mesh") for m in meshes]
    if config is not None:
        out.append((Path(config), "the configuration file in use"))
    origin = (
        profile if isinstance(profile, (str, os.PathLike)) else getattr(profile, "origin", None)
    )
    if origin is not None:
        try:
            is_file = os.path.isfile(origin)
        except (OSError, ValueError):
            is_file = False
        if is_file:
            out.append((Path(origin), "the profile in use"))
    return out
