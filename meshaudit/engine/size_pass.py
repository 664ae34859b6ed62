"""The size ratio between neighbours, worked out and judged after every element is
measured (it needs its neighbours' sizes, so no chunk can compute it alone).

The chunks judged ``size_ratio`` as not defined (NaN never breaches, counts 0 in the
score); here its column is filled (:func:`meshaudit.mesh.neighbours.size_ratio`) and each
element's breach level, flag bit, verdict and score are raised as if it had been judged
with the rest: the score's distortion T gains the size ratio's t, so 2^-T is multiplied by
2^-t (see :mod:`meshaudit.judge.score`), and the verdict band moves with the verdict.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..judge.profiles import SOLID_FAMILIES, Profile
from ..judge.score import BAND, distance
from ..judge.verdicts import INVALID_FLAGS, breach_level
from ..mesh.neighbours import SideGroups, characteristic_length, size_ratio
from ..results.report import FLAG_BIT
from .sink import ChunkSink

METRIC = "size_ratio"

#: Elements judged at a time (their temporaries a few MB, whatever the mesh size).
BLOCK = 1 << 18


def apply_size_ratio(
    sink: ChunkSink,
    sides: Sequence[SideGroups],
    families: Sequence[str],
    family_codes: np.ndarray,
    codes: np.ndarray,
    profiles: Sequence[Profile],
    outside: tuple[np.ndarray, np.ndarray] | None = None,
) -> None:
    """Fill ``sink.metrics["size_ratio"]`` and judge it (in place) under ``profiles[codes[i]]``
    for the family ``families[family_codes[i]]`` of each element. ``outside``: (positions,
    ratios) against neighbours not in this mesh (across a part's cut): those elements take
    the larger of the two (the size ratio is a largest over neighbours)."""
    solid = np.isin(family_codes, [k for k, f in enumerate(families) if f in SOLID_FAMILIES])
    size = np.where(solid, sink.metrics["volume"], sink.metrics["area"])
    invalid_bits = np.uint32(sum(1 << FLAG_BIT[name] for name in INVALID_FLAGS))
    valid = (sink.bits & invalid_bits) == 0
    h = characteristic_length(size, np.where(solid, 3, 2))
    ratio = size_ratio(h, list(sides), counted=valid)
    if outside is not None and outside[0].size:
        rows, other = outside
        ratio[rows] = np.where(np.isnan(ratio[rows]), ratio[rows], np.fmax(ratio[rows], other))
    sink.metrics[METRIC] = ratio
    for k, profile in enumerate(profiles):
        for f, family in enumerate(families):
            limit = profile.limit(family, METRIC)
            if limit is None:
                continue
            for start in range(0, sink.n, BLOCK):  # bounded temporaries at any mesh size
                part = slice(start, start + BLOCK)
                rows = np.flatnonzero((codes[part] == k) & (family_codes[part] == f))
                if rows.size == 0:
                    continue
                rows += start
                values = ratio[rows]
                level = breach_level(values, limit, "high")
                t = distance(family, METRIC, values, limit, "high", level)
                _raise(sink, rows, level, t, valid[rows])


def _raise(
    sink: ChunkSink, rows: np.ndarray, level: np.ndarray, t: np.ndarray | None, valid: np.ndarray
) -> None:
    """Store the breach ``level`` of ``rows`` and move their verdict and score."""
    levels = sink.levels.get(METRIC)
    if levels is None:
        levels = sink.levels[METRIC] = np.zeros(sink.n, dtype=np.int8)
        with sink._lock:
            first = min(sink.level_order, default=0)
            sink.level_order[first] = (*sink.level_order.get(first, ()), METRIC)
    levels[rows] = level
    sink.bits[rows] |= (level > 0).astype(np.uint32) << np.uint32(FLAG_BIT[METRIC])
    old = sink.verdict[rows]
    new = np.maximum(old, level)
    sink.verdict[rows] = new
    score = sink.metrics["score"]
    kept = score[rows]
    room = 3.0 * kept - 2.0 + old  # 2^-T of the score as judged without the size ratio
    if t is not None:
        room *= np.exp2(-t)
    moved = (2.0 - new + room) * BAND
    score[rows] = np.where(valid, moved, kept)  # an invalid element stays at 0
