"""Everything about one element: nodes, det J at Gauss points and nodes, metrics against
the profile's limits with the reason for each breach, flags and neighbours.

Pure data (:class:`Explanation`); ``meshaudit.outputs.explain_text`` prints it and
``meshaudit.outputs.explain_plot`` draws it. det J comes from the same kernels the audit
uses, evaluated in the same measuring plane (:mod:`meshaudit.mesh.frames`); a solid's in
space, from its cell type's reference tables (:data:`meshaudit.cells.CELL_TYPES`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..cells.registry import CELL_TYPES
from ..errors import InputError
from ..judge.score import BAND
from ..judge.verdicts import INVALID_FLAGS, VERDICT_NAMES
from ..mesh.frames import choose_frame, to_local
from ..mesh.scale import element_exponents, scaled_lengths
from ..metrics import METRIC_INFO, METRIC_NAMES, STIFFNESS_METRICS, quadratic, unit_of
from ..metrics.fused import kernel_for
from .inspection import AuditedMesh, corner_table, element_nodes, neighbours
from .report import finite_or_none, json_float

#: Solids: their orientation is their own det J's sign; their faces can fold, cross or
#: flatten (see the kernels in meshaudit.metrics.solid).
SOLID_FLAG_REASONS = {
    "reversed": "det J is negative at every node and Gauss point: the node order is "
    "mirrored (the element is numbered inside out; reverse its node order)",
    "nonconvex": "a re-entrant corner: the corner Jacobians disagree in sign, or a face "
    "has a corner turned against the face's normal",
    "self_intersecting": "a face crosses itself: two of its corners are turned against "
    "the face's normal (as in an element twisted by half a turn)",
    "degenerate": "two corners are at the same place, or the element has no volume (it is flat)",
}

FLAG_REASONS = {
    "inverted": "det J is negative at {negative}: the map from the reference element "
    "folds over itself there",
    "undecided": "det J could not be shown to stay positive: it is at least {lower:.4g} "
    "(Bernstein bound after subdivision) and its smallest value found is {upper:.4g}; "
    "reported as inverted, since the sign of its minimum stays unknown",
    "reversed": "the nodes run clockwise about +z (negative signed area), as a 2-D solver "
    "reading x and y sees them (reverse the node order)",
    "nonconvex": "an interior angle exceeds 180 deg (largest {max_angle:.4g} deg): "
    "a re-entrant corner",
    "self_intersecting": "two opposite edges cross each other (a bow-tie): "
    "the node order is scrambled",
    "degenerate": "two corners are at the same place, or all corners lie on one line",
    "flipped_normal": "the element faces against the rest of its patch, which has no "
    "absolute orientation (reverse the node order)",
}


@dataclass
class MetricLine:
    """One metric of the element against its limits."""

    name: str
    value: float
    unit: str
    worse: str  # "high", "low" or "none"
    warn: float | None
    fail: float | None
    level: str  # "ok", "warn", "fail" or "no limit"
    reason: str  # why it breached, "" when within limits

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "value": json_float(self.value),
            "unit": self.unit,
            "worse": self.worse,
            "warn": self.warn,
            "fail": self.fail,
            "level": self.level,
            "reason": self.reason,
        }


@dataclass
class Explanation:
    """Everything about element ``id`` (report index ``index``)."""

    index: int
    id: int
    cell_type: str
    family: str
    verdict: str
    profile: str
    node_indices: np.ndarray  # (k,) 0-based node indices, in element order
    node_numbers: np.ndarray  # (k,) the same nodes' numbers (the file's node labels)
    coordinates: np.ndarray  # (k, 3)
    gauss_points: np.ndarray  # (m, dimension) reference coordinates
    det_j_gauss: np.ndarray  # (m,)
    node_reference: np.ndarray  # (c, dimension) reference coordinates of the corners
    det_j_nodes: np.ndarray  # (c,) det J at each of them (every node of a quadratic
    #                          element; NaN at a pyramid's apex, where it has no value)
    metrics: list[MetricLine]
    flags: list[str]
    flag_reasons: dict[str, str]
    neighbour_ids: np.ndarray
    neighbour_rows: np.ndarray
    measured_in: str  # "mesh plane", "element's best-fit plane" or "space" (a solid)
    #: det J over the whole element: lower (det J >= lower everywhere), upper (smallest
    #: value found), xi, eta (and zeta for a solid: where; NaN when found inside by
    #: subdivision at a point not kept), undecided (bool)
    det_j_bound: dict[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    findings: list[str] = field(default_factory=list)  # mesh-level findings naming it
    node_numbering: str = ""  # what the node numbers are (e.g. "gmsh node tags")
    element_numbering: str = ""  # what the element numbers are (e.g. "gmsh element tags")

    @property
    def breaches(self) -> list[MetricLine]:
        return [m for m in self.metrics if m.level in ("warn", "fail")]

    @property
    def dimension(self) -> int:
        """2 for a surface element, 3 for a solid."""
        return int(self.gauss_points.shape[1])

    def to_dict(self) -> dict[str, Any]:
        def floats(a: np.ndarray) -> list[Any]:
            return [finite_or_none(v) for v in np.ravel(a)]

        axes = ("xi", "eta", "zeta")[: self.dimension]

        return {
            "id": self.id,
            "index": self.index,
            "type": self.cell_type,
            "verdict": self.verdict,
            "profile": self.profile,
            "measured_in": self.measured_in,
            "numbering": {"elements": self.element_numbering, "nodes": self.node_numbering},
            "nodes": [
                {"node": int(n), "node_index": int(i), "position": k + 1, "xyz": floats(c)}
                for k, (n, i, c) in enumerate(
                    zip(self.node_numbers, self.node_indices, self.coordinates)
                )
            ],
            "gauss_points": [
                {**dict(zip(axes, map(float, g))), "det_j": finite_or_none(d)}
                for g, d in zip(self.gauss_points, self.det_j_gauss)
            ],
            "det_j_nodes": [
                {
                    "node": int(self.node_numbers[k]),
                    **dict(zip(axes, map(float, r))),
                    "det_j": finite_or_none(d),
                }
                for k, (r, d) in enumerate(zip(self.node_reference, self.det_j_nodes))
            ],
            "det_j_bound": {
                k: (v if isinstance(v, bool) else finite_or_none(v))
                for k, v in self.det_j_bound.items()
            },
            "metrics": [m.to_dict() for m in self.metrics],
            "flags": self.flags,
            "flag_reasons": self.flag_reasons,
            "neighbours": [int(i) for i in self.neighbour_ids],
            "findings": self.findings,
            "notes": self.notes,
        }


def local_nodes(audited: AuditedMesh, i: int) -> tuple[np.ndarray, str]:
    """All nodes of element ``i`` laid in its measuring plane (k, 2), as the audit does."""
    local, exponent, where = scaled_local_nodes(audited, i)
    return scaled_lengths(local, exponent, 1), where


def scaled_local_nodes(audited: AuditedMesh, i: int) -> tuple[np.ndarray, int, str]:
    """:func:`local_nodes` scaled by 2^-k, and k: an element of extreme size is measured
    at a scale where products of lengths cannot overflow or underflow (k = 0 for any
    ordinary one; see :mod:`meshaudit.mesh.scale`). A solid's nodes stay in space (k, 3)."""
    cell = CELL_TYPES[audited.report.cell_types[int(audited.report.type_codes[i])]]
    coords3 = audited.elements.points[element_nodes(audited.elements, i)]
    exponent = int(element_exponents(coords3[None])[0])
    if exponent:
        with np.errstate(under="ignore"):
            coords3 = np.ldexp(coords3, -exponent)
    if cell.dimension == 3:
        return coords3, exponent, "space"
    surface, _ = audited.elements.surface_part()
    frame = choose_frame(surface, beside_solids=audited.elements.has_solids)
    local = to_local(coords3[None], frame, cell.n_corners)[0]
    where = "mesh plane" if frame.kind == "planar" else "element's best-fit plane"
    return local, exponent, where


