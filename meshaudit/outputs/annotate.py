"""The audited mesh written back through meshio with the audit as cell data.

Every cell block of the mesh as read is kept (lines and vertices too, in file order), and
each gets these cell-data arrays, so a VTK-capable viewer can colour and threshold them:

- ``element_id``: the element id as reported (-1 for cells not audited);
- one float array per metric (see ``meshaudit.metrics.METRICS``), ``score`` included;
  NaN where the metric is not defined or the cell was not audited; infinities stay;
- ``verdict``: 0 ok, 1 warn, 2 fail (-1 not audited);
- ``flags``: bit mask, bit i = ``meshaudit.results.report.FLAG_NAMES[i]`` (-1 not audited);
- ``flag_<name>``: 0/1 per flag (-1 not audited).

The input file is never written; the caller writes to a temporary file and renames it.
"""

from __future__ import annotations

import contextlib
import io
import warnings
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..cells.registry import CELL_TYPES
from ..errors import OutputError
from ..metrics import METRIC_NAMES
from ..results.report import FLAG_NAMES, Report

if TYPE_CHECKING:
    import meshio

#: Formats that keep per-block cell data in one file.
ANNOTATE_FORMATS = {".vtu": "vtu", ".vtk": "vtk"}


def annotate_format(path: Path) -> str:
    """meshio format for ``path``; OutputError for extensions that cannot hold cell data."""
    fmt = ANNOTATE_FORMATS.get(path.suffix.lower())
    if fmt is None:
        raise OutputError(f"{path}: annotated mesh must be .vtu or .vtk")
    return fmt


def block_rows(raw: meshio.Mesh) -> list[np.ndarray | None]:
    """Report indices of every cell of every block of ``raw``; None for blocks not audited.

    Mirrors the read order of :func:`meshaudit.mesh.reading.build_elements`.
    """
    rows: list[np.ndarray | None] = []
    position = 0
    for cells in raw.cells:
        n = len(cells.data)
        if cells.type in CELL_TYPES and n:
            rows.append(np.arange(position, position + n))
            position += n
        else:
            rows.append(None)
    return rows


def audit_arrays(report: Report) -> dict[str, np.ndarray]:
    """The per-element arrays written as cell data, in report order."""
    arrays: dict[str, np.ndarray] = {"element_id": report.ids.astype(np.int64)}
    for name in METRIC_NAMES:
        arrays[name] = np.asarray(report.metrics[name], dtype=np.float64)
    arrays["verdict"] = report.verdict.astype(np.int8)
    arrays["flags"] = report.flag_bits.astype(np.int64)
    for name in FLAG_NAMES:
        arrays[f"flag_{name}"] = report.flag(name).astype(np.int8)
    return arrays


def _missing(array: np.ndarray, n: int) -> np.ndarray:
    if np.issubdtype(array.dtype, np.floating):
        return np.full(n, np.nan, dtype=array.dtype)
    return np.full(n, -1, dtype=array.dtype)


def annotated_mesh(raw: meshio.Mesh, report: Report) -> meshio.Mesh:
    """A new meshio mesh: ``raw``'s points and cells plus the audit as cell data."""
    import meshio

    rows = block_rows(raw)
    audited = sum(len(r) for r in rows if r is not None)
    if audited != len(report):
        raise OutputError("the report does not belong to this mesh (element counts differ)")
    arrays = audit_arrays(report)
    cell_data = {
        name: [
            values[r] if r is not None else _missing(values, len(cells.data))
            for r, cells in zip(rows, raw.cells)
        ]
        for name, values in arrays.items()
    }
    for name, blocks in raw.cell_data.items():
        cell_data.setdefault(name, blocks)
    return meshio.Mesh(raw.points, raw.cells, point_data=dict(raw.point_data), cell_data=cell_data)


def render(path: Path, raw: meshio.Mesh, report: Report, fmt: str | None = None) -> None:
    """Write the annotated mesh to ``path`` (format from its extension unless ``fmt``)."""
    import meshio

    mesh = annotated_mesh(raw, report)
    sink = io.StringIO()
    with (
        warnings.catch_warnings(),
        contextlib.redirect_stdout(sink),
        contextlib.redirect_stderr(sink),
    ):
        warnings.simplefilter("ignore")
        meshio.write(path, mesh, file_format=fmt or annotate_format(path))
