"""Metrics of the 6-node wedge (triangular prism), meshio cell type ``wedge``.

**Node order.** meshio's: nodes 0 1 2 are one triangle, 3 4 5 the other, node i + 3 joined
to node i, and the right-hand normal of triangle (0, 1, 2) points towards triangle
(3, 4, 5), as in gmsh's prism. This is *not* VTK's own wedge order, whose triangle
(0, 1, 2) faces away from (3, 4, 5): meshio swaps nodes 1 and 2 (and 4 and 5) when it
reads or writes a VTK or VTU file (``vtk_to_meshio_order`` in meshio's ``_vtk_common``),
and reads gmsh prisms as they are. scikit-fem's reference wedge (``RefWedge``) has
meshio's order and its meshio converter does not reorder wedges.

**Reference element and map.** (r, s) in the triangle (0, 0), (1, 0), (0, 1) times t in
[-1, 1] (reference volume 1); node i at corner i of the triangle and t = -1, node i + 3
at t = +1. With L0 = 1 - r - s, L1 = r, L2 = s: N_i = L_i (1 - t) / 2,
N_(i+3) = L_i (1 + t) / 2. det J is in length^3 per unit reference volume: a right prism
over a triangle of area A and height h has det J = A h everywhere (volume A h).

**det J is a polynomial** of degree 1 in (r, s) and 2 in t, of total degree 2: x_r and x_s
do not depend on (r, s) and are linear in t; x_t = sum_i L_i (x_(i+3) - x_i) / 2 is linear
in (r, s) and does not depend on t. The r t^2 and s t^2 terms cancel: with b and d the
t-slopes of x_r and x_s, the t^2 coefficient of x_r x x_s is b x d, and the r- and s-slopes
of x_t are b and d themselves, so (b x d) . b = (b x d) . d = 0 (sympy confirms it in the
tests). So det J = sum_i L_i(r, s) f_i(t), where f_i is det J along
the edge from node i to node i + 3, a quadratic in t. In the Bernstein basis of
triangle (degree 1) x segment (degree 2), L_i B_j((1 + t) / 2) with
B_0 = (1 - u)^2, B_1 = 2 u (1 - u), B_2 = u^2, the coefficients are
c_i0 = f_i(-1), c_i2 = f_i(1) (the six corner values) and c_i1 = 2 f_i(0) - (c_i0 + c_i2)/2,
with f_i(t) = det[x_r(t), x_s(t), (x_(i+3) - x_i)/2] (Johnen, Remacle and Geuzaine,
"Geometrical validity of curvilinear finite elements", J. Comput. Phys. 233 (2013)
359-372, from memory, for the Bernstein approach). The basis is non-negative and sums to 1,
so det J >= min c everywhere. Here no subdivision is needed: the degree in (r, s) is 1, so
for each t det J is affine over the triangle and takes its minimum at a triangle corner,
i.e. on one of the three edges i - (i + 3); there det J is the quadratic Bernstein
polynomial (c_i0, c_i1, c_i2), whose exact minimum is min(c_i0, c_i2), or, when
c_i1 < min(c_i0, c_i2) (a convex parabola with its vertex inside),
(c_i0 c_i2 - c_i1^2) / (c_i0 - 2 c_i1 + c_i2), the limit of de Casteljau subdivision. So
``det_j_lower_bound`` is the exact minimum of det J over the element (up to round-off),
and no element is left undecided.

**Gauss rule.** The full rule for the linear wedge: the 3-point triangle rule (1/6, 1/6),
(2/3, 1/6), (1/6, 2/3), weights 1/6 (exact to degree 2), times 2-point Gauss-Legendre
t = -+1/sqrt(3), weights 1 (exact to degree 3): 6 points. It integrates det J (degree 1 in
(r, s), 2 in t) exactly, so the Gauss sum of det J is the exact volume, and it is the rule
a solver uses for the wedge's stiffness (common practice, no single source).

Metrics (each (n,) float64):

- ``volume`` (length^3): sum of det J x weight over the 6 Gauss points, exact: the signed
  volume enclosed by the element's faces (its quadrilateral faces are bilinear,
  hyperbolic-paraboloid patches when warped; negative for an element in mirrored order).
  ``area``: NaN (areas are for surface elements).
- ``det_j_min``, ``det_j_max`` (length^3): extremes of det J over the 6 Gauss points.
- ``det_j_corner_min`` (length^3): smallest det J at the six corners; det J at corner i
  is det[e1, e2, e3] / 2 of the three edges leaving it in the right-handed order of
  ``WEDGE.corner_triples`` (the 1/2: the reference prism direction has length 2).
- ``det_j_lower_bound`` (length^3): the exact minimum of det J over the element (above).
- ``jacobian_ratio``: det_j_max / det_j_min over the Gauss points; infinite when
  det_j_min <= 0 (convention of this project).
- ``scaled_jacobian``, ``condition``: Knupp's corner matrices at the six corners relative
  to the ideal wedge, the right prism over an equilateral triangle with all nine edges
  equal (P. M. Knupp, "Algebraic mesh quality metrics", SIAM J. Sci. Comput. 23 (2001)
  193-218; Knupp, "Achieving finite element mesh quality via optimization of the Jacobian
  matrix norm and associated quantities. Part II", Int. J. Numer. Meth. Engng 48 (2000)
  1165-1185; both from memory). Scaled Jacobian = worst corner of det[e1, e2, e3] /
  (|e1||e2||e3|) / (sqrt(3)/2): 1 for the ideal, also for any right prism over an
  equilateral triangle; (2/sqrt(3)) sin(smallest triangle angle) for a right prism over
  any triangle; clipped to [-1, 1]. Condition = worst corner of |T| |T^-1| / 3 (Frobenius),
  T = A W^-1: 1 for the ideal only (up to rotation and size), infinite for a corner with
  det <= 0.
- ``edge_ratio``: longest / shortest of the nine edges (infinite with a zero-length edge).
- ``warp`` (degrees, 0 to 180): worst of the three quadrilateral faces' fold angles,
  each as the quad warp (see :func:`.wedge_pyramid_common.quad_face_warp`).
- ``min_angle``, ``max_angle`` (degrees): extremes of the 18 face-corner angles (two
  triangles, three quadrilaterals).

Flags (each (n,) bool); "negative" means below -1e-12 x (longest edge)^3, and a bound
negative only by that round-off reads 0:

- ``inverted``: det J negative somewhere in the element (its exact minimum; certified,
  det J being a polynomial whose minimum is computed exactly).
- ``reversed``: det J negative at all six corners: the node order is mirrored (e.g. VTK's
  own order read without meshio's reordering).
- ``degenerate``: a zero-length edge or zero volume: shortest edge <= 1e-9 x longest edge
  L, or |volume| <= 1e-9 L^3 (common practice, no single source).
"""

