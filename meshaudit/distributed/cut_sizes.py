"""The size ratio across part cuts: the sizes of the elements on each part's cut, swapped
between parts before the parts are audited.

``size_ratio`` (:func:`meshaudit.mesh.neighbours.size_ratio`) is the largest size jump
between an element and its neighbours across its edges (solids: faces). A part alone
sees its elements' neighbours inside the part only; an element on a cut also has
neighbours in other parts. Since the ratio is a largest over neighbours, the whole-mesh
value is the larger of the part's own and the largest against the neighbours beyond the
cut, so only the cut needs to travel:

1. :func:`cut_sizes` (on a worker, one per part, in the whole mesh's frame): the part's
   free sides (edges one of its surface elements uses, faces one of its solids uses),
   each keyed by its corner nodes' global ids (parts without ids: their coordinates,
   matched when equal bit for bit), with the size h of the element using it
   (:func:`meshaudit.mesh.neighbours.characteristic_length` of its area or volume, as
   the part's audit measures it) and whether that size counts (an invalid element's
   does not);
2. :func:`outside_ratios` (on the driver): the sides of different parts with the same
   key are one side of the whole mesh; each use's worst ratio against the others on
   its side, then each element's worst over its sides, per part;
3. each part's audit takes those (:func:`meshaudit.engine.run.audit_elements`,
   ``outside_ratio``) and judges the finished ratio with the rest, so verdicts, scores,
   statistics and element reports are those of the whole mesh.

Travelling: per part, one row per free side (its key, 4 ids or 12 coordinates, the
element's position, h and a flag) out, and one (position, ratio) per cut element back.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..judge.verdicts import INVALID_FLAGS
from ..mesh.elements import ElementBlock, ElementMesh
from ..mesh.frames import Frame
from ..mesh.neighbours import characteristic_length
from ..results.report import FLAG_BIT


@dataclass
class CutSizes:
    """The free sides of one part and the sizes of the elements using them."""

    keys: np.ndarray  # (r, w) float64 side keys (ids or coordinates, +inf padded)
    rows: np.ndarray  # (r,) the using element's position in the part
    h: np.ndarray  # (r,) its characteristic length
    counted: np.ndarray  # (r,) bool: its size counts for its neighbours (valid element)


def free_sides(mesh: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """(corner nodes (r, 4), -1 padded, of each side one element of ``mesh`` uses alone;
    (r,) that element's position): the sides the size ratio compares neighbours across,
    from the same tables (:func:`meshaudit.mesh.topology.edge_table` of the surface
    elements, :func:`meshaudit.mesh.faces.face_table` of the solids)."""
    from ..mesh.faces import face_table
    from ..mesh.topology import edge_table

    rows, users = [], []
    surface, positions = mesh.surface_part()
    if surface.n_elements:
        table = edge_table(surface)
        alone = np.flatnonzero(table.uses[table.edge] == 1)
        pad = np.full((alone.size, 4), -1, dtype=np.int64)
        pad[:, :2] = table.nodes[table.edge[alone]]
        element = table.element[alone].astype(np.int64)
        rows.append(pad)
        users.append(element if positions is None else positions[element])
    if mesh.has_solids:
        solid, at = mesh.solid_part()
        faces = face_table(solid)
        alone = faces.boundary()
        rows.append(faces.key[faces.face[alone]].astype(np.int64))
        users.append(at[faces.element[alone]])
    if not rows:
        return np.zeros((0, 4), dtype=np.int64), np.zeros(0, dtype=np.int64)
    return np.concatenate(rows), np.concatenate(users)


def side_keys(nodes: np.ndarray, points: np.ndarray, gids: np.ndarray | None) -> np.ndarray:
    """Keys of sides (``nodes`` (r, 4), -1 padded) the parts agree on: their corners'
    global ids, sorted ((r, 4)); without ids, their corners' coordinates in
    lexicographic order ((r, 12)); +inf padded."""
    present = nodes >= 0
    safe = np.where(present, nodes, 0)
    if gids is not None:
        keys = np.where(present, gids[safe].astype(np.float64), np.inf)
        return np.sort(keys, axis=1)
    rank = np.empty(points.shape[0], dtype=np.int64)
    rank[np.lexsort(points.T[::-1])] = np.arange(points.shape[0])
    order = np.argsort(np.where(present, rank[safe], np.iinfo(np.int64).max), axis=1)
    ordered = np.take_along_axis(safe, order, axis=1)
    keep = np.take_along_axis(present, order, axis=1)
    xyz = np.where(keep[:, :, None], points[ordered], np.inf)
    return xyz.reshape(nodes.shape[0], 12)


def cut_sizes(
    mesh: ElementMesh,
    gids: np.ndarray | None,
    frame: Frame,
    profile: object = None,
    sides: tuple[np.ndarray, np.ndarray] | None = None,
) -> CutSizes:
    """The part's free sides and the sizes of the elements on them (module docstring),
    those elements measured as the part's audit measures them (the engine, on them
    alone: every metric is a function of the element's own nodes); ``sides``: what
    :func:`free_sides` gives, when worked out already."""
    from ..engine.run import audit_elements

    nodes, user = free_sides(mesh) if sides is None else sides
    rows = np.unique(user)
    if rows.size == 0:
        empty = np.zeros(0, dtype=np.int64)
        return CutSizes(np.zeros((0, 4)), empty, np.zeros(0), np.zeros(0, dtype=bool))
    blocks, conns = [], []
    for block in mesh.blocks:
        mine = np.isin(block.index, rows)
        if mine.any():
            at = np.searchsorted(rows, block.index[mine])
            blocks.append((block.cell_type, block.ids[mine], at))
            conns.append(block.connectivity[mine])
    used = np.unique(np.concatenate([c.ravel() for c in conns]))  # only their nodes
    rim = ElementMesh(
        points=mesh.points[used],
        blocks=[
            ElementBlock(t, np.searchsorted(used, c), ids, at)
            for (t, ids, at), c in zip(blocks, conns)
        ],
        source=mesh.source,
    )
    blocks = rim.blocks
    if not any(b.cell.dimension == 2 for b in blocks) and frame.kind != "solid":
        frame = Frame("solid")
    report = audit_elements(rim, profile, workers=1, frame=frame)  # type: ignore[arg-type]
    solid = np.zeros(rows.size, dtype=bool)
    for b in blocks:
        solid[b.index] = b.cell.dimension == 3
    size = np.where(solid, report.metrics["volume"], report.metrics["area"])
    h = characteristic_length(size, np.where(solid, 3, 2))
    invalid = np.uint32(sum(1 << FLAG_BIT[name] for name in INVALID_FLAGS))
    counted = (report.flag_bits & invalid) == 0
    at = np.searchsorted(rows, user)
    return CutSizes(side_keys(nodes, mesh.points, gids), user, h[at], counted[at])


def outside_ratios(parts: Sequence[CutSizes]) -> list[tuple[np.ndarray, np.ndarray]]:
    """Per part, (element positions, size ratio against their neighbours in other parts)
    (module docstring): the sides of different parts with equal keys are one side; a
    use's ratio there is that of :func:`meshaudit.mesh.neighbours.size_ratio` for a side
    worked out by its extremes (an uncounted element still reads its neighbours' sizes
    against its own)."""
    none = (np.zeros(0, dtype=np.int64), np.zeros(0))
    width = max((p.keys.shape[1] for p in parts), default=4)
    if not any(p.rows.size for p in parts):
        return [none for _ in parts]
    keys = np.concatenate([_widened(p.keys, width) for p in parts])
    part = np.concatenate([np.full(p.rows.size, k) for k, p in enumerate(parts)])
    rows = np.concatenate([p.rows for p in parts])
    h = np.concatenate([p.h for p in parts])
    seen = np.where(np.concatenate([p.counted for p in parts]), h, np.nan)
    _, group = np.unique(keys, axis=0, return_inverse=True)
    group = group.ravel()
    k = int(group.max()) + 1
    lo = np.full(k, np.iinfo(np.int64).max)
    hi = np.full(k, -1)
    np.minimum.at(lo, group, part)
    np.maximum.at(hi, group, part)
    across = (lo != hi)[group]  # a side of two parts or more: on a cut
    g, mine, part, rows = group[across], h[across], part[across], rows[across]
    high = np.full(k, -np.inf)
    low = np.full(k, np.inf)
    np.fmax.at(high, g, seen[across])
    np.fmin.at(low, g, seen[across])
    with np.errstate(divide="ignore", invalid="ignore"):
        worst = np.fmax(high[g] / mine, mine / low[g])
    worst[worst < 1.0] = 1.0
    out = []
    for p in range(len(parts)):  # parts, not elements
        at = part == p
        if not at.any():
            out.append(none)
            continue
        elements, index = np.unique(rows[at], return_inverse=True)
        ratio = np.full(elements.size, np.nan)
        np.fmax.at(ratio, index.ravel(), worst[at])
        out.append((elements, ratio))
    return out


def _widened(keys: np.ndarray, width: int) -> np.ndarray:
    if keys.shape[1] == width:
        return keys
    pad = np.full((keys.shape[0], width), np.inf)
    pad[:, : keys.shape[1]] = keys
    return pad
