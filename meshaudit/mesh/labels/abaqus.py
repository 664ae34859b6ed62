"""Element and node labels of an Abaqus ``.inp`` file.

meshio's reader numbers the nodes and cells of an ``.inp`` file by position and drops the
labels. This pass reads the labels of the ``*NODE`` and ``*ELEMENT`` sections the way
meshio's reader finds them: a keyword is a line starting with ``*`` (``**`` starts a
comment), a section's data runs to the next line starting with ``*``, every ``*ELEMENT``
section becomes one meshio cell block (rows in file order, the label first on each
record, records possibly continued over several lines), and the nodes are those of the
``*NODE`` section in file order. Files the pass cannot follow with certainty (``*INCLUDE``,
several ``*NODE`` sections, keywords written without their ``*``) get no labels.
"""

from __future__ import annotations

from os import PathLike
from pathlib import Path
from typing import Any

import numpy as np

from .common import FileLabels, LabelBlock, LabelsUnavailable
from .text import (
    TextLabelError,
    as_bytes,
    integers,
    leading_integers,
    line_bounds,
    separator_table,
    skip_blanks,
)

_STAR = ord("*")
_SECTION_KEYWORDS = {b"NODE", b"ELEMENT", b"NSET", b"ELSET", b"INCLUDE"}


def read_abaqus(path: str | PathLike[str], mesh: Any) -> FileLabels:
    """Element labels per meshio cell block and node labels per meshio point.

    ``mesh`` is meshio's reading of the same file: its blocks give each ``*ELEMENT``
    section's node count per element. Raises :class:`LabelsUnavailable`.
    """
    data = Path(path).read_bytes()
    if b"\r" in data:  # meshio reads in text mode: every line ending becomes "\n"
        data = data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
    try:
        return _labels(data, mesh)
    except (TextLabelError, ValueError, IndexError) as exc:
        raise LabelsUnavailable(f"unexpected layout ({exc})") from None


def _labels(data: bytes, mesh: Any) -> FileLabels:
    buf = as_bytes(data)
    starts, ends = line_bounds(buf, 0, buf.size)
    starred = np.flatnonzero((buf[starts] == _STAR) & (ends > starts))
    _refuse_bare_keywords(data, buf, starts, ends)
    bounds = np.append(starred, starts.size)
    node_sections, element_sections = [], []
    for i, stop in zip(starred.tolist(), bounds[1:].tolist()):
        line = data[starts[i] : ends[i]]
        if line.startswith(b"**"):
            continue
        keyword = line.partition(b",")[0].strip().replace(b"*", b"").upper()
        if keyword == b"NODE":
            node_sections.append((i + 1, stop))
        elif keyword == b"ELEMENT":
            element_sections.append((i + 1, stop))
        elif keyword == b"INCLUDE":
            raise LabelsUnavailable("*INCLUDE (labels are read from one file only)")
    if len(node_sections) != 1:
        raise LabelsUnavailable(f"{len(node_sections)} *NODE sections (labels need exactly one)")
    if len(element_sections) != len(mesh.cells):
        raise LabelsUnavailable(
            f"{len(element_sections)} *ELEMENT sections, {len(mesh.cells)} cell blocks read"
        )
    lo, hi = node_sections[0]
    values, found = leading_integers(buf, starts[lo:hi], ends[lo:hi], 1, b" \t,")
    blank = found == 0
    if bool(blank.any()):
        if not all(not data[a:b].strip() for a, b in zip(starts[lo:hi][blank], ends[lo:hi][blank])):
            raise LabelsUnavailable("a *NODE line without a label")
        values = values[~blank]
    nodes = values[:, 0]
    blocks = []
    for (lo, hi), cells in zip(element_sections, mesh.cells):
        k = int(np.shape(cells.data)[1]) if np.ndim(cells.data) == 2 else -1
        text = data[starts[lo] : ends[hi - 1]] if hi > lo else b""
        tokens = integers(text.replace(b",", b" "))
        if k <= 0 or tokens.size % (k + 1):
            raise LabelsUnavailable("an *ELEMENT section does not split into records")
        records = tokens.reshape(-1, k + 1)
        blocks.append(
            LabelBlock(cells.type, records[:, 0].copy(), lambda rows, r=records: r[rows, 1:])
        )
    return FileLabels(blocks, nodes)


def _refuse_bare_keywords(
    data: bytes, buf: np.ndarray, starts: np.ndarray, ends: np.ndarray
) -> None:
    """meshio takes any line outside a section for a keyword when its text before the
    first comma, stripped, with every "*" removed, is a keyword: a line the pass would
    not see as one. Only lines not starting with "*" whose first non-blank byte is a
    letter or "*" can be one; those few are looked at one by one."""
    first = starts.copy()
    skip_blanks(buf, first, ends, separator_table(b" \t"))
    lead = buf[np.minimum(first, buf.size - 1)]
    lower = lead | 0x20  # the lower case of a letter
    wordlike = ((lower >= ord("a")) & (lower <= ord("z"))) | (lead == _STAR)
    maybe = np.flatnonzero(wordlike & (first < ends) & (buf[starts] != _STAR))
    for i in maybe.tolist():
        word = data[starts[i] : ends[i]].partition(b",")[0].strip().replace(b"*", b"")
        if word.upper() in _SECTION_KEYWORDS:
            raise LabelsUnavailable("a keyword line that does not start with '*'")
