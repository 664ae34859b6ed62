"""Elements that overlap without sharing their node set (planar meshes).

A conforming planar mesh of convex elements covers each point at most once unless
(a) two neighbours lie on the same side of their shared edge (a fold), (b) more than two
elements meet at an edge, (c) a patch with its own free edges lies on top of other
elements, or (d) an element is not convex (it may reach over its neighbours).
Candidate pairs come from those places only, found by sorting: (a) and (b) from the
edge table, (c) and (d) by bucketing element box centres on a grid and looking around
every element that has a free edge or is not convex. Only candidates go to shapely,
which measures their common area exactly. (Not covered: a fan of valid elements that
wraps twice around an interior node.)

Cost: O(n log n) sorting for the buckets plus shapely work proportional to the number
of elements along free edges (about 4 per cent of a 1000 x 1000 grid's elements are
candidates' neighbours, not the whole mesh).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..arrays import unique_values
from ..mesh.elements import ElementMesh
from ..mesh.frames import anchor
from ..mesh.topology import EdgeTable, corner_rows, sort_keys
from . import budget

#: Elements per slice in :func:`planar_shapes`: bounds its (n, k) temporaries.
SHAPE_CHUNK = 65_536
#: Candidate pairs shapely may measure whatever the input size (about 6 to 30 us each),
#: plus :data:`~meshaudit.mesh_checks.budget.PER_ITEM` per element; past it the audit is
#: refused (a pile of elements on one another).
SHAPE_PAIRS = 1 << 18


def element_polygons(mesh: ElementMesh, shapes: PlanarShapes, positions: np.ndarray) -> np.ndarray:
    """shapely polygons (plane coordinates of ``shapes``) of the elements at
    ``positions``, made valid where an element crosses itself."""
    import shapely

    polys = np.empty(positions.size, dtype=object)
    for where, conn in corner_rows(mesh, positions):
        polys[where] = shapely.polygons(shapes.plane(mesh.points[conn]))
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
        conn = block.connectivity[:, : block.cell.n_corners]
        rows = np.searchsorted(block.index, elements)
        mine = (rows < len(block)) & (block.index[np.minimum(rows, len(block) - 1)] == elements)
        marked[conn[rows[mine]]] = True
    for block in mesh.blocks:
        conn = block.connectivity[:, : block.cell.n_corners]
        out.append(block.index[marked[conn].any(axis=1)])
    return unique_values(np.concatenate(out))


def pairs_on_edges(table: EdgeTable, edges: np.ndarray, points: np.ndarray) -> np.ndarray:
    """(p, 2) every pair of elements using one of ``edges`` (non-manifold edges).

    k elements on one edge make k (k - 1) / 2 pairs: past
    :func:`~meshaudit.mesh_checks.budget.allowance` of the edges (thousands of elements
    on one edge) the audit is refused, naming the most crowded edge's midpoint
    (``points``: node coordinates)."""
    uses = table.uses[edges].astype(np.int64)
    total = int((uses * (uses - 1) // 2).sum())
    if total > budget.allowance(table.n_edges):
        worst = table.nodes[edges[int(np.argmax(uses))]]
        budget.refuse(
            "overlap check",
            total,
            "element",
            points[worst].mean(axis=0),
            f"{int(uses.max()):,} elements on one edge",
            ["overlapping_elements"],
        )
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


@dataclass(frozen=True)
class BoxGrid:
    """Element boxes bucketed on a square grid of cell ``h``.

    An element whose box is at most ``h`` across is entered in the cell of its box
    centre, a larger one in every cell its box covers. If element f's box meets element
    e's box, f has an entry in a cell meeting e's box widened by h/2 on every side (a
    small f: its centre is within h/2 of each point of its box, so of a point the two
    boxes share; a large f: the cells it covers include that point's), so
    :meth:`pairs_near` reads only the cells meeting e's box widened by h/2 (plus
    ``slack``, 1e-9 of the boxes' extent from the origin, far more than rounding can
    move a centre or a cell boundary): at most 3 x 3 for an element up to h across.
    ``h`` is twice the median element extent, doubled while the large elements' entries
    pass twice the number of elements (a few very large elements among small ones), so
    the grid follows the typical element, not the largest.

    Built from every element (:meth:`build`), so it can be built on another thread
    while the other checks run; queried for the few elements that need it. The entries
    are binned by their integer cell keys and never sorted as a whole: a query marks the
    cells it reads (a table of flags over the cell keys) and sorts only the entries in
    those cells (elements near free edges and suspects: a small part of a sane mesh).
    """

    boxes: np.ndarray  # (n, 4) xmin, ymin, xmax, ymax
    h: float
    slack: float  # added to the h/2 a query widens a box by (rounding)
    origin: np.ndarray  # (2,) corner of cell (0, 0)
    width: int  # cells per grid column (key = column * width + row)
    entry: np.ndarray  # (m,) element of each entry, in no particular order
    key: np.ndarray  # (m,) its cell key, in [0, bound)
    bound: int = 1  # cell keys are below this

    @classmethod
    def build(cls, boxes: np.ndarray) -> BoxGrid:
        extent = np.maximum(boxes[:, 2] - boxes[:, 0], boxes[:, 3] - boxes[:, 1])
        sample = extent[:: max(1, extent.size // 65_536)]  # the median of a strided sample
        sized = sample[sample > 0.0]
        if sized.size == 0:
            sized = extent[extent > 0.0]
        if sized.size == 0:  # no element has a box with room inside: nothing overlaps
            empty = np.zeros(0, dtype=np.int64)
            return cls(boxes, 0.0, 0.0, np.zeros(2), 1, empty, empty)
        low = boxes[:, :2].min(axis=0)
        span = boxes[:, 2:].max(axis=0) - low
        limit = 2 * boxes.shape[0] + 4096
        h = 2.0 * float(np.median(sized))
        for _ in range(2100):  # enough doublings to pass any float extent
            large = np.flatnonzero(extent > h)
            first = np.floor((boxes[large, :2] - low) / h)
            covered = np.floor((boxes[large, 2:] - low) / h) - first + 1.0
            cells = np.prod(np.floor(span / h) + 6.0)
            if float(covered.prod(axis=1).sum()) <= limit and cells < 2.0**62:
                break
            h *= 2.0
        slack = 1e-9 * (float(np.abs(boxes).max()) + h)
        origin = low - 2.0 * h  # queries reach below the lowest box
        width = int(np.floor(span[1] / h)) + 6
        centre = boxes[:, :2] + boxes[:, 2:]
        centre *= 0.5
        centre -= origin
        centre /= h
        cell = np.floor(centre, out=centre).astype(np.int64)
        del centre
        key = cell[:, 0] * width
        key += cell[:, 1]
        del cell
        bound = (int(np.floor(span[0] / h)) + 6) * width
        if large.size == 0:
            entry = np.arange(key.size, dtype=np.int64)
            return cls(boxes, h, slack, origin, width, entry, key, bound)
        small = np.flatnonzero(extent <= h)
        lo = np.floor((boxes[large, :2] - origin) / h).astype(np.int64)
        span_cells = np.floor((boxes[large, 2:] - origin) / h).astype(np.int64) - lo + 1
        row, k = budget.expand(np.zeros(large.size, dtype=np.int64), span_cells.prod(axis=1))
        across, up = np.divmod(k, span_cells[row, 1])
        covers = (lo[row, 0] + across) * width + lo[row, 1] + up
        entry = np.concatenate([small, large[row]])
        return cls(
            boxes, h, slack, origin, width, entry, np.concatenate([key[small], covers]), bound
        )

    def in_cells(self, cells: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(entry, key) of the entries in the cells ``cells`` (distinct keys,
        ascending), in ascending cell key: a flag per cell key when the keys' range is
        within a few times the entries (else a binary search of each key among
        ``cells``), then a sort of those entries only."""
        key = self.key
        cells = cells[(cells >= 0) & (cells < self.bound)]  # no entry lies outside
        if cells.size == 0 or key.size == 0:
            return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
        if self.bound <= 8 * key.size + (1 << 20):
            wanted = np.zeros(self.bound, dtype=bool)
            wanted[cells] = True
            inside = np.flatnonzero(wanted[key])
        else:
            at = np.minimum(np.searchsorted(cells, key), cells.size - 1)
            inside = np.flatnonzero(cells[at] == key)
        order, sorted_key = sort_keys(key[inside], self.bound)
        return self.entry[inside[order]], sorted_key

    def pairs_near(
        self, around: np.ndarray, place: Callable[[np.ndarray], np.ndarray] | None = None
    ) -> np.ndarray:
        """(p, 2) pairs (e, f): e in ``around``, f any element whose box overlaps e's
        box with positive area (beyond 1e-9 h on both axes).

        The pairs the cells hand out are counted first: past
        :func:`~meshaudit.mesh_checks.budget.allowance` of the elements (boxes piled on
        one another) the audit is refused, naming the place of the most crowded
        element (``place`` maps plane coordinates to space for the message)."""
        boxes, h, origin, width = self.boxes, self.h, self.origin, self.width
        if around.size == 0 or h <= 0.0:
            return np.zeros((0, 2), dtype=np.int64)
        reach = 0.5 * h + self.slack
        lo = np.floor((boxes[around, :2] - reach - origin) / h).astype(np.int64)
        span = np.floor((boxes[around, 2:] + reach - origin) / h).astype(np.int64) - lo + 1
        owner, k = budget.expand(np.zeros(around.size, dtype=np.int64), span.prod(axis=1))
        across, up = np.divmod(k, span[owner, 1])
        qkey = (lo[owner, 0] + across) * width + lo[owner, 1] + up
        entry, sorted_key = self.in_cells(unique_values(qkey))
        start = np.searchsorted(sorted_key, qkey, side="left")
        count = np.searchsorted(sorted_key, qkey, side="right") - start
        total = int(count.sum())
        if total > budget.allowance(boxes.shape[0]):
            per = np.bincount(owner, weights=count, minlength=around.size)
            worst = boxes[around[int(np.argmax(per))]]
            centre = 0.5 * (worst[:2] + worst[2:])
            budget.refuse(
                "overlap check",
                total,
                "element",
                centre if place is None else place(centre),
                "element boxes piled on one another",
                ["overlapping_elements"],
            )
        tiny = 1e-9 * h
        out = [np.zeros((0, 2), dtype=np.int64)]
        for row, at in budget.batches(start, count):
            e, f = around[owner[row]], entry[at]
            width_x = np.minimum(boxes[e, 2], boxes[f, 2]) - np.maximum(boxes[e, 0], boxes[f, 0])
            width_y = np.minimum(boxes[e, 3], boxes[f, 3]) - np.maximum(boxes[e, 1], boxes[f, 1])
            keep = (e != f) & (width_x > tiny) & (width_y > tiny)
            out.append(np.stack([e[keep], f[keep]], axis=1))
        return np.concatenate(out)


