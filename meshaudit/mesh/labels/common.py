"""What a light label pass returns, and the check that it matches meshio's cells."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

#: Rows per block whose node labels are compared with meshio's connectivity.
SAMPLED_ROWS = 64


class LabelsUnavailable(Exception):
    """The file's labels cannot be matched with meshio's cells (the reason is the text)."""


@dataclass
class LabelBlock:
    """The labels of one cell block, in meshio's block order and row order.

    ``nodes_of(rows)`` returns the node labels the file lists for those rows (k per row,
    in the file's node order for the element), for the alignment check.
    """

    cell_type: str
    labels: np.ndarray  # (n,) int64
    nodes_of: Callable[[np.ndarray], np.ndarray]


@dataclass
class FileLabels:
    """Element labels per meshio cell block and node labels per meshio point."""

    blocks: list[LabelBlock]
    nodes: np.ndarray  # (n_points,) int64


def sampled_rows(n: int) -> np.ndarray:
    """Up to :data:`SAMPLED_ROWS` rows spread over ``0..n-1``, first and last included."""
    if n <= SAMPLED_ROWS:
        return np.arange(n, dtype=np.int64)
    return np.unique(np.linspace(0, n - 1, SAMPLED_ROWS).round().astype(np.int64))


def check_alignment(mesh: Any, found: FileLabels) -> None:
    """Raise :class:`LabelsUnavailable` unless ``found`` lines up with meshio's mesh:
    the same number of points, the same blocks (type and length, in order), and, for
    rows spread over every block, the same nodes (meshio's connectivity mapped through
    the node labels equals the node labels the file lists, as sets: meshio may reorder
    the nodes of some cell types)."""
    if found.nodes.shape != (len(mesh.points),):
        raise LabelsUnavailable(f"{found.nodes.size} node labels for {len(mesh.points)} nodes read")
    if len(found.blocks) != len(mesh.cells):
        raise LabelsUnavailable(f"{len(found.blocks)} cell blocks found, {len(mesh.cells)} read")
    for k, (mine, cells) in enumerate(zip(found.blocks, mesh.cells)):
        data = cells.data
        if mine.cell_type != cells.type or len(mine.labels) != len(data):
            raise LabelsUnavailable(
                f"cell block {k}: {len(mine.labels)} {mine.cell_type} found, "
                f"{len(data)} {cells.type} read"
            )
        if not isinstance(data, np.ndarray) or data.ndim != 2 or len(data) == 0:
            continue
        rows = sampled_rows(len(data))
        conn = np.asarray(data[rows], dtype=np.int64)
        if conn.min() < 0 or conn.max() >= found.nodes.size:
            raise LabelsUnavailable(f"cell block {k} refers to nodes out of range")
        listed = np.asarray(mine.nodes_of(rows))
        if listed.shape != conn.shape or not np.array_equal(
            np.sort(found.nodes[conn], axis=1), np.sort(listed, axis=1)
        ):
            raise LabelsUnavailable(f"cell block {k}: nodes do not match the cells read")
