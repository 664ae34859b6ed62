"""The compiled element pass, with the numpy kernels as its reference and fallback.

``meshaudit.metrics._fused`` (C, built by ``pip install`` where a C compiler works; see
``setup.py``) measures every element of a chunk in one loop, all metrics and flags at
once, where the numpy kernel makes some hundreds of whole-array passes.

- The four-node quad (``quad``, and the corners of ``quad8`` and ``quad9``, which the same
  kernel measures): the arithmetic is the numpy kernel's, operation by operation in the
  same order, built without fused multiply-add, and the arc tangents are numpy's (the C
  pass writes their arguments, numpy takes them, a second C pass finishes), so every
  metric and flag equals the numpy kernel's to the bit.
- The trilinear hexahedron (``hexahedron``): the shape metrics take the numpy kernel's
  operations in its order, but det J (volume, det_j_min, det_j_max, det_j_corner_min,
  det_j_lower_bound, jacobian_ratio) is summed in another order than its matrix products
  and einsum, so those agree to round-off (within 1e-12 L^3, L the longest edge; the
  verdicts' floor is 1e-10 L^3); an element whose det J bound must be refined by
  subdivision is measured by the numpy kernel, whole.

Every other cell type is measured by numpy.

:data:`KERNEL_VARIABLE` set to ``numpy`` in the environment forces the numpy kernels, for
comparison or if the compiled pass is ever in doubt; it is read at each audit.
"""

from __future__ import annotations

import os
import threading
from collections.abc import Callable, Iterable
from typing import TYPE_CHECKING

import numpy as np

from . import quad
from .columns import DEGREES
from .common import DEGENERATE_TOLERANCE

if TYPE_CHECKING:
    from ..cells.registry import CellType

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
    # (rows 3-6 hold arguments only for the elements that need them, stale values
    # elsewhere, whose arc tangents are never read: no warning about them)
    ys, xs = tangents
    with np.errstate(invalid="ignore"):
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


#: The metrics and flags of the compiled hexahedron pass, in the order of its output rows.
HEX_METRICS = (
    "volume",
    "det_j_min",
    "det_j_max",
    "det_j_corner_min",
    "det_j_lower_bound",
    "jacobian_ratio",
    "scaled_jacobian",
    "condition",
    "aspect_ratio",
    "skew",
    "taper",
    "warp",
    "edge_ratio",
    "min_angle",
    "max_angle",
    "min_dihedral",
    "max_dihedral",
)
HEX_FLAGS = ("inverted", "reversed", "degenerate", "nonconvex", "self_intersecting")

#: Elements per call of the compiled hexahedron pass: bounds its arc tangent arguments
#: (2 x 51 float64 per element, 3.3 MB) whatever the chunk.
HEX_BLOCK = 4096


def measure_hexahedron(coords: np.ndarray) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """:func:`meshaudit.metrics.solid.hexahedron.measure` of ``hexahedron`` cells (n, 8, 3),
    compiled: the same metrics and flags, to round-off (see ``_fused.c``); the elements
    whose det J bound must be refined by subdivision are measured by the numpy kernel."""
    from .solid import hex_jacobian, hex_shape, hexahedron

    coords = np.ascontiguousarray(coords, dtype=np.float64)
    n = len(coords)
    metrics = np.empty((len(HEX_METRICS), n))
    flags = np.empty((len(HEX_FLAGS), n), dtype=bool)
    refine = np.empty(n, dtype=bool)
    at_gauss = np.ascontiguousarray(hex_jacobian.MAPS["hexahedron"].at_gauss)
    for start in range(0, n, HEX_BLOCK):
        stop = min(n, start + HEX_BLOCK)
        m, f = metrics[:, start:stop], flags[:, start:stop]
        block_m, block_f = np.empty(m.shape), np.empty(f.shape, dtype=bool)
        tangents = _scratch_hex(stop - start)
        state = np.empty((2, stop - start), dtype=np.uint64)
        _fused.hexahedron(
            coords[start:stop],
            block_m,
            block_f,
            tangents,
            state,
            refine[start:stop],
            at_gauss,
            hex_jacobian.FLOOR_TOLERANCE,
            hex_shape.DEGENERATE_TOLERANCE,
            hex_shape.FLAT_DIAGONALS,
        )
        ys, xs = tangents
        with np.errstate(invalid="ignore"):  # NaN of a collapsed element, as in numpy's
            np.arctan2(ys, xs, out=ys)
        _fused.hexahedron_angles(ys, state, block_m, DEGREES)
        m[...], f[...] = block_m, block_f
    out_m = dict(zip(HEX_METRICS, metrics))
    out_f = dict(zip(HEX_FLAGS, flags))
    out = {name: out_m.get(name) for name in hexahedron.METRICS}
    for name in ("area", "midside_offset_along", "midside_offset_across"):
        out[name] = np.full(n, np.nan)
    rows = np.flatnonzero(refine)
    if rows.size:  # rare: det J's sign decided by subdivision, in numpy
        again = hexahedron.measure(coords[rows], "hexahedron")
        for target, part in ((out, again[0]), (out_f, again[1])):
            for name, values in part.items():
                target[name][rows] = values
    return out, {name: out_f[name] for name in hexahedron.FLAGS}


def _scratch_hex(n: int) -> np.ndarray:
    """(2, 51, n) float64 working array of the hexahedron pass, kept per thread."""
    have = getattr(_local, "hex", None)
    if have is None or have.shape[2] < n:
        have = np.empty((2, 51, n))
        _local.hex = have
    if have.shape[2] == n:
        return have
    return have.reshape(-1)[: 2 * 51 * n].reshape(2, 51, n)


Kernel = Callable[..., tuple[dict[str, np.ndarray], dict[str, np.ndarray]]]


def kernel_for(cell: CellType) -> Kernel:
    """The kernel to measure ``cell`` with: its compiled pass when it has one, the
    extension is built and :data:`KERNEL_VARIABLE` does not force numpy; else its numpy
    kernel (``cell.kernel``)."""
    if _fused is None or forced_numpy():
        return cell.kernel
    if cell.kernel is quad.measure:  # quad, and the corners of quad8 and quad9
        return measure_quad
    if cell.name == "hexahedron":
        return measure_hexahedron
    return cell.kernel


def kernel_path(cells: Iterable[CellType]) -> str:
    """Which pass measures elements of the given cell types: ``"compiled"`` when the
    compiled pass measures any of them, else ``"numpy"``."""
    return "compiled" if any(kernel_for(c) is not c.kernel for c in cells) else "numpy"
