"""Elements that overlap without sharing their node set (planar meshes).

A conforming planar mesh of convex elements covers each point at most once unless
(a) two neighbours lie on the same side of their shared edge (a fold), (b) more than two
elements meet at an edge, (c) a patch with its own free edges lies on top of other
elements, or (d) an element is not convex (it may reach over its neighbours).
Candidate pairs come from those places only, found by sorting: (a) and (b) from the
edge table, (c) and (d) by bucketing element centroids on a grid and looking around
every element that has a free edge or is not convex. Only candidates go to shapely,
which measures their common area exactly. (Not covered: a fan of valid elements that
wraps twice around an interior node.)

Cost: O(n log n) sorting for the buckets plus shapely work proportional to the number
of elements along free edges (about 4 per cent of a 1000 x 1000 grid's elements are
candidates' neighbours, not the whole mesh).
"""

from __future__ import annotations

import numpy as np

from ..elements import ElementMesh
from ..topology import CORNERS_PER_FAMILY, EdgeTable, sort_keys

#: Elements per slice in :func:`planar_shapes`: bounds its (n, k) temporaries.
SHAPE_CHUNK = 65_536


def element_polygons(mesh: ElementMesh, local: np.ndarray, positions: np.ndarray) -> np.ndarray:
    """shapely polygons (in-plane coordinates ``local`` (n_points, 2)) of the elements at
    ``positions``, made valid where an element crosses itself."""
    import shapely  # on use: a mesh without overlap candidates never needs it

    polys = np.empty(positions.size, dtype=object)
    for block in mesh.blocks:
        k = CORNERS_PER_FAMILY[block.family]
        rows = np.searchsorted(block.index, positions)
        inside = (rows < len(block)) & (block.index[np.minimum(rows, len(block) - 1)] == positions)
        if inside.any():
            conn = block.connectivity[rows[inside], :k]
            polys[inside] = shapely.polygons(local[conn])
    bad = ~shapely.is_valid(polys)
    if bad.any():
        polys[bad] = shapely.make_valid(polys[bad])
    return polys


def node_neighbours(mesh: ElementMesh, elements: np.ndarray) -> np.ndarray:
    """``elements`` plus every element sharing a corner node with one of them.

    A node dragged across its neighbours stretches every element around it, so the
    elements that may overlap are the ones touching the nodes of the suspect elements.
    """
    if elements.size == 0:
        return np.zeros(0, dtype=np.int64)
    marked = np.zeros(mesh.n_points, dtype=bool)
    out = [elements]
    for block in mesh.blocks:
        conn = block.connectivity[:, : CORNERS_PER_FAMILY[block.family]]
        rows = np.searchsorted(block.index, elements)
        mine = (rows < len(block)) & (block.index[np.minimum(rows, len(block) - 1)] == elements)
        marked[conn[rows[mine]]] = True
    for block in mesh.blocks:
        conn = block.connectivity[:, : CORNERS_PER_FAMILY[block.family]]
        out.append(block.index[marked[conn].any(axis=1)])
    return np.unique(np.concatenate(out))


def pairs_on_edges(table: EdgeTable, edges: np.ndarray) -> np.ndarray:
    """(p, 2) every pair of elements using one of ``edges`` (non-manifold edges)."""
    on = np.flatnonzero(np.isin(table.edge, edges))
    on = on[np.argsort(table.edge[on], kind="stable")]
    edge, elem = table.edge[on], table.element[on]
    out = [np.zeros((0, 2), dtype=np.int64)]
    step = 1
    while step < edge.size:
        same = np.flatnonzero(edge[step:] == edge[:-step])
        if same.size == 0:
            break
        out.append(np.stack([elem[same], elem[same + step]], axis=1))
        step += 1
    return np.concatenate(out)


