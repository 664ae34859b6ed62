"""An XDMF mesh with HDF5 heavy data read in slices of contiguous elements.

``meshaudit check model.xdmf --slices N`` audits one XDMF file as a partitioned mesh of N
parts (see :mod:`meshaudit.distributed`): slice k holds the elements
``[k n // N, (k + 1) n // N)`` of the topology, and its worker reads only those rows of
the connectivity and the rows of the geometry its elements use, as HDF5 hyperslabs
(h5py), never the whole arrays.

meshio reads every array of an XDMF file whole, so this module reads the light XML
description itself (one ``Grid`` of ``GridType="Uniform"``, one ``Topology`` of one cell
type, ``Geometry`` of type ``XYZ`` or ``XY``, ``DataItem`` of ``Format="HDF"``: the layout
meshio's XDMF writer uses for a mesh of one cell type). A ``Mixed`` topology (several
cell types in one flat array: where element k starts is known only by reading every
element before it), inline XML data, several grids and time series are refused with a
one-line reason; such a file is audited whole without ``--slices``.

Numbering is that of the single-file audit of the same file (VTK cell index and point
index from 0, see :mod:`meshaudit.mesh.labels`): a slice's elements are numbered from
its first row, its nodes by their row in the geometry, and the rows are the global node
ids the parts are matched by. Cell-centred attributes are read for the slice's
elements only; node-centred ones are not read.
"""

from __future__ import annotations

import os
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..paths import reason
from .parts import xml_root

#: Node rows closer than this are read in one hyperslab (fewer, larger reads; at most
#: this many unused rows per gap).
GAP = 64
#: No hyperslab crosses a multiple of this many rows: one read never holds more than
#: this many rows, however the rows a slice needs are spread.
SPAN = 1 << 16


@dataclass(frozen=True)
class XdmfSlice:
    """Slice ``index`` (from 0) of ``count`` of the elements of the XDMF file ``path``."""

    path: str
    index: int
    count: int

    def __str__(self) -> str:
        return f"{self.path} slice {self.index} of {self.count}"


@dataclass(frozen=True)
class Heavy:
    """An HDF5 dataset named by an XDMF ``DataItem``: file path and dataset name."""

    file: str
    dataset: str


@dataclass(frozen=True)
class Layout:
    """What the XML part of an XDMF file says about its single grid."""

    cell_type: str  # meshio's name
    n_cells: int
    nodes_per_cell: int
    n_points: int
    topology: Heavy
    geometry: Heavy
    cell_attributes: tuple[tuple[str, Heavy], ...]

    @property
    def heavy_files(self) -> tuple[str, ...]:
        """The HDF5 files the grid's data lives in."""
        items = [self.topology, self.geometry, *(h for _, h in self.cell_attributes)]
        return tuple(dict.fromkeys(h.file for h in items))


def is_xdmf(path: Any) -> bool:
    """Whether ``path`` names an XDMF file (by its extension)."""
    return isinstance(path, (str, os.PathLike)) and str(path).lower().endswith((".xdmf", ".xmf"))


def slice_range(n_cells: int, index: int, count: int) -> tuple[int, int]:
    """(first, end) rows of slice ``index`` of ``count``: contiguous, sizes differing by
    at most one, together every row once."""
    return n_cells * index // count, n_cells * (index + 1) // count


def read_layout(path: str | os.PathLike[str]) -> Layout:
    """Parse the XML of an XDMF file (module docstring); InputError when it is not the
    layout this module can slice."""
    text = str(path)
    root = xml_root(text, "XDMF")
    grids = [g for g in root.iter("Grid")]
    if len(grids) != 1 or grids[0].get("GridType", "Uniform") != "Uniform":
        raise _refused(text, "only an XDMF file of one uniform grid can be read in slices")
    grid = grids[0]
    topology = grid.find("Topology")
    geometry = grid.find("Geometry")
    if topology is None or geometry is None:
        raise _refused(text, "the grid has no Topology or no Geometry")
    kind = topology.get("TopologyType") or topology.get("Type") or ""
    if kind.lower() == "mixed":
        raise _refused(text, "a Mixed topology (several cell types) cannot be read in slices")
    from meshio.xdmf.common import xdmf_to_meshio_type

    cell_type = xdmf_to_meshio_type.get(kind)
    if cell_type is None:
        raise _refused(text, f"topology type {kind!r} is not one meshio names")
    topo_item, topo_shape = _item(text, topology)
    if len(topo_shape) != 2:
        raise _refused(text, f"topology dimensions {topo_shape} are not (elements, nodes)")
    geo_kind = geometry.get("GeometryType") or geometry.get("Type") or "XYZ"
    if geo_kind not in ("XYZ", "XY"):
        raise _refused(text, f"geometry type {geo_kind} (only XYZ and XY are read in slices)")
    geo_item, geo_shape = _item(text, geometry)
    if len(geo_shape) != 2 or geo_shape[1] != len(geo_kind):
        raise _refused(text, f"geometry dimensions {geo_shape} do not fit {geo_kind}")
    attributes = []
    for attribute in grid.findall("Attribute"):
        if attribute.get("Center", "Node") != "Cell":
            continue
        heavy, shape = _item(text, attribute)
        if shape[:1] == [topo_shape[0]]:
            attributes.append((attribute.get("Name", ""), heavy))
    return Layout(
        cell_type=cell_type,
        n_cells=topo_shape[0],
        nodes_per_cell=topo_shape[1],
        n_points=geo_shape[0],
        topology=topo_item,
        geometry=geo_item,
        cell_attributes=tuple(attributes),
    )


