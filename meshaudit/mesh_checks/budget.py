"""Work budgets of the mesh-level checks that pair things up, shared by all of them.

The coincident-node sweep (nodes along a sorted direction), the hanging-node grid
(nodes x host edges) and the overlap grid (element boxes x element boxes) each meet a
few neighbours per item on any sane mesh, and every other item on a pile-up: thousands
of nodes or elements at one place make k^2 pairs. So each check counts its candidate
pairs before making them and holds them to a budget linear in its input
(:func:`allowance`), makes them :data:`BATCH` at a time (bounded memory), and when a
pile-up passes what it can separate, stops the audit with one line naming the place
and the way out (:func:`refuse`, exit status 2 on the command line) instead of
exhausting the machine.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from typing import NoReturn

import numpy as np

from ..arrays import unique_values
from ..errors import InputError

#: Candidate pairs made per batch (the memory bound: a few arrays of this length).
BATCH = 1 << 18
#: Pairs a search may make whatever the input size ...
PAIR_BUDGET = 1 << 20
#: ... plus this many per item of its input (node, element, grid entry).
PER_ITEM = 16
#: Pairs a search may still make where its own refinement has run out (a few seconds of
#: work); past it the audit is refused.
CROWDED_PAIRS = 1 << 24


def allowance(items: int) -> int:
    """Candidate pairs a search over ``items`` input items may make: linear in the input."""
    return PAIR_BUDGET + PER_ITEM * int(items)


def expand(lo: np.ndarray, count: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(row, position): row r repeated count[r] times with positions lo[r] .. lo[r] +
    count[r] - 1."""
    row = np.repeat(np.arange(count.size), count)
    start = np.cumsum(count) - count
    return row, lo[row] + (np.arange(row.size) - start[row])


def batches(lo: np.ndarray, count: np.ndarray) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """:func:`expand` of ``lo``, ``count`` about :data:`BATCH` pairs at a time: (rows of
    ``lo``, positions). A row with more than a batch of positions comes whole."""
    total = int(count.sum())
    if total == 0:
        return
    ends = np.cumsum(count)
    cuts = np.searchsorted(ends, np.arange(BATCH, total, BATCH), side="left") + 1
    for part in np.split(np.arange(count.size), unique_values(cuts)):
        row, at = expand(lo[part], count[part])
        yield part[row], at


def refuse(
    check: str, pairs: int, what: str, where: np.ndarray, why: str, keys: Iterable[str]
) -> NoReturn:
    """Stop the audit: ``check`` would need ``pairs`` candidate pairs of ``what`` around
    the point ``where`` (x, y, z); ``why`` says what piles up there; ``keys`` are the
    finding kinds that, set "off" under [findings], audit the mesh without the check."""
    x, y, z = (float(c) for c in np.resize(np.asarray(where, dtype=float), 3))
    names = tuple(keys)
    listed = names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]
    raise InputError(
        f"{check}: {pairs:,} {what} pairs crowd one spot near ({x:.6g}, {y:.6g}, {z:.6g}): "
        f'{why}; set {listed} = "off" under [findings] to audit without it'
    )
