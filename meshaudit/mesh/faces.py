"""The faces of solid elements, and the outer boundary of a volume mesh.

A face is named by its corner nodes (the midside nodes of a quadratic solid lie on the
edges between them, so the corners name the face). Two solids share a face when their
faces have the same set of corners; a face of exactly one solid lies on the outer boundary
(or on a crack, or next to a non-conforming neighbour). Found by sorting: each face's
corner numbers are sorted and packed into two 64-bit keys, the keys sorted once, and equal
neighbours in that order are the same face: O(F log F) for F faces, no loop over elements.
"""

from __future__ import annotations

import numpy as np

from .elements import ElementBlock, ElementMesh

#: Corner columns of a face table: a triangle face repeats its last corner in the fourth.
FACE_WIDTH = 4


def solid_faces(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """Every face of every solid: (corners (F, 4) int64 node indices, in the face's own
    order, counter-clockwise seen from outside a positively oriented element, a triangle's
    last corner repeated; owner (F,) int64 report index of the solid it belongs to).

    One array operation per face of each cell type (a hexahedron block: six), whatever
    the number of elements.
    """
    slots = _slots(elements)
    if not slots:
        return np.zeros((0, FACE_WIDTH), dtype=np.int64), np.zeros(0, dtype=np.int64)
    return (
        np.concatenate([block.connectivity[:, cols] for block, cols in slots]).astype(np.int64),
        np.concatenate([block.index for block, _ in slots]).astype(np.int64),
    )


def _sorted4(a, b, c, d):
    """Four arrays sorted element by element (a sorting network of five exchanges)."""
    a, b = np.minimum(a, b), np.maximum(a, b)
    c, d = np.minimum(c, d), np.maximum(c, d)
    a, c = np.minimum(a, c), np.maximum(a, c)
    b, d = np.minimum(b, d), np.maximum(b, d)
    b, c = np.minimum(b, c), np.maximum(b, c)
    return a, b, c, d


def _keys(a, b, c, d) -> tuple[np.ndarray, np.ndarray]:
    """Keys of faces with corners a, b, c, d (arrays); d == c for a triangle."""
    d = np.where(d == c, -1, d)  # a triangle: its repeated corner counts as -1
    one = np.uint64(1)  # -1 read as uint64 wraps round to 0 when one is added
    s = [x.astype(np.int64, copy=False).view(np.uint64) + one for x in _sorted4(a, b, c, d)]
    shift = np.uint64(32)
    return (s[0] << shift) | s[1], (s[2] << shift) | s[3]


def face_keys(corners: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Two uint64 keys per face (corners (F, 4)), equal exactly when two faces have the
    same corner set.

    The corners are sorted; a triangle (its last corner repeated) counts its repeated
    corner as -1, so it never matches a quadrilateral. Each key packs two node indices
    (plus one) in 32 bits each: node indices below 2^32 - 1.
    """
    return _keys(*(corners[:, k] for k in range(FACE_WIDTH)))


def _slots(elements: ElementMesh) -> list[tuple[ElementBlock, list[int]]]:
    """(block, the face's corner columns, padded to 4) of every face of every solid block."""
    return [
        (block, list(face) + [face[-1]] * (FACE_WIDTH - len(face)))
        for block in elements.blocks
        if block.cell.dimension == 3 and len(block)
        for face in block.cell.faces
    ]


def boundary_faces(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """The faces used by exactly one solid: (corners (B, 4) int64 node indices in the
    owning element's face order, outward for a positively oriented element, triangles
    with their last corner repeated; owner (B,) int64 report index of that element).

    Faces are returned in the order of :func:`solid_faces` (block, face, element); only
    their keys are built for every face, the corner table for the boundary ones alone.
    A mesh without solids has no boundary faces.
    """
    slots = _slots(elements)
    sizes = [len(block) for block, _ in slots]
    total = int(sum(sizes))
    if total == 0:
        return np.zeros((0, FACE_WIDTH), dtype=np.int64), np.zeros(0, dtype=np.int64)
    high = np.empty(total, dtype=np.uint64)
    low = np.empty(total, dtype=np.uint64)
    starts = np.concatenate([[0], np.cumsum(sizes)])
    for (block, cols), start, stop in zip(slots, starts[:-1], starts[1:]):
        conn = block.connectivity
        high[start:stop], low[start:stop] = _keys(*(conn[:, k].astype(np.int64) for k in cols))
    order = np.lexsort((low, high))
    hs, ls = high[order], low[order]
    same_as_next = (hs[1:] == hs[:-1]) & (ls[1:] == ls[:-1])
    shared = np.zeros(total, dtype=bool)
    shared[:-1] |= same_as_next
    shared[1:] |= same_as_next
    once = np.sort(order[~shared])
    corners, owners = [], []
    for (block, cols), start, stop in zip(slots, starts[:-1], starts[1:]):
        rows = once[(once >= start) & (once < stop)] - start
        corners.append(block.connectivity[rows][:, cols].astype(np.int64))
        owners.append(block.index[rows].astype(np.int64))
    return np.concatenate(corners), np.concatenate(owners)
