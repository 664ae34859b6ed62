"""Measuring and judging one chunk of elements: pure functions of their arguments.

:func:`measure_elements` lays a chunk of one cell type in its measuring plane (surface
cells) and calls the kernel its :class:`meshaudit.cells.CellType` names;
:func:`measure_chunk` adds the verdicts under the profiles. Neither depends on anything
but its arguments, so chunks can be measured in any order, thread or place.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..cells.registry import CELL_TYPES, CellType
from ..judge.profiles import Profile
from ..judge.verdicts import judge_by_region
from ..mesh.frames import Frame, to_local
from ..mesh.scale import element_exponents, scaled_lengths
from ..metrics import METRIC_NAMES, VALIDITY_FLAGS, length_power, quadratic
from ..metrics.fused import kernel_for
from ..results.report import FLAG_BIT

#: An element whose size (area of a surface element, |volume| of a solid) lies outside
#: 2^(-100 p) .. 2^(100 p), p its power of length, may be too small (or large) for the
#: products of up to eight lengths its metrics take; it is measured again at its own scale
#: (see :func:`measure_elements`). The same bound on its lengths, 2^-100 .. 2^100, whatever
#: the dimension.
_SIZE_EXPONENT = 100

#: Key of the constant-strain check's result among a chunk's metrics (with a material).
STRAIN_FAILED = "constant_strain_failed"


def _size(cell: CellType, metrics: dict[str, np.ndarray]) -> tuple[np.ndarray, int]:
    """(size (n,), its power of length): area of surface elements, |volume| of solids."""
    if cell.dimension == 3:
        return np.abs(metrics["volume"]), 3
    return metrics["area"], 2  # never negative


def measure_elements(
    cell: CellType | str,
    coords3: np.ndarray,
    frame: Frame,
    exponent: int = 0,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Metrics and flags of elements of one cell type (see :mod:`meshaudit.cells`),
    nodes ``coords3`` (n, k, 3).

    A surface cell (dimension 2) is laid in its measuring plane (``frame``) and its family
    kernel measures the shape on the corner nodes; a quadratic cell type then gets its own
    Jacobian part and midside checks on all its nodes. A solid (dimension 3) is measured
    by its kernel on every node in space, with no measuring plane. Metrics the kernel does
    not measure are NaN.

    ``coords3`` may be the nodes scaled by 2^-``exponent`` (see
    :func:`meshaudit.mesh.scale.normalised`): area, volume and det J are given back in the
    nodes' own units (length^2, length^3, length^dimension: :func:`meshaudit.metrics.length_power`).
    An element whose size (area, or |volume| of a solid) comes out beyond 2^+-200
    (2^+-300 for a volume) is measured again with its nodes scaled by a power of two of its
    own (:func:`meshaudit.mesh.scale.element_exponents`), so that no product of lengths
    overflows or underflows. ``coords3`` are expected within
    2^+-:data:`meshaudit.mesh.scale.SAFE_EXPONENT` (:func:`audit_elements` sees to it), so
    that any finite scale gives the same verdicts.
    """
    if isinstance(cell, str):
        cell = CELL_TYPES[cell]
    metrics, flags = _measure_elements(cell, coords3, frame)
    size, power = _size(cell, metrics)
    low, high = 2.0 ** (-_SIZE_EXPONENT * power), 2.0 ** (_SIZE_EXPONENT * power)
    odd = np.flatnonzero(~((size > low) & (size < high)))
    if odd.size:  # rare: collapsed elements, or elements of extreme size
        own = element_exponents(coords3[odd])
        rows, own = odd[own != 0], own[own != 0]
        if rows.size:
            with np.errstate(under="ignore"):
                scaled = np.ldexp(coords3[rows], -own[:, None, None])
            part = _measure_elements(cell, scaled, frame)
            _rescale(part[0], own, cell.dimension)
            _merge(metrics, flags, rows, part)
    if exponent:
        _rescale(metrics, exponent, cell.dimension)
    return metrics, flags


