"""The numbers elements and nodes carry in every report: the file's own labels where the
format has them, else a stated position convention.

=============================  ==========================  ===========================
source                         element numbers             node numbers
=============================  ==========================  ===========================
gmsh ``.msh`` 2.2 / 4.1        gmsh element tags           gmsh node tags
Abaqus ``.inp``                element labels              node labels
Nastran ``.bdf``               element ids                 GRID ids
``.vtu``, ``.vtk``, ``.xdmf``  VTK cell index from 0 over  VTK point index from 0
                               all cells in file order
medit ``.mesh``, ``.med``,     position from 1 over all    position from 1
other formats                  cells read
``meshio.Mesh`` in memory      position from 0 over all    point index from 0
                               cell blocks (or cells_id)   (or points_id)
=============================  ==========================  ===========================

"All cells" counts lines, vertices and solids too, so an element's number does not change
when other kinds of cells are added or skipped. meshio drops the gmsh and Abaqus labels:
a light pass of our own reads them (:mod:`.gmsh`, :mod:`.abaqus`) and is checked against
meshio's cells; when it cannot be matched with certainty the numbering falls back to the
position convention and a note says so. A number is never guessed.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from .common import FileLabels, LabelsUnavailable, check_alignment

#: The position convention files without labels (and failed label passes) use.
POSITION_ELEMENTS = "position among all cells read, from 1 (every cell block in the order read)"
POSITION_NODES = "node position in the file, from 1"


@dataclass(frozen=True)
class Numbering:
    """How the elements and nodes of one mesh are numbered in reports.

    ``cell_labels``: one (n,) int64 array per meshio cell block, or None when elements
    are numbered by position: ``cell_base`` + position among all cells of all blocks.
    ``node_labels``: (n_points,) int64, or None: ``node_base`` + node index.
    ``elements`` and ``nodes`` say in words which numbering is in use.
    """

    elements: str
    nodes: str
    cell_labels: tuple[np.ndarray, ...] | None = None
    cell_base: int = 0
    node_labels: np.ndarray | None = None
    node_base: int = 0
    notes: tuple[str, ...] = ()

    def node_numbers(self, index: np.ndarray) -> np.ndarray:
        """The reported number of each node in ``index`` (0-based node indices)."""
        index = np.asarray(index, dtype=np.int64)
        if self.node_labels is None:
            return index + self.node_base
        return self.node_labels[index]

    def block_numbers(self, block_no: int, first_cell: int, n: int) -> np.ndarray:
        """Numbers of the ``n`` cells of meshio block ``block_no``, whose first cell is
        cell ``first_cell`` (0-based) among all cells of the mesh."""
        if self.cell_labels is not None:
            return np.asarray(self.cell_labels[block_no], dtype=np.int64)
        return np.arange(first_cell, first_cell + n, dtype=np.int64) + self.cell_base

    def as_dict(self) -> dict[str, str]:
        return {"elements": self.elements, "nodes": self.nodes}


#: Memory meshes: positions from 0, as Python and meshio index them.
IN_MEMORY = Numbering(
    "position among all cells of the mesh, from 0 (every cell block in order)",
    "point index, from 0",
)
VTK = Numbering(
    "VTK cell index, from 0 (all cells in file order)",
    "VTK point index, from 0",
)
POSITIONS = Numbering(POSITION_ELEMENTS, POSITION_NODES, cell_base=1, node_base=1)


def note_repeats(numbering: Numbering, ids: list[np.ndarray]) -> Numbering:
    """``numbering`` with a note when some element number is given to several audited
    elements (``ids``: their numbers, block by block); `explain` and `compare` then take
    the first element with that number."""
    every = np.concatenate(ids) if len(ids) > 1 else ids[0]
    if every.size < 2 or bool((every[1:] > every[:-1]).all()):  # rising: no repeats
        return numbering
    ordered = np.sort(every)
    repeated = ordered[1:][ordered[1:] == ordered[:-1]]
    if repeated.size == 0:
        return numbering
    shown = ", ".join(str(int(v)) for v in np.unique(repeated)[:5])
    note = (
        f"{repeated.size} element number(s) repeat ({shown}); explain and compare take "
        "the first element with a number"
    )
    return replace(numbering, notes=(*numbering.notes, note))


def file_format_of(path: Path, file_format: str | None) -> str:
    """The meshio format a file is read as (its extension's, or the one named)."""
    if file_format:
        return file_format
    try:
        from meshio._helpers import _filetypes_from_path

        candidates = _filetypes_from_path(path)
    except Exception:  # an extension meshio does not know: meshio failed already
        return ""
    if "gmsh" in candidates and _starts_like_gmsh(path):
        return "gmsh"
    return candidates[0] if len(candidates) == 1 else ""


def _starts_like_gmsh(path: Path) -> bool:
    try:
        with open(path, "rb") as fh:
            head = fh.read(64).lstrip()
    except OSError:
        return False
    return head.startswith((b"$MeshFormat", b"$Comments"))


def for_file(
    path: str | os.PathLike[str], file_format: str | None, mesh: Any, reader_said: str = ""
) -> Numbering:
    """The numbering of ``mesh`` as meshio read it from ``path``.

    ``reader_said``: what meshio printed or warned while reading (it says so when it
    skipped cells it cannot handle, which would shift positions).
    """
    p = Path(path)
    fmt = file_format_of(p, file_format)
    if fmt == "gmsh":
        return _from_pass("gmsh", p, mesh)
    if fmt == "abaqus":
        return _from_pass("abaqus", p, mesh)
    if fmt == "nastran":
        return _nastran(mesh)
    if "cannot handle" in reader_said:
        return _fallback(
            f"{fmt or 'the'} reader skipped cells it cannot handle, so cell positions may "
            "differ from the file's"
        )
    if fmt in ("vtu", "vtk", "xdmf"):
        return VTK
    if fmt == "medit":
        return Numbering(POSITION_ELEMENTS, "vertex number in the file, from 1", None, 1, None, 1)
    return POSITIONS


def for_memory(mesh: Any) -> Numbering:
    """A ``meshio.Mesh`` built in memory: meshio's own ``cells_id`` and ``points_id``
    labels when it carries them (meshio's Nastran reader sets them), else positions
    from 0 over all cell blocks and the point index from 0."""
    cells_id = _cells_id(mesh)
    points_id = _points_id(mesh)
    return Numbering(
        "meshio cells_id labels" if cells_id is not None else IN_MEMORY.elements,
        "meshio points_id labels" if points_id is not None else IN_MEMORY.nodes,
        cells_id,
        0,
        points_id,
        0,
    )


def _cells_id(mesh: Any) -> tuple[np.ndarray, ...] | None:
    ids = getattr(mesh, "cells_id", None)
    if ids is None or len(ids) != len(mesh.cells):
        return None
    out = []
    for labels, cells in zip(ids, mesh.cells):
        arr = np.asarray(labels)
        if arr.shape != (len(cells.data),) or not np.issubdtype(arr.dtype, np.integer):
            return None
        out.append(arr.astype(np.int64))
    return tuple(out)


def _points_id(mesh: Any) -> np.ndarray | None:
    ids = getattr(mesh, "points_id", None)
    if ids is None:
        return None
    arr = np.asarray(ids)
    if arr.shape != (len(mesh.points),) or not np.issubdtype(arr.dtype, np.integer):
        return None
    return arr.astype(np.int64)


def _nastran(mesh: Any) -> Numbering:
    cells_id, points_id = _cells_id(mesh), _points_id(mesh)
    if cells_id is None or points_id is None:
        return _fallback("the Nastran reader kept no element or GRID ids")
    return Numbering("Nastran element ids", "Nastran GRID ids", cells_id, 0, points_id, 0)


_PASSES = {
    "gmsh": ("gmsh element tags", "gmsh node tags"),
    "abaqus": ("Abaqus element labels", "Abaqus node labels"),
}


def _from_pass(kind: str, path: Path, mesh: Any) -> Numbering:
    try:
        found = _run_pass(kind, path, mesh)
        check_alignment(mesh, found)
    except LabelsUnavailable as exc:
        name = "gmsh tags" if kind == "gmsh" else "Abaqus labels"
        return _fallback(f"the {name} could not be matched with the cells read: {exc}")
    except (OSError, MemoryError) as exc:
        return _fallback(f"the file could not be read again for its labels: {exc}")
    except Exception as exc:  # a layout no check above foresaw: positions, never a guess
        return _fallback(f"the label pass stopped ({type(exc).__name__}: {exc})")
    elements, nodes = _PASSES[kind]
    return Numbering(elements, nodes, tuple(b.labels for b in found.blocks), 0, found.nodes, 0)


def _run_pass(kind: str, path: Path, mesh: Any) -> FileLabels:
    if kind == "gmsh":
        from .gmsh import read_gmsh

        return read_gmsh(path)
    from .abaqus import read_abaqus

    return read_abaqus(path, mesh)


def _fallback(reason: str) -> Numbering:
    note = (
        f"element and node numbers are positions ({POSITION_ELEMENTS}; {POSITION_NODES}): {reason}"
    )
    return Numbering(POSITION_ELEMENTS, POSITION_NODES, None, 1, None, 1, (note,))
