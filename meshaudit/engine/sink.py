"""The per-element result arrays of one audit, filled chunk by chunk."""

from __future__ import annotations

import threading

import numpy as np

from ..metrics import METRIC_NAMES, SOLID_METRICS, STIFFNESS_METRICS, quadratic


def rows_of(index: np.ndarray) -> slice | np.ndarray:
    """``index`` as a slice when it is a run of consecutive rows (it always is when the
    mesh came from :func:`meshaudit.mesh.reading.load`): slice assignment is much cheaper."""
    if index.size and bool((np.diff(index) == 1).all()):
        return slice(int(index[0]), int(index[-1]) + 1)
    return index


class ChunkSink:
    """Per-element result arrays that chunks, measured in any order and from several
    threads, copy their results into (each chunk its own rows)."""

    def __init__(
        self, n: int, has_quadratic: bool, has_solids: bool = False, has_material: bool = False
    ) -> None:
        self.n = n
        self.done = 0
        # a linear-only mesh has no midside nodes, a mesh without solids no volumes or
        # dihedral angles, an audit without a material no stiffness: those columns are
        # one shared NaN
        shared = () if has_quadratic else quadratic.MIDSIDE_METRICS
        shared += () if has_solids else SOLID_METRICS
        shared += () if has_material else STIFFNESS_METRICS
        #: elements failing the constant-strain check (with a material), else None
        self.strain_failed = np.zeros(n, dtype=bool) if has_material else None
        self.copied = tuple(m for m in METRIC_NAMES if m not in shared)
        self.metrics = {
            name: np.empty(n) if name in self.copied else nan_column(n) for name in METRIC_NAMES
        }
        self.bits = np.zeros(n, dtype=np.uint32)
        self.verdict = np.zeros(n, dtype=np.int8)
        self.centre = np.empty((n, 3))
        self.levels: dict[str, np.ndarray] = {}
        self.level_order: dict[int, tuple[str, ...]] = {}
        self._lock = threading.Lock()

    def store(
        self,
        rows: slice | np.ndarray,
        result: tuple[dict[str, np.ndarray], np.ndarray, dict[str, np.ndarray], np.ndarray],
        centre: np.ndarray,
    ) -> None:
        metrics, bits, levels, verdict = result
        for name in self.copied:
            self.metrics[name][rows] = metrics[name]
        if self.strain_failed is not None:
            self.strain_failed[rows] = metrics["constant_strain_failed"]
        self.bits[rows] = bits
        self.verdict[rows] = verdict
        self.centre[rows] = centre
        first = rows.start if isinstance(rows, slice) else int(rows[0])
        with self._lock:
            self.level_order[first] = tuple(levels)
            for name in levels:
                if name not in self.levels:
                    self.levels[name] = np.zeros(self.n, dtype=np.int8)
        for name, lvl in levels.items():
            self.levels[name][rows] = lvl

    def ordered_levels(self) -> dict[str, np.ndarray]:
        """The breach levels in the order the metrics first appear in element order
        (the order is what reports list breaches in, so it must not depend on threads)."""
        names = dict.fromkeys(
            name for first in sorted(self.level_order) for name in self.level_order[first]
        )
        return {name: self.levels[name] for name in names}


def nan_column(n: int) -> np.ndarray:
    """A read-only (n,) column of NaN that takes no memory."""
    return np.broadcast_to(np.float64(np.nan), (n,))
