"""Nodes that node moves never touch: they stay bit-identical.

- **boundary**: both ends of every surface edge used by one surface element (free
  edges: the outline, holes, cracks left open) or by three or more (non-manifold
  edges), and every corner of a solid face used by one solid (boundary faces);
- **other cells**: every node a cell not audited uses (lines of boundary curves,
  vertices of point loads, polygons);
- **interfaces**: nodes shared by elements of different cell blocks, or by elements
  inside and outside a named region (gmsh physical group, element set);
- **named**: every node of the node sets (meshio ``point_sets``) and element regions the
  user names.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from ..cells.registry import CELL_TYPES
from ..errors import InputError


def _count_keys(keys: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Unique rows of ``keys`` (m, w) and how many times each appears, back per row."""
    if len(keys) == 0:
        return keys, np.zeros(0, dtype=np.int64)
    _, inverse, counts = np.unique(keys, axis=0, return_inverse=True, return_counts=True)
    return keys, counts[inverse.ravel()]


def boundary_nodes(n_points: int, blocks: list[tuple[str, np.ndarray]]) -> np.ndarray:
    """(n_points,) bool: ends of free and non-manifold surface edges and corners of
    boundary solid faces, over the audited ``blocks`` ((cell type, rows))."""
    out = np.zeros(n_points, dtype=bool)
    edges, faces3, faces4 = [], [], []
    for t, d in blocks:
        cell = CELL_TYPES[t]
        if cell.dimension == 2:
            edges.append(np.sort(d[:, cell.edges].reshape(-1, 2), axis=1))
            continue
        for face in cell.faces:
            (faces3 if len(face) == 3 else faces4).append(np.sort(d[:, list(face)], axis=1))
    if edges:
        keys, counts = _count_keys(np.concatenate(edges))
        out[keys[counts != 2].ravel()] = True
    for group in (faces3, faces4):
        if group:
            keys, counts = _count_keys(np.concatenate(group))
            out[keys[counts == 1].ravel()] = True
    return out


def interface_nodes(
    n_points: int, blocks: list[tuple[str, np.ndarray]], regions: dict[str, np.ndarray]
) -> np.ndarray:
    """(n_points,) bool: nodes of elements of more than one block, or of elements on
    both sides of a region's border. ``regions``: name -> report rows of its elements."""
    seen = np.zeros(n_points, dtype=np.int64)
    for _t, d in blocks:
        mask = np.zeros(n_points, dtype=bool)
        mask[d] = True
        seen += mask
    out = seen > 1
    flat = [d for _, d in blocks]
    starts = np.cumsum([0] + [len(d) for d in flat])
    for members in regions.values():
        inside = np.zeros(n_points, dtype=bool)
        outside = np.zeros(n_points, dtype=bool)
        member = np.zeros(starts[-1], dtype=bool)
        member[members] = True
        for k, d in enumerate(flat):
            m = member[starts[k] : starts[k + 1]]
            inside[d[m]] = True
            outside[d[~m]] = True
        out |= inside & outside
    return out


def named_nodes(
    n_points: int,
    names: Iterable[str],
    point_sets: dict[str, np.ndarray],
    regions: dict[str, np.ndarray],
    blocks: list[tuple[str, np.ndarray]],
) -> np.ndarray:
    """(n_points,) bool: nodes of the named node sets or element regions; an unknown
    name is bad input."""
    out = np.zeros(n_points, dtype=bool)
    starts = np.cumsum([0] + [len(d) for _, d in blocks])
    for name in names:
        if name in point_sets:
            out[point_sets[name]] = True
        elif name in regions:
            member = np.zeros(starts[-1], dtype=bool)
            member[regions[name]] = True
            for k, (_, d) in enumerate(blocks):
                out[d[member[starts[k] : starts[k + 1]]]] = True
        else:
            known = sorted({*point_sets, *regions})
            listed = ", ".join(known) if known else "none"
            raise InputError(f"--keep {name!r}: no node set or region of that name ({listed})")
    return out
