"""The element arrays every later stage works on.

``read`` produces an :class:`ElementMesh`: the node coordinates and one
:class:`ElementBlock` per audited cell block. Nothing here computes a metric.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field

import numpy as np

from ..cells.registry import CELL_TYPES, CellType
from .labels import IN_MEMORY, Numbering

#: meshio cell-type name prefixes by topological dimension (0 points, 1 lines, 2 surfaces,
#: 3 solids). Quadratic and higher-order variants share their linear type's prefix.
_DIMENSION_PREFIXES: tuple[tuple[int, tuple[str, ...]], ...] = (
    (0, ("vertex",)),
    (1, ("line",)),
    (2, ("triangle", "quad", "polygon")),
    (3, ("tetra", "hexahedron", "wedge", "pyramid", "polyhedron")),
)


def cell_dimension(cell_type: str) -> int:
    """Topological dimension of a meshio cell type: 0 vertex, 1 line, 2 surface, 3 solid.

    A type not known here counts as 3, so that cells meshaudit cannot name are reported
    with the volume cells it does not audit (polyhedra) rather than passed over with the
    lines.
    """
    for dim, prefixes in _DIMENSION_PREFIXES:
        if cell_type.startswith(prefixes):
            return dim
    return 3


@dataclass(frozen=True)
class ElementBlock:
    """One block of elements of a single cell type, in file order."""

    cell_type: str
    connectivity: np.ndarray  # (n, k) int64 node indices into ElementMesh.points
    ids: np.ndarray  # (n,) int64: the element's number (see meshaudit.mesh.labels)
    index: np.ndarray  # (n,) int64: 0-based position among audited elements

    @property
    def cell(self) -> CellType:
        """What meshaudit knows about the block's cell type (see :mod:`meshaudit.cells`)."""
        return CELL_TYPES[self.cell_type]

    @property
    def family(self) -> str:
        return CELL_TYPES[self.cell_type].family

    def __len__(self) -> int:
        return int(self.connectivity.shape[0])


@dataclass
class ElementMesh:
    """Node coordinates plus the audited element blocks of one mesh."""

    points: np.ndarray  # (n_points, 3) float64
    blocks: list[ElementBlock]
    skipped: dict[str, int] = field(default_factory=dict)  # cell type -> count not audited
    source: str = "<memory>"
    cell_sets: dict[str, np.ndarray] = field(default_factory=dict)  # name -> element indices
    #: The region of each element for the breakdown (see :mod:`meshaudit.mesh.regions`):
    #: names and per-element codes (0 none), or None when the mesh carries no regions.
    file_regions: tuple[tuple[str, ...], np.ndarray] | None = None
    #: Nodes that cells not audited (lines, vertices, polygons...) refer to: not orphans.
    other_nodes: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    #: How elements and nodes are numbered in reports (the file's labels or positions).
    numbering: Numbering = IN_MEMORY

    @property
    def n_elements(self) -> int:
        return sum(len(b) for b in self.blocks)

    @property
    def n_points(self) -> int:
        return int(self.points.shape[0])

    def element_counts(self) -> dict[str, int]:
        counts: dict[str, int] = {}
        for b in self.blocks:
            counts[b.cell_type] = counts.get(b.cell_type, 0) + len(b)
        return counts

    def unaudited(self) -> dict[str, int]:
        """Cells of a surface or volume type not audited (polygons, polyhedra, types not
        known): the part of :attr:`skipped` whose quality the audit does not cover."""
        return {t: n for t, n in self.skipped.items() if cell_dimension(t) >= 2}

    def used_nodes(self) -> np.ndarray:
        """Boolean mask (n_points,): which nodes some audited element refers to.

        One scatter per block, O(elements) time and n_points bytes; cheaper than a sort.
        """
        used = np.zeros(self.n_points, dtype=bool)
        for b in self.blocks:
            used[b.connectivity] = True
        return used

    @property
    def has_solids(self) -> bool:
        """Whether some audited block is a solid (dimension 3)."""
        return any(b.cell.dimension == 3 for b in self.blocks)

    def surface_part(self) -> tuple[ElementMesh, np.ndarray | None]:
        """The surface elements (dimension 2) as a mesh of their own, and their report
        positions.

        The mesh-level checks (edges, orientation, overlaps, duplicates) are surface
        checks: a solid's edges are shared by any number of solids, so they would all read
        as non-manifold. Without solids this is the mesh itself and None. Otherwise the
        surface blocks are numbered 0..m-1 in report order and ``positions`` (m,) gives
        each one's report position (so ``ids[positions]`` are their numbers); the nodes the
        solids use count as nodes of other cells (:attr:`other_nodes`), so a node only a
        solid uses is no orphan. A mesh of solids alone gives a surface part with no
        blocks.
        """
        if not self.has_solids:
            return self, None
        part, positions = self._part(2)
        other = np.zeros(self.n_points, dtype=bool)  # a scatter per block, as used_nodes
        other[self.other_nodes] = True
        for b in self.blocks:
            if b.cell.dimension == 3:
                other[b.connectivity] = True
        part.other_nodes = np.flatnonzero(other)
        return part, positions

    def solid_part(self) -> tuple[ElementMesh, np.ndarray]:
        """The solids (dimension 3) as a mesh of their own, numbered 0..s-1 in report
        order, and ``positions`` (s,) their report positions (see :meth:`surface_part`)."""
        return self._part(3)

    def _part(self, dimension: int) -> tuple[ElementMesh, np.ndarray]:
        chosen = [b for b in self.blocks if b.cell.dimension == dimension]
        positions = (
            np.concatenate([b.index for b in chosen]) if chosen else np.zeros(0, dtype=np.int64)
        )
        blocks, start = [], 0
        for b in chosen:
            n = len(b)
            blocks.append(
                ElementBlock(b.cell_type, b.connectivity, b.ids, np.arange(start, start + n))
            )
            start += n
        part = ElementMesh(
            points=self.points,
            blocks=blocks,
            skipped=self.skipped,
            source=self.source,
            other_nodes=self.other_nodes,
            numbering=self.numbering,
        )
        return part, positions

    def chunks(self, size: int) -> Iterator[tuple[ElementBlock, slice]]:
        """Yield (block, slice) pairs covering every element, at most ``size`` per chunk."""
        for block in self.blocks:
            n = len(block)
            for start in range(0, n, size):
                yield block, slice(start, min(start + size, n))
