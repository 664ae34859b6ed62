"""Small array helpers shared by several stages."""

from __future__ import annotations

import numpy as np


def unique_values(values: np.ndarray) -> np.ndarray:
    """The distinct values of ``values`` in ascending order, as ``np.unique`` gives them
    (without its masked-array check, which imports ``numpy.ma`` on first use)."""
    flat = np.sort(np.asarray(values).ravel())
    if flat.size:
        keep = np.empty(flat.size, dtype=bool)
        keep[0] = True
        np.not_equal(flat[1:], flat[:-1], out=keep[1:])
        flat = flat[keep]
    return flat
