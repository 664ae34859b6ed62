"""The Jacobian part and the midside-node checks of quadratic elements.

quad8 (serendipity) and quad9 (Lagrange) live on the reference square [-1, 1]^2,
triangle6 on the reference triangle (0, 0), (1, 0), (0, 1); node order as in meshio.
The shape parameters (aspect ratio, skew, taper, warp, angles, scaled Jacobian,
condition) come from the linear kernel of the family applied to the corner nodes, so a
straight-sided quadratic element reports the same values as its linear counterpart.
This module replaces what the curved map changes:

- ``det_j_min`` / ``det_j_max`` / ``jacobian_ratio``: det J at the solver's Gauss points
  (3x3 for the quads, the 3-point degree-2 rule for triangle6);
- ``det_j_corner_min``: det J at every node, corners and midsides (and the quad9 centre);
- ``det_j_lower_bound``: det J over the whole element, bounded below by its Bernstein
  coefficients (:mod:`meshaudit.metrics.bernstein`); the element is ``inverted`` when det
  J is negative anywhere, or cannot be shown not to be;
- ``area``: the curved element's true area, the Gauss sum of |x_xi cross x_eta| in 3-D
  (exact for a flat element: det J is a polynomial the rule integrates exactly);
- ``midside_offset_along`` / ``midside_offset_across``: worst midside node's offset from
  its chord midpoint, along and across the chord, as fractions of the chord length.

Quarter-point rule: a midside node a quarter of the edge from a corner makes det J
vanish at that corner (the singular crack-tip element); nearer still, det J is negative
there. R. D. Henshell and K. G. Shaw, "Crack tip finite elements are unnecessary",
Int. J. Numer. Meth. Engng 9 (1975) 495-507, and R. S. Barsoum, "On the use of
isoparametric finite elements in linear fracture mechanics", Int. J. Numer. Meth. Engng
10 (1976) 25-37 (citations from memory). Such an element is flagged ``quarter_point``
(a warning), an element pulled past it is ``inverted`` (a failure). Barsoum's collapsed
form (a quad side collapsed onto the tip) is recognised as well and measured as the
triangle it becomes. For a flagged element the metrics the quarter point spoils by itself
are measured again without it (:func:`without_quarter_points`), so that the verdict
softens only what the quarter point causes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..cells.mapping import at_points, jacobian_determinants
from ..cells.registry import CELL_TYPES, CellType
from . import bernstein, triangle
from .common import DEGENERATE_TOLERANCE, norm

#: How close (fraction of the edge length, along and across the chord) to the quarter
#: point a midside node counts as placed there on purpose. Common practice, no single
#: source.
QUARTER_POINT_TOLERANCE = 0.01

#: Metrics this module measures that linear elements do not have (NaN for them).
MIDSIDE_METRICS = ("midside_offset_along", "midside_offset_across")


@dataclass(frozen=True)
class QuadraticElement:
    """Reference data of one quadratic cell type, derivative tables precomputed."""

    n_corners: int
    gauss_weights: np.ndarray  # (g,)
    gauss_derivatives: np.ndarray  # (g, 2, k) dN/dxi, dN/deta at the Gauss points
    node_derivatives: np.ndarray  # (k, 2, k) the same at every node
    midside_edges: np.ndarray  # (s, 3) corner a, corner b, midside node
    space: bernstein.BernsteinSpace  # det J's polynomial space
    space_derivatives: np.ndarray  # (s, 2, k) the derivatives at the space's points
    #: (s + g + k, s): det J at the space's points -> its s Bernstein coefficients, then
    #: its values at the g Gauss points and the k nodes (det J is in the space, so this
    #: interpolation is exact; at the corners the rows are exactly 1 and 0)
    from_space: np.ndarray
    sample_points: np.ndarray  # (g + k, 2) the Gauss points, then the nodes


def _element(cell: CellType) -> QuadraticElement:
    gauss, nodes, derivatives = cell.gauss_points, cell.reference_nodes, cell.shape_derivatives
    space = cell.jacobian_space
    samples = np.vstack([gauss, nodes])
    to_coeff = space.to_bernstein.T
    return QuadraticElement(
        cell.n_corners,
        cell.gauss_weights,
        derivatives(gauss),
        derivatives(nodes),
        cell.midside_edges,
        space,
        derivatives(space.points),
        np.vstack([to_coeff, bernstein.basis_at(space, samples) @ to_coeff]),
        samples,
    )


#: The reference data of every quadratic surface cell type of
#: :data:`meshaudit.cells.CELL_TYPES`, derivative tables worked out once.
ELEMENTS: dict[str, QuadraticElement] = {
    name: _element(cell)
    for name, cell in CELL_TYPES.items()
    if cell.is_quadratic and cell.dimension == 2
}


def surface_area(element: QuadraticElement, coords3: np.ndarray) -> np.ndarray:
    """Area (n,) of the curved surface: Gauss sum of |x_xi cross x_eta| over the element."""
    t = at_points(element.gauss_derivatives, coords3)
    u, v = t[:, :, 0], t[:, :, 1]
    nx = u[..., 1] * v[..., 2] - u[..., 2] * v[..., 1]
    ny = u[..., 2] * v[..., 0] - u[..., 0] * v[..., 2]
    nz = u[..., 0] * v[..., 1] - u[..., 1] * v[..., 0]
    return np.sqrt(nx * nx + ny * ny + nz * nz) @ element.gauss_weights


def midside_offsets(coords3: np.ndarray, edges: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Offsets of the midside nodes from their chord midpoints, as fractions of the chord.

    Returns (along, across), each (n, s): ``along`` is signed, positive towards the edge's
    second corner (a node at the quarter point reads -0.25 or +0.25), ``across`` is the
    distance from the chord line, in 3-D (it grows with the edge's curvature).
    """
    a, b, m = (coords3[:, edges[:, c]] for c in range(3))
    chord = b - a
    length2 = np.einsum("nsd,nsd->ns", chord, chord)
    offset = m - 0.5 * (a + b)
    with np.errstate(divide="ignore", invalid="ignore"):
        along = np.einsum("nsd,nsd->ns", offset, chord) / length2
        across = norm(offset - along[..., None] * chord) / np.sqrt(length2)
    return along, across


