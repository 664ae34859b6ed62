"""The compiled element pass, with the numpy kernels as its reference and fallback.

``meshaudit.metrics._fused`` (C, built by ``pip install`` where a C compiler works; see
``setup.py``) measures every element of a chunk in one loop, all metrics and flags at
once, where the numpy kernel makes some hundreds of whole-array passes. Its arithmetic is
the numpy kernel's, operation by operation in the same order, built without fused
multiply-add, and its arc tangents are numpy's (the C pass writes their arguments, numpy
takes them, a second C pass finishes), so its metrics and flags equal the numpy kernel's
to the bit.

Families with a compiled pass: the four-node quad (``quad``, and the corners of ``quad8``
and ``quad9``, which the same kernel measures). Every other family is measured by numpy.

:data:`KERNEL_VARIABLE` set to ``numpy`` in the environment forces the numpy kernels, for
comparison or if the compiled pass is ever in doubt; it is read at each audit.
"""

from __future__ import annotations

import os
import threading
from collections.abc import Callable, Iterable

import numpy as np

from . import quad
from .columns import DEGREES
from .common import DEGENERATE_TOLERANCE

try:  # built by setup.py where a C compiler works; optional
    from . import _fused
except ImportError:  # pragma: no cover - depends on the build
    _fused = None

#: Environment variable: ``numpy`` forces the numpy kernels; unset (or ``auto``) takes the
#: compiled pass where there is one.
KERNEL_VARIABLE = "MESHAUDIT_KERNEL"

#: The metrics and flags of the compiled quad pass, in the order of its output rows.
QUAD_METRICS = (
    "area",
    "det_j_min",
    "det_j_max",
    "det_j_corner_min",
    "jacobian_ratio",
    "scaled_jacobian",
    "aspect_ratio",
    "skew",
    "taper",
    "warp",
    "min_angle",
    "max_angle",
    "condition",
)
QUAD_FLAGS = ("inverted", "reversed", "nonconvex", "self_intersecting", "degenerate")

_GAUSS = float(quad._G)  # 1 / sqrt(3), the same number the numpy kernel uses


def built() -> bool:
    """True when the compiled extension was built and imports."""
    return _fused is not None


def forced_numpy() -> bool:
    """True when :data:`KERNEL_VARIABLE` asks for the numpy kernels."""
    return os.environ.get(KERNEL_VARIABLE, "").strip().lower() == "numpy"


def measure_quad(
    coords3: np.ndarray, p: np.ndarray
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """:func:`meshaudit.metrics.quad.measure`, compiled: the same arguments, metrics and
    flags (see the module docstring for how closely they agree). Needs :func:`built`."""
    coords3 = np.ascontiguousarray(coords3, dtype=np.float64)
    p = np.ascontiguousarray(p, dtype=np.float64)
    n = len(coords3)
    metrics = np.empty((len(QUAD_METRICS), n))
    flags = np.empty((len(QUAD_FLAGS), n), dtype=bool)
    tangents, state = _scratch(n)  # arguments y, x of each arc tangent; state bits
    flat, corners = _fused.quad(
        coords3, p, metrics, flags, tangents, state, _GAUSS, DEGREES, DEGENERATE_TOLERANCE
    )
    # numpy's arc tangent, as the numpy kernel takes it, of the rows in use: skew and the
    # extreme angles; the corner angles of elements not convex and counter-clockwise; the
    # fold angles of elements in space
    ys, xs = tangents
    for lo, hi, used in ((0, 3, True), (3, 7, corners), (7, 9, not flat)):
        if used:
            np.arctan2(ys[lo:hi], xs[lo:hi], out=ys[lo:hi])
    _fused.quad_angles(ys, state, metrics, flags, flat, DEGREES)
    return dict(zip(QUAD_METRICS, metrics)), dict(zip(QUAD_FLAGS, flags))


#: Rows of the compiled quad pass's arc tangent arguments (see ``_fused.c``).
_TANGENT_ROWS = 9

_local = threading.local()


def _scratch(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Working arrays of the compiled quad pass for ``n`` elements: (2, 9, n) float64 and
    (n,) uint8, kept per thread and reused from chunk to chunk (a new block of a few MB
    per chunk would be faulted in anew each time); they grow to the largest chunk."""
    have = getattr(_local, "arrays", None)
    if have is None or have[1].size < n:
        have = (np.empty((2, _TANGENT_ROWS, n)), np.empty(n, dtype=np.uint8))
        _local.arrays = have
    tangents, state = have
    if tangents.shape[2] != n:
        tangents = tangents.reshape(-1)[: 2 * _TANGENT_ROWS * n].reshape(2, _TANGENT_ROWS, n)
    return tangents, state[:n]


Kernel = Callable[..., tuple[dict[str, np.ndarray], dict[str, np.ndarray]]]

#: numpy kernel -> its compiled twin.
_COMPILED: dict[Kernel, Kernel] = {quad.measure: measure_quad}


def kernel_for(kernel: Kernel) -> Kernel:
    """The compiled twin of the numpy ``kernel`` when there is one, the extension is built
    and :data:`KERNEL_VARIABLE` does not force numpy; else ``kernel`` itself."""
    if _fused is None or forced_numpy():
        return kernel
    return _COMPILED.get(kernel, kernel)


def kernel_path(kernels: Iterable[Kernel]) -> str:
    """Which pass measures elements of the given family ``kernels``: ``"compiled"`` when
    the compiled pass measures any of them, else ``"numpy"``."""
    return "compiled" if any(kernel_for(k) is not k for k in kernels) else "numpy"