def pairs_near(boxes: np.ndarray, centroids: np.ndarray, around: np.ndarray) -> np.ndarray:
    """(p, 2) pairs (e, f): e in ``around``, f any element whose box overlaps e's box
    with positive area. ``boxes`` (n, 4): xmin, ymin, xmax, ymax; ``centroids`` (n, 2).

    Centroids are bucketed on a grid of cell H, the largest element extent: any element
    overlapping e has its centroid within H of e's box, so at most 4 x 4 cells are read.
    """
    extent = np.maximum(boxes[:, 2] - boxes[:, 0], boxes[:, 3] - boxes[:, 1])
    h = float(extent.max()) if extent.size else 0.0
    if around.size == 0 or h <= 0.0:
        return np.zeros((0, 2), dtype=np.int64)
    origin = centroids.min(axis=0)
    cell = np.floor((centroids - origin) / h).astype(np.int64)
    width = int(cell[:, 1].max()) + 5
    key = cell[:, 0] * width + cell[:, 1]
    order, sorted_key = sort_keys(key, (int(cell[:, 0].max()) + 5) * width)
    lo_cell = np.floor((boxes[around, :2] - h - origin) / h).astype(np.int64)
    hi_cell = np.floor((boxes[around, 2:] + h - origin) / h).astype(np.int64)
    dx, dy = np.meshgrid(np.arange(4), np.arange(4))
    qx = lo_cell[:, :1] + dx.ravel()
    qy = lo_cell[:, 1:] + dy.ravel()
    valid = (qx <= hi_cell[:, :1]) & (qy <= hi_cell[:, 1:]) & (qy >= 0)
    owner = np.broadcast_to(around[:, None], qx.shape)[valid]
    qkey = qx[valid] * width + qy[valid]
    start = np.searchsorted(sorted_key, qkey, side="left")
    count = np.searchsorted(sorted_key, qkey, side="right") - start
    total = int(count.sum())
    offset = np.arange(total) - np.repeat(np.cumsum(count) - count, count)
    e = np.repeat(owner, count)
    f = order[np.repeat(start, count) + offset]
    width_x = np.minimum(boxes[e, 2], boxes[f, 2]) - np.maximum(boxes[e, 0], boxes[f, 0])
    width_y = np.minimum(boxes[e, 3], boxes[f, 3]) - np.maximum(boxes[e, 1], boxes[f, 1])
    tiny = 1e-9 * h
    keep = (e != f) & (width_x > tiny) & (width_y > tiny)
    return np.stack([e[keep], f[keep]], axis=1)


def planar_shapes(
    mesh: ElementMesh, local: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(winding (n,) int8, convex (n,) bool, boxes (n, 4), centroids (n, 2)) of every
    element, from the in-plane node coordinates ``local`` (n_points, 2).

    Winding is the sign of the shoelace area: +1 counter-clockwise about the plane
    normal, -1 clockwise, 0 no area. Convex: every corner turns the way the element
    winds (strictly). Boxes are xmin, ymin, xmax, ymax.
    """
    n = mesh.n_elements
    sign = np.zeros(n, dtype=np.int8)
    convex = np.zeros(n, dtype=bool)
    boxes = np.empty((n, 4))
    centroids = np.empty((n, 2))
    for block, sl in mesh.chunks(SHAPE_CHUNK):
        conn = block.connectivity[sl, : CORNERS_PER_FAMILY[block.family]]
        rows = block.index[sl]
        xs, ys = local[conn, 0], local[conn, 1]
        xn, yn = np.roll(xs, -1, axis=1), np.roll(ys, -1, axis=1)
        dx, dy = xn - xs, yn - ys
        turn = dx * np.roll(dy, -1, axis=1) - dy * np.roll(dx, -1, axis=1)
        twice = (xs * yn - xn * ys).sum(axis=1)
        s = np.sign(twice)
        sign[rows] = s.astype(np.int8)
        convex[rows] = (turn * s[:, None] > 0.0).all(axis=1)
        boxes[rows] = np.stack([xs.min(1), ys.min(1), xs.max(1), ys.max(1)], axis=1)
        centroids[rows, 0] = xs.mean(axis=1)
        centroids[rows, 1] = ys.mean(axis=1)
    return sign, convex, boxes, centroids


def overlapping_pairs(
    mesh: ElementMesh, local: np.ndarray, candidates: np.ndarray, fraction: float
) -> tuple[np.ndarray, np.ndarray]:
    """(pairs (p, 2) ascending, common area (p,)) of candidate pairs whose common area
    exceeds ``fraction`` of the smaller element's area (shapely measures the areas)."""
    if candidates.size == 0:
        return np.zeros((0, 2), dtype=np.int64), np.zeros(0)
    import shapely  # on use, as in element_polygons

    pairs = np.unique(np.sort(candidates, axis=1), axis=0)
    pairs = pairs[pairs[:, 0] != pairs[:, 1]]
    involved, inverse = np.unique(pairs, return_inverse=True)
    inverse = inverse.reshape(pairs.shape)
    polys = element_polygons(mesh, local, involved)
    pa, pb = polys[inverse[:, 0]], polys[inverse[:, 1]]
    common = shapely.area(shapely.intersection(pa, pb))
    smaller = np.minimum(shapely.area(pa), shapely.area(pb))
    hit = (smaller > 0.0) & (common > fraction * smaller)
    return pairs[hit], common[hit]
