"""The face table of the solids: every face of every solid, built with sorts, not
per-element loops.

Each solid cell type lists its faces outward (corners counter-clockwise seen from
outside a positively oriented element: ``CellType.faces``, taken from the kernels'
reference tables). A face is known by its corner nodes (a quadratic solid's faces by
their corners, as edges are): triangles by 3, quadrilaterals by 4. The faces of all
solids are keyed by their sorted corner nodes, so two solids sharing a face meet on one
key; a key used once is a boundary face, twice an interior face, three times or more a
non-manifold face. For a consistently oriented mesh the two uses of an interior face run
around it in opposite directions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..arrays import unique_values
from .elements import ElementMesh
from .topology import index_dtype, sort_keys


@dataclass(frozen=True)
class FaceTable:
    """Every face use (one per face of each solid) and the distinct faces.

    ``corners`` (m, 4) the corner nodes of each use in the element's outward order, a
    triangle's fourth column -1; ``element`` (m,) the 0-based position of the solid in
    the mesh the table was built from; ``local`` (m,) int8 the face number in its cell
    type's table; ``face`` (m,) the distinct face number 0..n_faces-1; ``key``
    (n_faces, 4) each face's corner nodes ascending, a triangle's padded in front with
    -1; ``uses`` (n_faces,) how many uses each face has, ``first`` and ``last``
    (n_faces,) its first and last use (the two uses of an interior face). A face whose
    corners collapse to fewer than three nodes is left out; a quadrilateral face with two
    corners on one node is kept as the triangle it is.
    """

    corners: np.ndarray
    element: np.ndarray
    local: np.ndarray
    face: np.ndarray
    key: np.ndarray
    uses: np.ndarray
    first: np.ndarray
    last: np.ndarray

    @property
    def n_faces(self) -> int:
        return int(self.key.shape[0])

    @property
    def size(self) -> np.ndarray:
        """(m,) corners of each use: 3 or 4."""
        return np.where(self.corners[:, 3] < 0, 3, 4)

    def boundary(self) -> np.ndarray:
        """Use positions (ascending) of the faces used once: the boundary faces."""
        return np.flatnonzero(self.uses[self.face] == 1)


def face_table(mesh: ElementMesh, keep: np.ndarray | None = None) -> FaceTable:
    """The :class:`FaceTable` of the solids of ``mesh`` (surface blocks are ignored).

    ``keep`` (n_elements,) bool: the elements to take (e.g. without duplicates); all
    when None. Work: a few passes over the (m, 4) corner array and two sorts of one
    64-bit number per use, m = faces per solid x solids; node and element numbers are
    held as int32 where they fit (half the memory)."""
    corners, element, local = _face_uses(mesh, keep)
    return table_of_uses(corners, element, local, mesh.n_points)


def table_of_uses(
    corners: np.ndarray, element: np.ndarray, local: np.ndarray, n_points: int
) -> FaceTable:
    """The :class:`FaceTable` of face uses given as (``corners`` (m, 4) in outward order,
    -1 padded; ``element`` (m,); ``local`` (m,)), nodes numbered below ``n_points`` (the
    faces of several parts matched by node, see :mod:`meshaudit.distributed`)."""
    corners, element, local = _collapsed(corners, element, local)
    m = corners.shape[0]
    if m == 0:
        empty = np.zeros(0, dtype=np.int64)
        key = np.zeros((0, 4), np.int64)
        return FaceTable(corners, element, local, empty, key, empty, empty, empty)
    columns = _sorted_columns(corners)
    new = np.empty(m, dtype=bool)
    new[0] = True
    packed = _packed_key(columns)
    if packed is not None:  # one key per use: one sort (or two, see sort_keys)
        del columns
        order, ordered = sort_keys(*packed)
        del packed
        np.not_equal(ordered[1:], ordered[:-1], out=new[1:])
        del ordered
    else:
        high, low, bound = _halves(columns, n_points)
        if bound < 1 << 62:
            del columns  # the keys of the faces are sorted again from their first uses
        if bound >= 1 << 62:  # node numbers past 2^31: a plain lexicographic sort
            order = np.lexsort(columns[::-1])
        else:
            first, _ = sort_keys(low, bound)
            second, _ = sort_keys(high[first], bound)
            order = first[second]
            del first, second
        ordered = high[order]
        np.not_equal(ordered[1:], ordered[:-1], out=new[1:])
        ordered = np.take(low, order, out=ordered)
        new[1:] |= ordered[1:] != ordered[:-1]
        del ordered, high, low
    starts = np.flatnonzero(new)
    rank = np.cumsum(new, dtype=index_dtype(m))
    del new
    rank -= 1
    face = np.empty(m, dtype=rank.dtype)
    face[order] = rank
    del rank
    uses = np.diff(np.append(starts, m))
    first_use, last_use = order[starts], order[starts + uses - 1]
    key = sorted_rows(corners[first_use]).astype(np.int64)
    return FaceTable(corners, element, local, face, key, uses, first_use, last_use)


def _face_uses(
    mesh: ElementMesh, keep: np.ndarray | None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(corners (m, 4), element (m,), local (m,)) of every face of every solid kept."""
    node_type, element_type = index_dtype(mesh.n_points), index_dtype(mesh.n_elements)
    parts, elements, locals_ = [], [], []
    for block in _solid_blocks(mesh):
        cell = block.cell
        conn, index = block.connectivity, block.index
        if keep is not None and not keep[index].all():
            conn, index = conn[keep[index]], index[keep[index]]
        n, k = len(index), len(cell.faces)
        out = np.empty((n, k, 4), dtype=node_type)
        for f, face in enumerate(cell.faces):  # a few faces per cell type, whole columns
            for i, corner in enumerate(face):
                out[:, f, i] = conn[:, corner]
            if len(face) == 3:
                out[:, f, 3] = -1
        parts.append(out.reshape(-1, 4))
        elements.append(np.repeat(index.astype(element_type), k))
        locals_.append(np.tile(np.arange(k, dtype=np.int8), n))
    if not parts:
        return np.zeros((0, 4), node_type), np.zeros(0, element_type), np.zeros(0, np.int8)
    if len(parts) == 1:
        return parts[0], elements[0], locals_[0]
    return np.concatenate(parts), np.concatenate(elements), np.concatenate(locals_)