@dataclass
class PlanarShapes:
    """What the overlap and winding checks need of every element of a planar mesh.

    ``sign`` (n,) int8: the sign of the corner polygon's shoelace area, +1
    counter-clockwise about the plane normal, -1 clockwise, 0 no area. ``convex`` (n,)
    bool: every corner turns the way the element winds (strictly). ``boxes`` (n, 4):
    xmin, ymin, xmax, ymax of the corners, in plane coordinates
    (``axes`` rows, measured from ``origin``).
    """

    axes: np.ndarray
    origin: np.ndarray
    sign: np.ndarray
    convex: np.ndarray
    boxes: np.ndarray

    @classmethod
    def empty(cls, n: int, axes: np.ndarray, origin: np.ndarray) -> PlanarShapes:
        return cls(
            axes=axes,
            origin=origin,
            sign=np.zeros(n, dtype=np.int8),
            convex=np.zeros(n, dtype=bool),
            boxes=np.empty((n, 4)),
        )

    def plane(self, xyz: np.ndarray) -> np.ndarray:
        """Plane coordinates (..., 2) of points ``xyz`` (..., 3)."""
        return (xyz - self.origin) @ self.axes.T

    def space(self, uv: np.ndarray) -> np.ndarray:
        """The point (..., 3) in space at plane coordinates ``uv`` (..., 2)."""
        return self.origin + uv @ self.axes

    def fill(self, rows: slice | np.ndarray, corners: np.ndarray) -> None:
        """Measure the elements at ``rows`` from their corners (m, k, 3) in space.

        Pure arithmetic on the given corners, one (m,) column at a time: chunks may be
        filled in any order, or at the same time from several threads (rows differ).
        """
        x, y = _plane_columns(corners, self.axes)  # corner 0 at the origin
        twice, turns = _shoelace_and_turns(x, y)
        s = np.sign(twice)
        self.sign[rows] = s
        convex = turns[0] * s > 0.0
        for turn in turns[1:]:
            convex &= turn * s > 0.0
        self.convex[rows] = convex
        at = (corners[:, 0] - self.origin) @ self.axes.T  # (m, 2) corner 0, plane coordinates
        for axis, column in enumerate((x, y)):
            low, high = column[0].copy(), column[0].copy()
            for c in column[1:]:
                np.minimum(low, c, out=low)
                np.maximum(high, c, out=high)
            self.boxes[rows, axis] = at[:, axis] + low
            self.boxes[rows, axis + 2] = at[:, axis] + high


