"""The mesh being repaired: every cell block of the file (lines and vertices too), its
cell data, cell sets, point data and point sets, and the file's element and node numbers,
kept together so that dropping rows or nodes reindexes all of them at once.

Repairs change the connectivity (order of a row's nodes, which node a row uses), drop rows
(duplicate elements) or nodes (orphans), and move nodes. Nothing else of the file changes;
:meth:`Working.to_meshio` gives it back as a ``meshio.Mesh`` carrying the file's numbers as
``cells_id``/``points_id`` (read back by the audit) and as the data arrays ``element_id``
and ``node_id`` (written by formats that keep data arrays).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..cells.registry import CELL_TYPES
from ..mesh.elements import ElementMesh

#: Names of the data arrays that carry the file's numbers into the written file.
ELEMENT_ID = "element_id"
NODE_ID = "node_id"


@dataclass
class Working:
    points: np.ndarray  # (n, 3) float64
    point_dim: int  # coordinates in the file: 2 or 3
    cells: list[tuple[str, np.ndarray]]
    cell_data: dict[str, list[np.ndarray]]
    cell_sets: dict[str, list[Any]]
    point_data: dict[str, np.ndarray]
    point_sets: dict[str, np.ndarray]
    field_data: dict[str, Any]
    cell_ids: list[np.ndarray]  # per block: the file's element numbers
    node_ids: np.ndarray  # per node: the file's node numbers
    origin: list[np.ndarray]  # per block: each row's row in the input block

    @classmethod
    def from_mesh(cls, raw: Any, elements: ElementMesh) -> Working:
        """From the meshio mesh read and the element arrays the audit built from it."""
        numbering = elements.numbering
        points = np.asarray(raw.points, dtype=np.float64)
        dim = points.shape[1]
        if dim == 2:
            points = np.hstack([points, np.zeros((len(points), 1))])
        cells, ids, first = [], [], 0
        for block_no, block in enumerate(raw.cells):
            data = np.asarray(block.data).astype(np.int64, copy=True)
            cells.append((block.type, data))
            ids.append(numbering.block_numbers(block_no, first, len(data)))
            first += len(data)
        point_data = {k: np.asarray(v) for k, v in (raw.point_data or {}).items() if k != NODE_ID}
        cell_data = {
            k: [np.asarray(a) for a in v]
            for k, v in (raw.cell_data or {}).items()
            if k != ELEMENT_ID
        }
        return cls(
            points=points.copy(),
            point_dim=dim,
            cells=cells,
            cell_data=cell_data,
            cell_sets={k: list(v) for k, v in (getattr(raw, "cell_sets", None) or {}).items()},
            point_data=point_data,
            point_sets={
                k: np.asarray(v, dtype=np.int64).ravel()
                for k, v in (getattr(raw, "point_sets", None) or {}).items()
            },
            field_data=dict(raw.field_data or {}),
            cell_ids=ids,
            node_ids=numbering.node_numbers(np.arange(len(points))),
            origin=[np.arange(len(c[1])) for c in cells],
        )

    @property
    def n_points(self) -> int:
        return int(self.points.shape[0])

    def audited_blocks(self) -> list[int]:
        """Block numbers of the audited blocks (a known cell type, not empty), in order:
        report row r is row r - offset of the block holding it."""
        return [k for k, (t, d) in enumerate(self.cells) if t in CELL_TYPES and len(d)]

    def rows(self) -> list[tuple[int, int, int]]:
        """(block number, first report row, count) of every audited block."""
        out, start = [], 0
        for k in self.audited_blocks():
            n = len(self.cells[k][1])
            out.append((k, start, n))
            start += n
        return out

    def set_rows(self, block_no: int, rows: np.ndarray, data: np.ndarray) -> None:
        """Replace the connectivity of ``rows`` of one block."""
        self.cells[block_no][1][rows] = data

    def keep_rows(self, block_no: int, keep: np.ndarray) -> None:
        """Keep only the rows of one block where ``keep`` (bool) is true; data and sets of
        the block follow."""
        t, data = self.cells[block_no]
        self.cells[block_no] = (t, data[keep])
        for arrays in self.cell_data.values():
            if block_no < len(arrays):
                arrays[block_no] = np.asarray(arrays[block_no])[keep]
        new_row = np.cumsum(keep) - 1
        for sets in self.cell_sets.values():
            if block_no < len(sets) and sets[block_no] is not None:
                rows = np.asarray(sets[block_no]).astype(np.int64).ravel()
                rows = rows[(rows >= 0) & (rows < len(keep))]
                sets[block_no] = new_row[rows[keep[rows]]]
        self.cell_ids[block_no] = self.cell_ids[block_no][keep]
        self.origin[block_no] = self.origin[block_no][keep]

    def map_nodes(self, target: np.ndarray) -> None:
        """Make every cell use node ``target[i]`` where it used node i (merging)."""
        self.cells = [(t, target[d]) for t, d in self.cells]
        for name, members in self.point_sets.items():
            self.point_sets[name] = np.unique(target[members])

    def keep_nodes(self, keep: np.ndarray) -> None:
        """Drop the nodes where ``keep`` is false (no cell may use them)."""
        new_index = np.cumsum(keep) - 1
        self.cells = [(t, new_index[d]) for t, d in self.cells]
        self.points = self.points[keep]
        self.point_data = {k: v[keep] for k, v in self.point_data.items()}
        for name, members in self.point_sets.items():
            self.point_sets[name] = new_index[members[keep[members]]]
        self.node_ids = self.node_ids[keep]

    def used_nodes(self) -> np.ndarray:
        """(n,) bool: nodes some cell of any block uses."""
        used = np.zeros(self.n_points, dtype=bool)
        for _, data in self.cells:
            used[data] = True
        return used

    def to_meshio(self, with_ids: bool = True) -> Any:
        """The repaired mesh as a ``meshio.Mesh`` (see the module docstring)."""
        import meshio

        cell_data = {k: [np.asarray(a) for a in v] for k, v in self.cell_data.items()}
        point_data = dict(self.point_data)
        if with_ids:
            cell_data[ELEMENT_ID] = [ids.copy() for ids in self.cell_ids]
            point_data[NODE_ID] = self.node_ids.copy()
        mesh = meshio.Mesh(
            self.points[:, : self.point_dim].copy(),
            [(t, d.copy()) for t, d in self.cells],
            point_data=point_data,
            cell_data=cell_data,
            field_data=dict(self.field_data),
            point_sets={k: v.copy() for k, v in self.point_sets.items()},
            cell_sets={k: list(v) for k, v in self.cell_sets.items()},
        )
        mesh.cells_id = [ids.copy() for ids in self.cell_ids]
        mesh.points_id = self.node_ids.copy()
        return mesh
