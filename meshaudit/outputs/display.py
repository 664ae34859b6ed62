"""How numbers and metric names read on a terminal: round-off shown as 0, and short metric
names (with a legend) when the terminal is narrow.

**Round-off.** A value whose magnitude is below its metric's round-off tolerance prints
as ``0`` (the JSON and CSV reports keep every digit):

- angles (deg): 1e-6 deg (arccos of a cosine one unit in the last place off 1 is about
  1e-6 deg);
- dimensionless ratios (unit 1): 1e-9;
- lengths to a power p (area, volume, det J): 1e-9 times h^p, h the mesh's median
  characteristic length (sqrt area of surface elements, cbrt |volume| of solids), so a
  det J of -2.4e-16 on a mesh of unit elements prints 0 but the same number on a mesh of
  micrometre elements does not.

**Short names.** Under :data:`WIDE` columns the tables name metrics by :data:`SHORT` and
units by :data:`SHORT_UNITS`, and a legend line below says what each short name stands
for; no name is ever cut.
"""

from __future__ import annotations

import math

import numpy as np

from ..metrics import METRIC_INFO, METRIC_NAMES, length_power

#: Terminals at least this wide get full metric names.
WIDE = 120

#: Round-off tolerances (see the module docstring).
ANGLE_ZERO = 1e-6
RATIO_ZERO = 1e-9
LENGTH_ZERO = 1e-9

#: Short metric names for narrow terminals: each unique, at most 10 characters and
#: without spaces, so that a table wraps its text between names, never inside one.
SHORT: dict[str, str] = {
    "det_j_min": "dJ-min",
    "det_j_max": "dJ-max",
    "det_j_corner_min": "dJ-corner",
    "det_j_lower_bound": "dJ-bound",
    "jacobian_ratio": "J-ratio",
    "scaled_jacobian": "scaled-J",
    "aspect_ratio": "aspect",
    "min_angle": "min-angle",
    "max_angle": "max-angle",
    "condition": "cond",
    "midside_offset_along": "mid-along",
    "midside_offset_across": "mid-across",
    "edge_ratio": "edge-ratio",
    "mean_ratio": "mean-ratio",
    "radius_ratio": "rad-ratio",
    "min_dihedral": "min-dihed",
    "max_dihedral": "max-dihed",
    "size_ratio": "size-ratio",
}
SHORT_UNITS: dict[str, str] = {
    "length^2": "L^2",
    "length^3": "L^3",
    "length^2 or length^3": "L^2|L^3",
}
assert len(set(SHORT.values())) == len(SHORT)
assert not set(SHORT.values()) & set(METRIC_NAMES)
assert not any(" " in v for v in SHORT.values())


def narrow(width: int) -> bool:
    """Whether a terminal of ``width`` columns gets short names."""
    return width < WIDE


def label(name: str, short: bool) -> str:
    """The metric's name as a table shows it."""
    return SHORT.get(name, name) if short else name


def unit_label(unit: str, short: bool) -> str:
    return SHORT_UNITS.get(unit, unit) if short else unit


def with_unit(name: str, unit: str) -> str:
    """A narrow table's metric cell: the short name and its short unit, unless it is 1."""
    return label(name, True) + ("" if unit == "1" else " " + unit_label(unit, True))


def legend(names: list[str], units: list[str] | None = None) -> str:
    """'short names: dJ min = det_j_min, ...; L = the mesh's length unit' for the short
    names among ``names`` (empty when none is shortened)."""
    used = [f"{SHORT[n]} = {n}" for n in dict.fromkeys(names) if n in SHORT]
    if units and any(u in SHORT_UNITS for u in units):
        used.append("L = the mesh's length unit")
    return ("short names: " + "; ".join(used)) if used else ""


def fmt(x: float | None, zero: float = 0.0) -> str:
    """A number in 4 significant figures; ``|x| < zero`` prints ``0``; None and NaN ``-``."""
    if x is None:
        return "-"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if math.isnan(x):
        return "-"
    if abs(x) < zero:
        return "0"
    return f"{x:.4g}"


def characteristic_size(metrics: dict[str, np.ndarray]) -> float:
    """The mesh's median characteristic length (sqrt area, cbrt |volume|); 1 when it has
    no finite positive size."""
    area = np.asarray(metrics["area"], dtype=float)
    volume = np.abs(np.asarray(metrics["volume"], dtype=float))
    h = np.where(np.isnan(area), np.cbrt(volume), np.sqrt(np.abs(area)))
    h = h[np.isfinite(h) & (h > 0)]
    return float(np.median(h)) if h.size else 1.0


def zero_tolerances(metrics: dict[str, np.ndarray], dimensions: set[int]) -> dict[str, float]:
    """Metric -> the magnitude below which its values print as 0 (see the module docstring)."""
    h = characteristic_size(metrics)
    out = {}
    for name in METRIC_NAMES:
        unit = METRIC_INFO[name].unit
        if unit == "deg":
            out[name] = ANGLE_ZERO
        elif unit == "1":
            out[name] = RATIO_ZERO
        else:
            power = max(length_power(name, d) for d in dimensions)
            with np.errstate(over="ignore", under="ignore"):  # extreme sizes: inf or 0
                out[name] = float(LENGTH_ZERO * np.power(np.float64(h), power))
    return out
