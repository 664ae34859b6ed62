"""The compiled element pass, with the numpy kernels as its reference and fallback.

``meshaudit.metrics._fused`` (C, built by ``pip install`` where a C compiler works; see
``setup.py``) measures every element of a chunk in one loop, all metrics and flags at
once, where the numpy kernel makes some hundreds of whole-array passes. Its arithmetic is
the numpy kernel's, operation by operation in the same order, built without fused
multiply-add, so the metrics equal the numpy kernel's to the bit, but for those that take
an arc tangent (skew, min_angle, max_angle, and the warp of an element in space): the C
library's and numpy's arc tangents may differ in the last place, so those agree to a few
units in the last place of 360 degrees.

Families with a compiled pass: the four-node quad (``quad``, and the corners of ``quad8``
and ``quad9``, which the same kernel measures). Every other family is measured by numpy.

:data:`KERNEL_VARIABLE` set to ``numpy`` in the environment forces the numpy kernels, for
comparison or if the compiled pass is ever in doubt; it is read at each audit.
"""

from __future__ import annotations

import os
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
    _fused.quad(coords3, p, metrics, flags, _GAUSS, DEGREES, DEGENERATE_TOLERANCE)
    return dict(zip(QUAD_METRICS, metrics)), dict(zip(QUAD_FLAGS, flags))


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
