"""Exact duplicate elements and orphan nodes.

Two elements are exact duplicates when they are of one cell type and use the same set of
nodes (in any order: a copy wound the other way is still a copy). The first one read is
kept with its cell data and sets; later copies are dropped. Orphan nodes are the nodes no
cell of any block uses (lines and vertices count as users); a node in a named node set
is kept even if unused, since someone named it.
"""

from __future__ import annotations

import numpy as np


def duplicate_rows(blocks: list[tuple[str, np.ndarray]]) -> list[np.ndarray]:
    """Per block of ``blocks`` ((cell type, (n, k) rows), in file order): (n,) bool, true
    for the rows to keep (every row but the later copies of a node set)."""
    keep = [np.ones(len(d), dtype=bool) for _, d in blocks]
    by_type: dict[str, list[int]] = {}
    for k, (t, d) in enumerate(blocks):
        if len(d):
            by_type.setdefault(t, []).append(k)
    for members in by_type.values():
        rows = np.concatenate([np.sort(blocks[k][1], axis=1) for k in members])
        owner = np.concatenate([np.full(len(blocks[k][1]), k) for k in members])
        local = np.concatenate([np.arange(len(blocks[k][1])) for k in members])
        _, first = np.unique(rows, axis=0, return_index=True)
        copy = np.ones(len(rows), dtype=bool)
        copy[first] = False  # np.unique returns the first occurrence of each row
        for k in members:
            keep[k][local[copy & (owner == k)]] = False
    return keep


def orphan_nodes(used: np.ndarray, named: list[np.ndarray]) -> np.ndarray:
    """(n,) bool: nodes to drop: used by no cell and in no named node set."""
    orphan = ~used
    for members in named:
        orphan[members] = False
    return orphan