def _refused(path: str, why: str) -> InputError:
    return InputError(f"{path}: cannot read in slices: {why}; audit it whole without --slices")


def _item(path: str, parent: ET.Element) -> tuple[Heavy, list[int]]:
    """The HDF5 dataset and dimensions of the one ``DataItem`` under ``parent``."""
    item = parent.find("DataItem")
    if item is None:
        raise _refused(path, f"a {parent.tag} has no DataItem")
    if item.get("Format", "XML") != "HDF":
        raise _refused(path, f"a {parent.tag} keeps its data inline, not in an HDF5 file")
    try:
        shape = [int(v) for v in (item.get("Dimensions") or "").split()]
    except ValueError:
        shape = []
    if not shape:
        raise _refused(path, f"a {parent.tag} DataItem has no Dimensions")
    name, sep, dataset = (item.text or "").strip().partition(":")
    if not sep or not name or not dataset:
        raise _refused(path, f"a {parent.tag} DataItem names no FILE:/DATASET")
    file = Path(name) if Path(name).is_absolute() else Path(path).parent / name
    return Heavy(str(file), dataset), shape


def hyperslab(dataset: Any, first: int, end: int) -> np.ndarray:
    """Rows ``first`` .. ``end - 1`` of an h5py dataset: the one place slices read data
    (a hyperslab: h5py reads only those rows from the file)."""
    return np.asarray(dataset[first:end])


def read_rows(dataset: Any, rows: np.ndarray) -> np.ndarray:
    """The ``rows`` (ascending, distinct) of a dataset, read as runs of nearby rows
    (:data:`GAP`) within blocks of :data:`SPAN` rows, in the order given."""
    if rows.size == 0:
        return np.zeros((0, *dataset.shape[1:]), dtype=dataset.dtype)
    apart = (np.diff(rows) > GAP + 1) | (np.diff(rows // SPAN) != 0)
    breaks = np.flatnonzero(apart) + 1
    starts = np.concatenate([[0], breaks])
    ends = np.concatenate([breaks, [rows.size]])
    pieces = []
    for s, e in zip(starts.tolist(), ends.tolist()):  # runs, not rows
        first, last = int(rows[s]), int(rows[e - 1])
        block = hyperslab(dataset, first, last + 1)
        pieces.append(block[rows[s:e] - first])
    return np.concatenate(pieces)


def read_slice(piece: XdmfSlice) -> tuple[Any, np.ndarray, int]:
    """(meshio mesh of the slice's elements and the nodes they use, those nodes' rows in
    the file's geometry, the slice's first element row)."""
    import meshio

    layout = read_layout(piece.path)
    first, end = slice_range(layout.n_cells, piece.index, piece.count)
    with _opened(piece.path, layout) as files:
        cells = _dataset(piece.path, files, layout.topology)
        if cells.shape != (layout.n_cells, layout.nodes_per_cell):
            raise InputError(
                f"{piece.path}: the topology dataset's shape {cells.shape} is not "
                f"the ({layout.n_cells}, {layout.nodes_per_cell}) the file states"
            )
        conn = hyperslab(cells, first, end).astype(np.int64)
        points = _dataset(piece.path, files, layout.geometry)
        if conn.size and (conn.min() < 0 or conn.max() >= points.shape[0]):
            raise InputError(
                f"{piece.path}: an element of the topology names a node row "
                f"outside the geometry's {points.shape[0]} rows"
            )
        rows = np.unique(conn)
        coords = read_rows(points, rows)
        cell_data = {
            name: [hyperslab(_dataset(piece.path, files, heavy), first, end)]
            for name, heavy in layout.cell_attributes
        }
    local = np.searchsorted(rows, conn)
    mesh = meshio.Mesh(coords, [(layout.cell_type, local)], cell_data=cell_data)
    return mesh, rows, first


class _opened:
    """The layout's HDF5 files open for reading (closed on leaving)."""

    def __init__(self, path: str, layout: Layout) -> None:
        self.path, self.layout, self.files = path, layout, {}

    def __enter__(self) -> dict[str, Any]:
        import h5py

        try:
            for name in self.layout.heavy_files:
                self.files[name] = h5py.File(name, "r")
        except OSError as exc:
            self.__exit__()
            raise InputError(
                f"{self.path}: cannot read its heavy data file {name}: {reason(exc)}"
            ) from None
        return self.files

    def __exit__(self, *_: Any) -> None:
        for f in self.files.values():
            f.close()


def _dataset(path: str, files: dict[str, Any], heavy: Heavy) -> Any:
    try:
        return files[heavy.file][heavy.dataset]
    except KeyError:
        raise InputError(
            f"{path}: its heavy data file {heavy.file} has no dataset {heavy.dataset}"
        ) from None


def xdmf_slices(path: str | os.PathLike[str], count: int) -> Any:
    """The :class:`meshaudit.mesh.parts.PartSet` of ``count`` slices of an XDMF file
    (fewer when it has fewer elements; at least one)."""
    from .parts import PartSet

    if count < 1:
        raise InputError(f"--slices must be 1 or more, not {count}")
    text = str(path)
    layout = read_layout(text)
    n = max(1, min(count, layout.n_cells))
    return PartSet(text, tuple(XdmfSlice(text, k, n) for k in range(n)))