def jacobians(cell_type: str, local: np.ndarray) -> tuple[np.ndarray, ...]:
    """(Gauss points, det J there, node reference points, det J at the nodes).

    Linear elements: the corners; quadratic ones: every node (midsides too), with the
    solver's Gauss rule of that cell type, exactly as the audit measures them.
    """
    cell = CELL_TYPES[cell_type]
    gauss, nodal = cell.jacobians(local[None])
    return cell.gauss_points, gauss[0], cell.reference_nodes, nodal[0]


def det_j_bound(
    cell_type: str, local: np.ndarray, node_points: np.ndarray, det_nodes: np.ndarray
) -> dict[str, Any]:
    """det J over the whole element: at least ``lower`` everywhere, ``upper`` the smallest
    value found, at reference point (``xi``, ``eta``), and whether the sign of the minimum
    stayed ``undecided``. Quadratic elements: the Bernstein bound the audit uses; linear
    ones: det J is bilinear or constant, so the smallest corner value is the minimum.
    Solids: see :func:`solid_det_j_bound`."""
    if CELL_TYPES[cell_type].dimension == 3:
        return solid_det_j_bound(cell_type, local, node_points, det_nodes)
    if cell_type in quadratic.ELEMENTS:
        part = quadratic.jacobian_part(quadratic.ELEMENTS[cell_type], local[None], locate=True)
        lower, upper = float(part.lower[0]), float(part.bounds.upper[0])
        xi, eta = (float(v) for v in part.bounds.where[0])
        undecided = bool(part.bounds.undecided[0])
    else:
        k = int(np.argmin(det_nodes))
        lower = upper = float(det_nodes[k])
        xi, eta = (float(v) for v in node_points[k])
        undecided = False
    return {"lower": lower, "upper": upper, "xi": xi, "eta": eta, "undecided": undecided}


