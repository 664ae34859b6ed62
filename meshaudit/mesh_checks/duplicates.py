"""Elements that appear twice: the same corner nodes in any order or rotation (surface
elements by their 3 or 4 corners, solids by their 4 to 8)."""

from __future__ import annotations

import numpy as np

from ..mesh.elements import ElementMesh
from ..mesh.topology import corner_rows

#: Odd 64-bit multipliers for hashing the sorted corner lists (any odd constants work;
#: equal hashes are confirmed by comparing the node lists themselves).
_MIX = np.array(
    [
        0x9E3779B97F4A7C15,
        0xC2B2AE3D27D4EB4F,
        0x165667B19E3779F9,
        0xD6E8FEB86659FD93,
        0xFF51AFD7ED558CCD,
        0xC4CEB9FE1A85EC53,
        0x94D049BB133111EB,
        0xBF58476D1CE4E5B9,
    ],
    dtype=np.uint64,
)
_SHIFTS = (0, 7, 0, 3, 5, 0, 11, 2)


def _sorted_columns(connectivity: np.ndarray, k: int) -> list[np.ndarray]:
    """The first ``k`` columns of ``connectivity`` sorted within each row, as k columns."""
    if k not in _NETWORK:  # solids' 5 to 8 corners: one sort along the rows
        ordered = np.sort(connectivity[:, :k], axis=1)
        return [ordered[:, i].copy() for i in range(k)]
    columns = [connectivity[:, i].copy() for i in range(k)]
    for i, j in _NETWORK[k]:  # compare-exchange: column i gets the smaller node
        low = np.minimum(columns[i], columns[j])
        np.maximum(columns[i], columns[j], out=columns[j])
        columns[i] = low
    return columns


def sorted_corners(mesh: ElementMesh, positions: np.ndarray | None = None) -> np.ndarray:
    """(n, w) corner nodes of each element (or of the elements at ascending
    ``positions``) in ascending order, padded in front with -1; w is 4, or the most
    corners an element of ``mesh`` has when that is more (solids)."""
    if positions is None:
        positions = np.arange(mesh.n_elements)
    width = max([4, *(b.cell.n_corners for b in mesh.blocks)])
    out = np.full((positions.size, width), -1, dtype=np.int64)
    for where, conn in corner_rows(mesh, positions):
        k = conn.shape[1]
        for i, column in enumerate(_sorted_columns(conn, k)):
            out[where, width - k + i] = column
    return out


def corner_hashes(mesh: ElementMesh) -> np.ndarray:
    """(n_elements,) uint64 hash of each element's corner node set (order and rotation
    do not matter), built column by column."""
    out = np.empty(mesh.n_elements, dtype=np.uint64)
    for block in mesh.blocks:
        k = block.cell.n_corners
        if k not in _NETWORK:  # solids: a sum of mixed corners, which no order changes
            out[block.index] = _set_hash(block.connectivity, k)
            continue
        columns = _sorted_columns(block.connectivity[:, :k], k)
        with np.errstate(over="ignore"):
            h = np.full(len(block), np.uint64(k))
            for column, mix, shift in zip(columns, _MIX, _SHIFTS):
                term = column.astype(np.uint64)
                term *= mix
                term >>= np.uint64(shift)
                h ^= term
                h *= np.uint64(0x100000001B3)  # spreads each column before the next
        out[block.index] = h
    return out


def _set_hash(connectivity: np.ndarray, k: int) -> np.ndarray:
    """(n,) uint64 hash of the first ``k`` nodes of each row as a set: the sum of each
    node number mixed on its own (a 64-bit finaliser), so no sort is needed."""
    h = np.full(connectivity.shape[0], np.uint64(k))
    with np.errstate(over="ignore"):
        for i in range(k):
            x = connectivity[:, i].astype(np.uint64)
            x ^= x >> np.uint64(33)
            x *= _MIX[4]
            x ^= x >> np.uint64(29)
            x *= _MIX[5]
            x ^= x >> np.uint64(32)
            h += x
    return h


def duplicate_elements(mesh: ElementMesh) -> tuple[np.ndarray, np.ndarray]:
    """(copies, originals): element positions that repeat the node set of an earlier one.

    Hash each element's corner set to one 64-bit key, sort the keys, and confirm
    elements whose keys repeat by comparing their sorted corner lists.
    ``originals[i]`` is the first element (lowest position) with the node set of
    ``copies[i]``.
    """
    h = corner_hashes(mesh)
    hs = np.sort(h)
    repeated = hs[1:][hs[1:] == hs[:-1]]
    del hs
    if repeated.size == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty
    cand = np.flatnonzero(np.isin(h, repeated))
    _, group = np.unique(sorted_corners(mesh, cand), axis=0, return_inverse=True)
    group = group.ravel()
    by_group = np.lexsort((cand, group))
    cand, group = cand[by_group], group[by_group]
    starts = np.r_[True, group[1:] != group[:-1]]
    first_of = cand[np.maximum.accumulate(np.where(starts, np.arange(cand.size), 0))]
    return cand[~starts], first_of[~starts]


#: Sorting networks (pairs of columns to compare and exchange) for 3 and 4 items: the
#: same result as sorting each row, in a few whole-column passes.
_NETWORK = {3: ((0, 1), (1, 2), (0, 1)), 4: ((0, 1), (2, 3), (0, 2), (1, 3), (1, 2))}
