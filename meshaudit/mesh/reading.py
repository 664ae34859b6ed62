"""Read a mesh file (or take a meshio mesh) and build the element arrays.

All file I/O goes through meshio. meshio's own console warnings are captured so they
never reach the user's terminal; they are returned as reader notes instead.
"""

from __future__ import annotations

import contextlib
import io
import os
import warnings
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..cells.registry import CELL_TYPES
from ..errors import InputError
from ..paths import display_name, stat_input
from . import labels
from .elements import ElementBlock, ElementMesh
from .file_ends import check_file_end
from .labels import Numbering
from .regions import FileRegions, element_sets, file_regions

if TYPE_CHECKING:
    import meshio

#: Extensions meshio recognises that meshaudit documents and tests.
TESTED_EXTENSIONS = (".msh", ".vtu", ".vtk", ".xdmf", ".inp", ".bdf", ".med", ".mesh")


def read_meshio(path: str | os.PathLike[str], file_format: str | None = None) -> meshio.Mesh:
    """Read ``path`` with meshio, turning every failure into an :class:`InputError`.

    Returns the meshio mesh; meshio's console chatter is swallowed.
    """
    return read_meshio_said(path, file_format)[0]


def read_meshio_said(
    path: str | os.PathLike[str], file_format: str | None = None
) -> tuple[meshio.Mesh, str]:
    """:func:`read_meshio`, also returning what meshio printed while reading."""
    import meshio

    p = Path(path)
    st = stat_input(p)  # missing, a directory, a link loop, a name too long: InputError
    if not os.access(p, os.R_OK):
        raise InputError(f"{p}: permission denied")
    if st.st_size == 0:
        raise InputError(f"{p}: file is empty")
    check_file_end(p, labels.file_format_of(p, file_format))  # a file cut short
    sink = io.StringIO()
    try:
        with (
            warnings.catch_warnings(),
            contextlib.redirect_stdout(sink),
            contextlib.redirect_stderr(sink),
        ):
            warnings.simplefilter("ignore")
            mesh = meshio.read(p, file_format=file_format)
    except InputError:
        raise
    except SystemExit:  # meshio.read exits after its last reader gives up
        raise InputError(
            f"{p}: cannot read mesh (corrupt or not a mesh file: {_reader_said(sink)})"
            + _hint(p, file_format)
        ) from None
    except meshio.ReadError as exc:
        detail = _one_line(exc, with_kind=False).rstrip(".")
        if file_format is None and "deduce file format" in detail:
            detail += "; name the format with --format"
        raise InputError(f"{p}: cannot read mesh: {detail}") from None
    except PermissionError:
        raise InputError(f"{p}: permission denied") from None
    except FileNotFoundError as exc:  # e.g. the heavy-data file an .xdmf points to
        raise InputError(
            f"{p}: cannot read mesh: a file it refers to is missing ({_one_line(exc)})"
        ) from None
    except ImportError as exc:
        raise InputError(f"{p}: reading this format needs a missing library: {exc.name}") from None
    except MemoryError:
        raise InputError(f"{p}: not enough memory to read this mesh") from None
    except IndexError as exc:  # readers that map node labels fail on a missing node
        raise InputError(
            f"{p}: cannot read mesh: an element refers to a node that is not in the file "
            f"(or the file is corrupt: {_one_line(exc)})"
        ) from None
    except Exception as exc:  # corrupt files make format readers fail in many ways
        raise InputError(
            f"{p}: cannot read mesh (corrupt or not a mesh file: {_one_line(exc)})"
            + _hint(p, file_format)
        ) from None
    return mesh, sink.getvalue()


def _hint(path: Path, file_format: str | None) -> str:
    """The --format hint of a read chosen by extension (none when --format was given)."""
    from .sniff import format_hint

    return "" if file_format is not None else format_hint(path)


def _one_line(exc: BaseException, with_kind: bool = True) -> str:
    """The exception as 'Kind: message' on one line, at most about 200 characters."""
    kind = type(exc).__name__
    text = " ".join(str(exc).split())[:200]
    if not text:
        return kind
    return f"{kind}: {text}" if with_kind else text


def _reader_said(sink: io.StringIO) -> str:
    """What meshio printed before giving up, on one line (its 'Error:' prefix dropped)."""
    lines = [ln.strip() for ln in sink.getvalue().splitlines() if ln.strip()]
    lines = [ln.removeprefix("Error:").strip() for ln in lines]
    return " ".join(lines)[:200] or "the format reader gave up"


def _referenced_nodes(data: np.ndarray, n_points: int) -> np.ndarray:
    """Valid node indices a cell block not audited refers to (anything else is ignored)."""
    if data.size == 0 or not np.issubdtype(data.dtype, np.integer):
        return np.zeros(0, dtype=np.int64)
    flat = data.ravel().astype(np.int64, copy=False)
    return flat[(flat >= 0) & (flat < n_points)]