def solid_det_j_bound(
    cell_type: str, coords: np.ndarray, node_points: np.ndarray, det_nodes: np.ndarray
) -> dict[str, Any]:
    """det J over a whole solid (nodes ``coords`` (k, 3) in space), as the audit's kernel
    bounds it: ``lower`` its certified lower bound (``det_j_lower_bound``); ``upper`` the
    smallest value found, at the Gauss points, the nodes, or (tetra10, hexahedra) inside
    by the kernel's subdivision, at (``xi``, ``eta``, ``zeta``) (NaN where the
    subdivision does not keep the point); ``undecided`` whether the sign of the minimum
    stayed unknown (reported as inverted)."""
    cell = CELL_TYPES[cell_type]
    gauss, nodal = cell.jacobians(coords[None])
    values = np.concatenate([gauss[0], nodal[0]])
    points = np.vstack([cell.gauss_points, node_points])
    values = np.where(np.isnan(values), np.inf, values)  # the pyramid's apex
    k = int(np.argmin(values))
    upper, where = float(values[k]), points[k].astype(float)
    metrics, _ = kernel_for(cell)(coords[None])  # the pass the audit took
    lower = float(metrics["det_j_lower_bound"][0])
    undecided = False
    if cell_type == "tetra10":
        from ..metrics.solid import tetra

        found = tetra.det_j_bounds(coords[None])
        if float(found.upper[0]) < upper:  # found inside (NaN: not looked for)
            upper, where = float(found.upper[0]), found.where[0, 1:].astype(float)
        undecided = bool(found.undecided[0])
    elif cell.family == "hexahedron":
        from ..metrics.solid import hex_jacobian

        part = hex_jacobian.jacobian_part(cell_type, coords[None])
        if float(part.found[0]) < upper:  # found inside, at a point not kept
            upper, where = float(part.found[0]), np.full(3, np.nan)
        undecided = bool(part.undecided[0])
    return {
        "lower": lower,
        "upper": upper,
        "xi": float(where[0]),
        "eta": float(where[1]),
        "zeta": float(where[2]),
        "undecided": undecided,
    }


def stiffness_reason(
    name: str, value: float, reason: str, materials: dict | None, solid: bool = False
) -> str:
    """What a stiffness metric's value of one element means (see
    :mod:`meshaudit.metrics.stiffness`), after ``reason`` (its limit, if breached)."""
    from ..metrics.stiffness.bending import FIELD, FIELD_SOLID

    if materials is None:
        return "not defined: no material given (--material, [materials])"
    if math.isnan(value):
        return "not defined: no material covers this element's region"
    if name == "stable_time_step":
        what = (
            "0: the element is not valid (a validity flag, or det J <= 0 at a Gauss point)"
            if value == 0
            else "2/omega_max of its stiffness (full Gauss rule) against its lumped mass, in "
            "the time unit of the material's units"
        )
    elif math.isinf(value):
        what = "infinite: the element is not valid"
    elif name == "bending_error":
        what = FIELD_SOLID if solid else FIELD
    elif solid:
        what = "bending_error minus its undistorted twin's (the box, the tetrahedron on "
        what += "alternate box corners, the right prism or pyramid of the same principal "
        what += "lengths): what the distortion adds"
    else:
        what = "bending_error minus its undistorted twin's (rectangle 2|e1| x 2|e2|, or the "
        what += "isosceles triangle on the longest edge): what the distortion adds"
    return f"{reason}; {what}" if reason else what


