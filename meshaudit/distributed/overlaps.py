"""Overlaps between elements of different parts (planar meshes).

One file's overlap check (:mod:`meshaudit.mesh_checks.overlap`) looks around every
element with a free edge for elements whose boxes meet it and measures the common area
of those pairs. Across parts the same is done with the parts' free-edge elements as
probes, without a round of its own:

1. each part's survey sends the corners of its surface elements that have a free edge
   in the part (:func:`rim_polygons`; the cut is free within a part);
2. the driver gives each part the probes of the other parts whose boxes meet the part's
   box (:func:`probes_for`);
3. each part's audit measures its own elements against them (:func:`against_probes`:
   the single-file box grid, separating-line test and exact common area, with the
   single-file overlap fraction) and sends back the pairs;
4. the driver keeps each pair once, leaves out elements repeated across parts (halo
   copies, reported as duplicates) and makes the ``overlapping_elements`` finding,
   merged with the parts' own.

Neighbours across a cut share a side or a corner: the separating-line test puts them
apart exactly, as in one file. Travelling: the corners of the free-edge elements (12
numbers each) to the driver, to each part those of its neighbours near it, back the
pairs found.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..judge.finding_kinds import FindingSettings
from ..mesh.elements import ElementBlock, ElementMesh
from ..mesh.frames import Frame
from ..mesh_checks.findings import MESSAGE_IDS, Finding


@dataclass
class Probes:
    """Surface elements of other parts with a free edge: ``xyz`` (q, 4, 3) corners
    (a triangle's fourth NaN), ``index`` (q,) their whole-mesh positions."""

    xyz: np.ndarray
    index: np.ndarray

    @classmethod
    def none(cls) -> Probes:
        return cls(np.zeros((0, 4, 3)), np.zeros(0, dtype=np.int64))


def rim_polygons(mesh: ElementMesh, users: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(positions (r,), corners (r, 4, 3), NaN padded) of the surface elements of
    ``mesh`` among ``users`` (positions of elements with a free side)."""
    rows = np.unique(users)
    xyz = np.full((rows.size, 4, 3), np.nan)
    for block in mesh.blocks:
        if block.cell.dimension != 2:
            continue
        mine = np.isin(block.index, rows)
        if not mine.any():
            continue
        k = block.cell.n_corners
        at = np.searchsorted(rows, block.index[mine])
        xyz[at, :k] = mesh.points[block.connectivity[mine][:, :k]]
    keep = ~np.isnan(xyz[:, 0, 0])
    return rows[keep], xyz[keep]


def probes_for(
    rims: Sequence[tuple[np.ndarray, np.ndarray]],
    offsets: Sequence[int],
    low: Sequence[np.ndarray],
    high: Sequence[np.ndarray],
) -> list[Probes]:
    """Per part, the other parts' free-edge elements (``rims``: part-local positions
    and corners; ``offsets``: each part's first whole-mesh position) whose boxes meet
    the part's box (``low``, ``high``: its used surface nodes' extremes), widened by
    1e-9 of the extent for rounding."""
    if not rims:
        return []
    index = np.concatenate([r + o for (r, _), o in zip(rims, offsets)])
    xyz = np.concatenate([x for _, x in rims])
    part = np.concatenate([np.full(r.size, k) for k, (r, _) in enumerate(rims)])
    lo, hi = np.nanmin(xyz, axis=1), np.nanmax(xyz, axis=1)
    finite = [b for b in (*low, *high) if np.isfinite(b).all()]
    extent = float(np.abs(np.array(finite)).max()) if finite else 0.0
    slack = 1e-9 * extent
    out = []
    for k in range(len(rims)):  # parts, not elements
        if not np.isfinite(low[k]).all():
            out.append(Probes.none())
            continue
        near = (
            (part != k) & (hi >= low[k] - slack).all(axis=1) & (lo <= high[k] + slack).all(axis=1)
        )
        out.append(Probes(xyz[near], index[near]))
    return out


def against_probes(
    surface: ElementMesh,
    positions: np.ndarray | None,
    offset: int,
    probes: Probes,
    frame: Frame,
    settings: FindingSettings,
) -> np.ndarray:
    """(k, 2) whole-mesh positions (own element, probe) of the part's surface elements
    overlapping a probe by more than the overlap fraction of the smaller one: the
    probes added to the part as elements of their own, then the single-file grid,
    separating-line test and exact common area."""
    from ..mesh_checks.overlap import BoxGrid, overlapping_pairs, planar_shapes

    none = np.zeros((0, 2), dtype=np.int64)
    q, m = probes.index.size, surface.n_elements
    if q == 0 or m == 0 or frame.axes is None:
        return none
    corners = np.isfinite(probes.xyz[:, :, 0]).sum(axis=1)
    first = surface.n_points
    points = np.concatenate([surface.points, np.nan_to_num(probes.xyz.reshape(-1, 3))])
    node = first + 4 * np.arange(q)[:, None] + np.arange(4)[None, :]
    blocks = list(surface.blocks)
    for k, cell in ((3, "triangle"), (4, "quad")):
        rows = np.flatnonzero(corners == k)
        if rows.size:
            blocks.append(ElementBlock(cell, node[rows, :k], rows, m + rows))
    both = ElementMesh(points=points, blocks=blocks, source=surface.source)
    shapes = planar_shapes(both, frame.axes)
    grid = BoxGrid.build(shapes.boxes)
    near = grid.pairs_near(m + np.arange(q), shapes.space)
    near = near[(near[:, 1] < m)]  # a probe and an element of the part
    pairs, _ = overlapping_pairs(both, shapes, near, settings.overlap_fraction)
    if pairs.size == 0:
        return none
    own, probe = pairs[:, 0], pairs[:, 1] - m
    own = own if positions is None else positions[own]
    return np.stack([own + offset, probes.index[probe]], axis=1)


def overlap_finding(
    pairs: np.ndarray,
    known: tuple[np.ndarray, np.ndarray],
    copies: np.ndarray,
    settings: FindingSettings,
) -> Finding | None:
    """The ``overlapping_elements`` finding of the pairs (whole-mesh positions) the
    parts found against each other's probes: each pair once, none with a repeated
    element; ``known``: (positions, element numbers) covering every element of them."""
    if pairs.size == 0:
        return None
    pairs = np.unique(np.sort(pairs, axis=1), axis=0)
    pairs = pairs[~np.isin(pairs, copies).any(axis=1)]
    if pairs.size == 0:
        return None
    positions, first = np.unique(known[0], return_index=True)
    labelled = known[1][first][np.searchsorted(positions, pairs)]
    text = ", ".join(f"{a}/{b}" for a, b in labelled[:MESSAGE_IDS])
    index = np.unique(pairs)
    ids = np.unique(labelled)
    return Finding(
        kind="overlapping_elements",
        severity=settings.severity["overlapping_elements"],
        count=len(pairs),
        element_ids=ids,
        node_ids=np.zeros(0, dtype=np.int64),
        message=f"{len(pairs)} element pair(s) overlap across parts: {text}",
        element_index=index,
        pairs=labelled,
    )