#: Metrics a collapsed quad takes from its three distinct corners, measured as a triangle.
TRIANGLE_SHAPE_METRICS = (
    "scaled_jacobian",
    "aspect_ratio",
    "skew",
    "taper",
    "warp",
    "min_angle",
    "max_angle",
    "condition",
)


def collapsed_quarter_point(
    coords3: np.ndarray, along: np.ndarray, across: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """quad8 / quad9 collapsed into the triangular quarter-point crack-tip element.

    One side (its two corners and its midside node) is collapsed to a point, the crack
    tip, and the midside nodes of the two sides meeting there sit on their chords a
    quarter of the way from the tip (Barsoum 1976, from memory). Returns (mask (n,),
    corners (n, 3)): the positions of the three distinct corners, tip first, in the
    element's own winding.
    """
    corners = coords3[:, :4]
    edge = norm(np.roll(corners, -1, axis=1) - corners)  # edge i: corner i -> i + 1
    longest = edge.max(axis=1)
    tiny = edge <= DEGENERATE_TOLERANCE * longest[:, None]
    e = np.argmax(tiny, axis=1)
    rows = np.arange(len(coords3))
    midside_gap = norm(coords3[rows, 4 + e] - corners[rows, e])
    before, after = (e - 1) % 4, (e + 1) % 4  # edges ending / starting at the tip
    tol = QUARTER_POINT_TOLERANCE
    with np.errstate(invalid="ignore"):
        quarter = (np.abs(along[rows, before] - 0.25) <= tol) & (
            np.abs(along[rows, after] + 0.25) <= tol
        )
        straight = (across[rows, before] <= tol) & (across[rows, after] <= tol)
    mask = (
        (tiny.sum(axis=1) == 1)
        & (midside_gap <= DEGENERATE_TOLERANCE * longest)
        & quarter
        & straight
    )
    return mask, np.stack([e, (e + 2) % 4, (e + 3) % 4], axis=1)


def _as_triangles(
    rows: np.ndarray,
    order: np.ndarray,
    coords3: np.ndarray,
    p: np.ndarray,
    metrics: dict[str, np.ndarray],
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Shape metrics of collapsed quads ``rows`` from their three distinct corners."""
    pick = order[rows][..., None]
    tri3 = np.take_along_axis(coords3[rows, :4], pick, axis=1)
    tri2 = np.take_along_axis(p[rows, :4], pick, axis=1)
    tri_metrics, tri_flags = triangle.measure(tri3, tri2)
    out = dict(metrics)
    for name in TRIANGLE_SHAPE_METRICS:
        out[name] = metrics[name].copy()
        out[name][rows] = tri_metrics[name]
    return out, tri_flags


#: Metrics whose breaches the quarter-point construction causes by itself (det J vanishes
#: at the tip, so det J's minima are near zero and the Gauss-point spread is large; the
#: node sits a quarter of the edge off centre). For an element flagged ``quarter_point``
#: each is also measured on the element without its quarter-point construction (see
#: :func:`without_quarter_points`), under the name :func:`without_quarter_points_name`.
QUARTER_POINT_METRICS: tuple[str, ...] = (
    "det_j_min",
    "det_j_corner_min",
    "det_j_lower_bound",
    "jacobian_ratio",
    "midside_offset_along",
)


def without_quarter_points_name(metric: str) -> str:
    """Key, in a metrics dict, of ``metric`` measured without the quarter-point nodes."""
    return f"{metric}|without_quarter_points"


@dataclass(frozen=True)
class JacobianPart:
    """det J of quadratic elements, one column per element: at the Gauss points (g, n),
    at the nodes (k, n) and bounded over the whole element
    (:class:`meshaudit.metrics.bernstein.Bounds`), with the ``floor`` (n,) below which a
    value counts as negative."""

    gauss: np.ndarray
    nodal: np.ndarray
    bounds: bernstein.Bounds
    floor: np.ndarray

    @property
    def lower(self) -> np.ndarray:
        """The lower bound of det J, 0 where it is negative only by round-off (above
        ``floor``): such an element is not inverted, and its bound says so."""
        lower = self.bounds.lower
        return np.where((lower < 0.0) & (lower >= self.floor), 0.0, lower)

    def metrics(self) -> dict[str, np.ndarray]:
        """det_j_min, det_j_max, det_j_corner_min, det_j_lower_bound, jacobian_ratio."""
        lo, hi = self.gauss.min(axis=0), self.gauss.max(axis=0)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(lo > 0.0, hi / lo, np.inf)
        return {
            "det_j_min": lo,
            "det_j_max": hi,
            "det_j_corner_min": self.nodal.min(axis=0),
            "det_j_lower_bound": self.lower,
            "jacobian_ratio": ratio,
        }


def negative_floor(p: np.ndarray, n_corners: int) -> np.ndarray:
    """det J below this (n,) counts as negative: -1e-12 times the square of the longest
    corner-to-corner chord, so round-off at an exact zero (the quarter-point tip) is not
    read as an inverted element."""
    corners = p[:, :n_corners]
    edge = norm(np.roll(corners, -1, axis=1) - corners).max(axis=1)
    return -1e-12 * np.maximum(edge, 1e-300) ** 2


def jacobian_part(
    element: QuadraticElement,
    p: np.ndarray,
    floor: np.ndarray | None = None,
    locate: bool = False,
) -> JacobianPart:
    """det J of elements with nodes ``p`` (n, k, 2) in their measuring plane: at the
    Gauss points, at the nodes, and its bounds over the whole element (with ``locate``,
    the smallest value found and where, for every element: see
    :func:`meshaudit.metrics.bernstein.bounds`).

    det J is evaluated at the space's points only; its Bernstein coefficients and its
    values at the Gauss points and nodes follow by one product with a constant table.
    """
    values = jacobian_determinants(element.space_derivatives, p)  # (n, s)
    # a stack of row-vector products, not one matrix product: numpy hands the latter to
    # a threaded BLAS, whose threads cost more CPU time than this whole step; then one
    # copy into columns, over which the reductions below are fast
    columns = np.ascontiguousarray((values[:, None, :] @ element.from_space.T)[:, 0].T)
    s, g = element.space.size, len(element.gauss_weights)
    if floor is None:
        floor = negative_floor(p, element.n_corners)
    found = columns[s:]
    bounds = bernstein.bounds(
        element.space, columns[:s], floor, found, element.sample_points, locate
    )
    return JacobianPart(found[:g], found[g:], bounds, floor)


def _triangle_nodes(order: np.ndarray) -> np.ndarray:
    """Node numbers (n, 6), in the quad, of the triangle6 a collapsed quad has become, from its
    corners ``order`` (n, 3) = (tip e, e + 2, e + 3): corners, then the midside nodes of
    the quad edges e + 1, e + 2, e + 3 (tip -> e + 2, e + 2 -> e + 3, e + 3 -> tip)."""
    e = order[:, 0]
    return np.column_stack([order, 4 + (e + 1) % 4, 4 + (e + 2) % 4, 4 + (e + 3) % 4])


def without_quarter_points(
    cell_type: str,
    p: np.ndarray,
    along: np.ndarray,
    near_quarter: np.ndarray,
    crack_tip: np.ndarray,
    tri_order: np.ndarray | None,
) -> dict[str, np.ndarray]:
    """The :data:`QUARTER_POINT_METRICS` of elements measured without their quarter-point
    construction, one value per element given (n,).

    The element's twin has every midside node that sits at a quarter point moved to its
    chord midpoint; the rest (other midside nodes, curved edges, the quad9 centre) is
    kept. A collapsed crack-tip quad (``crack_tip``) is measured as the triangle6 it has
    become, so it gets the same values as that triangle6; its det J is converted to the
    quad's reference area. What the twin breaches is not caused by the quarter points.
    """
    out: dict[str, np.ndarray] = {}
    n = len(p)
    twin_along = np.fmax.reduce(np.where(near_quarter, 0.0, np.abs(along)), axis=1)
    for name in QUARTER_POINT_METRICS:
        out[name] = np.full(n, np.nan)
    out["midside_offset_along"] = twin_along
    groups = [(ELEMENTS[cell_type], np.flatnonzero(~crack_tip), None)]
    if tri_order is not None and crack_tip.any():
        groups.append((ELEMENTS["triangle6"], np.flatnonzero(crack_tip), tri_order))
    for element, rows, order in groups:
        if not rows.size:
            continue
        if order is None:
            nodes, moved = p[rows].copy(), near_quarter[rows]
        else:
            pick = _triangle_nodes(order[rows])
            nodes = np.take_along_axis(p[rows], pick[..., None], axis=1)
            edge = (order[rows, :1] + np.arange(1, 4)) % 4  # quad edges of the 3 sides
            moved = np.take_along_axis(near_quarter[rows], edge, axis=1)
        for side, (a, b, mid) in enumerate(element.midside_edges):
            centre = 0.5 * (nodes[:, a] + nodes[:, b])
            nodes[:, mid] = np.where(moved[:, side, None], centre, nodes[:, mid])
        twin = jacobian_part(element, nodes).metrics()
        # det J is per reference area: the reference triangle is an eighth of the square
        own, tri = (
            CELL_TYPES[cell_type].reference_measure,
            CELL_TYPES["triangle6"].reference_measure,
        )
        scale = 1.0 if order is None else tri / own
        for name in QUARTER_POINT_METRICS:
            if name in twin:
                value = twin[name] if name == "jacobian_ratio" else twin[name] * scale
                out[name][rows] = value
    return out


def measure(
    cell_type: str,
    coords3: np.ndarray,
    p: np.ndarray,
    metrics: dict[str, np.ndarray],
    flags: dict[str, np.ndarray],
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Overlay the quadratic Jacobian and midside checks on the corner-node results.

    ``coords3`` (n, k, 3) all nodes in space, ``p`` (n, k, 2) the same in the measuring
    plane, ``metrics``/``flags`` what the linear kernel reported for the corners (they
    are copied, not changed). Returns the updated (metrics, flags). For elements flagged
    ``quarter_point`` the metrics dict also holds, under
    :func:`without_quarter_points_name`, the values the verdict caps against.
    """
    element = ELEMENTS[cell_type]
    floor = negative_floor(p, element.n_corners)
    jac = jacobian_part(element, p, floor)
    along, across = midside_offsets(coords3, element.midside_edges)
    worst_along = np.fmax.reduce(np.abs(along), axis=1)  # a collapsed side reads NaN
    crack_tip = np.zeros(len(p), dtype=bool)
    tri_order = None
    if element.n_corners == 4:
        crack_tip, tri_order = collapsed_quarter_point(coords3, along, across)

    collapsed = flags["degenerate"] & ~crack_tip
    # det J is negative somewhere, or cannot be shown not to be (see bernstein.bounds)
    inverted = flags["inverted"] | ((jac.bounds.lower < floor) & ~collapsed)
    everywhere = (jac.gauss < floor).all(axis=0) & (jac.nodal < floor).all(axis=0)
    reversed_ = flags["reversed"] | (everywhere & ~collapsed)
    # The singular construction: on the straight chord, a quarter of it from a corner.
    near_quarter = (np.abs(np.abs(along) - 0.25) <= QUARTER_POINT_TOLERANCE) & (
        across <= QUARTER_POINT_TOLERANCE
    )
    quarter = (near_quarter.any(axis=1) | crack_tip) & ~inverted & ~collapsed

    out = dict(metrics)
    out.update(
        area=surface_area(element, coords3),
        **jac.metrics(),
        midside_offset_along=worst_along,
        midside_offset_across=np.fmax.reduce(across, axis=1),
    )
    out_flags = dict(flags, inverted=inverted, reversed=reversed_, quarter_point=quarter)
    if crack_tip.any():
        rows = np.flatnonzero(crack_tip)
        out, tri_flags = _as_triangles(rows, tri_order, coords3, p, out)
        for name in ("degenerate", "nonconvex", "self_intersecting"):
            out_flags[name] = out_flags[name].copy()
            out_flags[name][rows] = tri_flags[name]
        out_flags["quarter_point"] = quarter & ~out_flags["degenerate"]
    flagged = np.flatnonzero(out_flags["quarter_point"])
    if flagged.size:
        twin = without_quarter_points(
            cell_type,
            p[flagged],
            along[flagged],
            near_quarter[flagged],
            crack_tip[flagged],
            None if tri_order is None else tri_order[flagged],
        )
        for name, values in twin.items():
            column = np.full(len(p), np.nan)
            column[flagged] = values
            out[without_quarter_points_name(name)] = column
    return out, out_flags