def _collapsed(
    corners: np.ndarray, element: np.ndarray, local: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Quadrilateral faces with one side collapsed onto one node become triangles (the
    repeated corner dropped, order kept); faces of fewer than three distinct corners, or
    whose repeated corners are not neighbours, are left out. One pass over every use
    finds the few that repeat a node; the rest of the work is on those alone."""
    c = [corners[:, i] for i in range(4)]
    # a triangle's fourth corner is -1, equal to no node: only quadrilaterals' sides and
    # a triangle's closing side (or a quadrilateral's diagonal) can repeat a node
    suspect = (c[0] == c[1]) | (c[1] == c[2]) | (c[2] == c[3]) | (c[3] == c[0]) | (c[2] == c[0])
    rows = np.flatnonzero(suspect)
    del suspect
    if rows.size == 0:  # the usual case: one cheap pass
        return corners, element, local
    sub = corners[rows]
    quad = sub[:, 3] >= 0
    same = np.stack([sub[:, i] == sub[:, (i + 1) % 4] for i in range(4)], axis=1)
    same[:, 2] &= quad  # corner i equals corner i + 1; a triangle's closing side is 2 -> 0
    same[:, 3] &= quad
    repeats = same.sum(axis=1) + (~quad & (sub[:, 2] == sub[:, 0]))
    if not repeats.any():
        return corners, element, local
    keep_sub = (repeats == 0) | (quad & (repeats == 1))
    fix = np.flatnonzero(quad & (repeats == 1))
    if fix.size:
        drop = np.argmax(same[fix], axis=1)  # the corner equal to the next one
        cols = np.arange(4)[None, :]
        order = np.where(cols < drop[:, None], cols, cols + 1)[:, :3]
        tri = np.take_along_axis(sub[fix], order % 4, axis=1)
        distinct = (tri[:, 0] != tri[:, 1]) & (tri[:, 1] != tri[:, 2]) & (tri[:, 2] != tri[:, 0])
        corners = corners.copy()
        corners[rows[fix], :3] = tri
        corners[rows[fix], 3] = -1
        keep_sub[fix] = distinct
    keep = np.ones(corners.shape[0], dtype=bool)
    keep[rows] = keep_sub
    # a degenerate solid may be left with one face twice (a tetrahedron with two corners
    # on one node: its two remaining faces are one triangle, both ways round): the two
    # uses cancel, as the element encloses nothing there
    touched = np.flatnonzero(np.isin(element, unique_values(element[rows[repeats > 0]])) & keep)
    if touched.size:
        key = np.column_stack([element[touched], sorted_rows(corners[touched])])
        _, inverse, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
        keep[touched[counts[inverse.ravel()] > 1]] = False
    if keep.all():
        return corners, element, local
    return corners[keep], element[keep], local[keep]


def _sorted_columns(corners: np.ndarray) -> list[np.ndarray]:
    """The 4 columns of ``corners`` (m, 4) sorted within each row, -1 padding first: a
    sorting network of whole columns."""
    c = [corners[:, i].copy() for i in range(4)]
    for i, j in ((0, 1), (2, 3), (0, 2), (1, 3), (1, 2)):
        low = np.minimum(c[i], c[j])
        np.maximum(c[i], c[j], out=c[j])
        c[i] = low
    return c


def sorted_rows(corners: np.ndarray) -> np.ndarray:
    """(m, 4) each row of ``corners`` (m, 4) ascending, -1 padding first."""
    return np.stack(_sorted_columns(corners), axis=1)


def _packed_key(columns: list[np.ndarray]) -> tuple[np.ndarray, int] | None:
    """(key, bound): one int64 per sorted corner row (``columns`` as
    :func:`_sorted_columns` gives them), ordered as the rows are (lexicographically, a
    triangle's -1 first), or None when it would need more than 62 bits.

    The key packs, most significant first: 0 for a triangle and 1 for a quadrilateral,
    the smallest node, then the steps from each corner to the next (a triangle's first
    step 0), each in as many bits as its largest value needs. A mesh numbered with
    locality (neighbours get nearby numbers, as meshers number) has short steps, so the
    key fits where the two (node, node) halves of :func:`_halves` need two sorts each."""
    c0, c1, c2, c3 = columns
    tri = c0 < 0
    first = np.where(tri, c1, c0).astype(np.int64)
    steps = [np.where(tri, 0, c1 - c0), c2 - c1, c3 - c2]
    widths = [int(first.max()).bit_length()] + [int(d.max()).bit_length() for d in steps]
    total = 1 + sum(widths)
    if total > 62:
        return None
    key = (~tri).astype(np.int64)
    for value, bits in zip([first, *steps], widths, strict=True):
        key <<= np.int64(bits)
        key |= value
    return key, 1 << total


def _halves(columns: list[np.ndarray], n_points: int) -> tuple[np.ndarray, np.ndarray, int]:
    width = np.int64(n_points + 1)
    high = columns[0].astype(np.int64)
    high += 1
    high *= width
    high += columns[1]
    high += 1
    low = columns[2].astype(np.int64)
    low += 1
    low *= width
    low += columns[3]
    low += 1
    return high, low, int(width) * int(width)


def key_halves(key: np.ndarray, n_points: int) -> tuple[np.ndarray, np.ndarray, int]:
    """Two int64 numbers per sorted corner row (each packs two node numbers + 1) and
    their bound: equal rows, equal pairs."""
    return _halves([key[:, i] for i in range(4)], n_points)


def same_way(first: np.ndarray, second: np.ndarray) -> np.ndarray:
    """(p,) bool: two uses of one face, corners ``first`` and ``second`` (p, 4), run
    around it the same way: the corner after ``first``'s corner 0 is, in ``second``,
    also the corner after it. (Consistently oriented neighbours run opposite ways.)"""
    size = np.where(first[:, 3] < 0, 3, 4)
    at = np.argmax(second == first[:, :1], axis=1)  # where first's corner 0 is in second
    after = np.take_along_axis(second, ((at + 1) % size)[:, None], axis=1)[:, 0]
    return after == first[:, 1]


def vector_areas(points: np.ndarray, corners: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(area vectors (m, 3), centroids (m, 3)) of faces ``corners`` (m, 4).

    The area vector of a triangle (a, b, c) is (b - a) x (c - a) / 2; of a quadrilateral
    (a, b, c, d), (c - a) x (d - b) / 2, its diagonals' cross product (the exact area of
    a flat quadrilateral; of a warped one, the area of its projection on the plane
    normal to that vector). Centroids are the mean of the corners. Lengths^2 and
    lengths."""
    tri = corners[:, 3] < 0
    a, b, c = points[corners[:, 0]], points[corners[:, 1]], points[corners[:, 2]]
    d = points[np.where(tri, corners[:, 2], corners[:, 3])]
    first = np.where(tri[:, None], b - a, c - a)
    second = np.where(tri[:, None], c - a, d - b)
    area = 0.5 * np.cross(first, second)
    centre = np.where(tri[:, None], (a + b + c) / 3.0, (a + b + c + d) / 4.0)
    return area, centre


#: Solids whose edges :meth:`SolidEdges.longest_squared` measures at a time: the
#: temporaries (a few (n, 3) float64) stay about a megabyte, reused from the heap rather
#: than fresh memory per edge.
EDGE_BLOCK = 1 << 15


@dataclass(frozen=True)
class SolidEdges:
    """The corner edges of the solids of ``mesh``, walked block by block and edge by edge
    of the cell type (whole columns, no table of all edges is kept): what the
    coincident-node check needs of them. ``mesh`` is the whole mesh (surface and solid
    blocks), ``nodes`` the corner nodes the solids use, ascending."""

    mesh: ElementMesh
    nodes: np.ndarray

    @staticmethod
    def of(mesh: ElementMesh) -> SolidEdges:
        used = np.zeros(mesh.n_points, dtype=bool)
        for block in _solid_blocks(mesh):
            used[block.connectivity[:, : block.cell.n_corners]] = True
        return SolidEdges(mesh, np.flatnonzero(used))

    def longest_squared(self) -> float:
        """The largest squared length of a solid's corner edge (0 without solids)."""
        longest = 0.0
        points = self.mesh.points
        for block in _solid_blocks(self.mesh):
            # in blocks of elements: the temporaries stay small and are reused
            for lo in range(0, len(block), EDGE_BLOCK):
                conn = block.connectivity[lo : lo + EDGE_BLOCK]
                for a, b in block.cell.edges:
                    step = points[conn[:, b]]
                    step -= points[conn[:, a]]
                    longest = max(longest, float(np.einsum("ij,ij->i", step, step).max()))
        return longest

    def shortest_at(self, involved: np.ndarray) -> np.ndarray:
        """(n_points,) the shortest non-zero solid edge at each node of the mask
        ``involved`` (inf elsewhere, and where none)."""
        shortest = np.full(self.mesh.n_points, np.inf)
        points = self.mesh.points
        for block in _solid_blocks(self.mesh):
            conn = block.connectivity
            for a, b in block.cell.edges:
                ends = conn[involved[conn[:, a]] | involved[conn[:, b]]][:, [a, b]]
                length = np.linalg.norm(points[ends[:, 1]] - points[ends[:, 0]], axis=1)
                length[length == 0.0] = np.inf
                np.minimum.at(shortest, ends[:, 0], length)
                np.minimum.at(shortest, ends[:, 1], length)
        return shortest


def _solid_blocks(mesh: ElementMesh) -> list:
    return [b for b in mesh.blocks if b.cell.dimension == 3 and len(b)]


def matching_rows(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(count (k,), rows of ``a``, rows of ``b``): every pair of equal rows of ``a``
    (j, w) and ``b`` (k, w); ``count`` how many rows of ``a`` each row of ``b`` equals."""
    both = np.concatenate([a, b])
    if both.shape[0] == 0:
        empty = np.zeros(0, dtype=np.int64)
        return np.zeros(b.shape[0], dtype=np.int64), empty, empty
    _, inverse = np.unique(both, axis=0, return_inverse=True)
    inverse = inverse.ravel()
    ia, ib = inverse[: a.shape[0]], inverse[a.shape[0] :]
    order = np.argsort(ia, kind="stable")
    sa = ia[order]
    lo = np.searchsorted(sa, ib, side="left")
    count = np.searchsorted(sa, ib, side="right") - lo
    which = np.repeat(np.arange(count.size), count)
    pos = lo[which] + (np.arange(which.size) - (np.cumsum(count) - count)[which])
    return count, order[pos], which


#: Corner columns of the face arrays drawn by the plots: a triangle face repeats its last
#: corner in the fourth (a closed polygon of four points draws the same triangle).
FACE_WIDTH = 4


def _repeat_last(corners: np.ndarray) -> np.ndarray:
    """(m, 4) corners with a triangle's -1 replaced by its third corner."""
    out = corners.astype(np.int64)
    out[:, 3] = np.where(out[:, 3] < 0, out[:, 2], out[:, 3])
    return out


def solid_faces(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """Every face of every solid: (corners (F, 4) int64 node indices, counter-clockwise
    seen from outside a positively oriented element, a triangle's last corner repeated;
    owner (F,) int64 report index of the solid it belongs to). Faces collapsed to fewer
    than three nodes are left out (see :func:`face_table`)."""
    table = face_table(elements)
    return _repeat_last(table.corners), table.element.astype(np.int64)


def boundary_faces(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """The faces used by exactly one solid: (corners (B, 4) int64 in the owning element's
    face order, outward for a positively oriented element, triangles with their last
    corner repeated; owner (B,) int64 report index of that element). A mesh without solids
    has no boundary faces."""
    corners, owner, _ = boundary_face_uses(elements)
    return corners, owner


def boundary_face_uses(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """:func:`boundary_faces` with, third, each face's number ``local`` (B,) in its owner's
    cell type face table (to draw a quadratic solid's face through its own map)."""
    table = face_table(elements)
    once = table.boundary()
    return (
        _repeat_last(table.corners[once]),
        table.element[once].astype(np.int64),
        table.local[once].astype(np.int64),
    )
