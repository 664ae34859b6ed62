"""Elements that appear twice: the same corner nodes in any order or rotation."""

from __future__ import annotations

import numpy as np

from ..elements import ElementMesh
from ..topology import CORNERS_PER_FAMILY

#: Odd 64-bit multipliers for hashing the sorted corner lists (any odd constants work;
#: equal hashes are confirmed by comparing the node lists themselves).
_MIX = np.array(
    [0x9E3779B97F4A7C15, 0xC2B2AE3D27D4EB4F, 0x165667B19E3779F9, 0xD6E8FEB86659FD93],
    dtype=np.uint64,
)


def sorted_corners(mesh: ElementMesh) -> np.ndarray:
    """(n_elements, 4) corner nodes of each element in ascending order, padded with -1."""
    out = np.full((mesh.n_elements, 4), -1, dtype=np.int64)
    for block in mesh.blocks:
        k = CORNERS_PER_FAMILY[block.family]
        columns = [block.connectivity[:, i].copy() for i in range(k)]
        for i, j in _NETWORK[k]:  # compare-exchange: column i gets the smaller node
            low = np.minimum(columns[i], columns[j])
            np.maximum(columns[i], columns[j], out=columns[j])
            columns[i] = low
        for i, column in enumerate(columns):
            out[block.index, 4 - k + i] = column
    return out


#: Sorting networks (pairs of columns to compare and exchange) for 3 and 4 items: the
#: same result as sorting each row, in a few whole-column passes.
_NETWORK = {3: ((0, 1), (1, 2), (0, 1)), 4: ((0, 1), (2, 3), (0, 2), (1, 3), (1, 2))}


def duplicate_elements(corners: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(copies, originals): element positions that repeat the node set of an earlier one.

    Hash each sorted corner row to one 64-bit key, sort the keys, and confirm rows whose
    keys repeat by comparing the rows themselves. ``originals[i]`` is the first element (lowest
    position) with the node set of ``copies[i]``.
    """
    with np.errstate(over="ignore"):
        mixed = corners.astype(np.uint64) * _MIX
    h = mixed[:, 0] ^ (mixed[:, 1] >> np.uint64(7)) ^ mixed[:, 2] ^ (mixed[:, 3] >> np.uint64(3))
    hs = np.sort(h)
    repeated = hs[1:][hs[1:] == hs[:-1]]
    if repeated.size == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty
    cand = np.flatnonzero(np.isin(h, repeated))
    _, group = np.unique(corners[cand], axis=0, return_inverse=True)
    group = group.ravel()
    by_group = np.lexsort((cand, group))
    cand, group = cand[by_group], group[by_group]
    starts = np.r_[True, group[1:] != group[:-1]]
    first_of = cand[np.maximum.accumulate(np.where(starts, np.arange(cand.size), 0))]
    return cand[~starts], first_of[~starts]