def _reason(name: str, value: float, worse: str, level: str, warn, fail) -> str:
    if level not in ("warn", "fail"):
        return ""
    limit = fail if level == "fail" else warn
    side = "above" if worse == "high" else "below"
    text = f"{value:.4g} is {side} the {level} limit {limit:g}"
    if np.isinf(value):
        text = f"{value} (infinite) is past the {level} limit {limit:g}"
    return text


def _score_reason(score: float, verdict: int, invalid: bool) -> str:
    """Where the score sits: its verdict's band and the distortion T within it (the
    definition is in :mod:`meshaudit.judge.score`)."""
    if invalid:
        return "0: an invalid element"
    lo, hi = (2 - verdict) * BAND, (3 - verdict) * BAND
    within = 3.0 * score - (2 - verdict)  # 2^-T
    distortion = max(0.0 - math.log2(within), 0.0) if within > 0.0 else math.inf
    return (
        f"in the {VERDICT_NAMES[verdict]} band {lo:.3g} to {hi:.3g}; distortion "
        f"T = {distortion:.3g} summed over the limited metrics (0 = all ideal, 1 = one at "
        "its fail limit)"
    )


def size_jump(audited: AuditedMesh, i: int) -> str:
    """The neighbour behind element ``i``'s size ratio, in words ('' when it has none):
    among the elements sharing an edge with it (solids: a face, three corners or more) and
    counted as sizes (valid), the one whose characteristic length differs most."""
    report = audited.report
    table = corner_table(audited.elements)
    solid = CELL_TYPES[report.cell_types[int(report.type_codes[i])]].dimension == 3
    mine = np.unique(table[i])
    near = neighbours(table, i)
    rows = np.sort(table[near], axis=1)  # a triangle repeats its last corner: count once
    distinct = np.ones(rows.shape, dtype=bool)
    distinct[:, 1:] = rows[:, 1:] != rows[:, :-1]
    shared = (np.isin(rows, mine) & distinct).sum(axis=1)
    by_type = np.array([CELL_TYPES[t].dimension for t in report.cell_types])
    dims = by_type[report.type_codes[near]]
    near = near[(shared >= (3 if solid else 2)) & (dims == (3 if solid else 2))]
    invalid = np.zeros(near.size, dtype=bool)
    for flag in INVALID_FLAGS:
        invalid |= report.flag(flag)[near]
    near = near[~invalid]
    if near.size == 0:
        return ""
    size = report.metrics["volume" if solid else "area"]
    h = np.cbrt(np.abs(size)) if solid else np.sqrt(np.abs(size))
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.fmax(h[near] / h[i], h[i] / h[near])
    j = int(near[np.nanargmax(ratio)]) if not np.isnan(ratio).all() else int(near[0])
    word = "cbrt |volume|" if solid else "sqrt area"
    return f"against element {int(report.ids[j])} ({word} {h[i]:.4g} here, {h[j]:.4g} there)"


def metric_lines(audited: AuditedMesh, i: int) -> list[MetricLine]:
    report = audited.report
    family = report.cell_families[int(report.families[i])]
    lines = []
    for name in METRIC_NAMES:
        info = METRIC_INFO[name]
        value = float(report.metrics[name][i])
        lim = report.profile_of(i).limit(family, name)
        warn, fail = (lim.warn, lim.fail) if lim is not None else (None, None)
        lvl = report.levels.get(name)
        if lim is None or lvl is None:
            level = "no limit"
        else:
            level = VERDICT_NAMES[int(lvl[i])]
        reason = _reason(name, value, info.worse, level, warn, fail)
        if name == "score":
            invalid = any(report.flag(f)[i] for f in INVALID_FLAGS)
            reason = _score_reason(value, int(report.verdict[i]), invalid)
        if name in STIFFNESS_METRICS:
            solid = CELL_TYPES[report.cell_types[int(report.type_codes[i])]].dimension == 3
            reason = stiffness_reason(name, value, reason, report.materials, solid)
        if name == "size_ratio" and reason:
            reason += ": " + size_jump(audited, i)
        unit = unit_of(name, [CELL_TYPES[report.cell_types[int(report.type_codes[i])]].dimension])
        lines.append(MetricLine(name, value, unit, info.worse, warn, fail, level, reason))
    return lines