def _breakdown(regions: FileRegions) -> tuple[tuple[str, ...], np.ndarray] | None:
    return (regions.names, regions.codes) if regions.names else None


def build_elements(
    mesh: meshio.Mesh, source: str = "<memory>", numbering: Numbering | None = None
) -> ElementMesh:
    """Turn a meshio mesh into validated element arrays.

    ``numbering`` (default: the in-memory convention, see :mod:`meshaudit.mesh.labels`) gives
    each element its reported number. Raises :class:`InputError` for coordinates that
    are not finite real numbers (complex, boolean, object arrays too), out-of-range
    connectivity and meshes without any supported element.
    """
    numbering = numbering or labels.for_memory(mesh)
    points = np.asarray(mesh.points)
    if points.ndim != 2 or points.shape[1] not in (2, 3):
        raise InputError(f"{source}: points must have 2 or 3 coordinates")
    if points.dtype.kind == "c":
        raise InputError(f"{source}: point coordinates are complex numbers; give real coordinates")
    if points.dtype.kind not in "iuf":  # booleans, objects, strings, dates
        raise InputError(
            f"{source}: point coordinates are not real numbers (array of {points.dtype})"
        )
    points = points.astype(np.float64, copy=False)
    if points.shape[1] == 2:
        points = np.hstack([points, np.zeros((points.shape[0], 1))])
    n_points = points.shape[0]

    blocks: list[ElementBlock] = []
    skipped: dict[str, int] = {}
    position = 0
    first_cell = 0  # position of the next block's first cell among all cells of the mesh
    raw_blocks: list[tuple[int, str, np.ndarray, np.ndarray]] = []
    other_nodes: list[np.ndarray] = [np.zeros(0, dtype=np.int64)]
    for block_no, cells in enumerate(mesh.cells):
        cell_type = cells.type
        first = first_cell
        first_cell += len(cells.data)
        data = np.asarray(cells.data)
        if cell_type not in CELL_TYPES:
            skipped[cell_type] = skipped.get(cell_type, 0) + len(data)
            other_nodes.append(_referenced_nodes(data, n_points))
            continue
        k = CELL_TYPES[cell_type].n_nodes
        if data.ndim != 2 or data.shape[1] != k:
            raise InputError(f"{source}: {cell_type} block {block_no} does not have {k} nodes")
        if len(data) == 0:
            continue
        if not np.issubdtype(data.dtype, np.integer):
            raise InputError(f"{source}: {cell_type} connectivity is not integer")
        ids = numbering.block_numbers(block_no, first, len(data))
        raw_blocks.append((block_no, cell_type, data.astype(np.int64, copy=False), ids))

    block_rows: list[tuple[int, np.ndarray]] = []
    for block_no, cell_type, conn, ids in raw_blocks:
        n = len(conn)
        lo, hi = int(conn.min()), int(conn.max())
        if lo < 0 or hi >= n_points:
            bad = lo if lo < 0 else hi
            raise InputError(
                f"{source}: {cell_type} connectivity refers to node {bad}, "
                f"but the mesh has nodes 0..{n_points - 1}"
            )
        index = np.arange(position, position + n, dtype=np.int64)
        blocks.append(ElementBlock(cell_type, conn, ids, index))
        block_rows.append((block_no, index))
        position += n

    if not blocks:
        found = ", ".join(f"{v} {k}" for k, v in skipped.items()) or "no cells"
        kinds = ", ".join(CELL_TYPES)
        raise InputError(f"{source}: no supported elements ({kinds}) to audit; found {found}")
    numbering = labels.note_repeats(numbering, [b.ids for b in blocks])
    element_mesh = ElementMesh(
        points=points,
        blocks=blocks,
        skipped=skipped,
        source=source,
        cell_sets=element_sets(mesh, block_rows),
        file_regions=_breakdown(file_regions(mesh, block_rows)),
        other_nodes=np.concatenate(other_nodes),
        numbering=numbering,
    )
    # Fast path: all coordinates finite. Else only the nodes an element uses must be.
    if not np.isfinite(points).all() and not np.isfinite(points[element_mesh.used_nodes()]).all():
        raise InputError(f"{source}: node coordinates contain NaN or infinity")
    return element_mesh


def load_with_mesh(source: Any, file_format: str | None = None) -> tuple[Any, ElementMesh]:
    """Like :func:`load`, but also return the meshio mesh the element arrays came from."""
    if isinstance(source, (str, os.PathLike)):
        mesh, said = read_meshio_said(source, file_format)
        numbering = labels.for_file(source, file_format, mesh, said)
        return mesh, build_elements(mesh, display_name(source), numbering)
    if hasattr(source, "points") and hasattr(source, "cells"):
        return source, build_elements(source)
    raise InputError(f"cannot audit an object of type {type(source).__name__}")


def load(source: Any, file_format: str | None = None) -> ElementMesh:
    """Read a path (any format meshio reads) or take a meshio mesh already in memory."""
    return load_with_mesh(source, file_format)[1]