def _plane_columns(corners: np.ndarray, axes: np.ndarray) -> tuple[list[np.ndarray], ...]:
    """In-plane coordinates of corners (m, k, 3) relative to corner 0, as k (m,) columns
    per plane axis (corner 0 itself is exactly 0)."""
    k = corners.shape[1]
    zero = np.zeros(corners.shape[0])
    if np.array_equal(axes, np.eye(3)[:2]):  # the x-y plane: no products needed
        return tuple(
            [zero] + [corners[:, i, a] - corners[:, 0, a] for i in range(1, k)] for a in (0, 1)
        )
    out: tuple[list[np.ndarray], ...] = ([zero], [zero])
    for i in range(1, k):
        d = corners[:, i] - corners[:, 0]
        for a in (0, 1):
            out[a].append(d @ axes[a])
    return out


def _shoelace_and_turns(
    x: list[np.ndarray], y: list[np.ndarray]
) -> tuple[np.ndarray, list[np.ndarray]]:
    """Twice the signed area and the turn (cross product of the two sides) at every
    corner of polygons given by k corner columns ``x``, ``y`` (each (m,))."""
    k = len(x)
    dx = [x[(i + 1) % k] - x[i] for i in range(k)]
    dy = [y[(i + 1) % k] - y[i] for i in range(k)]
    twice = np.zeros(x[0].shape[0])
    for i in range(1, k - 1):  # corner 0 is the origin: its two terms vanish
        twice += x[i] * y[i + 1] - x[i + 1] * y[i]
    turns = [dx[i] * dy[(i + 1) % k] - dy[i] * dx[(i + 1) % k] for i in range(k)]
    return twice, turns