def _flag_reasons(
    flags: list[str], node_numbers, det_nodes, metrics, bound: dict[str, Any], solid: bool
) -> dict[str, str]:
    negative = ", ".join(
        f"node {int(n)} (det J {d:.4g})" for n, d in zip(node_numbers, det_nodes) if d < 0
    )
    if not negative and bound and bound["upper"] < 0:
        axes = ("xi", "eta", "zeta") if solid else ("xi", "eta")
        at = ", ".join(f"{bound[a]:.4g}" for a in axes)
        negative = (
            f"({', '.join(axes)}) = ({at}) in the element "
            f"(det J {bound['upper']:.4g}; no node or Gauss point shows it)"
        )
    values = {m.name: m.value for m in metrics}
    reasons = {**FLAG_REASONS, **SOLID_FLAG_REASONS} if solid else FLAG_REASONS
    out = {}
    for flag in flags:
        template = reasons.get(flag)
        if flag == "inverted" and bound.get("undecided"):
            template = FLAG_REASONS["undecided"]
        if template:
            out[flag] = template.format(negative=negative or "a corner", **bound, **values)
    return out


def explain(audited: AuditedMesh, element_id: int) -> Explanation:
    """Explain the element with id ``element_id``; InputError when no element has it."""
    report = audited.report
    try:
        i = report.position_of(int(element_id))
    except KeyError:
        lo, hi = int(report.ids.min()), int(report.ids.max())
        scheme = report.summary.element_numbers or "element numbers"
        raise InputError(
            f"no element with id {element_id} in {report.summary.source} (ids {lo}..{hi}: {scheme})"
        ) from None
    family = report.cell_families[int(report.families[i])]
    cell_type = report.cell_types[int(report.type_codes[i])]
    local, exponent, where = scaled_local_nodes(audited, i)
    gauss_pts, det_gauss, ref_corners, det_corners = jacobians(cell_type, local)
    bound = det_j_bound(cell_type, local, ref_corners, det_corners)
    power = CELL_TYPES[cell_type].dimension  # det J in length^2 or length^3
    if exponent:  # det J back in the mesh's units
        det_gauss, det_corners = (
            scaled_lengths(d, exponent, power) for d in (det_gauss, det_corners)
        )
        for key in ("lower", "upper"):
            bound[key] = float(scaled_lengths(np.float64(bound[key]), exponent, power))
    nodes = element_nodes(audited.elements, i)
    numbers = audited.elements.numbering.node_numbers(nodes)
    lines = metric_lines(audited, i)
    flags = report.flags_of(i)
    near = neighbours(corner_table(audited.elements), i)
    return Explanation(
        index=i,
        id=int(report.ids[i]),
        cell_type=cell_type,
        family=family,
        verdict=VERDICT_NAMES[int(report.verdict[i])],
        profile=report.profile_of(i).name,
        node_indices=nodes,
        node_numbers=numbers,
        coordinates=audited.elements.points[nodes],
        gauss_points=gauss_pts,
        det_j_gauss=det_gauss,
        node_reference=ref_corners,
        det_j_nodes=det_corners,
        metrics=lines,
        flags=flags,
        flag_reasons=_flag_reasons(flags, numbers, det_corners, lines, bound, power == 3),
        neighbour_ids=report.ids[near],
        neighbour_rows=near,
        measured_in=where,
        det_j_bound=bound,
        findings=findings_naming(report, int(report.ids[i])),
        node_numbering=audited.elements.numbering.nodes,
        element_numbering=audited.elements.numbering.elements,
    )


def findings_naming(report: Any, element_id: int) -> list[str]:
    """'kind (severity): message' of each mesh-level finding that names this element."""
    out = []
    for f in getattr(report, "findings", None) or []:
        ids = getattr(f, "element_ids", None)
        if ids is not None and element_id in np.asarray(ids).ravel():
            out.append(f"{f.kind} ({f.severity}): {f.message}")
    return out