def _measure_elements(
    cell: CellType, coords3: np.ndarray, frame: Frame
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    kernel = kernel_for(cell)  # the compiled pass where there is one
    if cell.dimension == 3:  # a solid: measured in space, no plane to lay it in
        metrics, flags = kernel(coords3)
        return _with_every_metric(metrics, len(coords3)), _with_every_flag(flags, len(coords3))
    n_corners = cell.n_corners
    corners = coords3[:, :n_corners]
    if cell.is_quadratic:
        local = to_local(coords3, frame, n_corners)
        metrics, flags = kernel(corners, local[:, :n_corners])
        metrics, flags = quadratic.measure(cell.name, coords3, local, metrics, flags)
        return _with_every_metric(metrics, len(corners)), flags
    metrics, flags = kernel(corners, to_local(corners, frame))
    # det J of a linear surface element is bilinear or constant: its minimum is at a corner
    metrics["det_j_lower_bound"] = metrics["det_j_corner_min"]
    return _with_every_metric(metrics, len(corners)), flags


def _with_every_metric(metrics: dict[str, np.ndarray], n: int) -> dict[str, np.ndarray]:
    """``metrics`` with NaN for each metric of :data:`METRIC_NAMES` it lacks (in place)."""
    for name in METRIC_NAMES:
        if name not in metrics and name != "score":
            metrics[name] = np.full(n, np.nan)
    return metrics


def _with_every_flag(flags: dict[str, np.ndarray], n: int) -> dict[str, np.ndarray]:
    """``flags`` with False for each validity flag it lacks (in place): a kernel leaves
    out the flags that cannot occur for its cell type (a wedge cannot be a bow-tie)."""
    for name in VALIDITY_FLAGS:
        if name not in flags:
            flags[name] = np.zeros(n, dtype=bool)
    return flags


def _rescale(metrics: dict[str, np.ndarray], exponent: int | np.ndarray, dimension: int) -> None:
    """Area, volume and det J (and their quarter-point twins) measured on nodes scaled by
    2^-exponent, in place, back in the nodes' own units: each times 2^(p exponent), p its
    power of length (:func:`meshaudit.metrics.length_power`)."""
    for name in list(metrics):
        power = length_power(name, dimension)
        if power:
            metrics[name] = scaled_lengths(metrics[name], exponent, power)


def _merge(
    metrics: dict[str, np.ndarray],
    flags: dict[str, np.ndarray],
    rows: np.ndarray,
    part: tuple[dict[str, np.ndarray], dict[str, np.ndarray]],
) -> None:
    """Write the results ``part`` of elements ``rows`` over theirs (in place); a column
    the part does not have (a quarter-point twin) is not defined for those rows."""
    n = len(next(iter(flags.values())))
    for target, values, fill in ((metrics, part[0], np.nan), (flags, part[1], False)):
        for name in dict.fromkeys([*target, *values]):
            dtype = (values[name] if name in values else target[name]).dtype
            whole = target[name].copy() if name in target else np.full(n, fill, dtype)
            whole[rows] = values[name] if name in values else fill
            target[name] = whole


def measure_chunk(
    cell: CellType | str,
    coords3: np.ndarray,
    frame: Frame,
    profile: Profile,
    codes: np.ndarray | None = None,
    region_profiles: Sequence[Profile] = (),
    exponent: int = 0,
    material: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None,
) -> tuple[dict[str, np.ndarray], np.ndarray, dict[str, np.ndarray], np.ndarray]:
    """Metrics, flag bits, breach levels and verdicts of one chunk of one cell type.

    ``coords3`` may be the nodes scaled by 2^-``exponent`` (see
    :func:`measure_elements`); the metrics are judged in the nodes' own units.

    Element i is judged under ``profile`` when ``codes[i]`` is 0 (or ``codes`` is None),
    else under ``region_profiles[codes[i] - 1]``. Its score (``metrics["score"]``, see
    :mod:`meshaudit.judge.score`) is worked out here, with the verdict it belongs with.
    Pure: depends only on its arguments, so chunks can be measured in any order or place.

    ``material``: (lambda, mu, rho) per element (see
    :meth:`meshaudit.engine.materials.MaterialMap.constants`), or None: then the stiffness
    metrics stay NaN and nothing of :mod:`meshaudit.metrics.stiffness` runs. With it,
    ``metrics[STRAIN_FAILED]`` (bool) marks the elements failing the constant-strain check.
    """
    if isinstance(cell, str):
        cell = CELL_TYPES[cell]
    metrics, flags = measure_elements(cell, coords3, frame, exponent)
    if material is not None:
        from ..metrics import stiffness

        invalid = np.zeros(len(coords3), dtype=bool)
        for name in VALIDITY_FLAGS:
            invalid |= flags[name]
        found, failed = stiffness.measure(cell, coords3, frame, invalid, *material, exponent)
        metrics.update(found)
        metrics[STRAIN_FAILED] = failed
    if codes is None:
        codes = np.zeros(len(coords3), dtype=np.int16)
    levels, verdict, score = judge_by_region(
        cell.family, metrics, flags, (profile, *region_profiles), codes
    )
    metrics["score"] = score
    bits = np.zeros(len(verdict), dtype=np.uint32)
    for name, flag in flags.items():
        bits |= flag.astype(np.uint32) << np.uint32(FLAG_BIT[name])
    for name, lvl in levels.items():
        bits |= (lvl > 0).astype(np.uint32) << np.uint32(FLAG_BIT[name])
    return metrics, bits, levels, verdict
