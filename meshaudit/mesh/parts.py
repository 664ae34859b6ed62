"""Partitioned meshes: one mesh stored as several part files.

A partitioned mesh is named either by a ``.pvtu`` file (its ``<Piece Source=...>``
entries, in file order, relative to the ``.pvtu``'s directory) or by a pattern of part
files given with ``meshaudit check --parts 'model_*.vtu'`` (matches sorted so that
numbers in names count up: ``part_2`` before ``part_10``). Each part is read on its own,
by meshio, where it is measured (see :mod:`meshaudit.distributed`).

Numbering across parts (what reports call an element and a node):

- elements: a part file numbered by position (``.vtu``, ``.vtk``, ``.xdmf``, and other
  formats without labels) has its numbers shifted by the cells of the parts before it,
  so an element's number is its position among all cells of all parts in part order,
  as in one file made by putting the parts one after the other; files with element
  labels of their own (gmsh tags, Abaqus labels, Nastran ids) keep them.
- nodes: the parts' global node ids (a point array named in :data:`GLOBAL_ID_NAMES`)
  where every part has them, else the point index among all points of all parts in
  part order (from 0 for VTK parts).
"""

from __future__ import annotations

import glob
import os
import re
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..paths import reason

#: Point arrays read as global node ids, in this order of preference.
GLOBAL_ID_NAMES = ("GlobalNodeId", "GlobalNodeIds", "global_node_id", "GlobalPointIds")


@dataclass(frozen=True)
class PartSet:
    """The part files of one partitioned mesh, in part order, and the name it is shown by."""

    source: str  # the .pvtu path, the pattern, or the sliced XDMF file
    #: part file paths, or :class:`meshaudit.mesh.slices.XdmfSlice` slices of one file
    parts: tuple[Any, ...]

    @property
    def stem(self) -> str:
        """A file-name stem for reports: the .pvtu's stem, or the pattern's without its
        wildcards ('model_*.vtu' -> 'model_')."""
        name = Path(self.source).name
        if self.source.lower().endswith(".pvtu"):
            return Path(name).stem
        return re.sub(r"[*?\[\]]+", "", Path(name).stem) or "parts"


def is_partitioned(path: Any) -> bool:
    """Whether ``path`` names a partitioned mesh by itself (a ``.pvtu`` file)."""
    return isinstance(path, (str, os.PathLike)) and str(path).lower().endswith(".pvtu")


def _natural(text: str) -> list[Any]:
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", text)]


def parts_of_pattern(pattern: str) -> PartSet:
    """The part files a pattern matches (``**`` spans directories), in natural order."""
    matches = [p for p in glob.glob(pattern, recursive=True) if os.path.isfile(p)]
    if not matches:
        raise InputError(f"{pattern}: no part file matches this pattern")
    return PartSet(pattern, tuple(sorted(matches, key=_natural)))


def xml_root(text: str, kind: str) -> ET.Element:
    """The root element of the XML file ``text``; InputError (naming ``kind``, such as
    ``.pvtu``) when it cannot be read or parsed."""
    try:
        return ET.parse(text).getroot()
    except OSError as exc:
        raise InputError(f"{text}: cannot read: {reason(exc)}") from None
    except ET.ParseError as exc:
        raise InputError(f"{text}: not a valid {kind} file: {exc}") from None


def parts_of_pvtu(path: str | os.PathLike[str]) -> PartSet:
    """The pieces a ``.pvtu`` file lists, in its order; each must exist."""
    text = str(path)
    root = xml_root(text, ".pvtu")
    pieces = [p.get("Source") for p in root.iter("Piece")]
    if not pieces or any(not p for p in pieces):
        raise InputError(f"{text}: the .pvtu file lists no pieces (<Piece Source=...>)")
    base = Path(text).parent
    parts = tuple(str(base / p) for p in pieces)  # type: ignore[operator]
    for p in parts:
        if not os.path.isfile(p):
            raise InputError(f"{text}: piece {p} does not exist")
    return PartSet(text, parts)


def global_node_ids(mesh: Any) -> np.ndarray | None:
    """(n_points,) int64 global node ids of a part (meshio mesh), or None."""
    for name in GLOBAL_ID_NAMES:
        values = getattr(mesh, "point_data", {}).get(name)
        if values is not None:
            ids = np.asarray(values).reshape(-1)
            if ids.size == len(mesh.points) and ids.dtype.kind in "iuf":
                return ids.astype(np.int64)
    return None


def cell_count(mesh: Any) -> int:
    """Every cell of a meshio mesh (lines and vertices too): what positions count."""
    return int(sum(len(c.data) for c in mesh.cells))
