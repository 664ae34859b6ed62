"""Element quality metrics: pure functions over (n_elements, n_nodes, dim) arrays.

The kernels live in one module per element family (:mod:`~meshaudit.metrics.quad`,
:mod:`~meshaudit.metrics.triangle`; quadratic cells add :mod:`~meshaudit.metrics.quadratic`);
:data:`meshaudit.cells.CELL_TYPES` says which kernel measures which cell type.

:data:`METRICS` is the machine-readable contract: every report uses these names, in
this order. Each entry says which direction is worse and what the metric means.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class MetricInfo:
    name: str
    worse: str  # "high" (larger is worse), "low" (smaller is worse) or "none"
    unit: str
    meaning: str
    #: Whether a profile can set warn/fail limits on it: not for "none", nor for the
    #: score, which is worked out from the verdict (see :mod:`meshaudit.judge.score`).
    limited: bool = True


METRICS: tuple[MetricInfo, ...] = (
    MetricInfo("area", "low", "length^2", "surface area of the element"),
    MetricInfo("det_j_min", "low", "length^2", "smallest det J over the Gauss points"),
    MetricInfo("det_j_max", "none", "length^2", "largest det J over the Gauss points", False),
    MetricInfo("det_j_corner_min", "low", "length^2", "smallest det J over the corner nodes"),
    MetricInfo(
        "det_j_lower_bound",
        "low",
        "length^2",
        "det J is at least this everywhere in the element (Bernstein bound; exact minimum "
        "for linear and straight-sided elements)",
    ),
    MetricInfo("jacobian_ratio", "high", "1", "largest over smallest Gauss-point det J"),
    MetricInfo("scaled_jacobian", "low", "1", "Knupp's scaled Jacobian, worst corner"),
    MetricInfo("aspect_ratio", "high", "1", "Robinson's aspect ratio (triangles: edge/altitude)"),
    MetricInfo("skew", "high", "deg", "Robinson's skew: principal axes off perpendicular"),
    MetricInfo("taper", "high", "1", "Robinson's taper"),
    MetricInfo("warp", "high", "deg", "fold angle between the two halves, 0 (flat) to 180"),
    MetricInfo("min_angle", "low", "deg", "smallest interior angle"),
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
)
#: Metrics only solid elements measure (see :mod:`meshaudit.metrics.solid`): profiles can
#: limit them and verdicts judge them, and their limits are built in for the solid
#: families (:mod:`meshaudit.judge.solid_limits`). They join the report columns
#: (:data:`METRIC_NAMES`) when the engine measures solids; a name already in
#: :data:`METRICS` keeps that entry.
SOLID_METRICS: tuple[MetricInfo, ...] = (
    MetricInfo(
        "volume", "low", "length^3", "signed volume of a solid element; no limit by default"
    ),
    MetricInfo("mean_ratio", "low", "1", "tetrahedra: Liu and Joe's mean ratio, 1 regular, 0 flat"),
    MetricInfo(
        "radius_ratio",
        "high",
        "1",
        "tetrahedra: circumradius over three inradii, 1 regular, infinite when flat",
    ),
    MetricInfo("edge_ratio", "high", "1", "solids: longest over shortest edge"),
    MetricInfo("min_dihedral", "low", "deg", "solids: smallest angle between two faces at an edge"),
    MetricInfo("max_dihedral", "high", "deg", "solids: largest angle between two faces at an edge"),
)
METRIC_NAMES: tuple[str, ...] = tuple(m.name for m in METRICS)
METRIC_INFO: dict[str, MetricInfo] = {
    **{m.name: m for m in SOLID_METRICS},
    **{m.name: m for m in METRICS},
}
#: The metrics a profile can limit, in report order.
LIMITED_METRICS: tuple[str, ...] = tuple(m.name for m in METRICS if m.limited)

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
    "LIMITED_METRICS",
    "METRICS",
    "METRIC_INFO",
    "METRIC_NAMES",
    "SOLID_METRICS",
    "VALIDITY_FLAGS",
    "WARNING_FLAGS",
    "MetricInfo",
]
