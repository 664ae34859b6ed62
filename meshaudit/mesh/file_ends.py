"""Files that end early: a mesh file cut short (a copy interrupted, a disk filled) must
not pass on the elements before the cut.

meshio refuses most cut files (a count in a section header that the data does not reach,
a record with too few nodes), but reads some of them happily:

- **gmsh** ``.msh`` (ASCII and binary): every section runs from ``$Name`` to
  ``$EndName``, so a complete file ends with an end marker. A file whose last line is not
  one (cut inside its last section, or just before the end marker) ends early.
- **Abaqus** ``.inp``: there are no counts and no end marker, so a cut at a line end inside
  ``*ELEMENT`` cannot be told from a shorter file. A cut anywhere else leaves a last data
  line without its line end, and its last number may be cut too (node 389 read as 38).
  A file whose last line is a data line (not a ``*`` keyword) without a line end ends
  early; a complete file written without a final line end is refused the same way
  (end it with a newline).

Only the file's tail is read, so the check costs nothing on large files.
"""

from __future__ import annotations

import os

from ..errors import InputError

#: Bytes read from the end of the file.
TAIL = 4096


def _tail(path: str | os.PathLike[str]) -> bytes:
    with open(path, "rb") as fh:
        fh.seek(0, os.SEEK_END)
        size = fh.tell()
        fh.seek(max(0, size - TAIL))
        return fh.read()


def check_file_end(path: str | os.PathLike[str], fmt: str) -> None:
    """Raise :class:`InputError` when the ``fmt`` file at ``path`` ends early (see the
    module docstring); formats without a rule pass."""
    if fmt.startswith("gmsh"):
        last = _tail(path).rstrip().rpartition(b"\n")[2].strip()
        if not last.startswith(b"$End"):
            raise InputError(
                f"{path}: cannot read mesh: the file ends early, inside a section (its last "
                "line is not a $End line): cut short or corrupt"
            )
    elif fmt == "abaqus":
        tail = _tail(path)
        if tail and tail[-1:] not in (b"\n", b"\r"):
            last = tail.rpartition(b"\n")[2].strip()
            if last and not last.startswith(b"*"):
                raise InputError(
                    f"{path}: cannot read mesh: the file ends early (its last data line has "
                    "no line end): cut short or corrupt; if it is complete, end it with a "
                    "newline"
                )