from __future__ import annotations

import numpy as np

from meshaudit.metrics.solid.wedge_pyramid_common import (
    SolidReference,
    assemble,
    checked,
    components,
    corner_shape,
    cross,
    dot,
    ideal_corners,
    normalised,
)

CELL_TYPE = "wedge"

_NODES = np.array(
    [
        [0.0, 0.0, -1.0],
        [1.0, 0.0, -1.0],
        [0.0, 1.0, -1.0],
        [0.0, 0.0, 1.0],
        [1.0, 0.0, 1.0],
        [0.0, 1.0, 1.0],
    ]
)

_TRIANGLE_POINTS = np.array([[1 / 6, 1 / 6], [2 / 3, 1 / 6], [1 / 6, 2 / 3]])
_LINE_POINTS = np.array([-1.0, 1.0]) / np.sqrt(3.0)
_GAUSS_POINTS = np.array([[r, s, t] for t in _LINE_POINTS for r, s in _TRIANGLE_POINTS])
_GAUSS_WEIGHTS = np.full(6, 1.0 / 6.0)


def shape_functions(points: np.ndarray) -> np.ndarray:
    """N (m, 6) at reference points (m, 3) = (r, s, t): L_i (1 -+ t) / 2."""
    r, s, t = np.asarray(points, dtype=np.float64).T
    tri = np.stack([1.0 - r - s, r, s], axis=1)
    return np.concatenate([tri * ((1.0 - t) / 2)[:, None], tri * ((1.0 + t) / 2)[:, None]], axis=1)


def shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i / d(r, s, t) (m, 6, 3) at reference points (m, 3)."""
    r, s, t = np.asarray(points, dtype=np.float64).T
    m = len(r)
    tri = np.stack([1.0 - r - s, r, s], axis=1)  # (m, 3)
    dtri = np.array([[-1.0, -1.0], [1.0, 0.0], [0.0, 1.0]])  # dL_i / d(r, s)
    out = np.empty((m, 6, 3))
    for half, sign in ((0, -1.0), (1, 1.0)):
        factor = (1.0 + sign * t) / 2  # (m,)
        out[:, 3 * half : 3 * half + 3, :2] = dtri[None] * factor[:, None, None]
        out[:, 3 * half : 3 * half + 3, 2] = sign * tri / 2
    return out


#: Corner i of a triangle, then the next and previous corner of its triangle, then the
#: other end of its edge across: right-handed for a positively oriented element.
_TRIPLES = np.array(
    [[0, 1, 2, 3], [1, 2, 0, 4], [2, 0, 1, 5], [3, 5, 4, 0], [4, 3, 5, 1], [5, 4, 3, 2]]
)

WEDGE = SolidReference(
    cell_type=CELL_TYPE,
    nodes=_NODES,
    corners=6,
    edges=((0, 1), (1, 2), (2, 0), (3, 4), (4, 5), (5, 3), (0, 3), (1, 4), (2, 5)),
    faces=((0, 2, 1), (3, 4, 5), (0, 1, 4, 3), (1, 2, 5, 4), (2, 0, 3, 5)),
    gauss_points=_GAUSS_POINTS,
    gauss_weights=_GAUSS_WEIGHTS,
    corner_triples=_TRIPLES,
    shape_functions=shape_functions,
    shape_derivatives=shape_derivatives,
)

#: The ideal wedge: right prism over the unit equilateral triangle, height 1.
IDEAL = np.array(
    [
        [0.0, 0.0, 0.0],
        [1.0, 0.0, 0.0],
        [0.5, np.sqrt(3.0) / 2, 0.0],
        [0.0, 0.0, 1.0],
        [1.0, 0.0, 1.0],
        [0.5, np.sqrt(3.0) / 2, 1.0],
    ]
)
_IDEAL = ideal_corners(IDEAL, _TRIPLES)


def _gauss_table() -> np.ndarray:
    """(9, 6): det J at the Gauss points = this table.T @ coefficients (9, n); coefficient
    3 i + j multiplies L_i(r, s) B_j((1 + t) / 2)."""
    r, s, t = _GAUSS_POINTS.T
    tri = np.stack([1.0 - r - s, r, s])  # (3, m)
    u = (1.0 + t) / 2
    line = np.stack([(1.0 - u) ** 2, 2.0 * u * (1.0 - u), u**2])  # (3, m)
    return (tri[:, None, :] * line[None, :, :]).reshape(9, -1)


_GAUSS_TABLE = _gauss_table()


def bernstein_coefficients(coords: np.ndarray) -> np.ndarray:
    """Bernstein coefficients (n, 3, 3) of det J of wedges ``coords`` (n, 6, 3): [i, j]
    multiplies L_i(r, s) B_j(u), u = (1 + t) / 2 (see the module docstring); [i, 0] and
    [i, 2] are det J at nodes i and i + 3."""
    return _coefficients(components(coords)).transpose(2, 0, 1) + 0.0


def _coefficients(xc: np.ndarray) -> np.ndarray:
    """Bernstein coefficients (3 edges i, 3 j, n) of elements ``xc`` (3, 6, n)."""
    a, b = xc[:, :3], xc[:, 3:]  # (3, 3, n)
    mid = 0.5 * (a + b)
    half = 0.5 * (b - a)  # x_t along each edge i - (i + 3)
    normals = [cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]) for p in (a, mid, b)]  # (3, n)
    low, centre, high = (dot(nrm[:, None], half) for nrm in normals)  # (3 edges, n)
    return np.stack([low, 2.0 * centre - 0.5 * (low + high), high], axis=1)


def exact_minimum(coefficients: np.ndarray) -> np.ndarray:
    """Exact minimum (n,) over the element of det J from its coefficients (3, 3, n)
    ([edge i, j, element]): the smallest over the three edges i - (i + 3) of the quadratic
    Bernstein polynomial (c0, c1, c2)'s minimum on [0, 1]."""
    c0, c1, c2 = coefficients[:, 0], coefficients[:, 1], coefficients[:, 2]
    ends = np.minimum(c0, c2)
    inside = c1 < ends  # convex, vertex strictly inside
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = (c0 * c2 - c1 * c1) / (c0 - 2.0 * c1 + c2)
    # the vertex value lies between c1 and the ends in exact arithmetic: keep it there
    low = np.where(inside, np.clip(vertex, c1, ends), ends)
    return low.min(axis=0)


def measure(
    coords: np.ndarray, cell_type: str = CELL_TYPE
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Metrics and flags (dicts of (n,) arrays) of wedges ``coords`` (n, 6, 3) in meshio's
    node order; see the module docstring for every definition."""
    xc, exponent = normalised(checked(coords, cell_type, WEDGE))
    with np.errstate(all="ignore"):
        coeff = _coefficients(xc)
        gauss = _GAUSS_TABLE.T @ coeff.reshape(9, xc.shape[2])  # (6, n)
        corners = np.concatenate([coeff[:, 0], coeff[:, 2]])  # (6, n), node order
        shape = corner_shape(xc, _TRIPLES, _IDEAL)[:2]
        return assemble(xc, WEDGE, gauss, corners, exact_minimum(coeff), shape, exponent)