def planar_shapes(mesh: ElementMesh, axes: np.ndarray) -> PlanarShapes:
    """:class:`PlanarShapes` of every element of ``mesh``, plane axes ``axes`` (2, 3),
    measured in slices of :data:`SHAPE_CHUNK` elements (bounded temporaries)."""
    shapes = PlanarShapes.empty(mesh.n_elements, axes, anchor(mesh))
    for block, sl in mesh.chunks(SHAPE_CHUNK):
        corners = mesh.points[block.connectivity[sl, : block.cell.n_corners]]
        shapes.fill(block.index[sl], corners)
    return shapes


def overlapping_pairs(
    mesh: ElementMesh, shapes: PlanarShapes, candidates: np.ndarray, fraction: float
) -> tuple[np.ndarray, np.ndarray]:
    """(pairs (p, 2) ascending, common area (p,)) of candidate pairs whose common area
    exceeds ``fraction`` of the smaller element's area.

    Pairs of two convex elements that one side of either element separates (see
    :func:`separated`) have no common area; shapely measures the common area of the rest.
    """
    if candidates.size == 0:
        return np.zeros((0, 2), dtype=np.int64), np.zeros(0)
    low, high = candidates.min(axis=1).astype(np.int64), candidates.max(axis=1)
    span = np.int64(mesh.n_elements)
    code = unique_values(low * span + high)  # distinct pairs (a < b), ascending
    pairs = np.stack([code // span, code % span], axis=1)
    pairs = pairs[pairs[:, 0] != pairs[:, 1]]
    apart = [
        separated(mesh, shapes, pairs[i : i + budget.BATCH])
        for i in range(0, len(pairs), budget.BATCH)
    ]
    pairs = pairs[~np.concatenate([np.zeros(0, dtype=bool), *apart])]
    if pairs.size == 0:
        return np.zeros((0, 2), dtype=np.int64), np.zeros(0)
    if len(pairs) > SHAPE_PAIRS + budget.PER_ITEM * mesh.n_elements:
        crowded = int(np.argmax(np.bincount(pairs.ravel())))
        box = shapes.boxes[crowded]
        budget.refuse(
            "overlap check",
            len(pairs),
            "element",
            shapes.space(0.5 * (box[:2] + box[2:])),
            "elements piled on one another",
            ["overlapping_elements"],
        )
    import shapely

    involved, inverse = np.unique(pairs, return_inverse=True)
    inverse = inverse.reshape(pairs.shape)
    polys = element_polygons(mesh, shapes, involved)
    area = shapely.area(polys)
    smaller = np.minimum(area[inverse[:, 0]], area[inverse[:, 1]])
    common = np.zeros(len(pairs))
    for i in range(0, len(pairs), budget.BATCH):  # bounded memory: results a batch at a time
        pa, pb = polys[inverse[i : i + budget.BATCH, 0]], polys[inverse[i : i + budget.BATCH, 1]]
        common[i : i + budget.BATCH] = shapely.area(shapely.intersection(pa, pb))
    hit = (smaller > 0.0) & (common > fraction * smaller)
    return pairs[hit], common[hit]


def separated(mesh: ElementMesh, shapes: PlanarShapes, pairs: np.ndarray) -> np.ndarray:
    """(p,) bool: some side of a convex element of the pair has every corner of the
    other element on or outside its line (a separating line: the interiors are then
    disjoint, since the convex element lies on the inner side of each of its sides and
    any polygon lies within the hull of its corners).

    Corners shared by the two elements give exactly zero on the shared line, so
    neighbours sharing a side or a corner are separated without rounding doubts; a
    pair this test cannot separate goes to the exact area computation.
    """
    out = np.zeros(len(pairs), dtype=bool)
    both = np.flatnonzero(shapes.convex[pairs[:, 0]] | shapes.convex[pairs[:, 1]])
    if both.size == 0:
        return out
    involved, inverse = np.unique(pairs[both], return_inverse=True)
    inverse = inverse.reshape(-1, 2)
    groups = corner_rows(mesh, involved)
    k_of = np.zeros(involved.size, dtype=np.int64)
    row_of = np.zeros(involved.size, dtype=np.int64)
    coords = []
    for g, (where, conn) in enumerate(groups):
        k_of[where] = g
        row_of[where] = np.arange(where.size)
        coords.append(shapes.plane(mesh.points[conn]))  # (w, k, 2)
    sign = shapes.sign[involved].astype(np.float64)
    convex = shapes.convex[involved]
    ga, gb = k_of[inverse[:, 0]], k_of[inverse[:, 1]]
    for a_group in range(len(groups)):
        for b_group in range(len(groups)):
            sel = np.flatnonzero((ga == a_group) & (gb == b_group))
            if sel.size == 0:
                continue
            ia, ib = inverse[sel, 0], inverse[sel, 1]
            pa, pb = coords[a_group][row_of[ia]], coords[b_group][row_of[ib]]
            apart = convex[ia] & _outside_some_side(pa, sign[ia], pb)
            apart |= convex[ib] & _outside_some_side(pb, sign[ib], pa)
            out[both[sel]] = apart
    return out


def _outside_some_side(poly: np.ndarray, sign: np.ndarray, other: np.ndarray) -> np.ndarray:
    """(p,) bool: some side of convex polygon ``poly`` (p, k, 2), wound ``sign`` (p,),
    has all corners of ``other`` (p, j, 2) on or outside its line."""
    start = poly
    side = np.roll(poly, -1, axis=1) - poly  # (p, k, 2)
    rel = other[:, None, :, :] - start[:, :, None, :]  # (p, k, j, 2)
    cross = side[:, :, None, 0] * rel[..., 1] - side[:, :, None, 1] * rel[..., 0]
    inward = cross * sign[:, None, None] > 0.0  # corner strictly inside the side's line
    return (~inward.any(axis=2)).any(axis=1)
