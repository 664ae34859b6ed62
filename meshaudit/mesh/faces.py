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

from .elements import ElementMesh

#: Corner columns of a face table: a triangle face repeats its last corner in the fourth.
FACE_WIDTH = 4


def solid_faces(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """Every face of every solid: (corners (F, 4) int64 node indices, in the face's own
    order, counter-clockwise seen from outside a positively oriented element, a triangle's
    last corner repeated; owner (F,) int64 report index of the solid it belongs to).

    One array operation per face of each cell type (a hexahedron block: six), whatever
    the number of elements.
    """
    corners: list[np.ndarray] = []
    owners: list[np.ndarray] = []
    for block in elements.blocks:
        if block.cell.dimension != 3 or len(block) == 0:
            continue
        for face in block.cell.faces:
            cols = list(face) + [face[-1]] * (FACE_WIDTH - len(face))
            corners.append(block.connectivity[:, cols])
            owners.append(block.index)
    if not corners:
        return np.zeros((0, FACE_WIDTH), dtype=np.int64), np.zeros(0, dtype=np.int64)
    return (
        np.concatenate(corners).astype(np.int64, copy=False),
        np.concatenate(owners).astype(np.int64, copy=False),
    )


def face_keys(corners: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Two uint64 keys per face, equal exactly when two faces have the same corner set.

    The corners are sorted; a triangle (its last corner repeated) counts its repeated
    corner as -1, so it never matches a quadrilateral. Each key packs two node indices
    (plus one) in 32 bits each: node indices below 2^32 - 1.
    """
    marked = corners.copy()
    marked[corners[:, 2] == corners[:, 3], 3] = -1  # a triangle: its repeat counts as -1
    s = (np.sort(marked, axis=1) + 1).astype(np.uint64)
    shift = np.uint64(32)
    return (s[:, 0] << shift) | s[:, 1], (s[:, 2] << shift) | s[:, 3]


def boundary_faces(elements: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """The faces used by exactly one solid: (corners (B, 4) int64 node indices in the
    owning element's face order, outward for a positively oriented element, triangles
    with their last corner repeated; owner (B,) int64 report index of that element).

    Faces are returned in the order of :func:`solid_faces` (block, face, element).
    A mesh without solids has no boundary faces.
    """
    corners, owners = solid_faces(elements)
    if len(corners) == 0:
        return corners, owners
    high, low = face_keys(corners)
    order = np.lexsort((low, high))
    hs, ls = high[order], low[order]
    same_as_next = (hs[1:] == hs[:-1]) & (ls[1:] == ls[:-1])
    shared = np.zeros(len(order), dtype=bool)
    shared[:-1] |= same_as_next
    shared[1:] |= same_as_next
    once = np.sort(order[~shared])
    return corners[once], owners[once]
