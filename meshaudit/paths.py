"""Paths the user names (meshes, configuration and profile files, reports): looking them
up without ever raising anything but a project error with a plain reason."""

from __future__ import annotations

import errno
import os
import re
import stat
from pathlib import Path

from .errors import InputError

#: How os.fsdecode carries a byte that is not UTF-8.
_NOT_UTF8 = re.compile("[\udc80-\udcff]")
#: Reasons in words for the errors a path lookup can meet.
REASONS = {
    errno.ENOENT: "no such file",
    errno.ENOTDIR: "no such file (a part of the path is not a directory)",
    errno.ELOOP: "symbolic link loop (too many levels of symbolic links)",
    errno.ENAMETOOLONG: "file name too long",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
}


def reason(exc: OSError) -> str:
    """What went wrong with a path, in a few words."""
    if exc.errno in REASONS:
        return REASONS[exc.errno]
    return exc.strerror or type(exc).__name__


def lookup(path: str | os.PathLike[str]) -> os.stat_result | None:
    """``os.stat`` (following links) of ``path``; None when nothing is there.

    Raises ``OSError`` for every other failure (a link loop, a name too long, ...).
    """
    try:
        return os.stat(path)
    except (FileNotFoundError, NotADirectoryError):
        return None


def display_name(path: str | os.PathLike[str]) -> str:
    """``path`` as text for reports: the bytes of a name that are not UTF-8 (which Python
    carries as lone surrogates, and no UTF-8 report can hold) written as ``\\xNN``."""
    return _NOT_UTF8.sub(lambda m: f"\\x{ord(m.group()) - 0xDC00:02x}", os.fsdecode(path))


def stat_input(path: Path) -> os.stat_result:
    """The status of an input file, or an :class:`InputError` naming why it cannot be read."""
    try:
        st = os.stat(path)
    except OSError as exc:
        raise InputError(f"{path}: {reason(exc)}") from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError(f"{path}: is a directory, not a mesh file")
    return st


def same_file(a: str | os.PathLike[str], b: str | os.PathLike[str]) -> bool:
    """True when ``a`` and ``b`` name one file: the same inode when both exist, the same
    resolved path when neither does (two spellings of one name to be created)."""
    try:
        sa, sb = lookup(a), lookup(b)
    except OSError:
        return False
    if sa is not None and sb is not None:
        return (sa.st_dev, sa.st_ino) == (sb.st_dev, sb.st_ino)
    if sa is None and sb is None:
        return os.path.realpath(a) == os.path.realpath(b)
    return False
