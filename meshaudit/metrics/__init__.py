"""Element quality metrics: pure functions over (n_elements, n_nodes, dim) arrays.

The kernels live in one module per element family (:mod:`~meshaudit.metrics.quad`,
:mod:`~meshaudit.metrics.triangle`; quadratic cells add :mod:`~meshaudit.metrics.quadratic`;
the solids, :mod:`meshaudit.metrics.solid`); :data:`meshaudit.cells.CELL_TYPES` says which
kernel measures which cell type.

:data:`METRICS` is the machine-readable contract: every report uses these names, in
this order. Each entry says which direction is worse and what the metric means.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

#: det J is in length^d per unit reference measure, d the element's dimension.
DET_J_UNIT = "length^2 or length^3"


@dataclass(frozen=True)
class MetricInfo:
    name: str
    worse: str  # "high" (larger is worse), "low" (smaller is worse) or "none"
    #: "1", "deg", "length^2", "length^3", DET_J_UNIT (see length_power) or "time" (the
    #: unit of time of the material's consistent units: seconds for SI)
    unit: str
    meaning: str
    #: Whether a profile can set warn/fail limits on it: not for "none", nor for the
    #: score, which is worked out from the verdict (see :mod:`meshaudit.judge.score`).
    limited: bool = True


METRICS: tuple[MetricInfo, ...] = (
    MetricInfo("area", "low", "length^2", "surface area of the element (surface elements)"),
    MetricInfo("det_j_min", "low", DET_J_UNIT, "smallest det J over the Gauss points"),
    MetricInfo("det_j_max", "none", DET_J_UNIT, "largest det J over the Gauss points", False),
    MetricInfo("det_j_corner_min", "low", DET_J_UNIT, "smallest det J over the nodes"),
    MetricInfo(
        "det_j_lower_bound",
        "low",
        DET_J_UNIT,
        "det J is at least this everywhere in the element (Bernstein bound; exact minimum "
        "for linear and straight-sided elements)",
    ),
    MetricInfo("jacobian_ratio", "high", "1", "largest over smallest Gauss-point det J"),
    MetricInfo("scaled_jacobian", "low", "1", "Knupp's scaled Jacobian, worst corner"),
    MetricInfo(
        "aspect_ratio",
        "high",
        "1",
        "Robinson's aspect ratio (triangles: edge/altitude; hexahedra: three principal axes)",
    ),
    MetricInfo("skew", "high", "deg", "Robinson's skew: principal axes off perpendicular"),
    MetricInfo("taper", "high", "1", "Robinson's taper"),
    MetricInfo(
        "warp",
        "high",
        "deg",
        "fold angle between the two halves, 0 (flat) to 180 (solids: worst quadrilateral face)",
    ),
    MetricInfo("min_angle", "low", "deg", "smallest interior angle (solids: of the faces)"),
    MetricInfo("max_angle", "high", "deg", "largest interior angle (reflex > 180)"),
    MetricInfo("condition", "high", "1", "Knupp's condition number, worst corner"),
    MetricInfo(
        "score",
        "low",
        "1",
        "meshaudit's score: fail below 1/3, warn 1/3 to 2/3, ok above 2/3; 1 ideal, 0 invalid",
        False,
    ),
    MetricInfo(
        "midside_offset_along",
        "high",
        "1",
        "quadratic elements: worst midside node's shift along its edge from the chord "
        "midpoint, per edge length (0.25 = quarter point)",
    ),
    MetricInfo(
        "midside_offset_across",
        "high",
        "1",
        "quadratic elements: worst midside node's distance from its chord, per edge length",
    ),
    MetricInfo("volume", "low", "length^3", "volume of the element (solids)"),
    MetricInfo("edge_ratio", "high", "1", "solids: longest over shortest edge"),
    MetricInfo(
        "mean_ratio",
        "low",
        "1",
        "tetrahedra: Liu and Joe's mean ratio, 1 regular, 0 flat, negative inverted",
    ),
    MetricInfo(
        "radius_ratio",
        "high",
        "1",
        "tetrahedra: circumradius over three inradii, 1 regular, infinite flat",
    ),
    MetricInfo(
        "min_dihedral", "low", "deg", "tetrahedra, hexahedra: smallest angle between two faces"
    ),
    MetricInfo(
        "max_dihedral", "high", "deg", "tetrahedra, hexahedra: largest angle between two faces"
    ),
    MetricInfo(
        "stable_time_step",
        "low",
        "time",
        "with a material: 2/omega_max of the element's stiffness against its lumped mass, "
        "the explicit step it allows (0 for an invalid element)",
    ),
    MetricInfo(
        "bending_error",
        "high",
        "1",
        "with a material: energy of the strain error (element's strain minus the exact one "
        "at its Gauss points) under exact pure bending, over the exact energy, worst "
        "principal axis (solids: worst pair of principal axes); never negative",
    ),
    MetricInfo(
        "bending_error_distortion",
        "high",
        "1",
        "bending_error minus the same element type's undistorted value (rectangle, "
        "isosceles triangle, box, ...)",
    ),
    MetricInfo(
        "size_ratio",
        "high",
        "1",
        "size jump to a neighbour: largest ratio of characteristic lengths (sqrt area, "
        "cbrt volume) to an element sharing an edge (solids: a face); 1 uniform or alone",
    ),
)
#: Metrics worked out from the neighbours, after every element is measured (the kernels
#: leave them NaN): see :mod:`meshaudit.mesh.neighbours`.
NEIGHBOUR_METRICS: tuple[str, ...] = ("size_ratio",)
METRIC_NAMES: tuple[str, ...] = tuple(m.name for m in METRICS)
METRIC_INFO: dict[str, MetricInfo] = {m.name: m for m in METRICS}
#: The metrics a profile can limit, in report order.
LIMITED_METRICS: tuple[str, ...] = tuple(m.name for m in METRICS if m.limited)
#: Metrics only solids measure (NaN for every surface element).
SOLID_METRICS: tuple[str, ...] = (
    "volume",
    "edge_ratio",
    "mean_ratio",
    "radius_ratio",
    "min_dihedral",
    "max_dihedral",
)
#: Metrics worked out from the element's stiffness and mass: only with a material
#: (see :mod:`meshaudit.metrics.stiffness`), NaN otherwise.
STIFFNESS_METRICS: tuple[str, ...] = (
    "stable_time_step",
    "bending_error",
    "bending_error_distortion",
)


def unit_of(name: str, dimensions: Iterable[int] = (2, 3)) -> str:
    """The unit of metric ``name`` for elements of the given ``dimensions`` (2, 3 or
    both): det J reads "length^2" for surface elements alone, "length^3" for solids
    alone, :data:`DET_J_UNIT` for both; other metrics their own unit."""
    unit = METRIC_INFO[name].unit
    dims = set(dimensions)
    if unit == DET_J_UNIT and len(dims) == 1:
        return f"length^{dims.pop()}"
    return unit


def length_power(name: str, dimension: int) -> int:
    """The power of length metric ``name`` is in for an element of ``dimension`` (2: a
    surface, 3: a solid): 2 for area, 3 for volume, ``dimension`` for det J (length^2 or
    length^3 per unit reference measure), 0 for the dimensionless metrics. A quarter-point
    twin (``"det_j_min|without_quarter_points"``) is in its metric's unit."""
    unit = METRIC_INFO[name.split("|")[0]].unit
    if unit == DET_J_UNIT:
        return dimension
    return {"length^2": 2, "length^3": 3}.get(unit, 0)


#: Validity flags, in report order. Any of them makes an element invalid (fail), except
#: ``reversed``, which only says why an element is inverted.
VALIDITY_FLAGS: tuple[str, ...] = (
    "inverted",
    "reversed",
    "nonconvex",
    "self_intersecting",
    "degenerate",
)

#: Flags that call for attention but do not invalidate an element: each makes its verdict
#: at least "warn". ``quarter_point``: a midside node sits at the quarter point (det J
#: vanishes at the corner, the singular crack-tip construction); ``flipped_normal``: a
#: shell element whose normal disagrees with its neighbours' (the minority of its patch).
WARNING_FLAGS: tuple[str, ...] = ("quarter_point", "flipped_normal")

__all__ = [
    "DET_J_UNIT",
    "LIMITED_METRICS",
    "METRICS",
    "METRIC_INFO",
    "METRIC_NAMES",
    "NEIGHBOUR_METRICS",
    "SOLID_METRICS",
    "STIFFNESS_METRICS",
    "VALIDITY_FLAGS",
    "WARNING_FLAGS",
    "MetricInfo",
    "length_power",
    "unit_of",
]
