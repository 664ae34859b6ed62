"""Metrics of the four-node quadrilateral, vectorised over elements.

Every function takes corner coordinates ``p`` of shape (n, 4, 2) in the element's plane
(node 1 at reference (-1, -1), counter-clockwise on the reference square [-1, 1]^2)
unless it says it takes 3-D coordinates (n, 4, 3).

The bilinear map is written in Robinson's principal-axes form

    x(xi, eta) = e0 + e1 xi + e2 eta + e3 xi eta,

so that J = [e1 + e3 eta | e2 + e3 xi] and

    det J(xi, eta) = c0 + c1 xi + c2 eta,  c0 = e1 x e2, c1 = e1 x e3, c2 = e3 x e2.

det J is linear in xi and eta, so its minimum over the element is at a corner.
Reference: J. Robinson, "Some new distortion measures for quadrilaterals", Finite
Elements in Analysis and Design 3 (1987) 183-197 (citation from memory).

Implementation: the arithmetic runs on "columns", one contiguous (n,) array per node and
coordinate (see :mod:`meshaudit.metrics.columns`), written out term by term.
That avoids the (n, 4, d) temporaries and small-axis reductions of the array form and
is several times faster on large meshes. :func:`measure` takes exact shortcuts on top
(det J extremes from |c1| and |c2|, axes kept at four times their size, see
:func:`_det_extremes` and :func:`_axes_times_4`), so its det J, area, warp, skew, taper,
scaled Jacobian and condition number are those of the public functions below to the
last bit; the aspect ratio and the angles take one square root and two arc tangents per
element instead of one per edge or corner and agree with the plain formulas to a few
units in the last place.
"""

from __future__ import annotations

import numpy as np

from ..cells.quad import QUAD_CORNERS, QUAD_GAUSS_2X2
from .columns import (
    DEGREES,
    Point,
    PolygonCorners,
    cross2,
    cross3,
    degenerate_edges,
    dot,
    edges,
    length,
    polygon_corners,
    split,
    square,
    sub,
)

_G = float(QUAD_GAUSS_2X2[2, 0])  # 1 / sqrt(3)


# -- principal axes and det J, on columns ----------------------------------------------
def _axes(x: tuple[Point, ...]) -> tuple[Point, Point, Point, Point]:
    """Robinson's e0..e3 from node columns ``x`` (4 nodes x d coordinates).

    The rows of :data:`meshaudit.cells.quad.QUAD_AXES`, written out term by term.
    """
    x1, x2, x3, x4 = x
    e0 = tuple(0.25 * (((a + b) + c) + d) for a, b, c, d in zip(x1, x2, x3, x4))
    e1 = tuple(0.25 * (((b - a) + c) - d) for a, b, c, d in zip(x1, x2, x3, x4))
    e2 = tuple(0.25 * (((-a - b) + c) + d) for a, b, c, d in zip(x1, x2, x3, x4))
    e3 = tuple(0.25 * (((a - b) + c) - d) for a, b, c, d in zip(x1, x2, x3, x4))
    return e0, e1, e2, e3


def _axes_times_4(x: tuple[Point, ...]) -> tuple[Point, Point, Point]:
    """4 e1, 4 e2, 4 e3: :func:`_axes` without the factor 0.25, which is exact.

    The same sums in the same order: a - b is -(b - a) and -a - b is -(a + b) exactly,
    so e1 and e3 share b - a. Everything built from these axes carries a power of two
    (16 for det J), taken out exactly where a value is reported.
    """
    x1, x2, x3, x4 = x
    e1, e2, e3 = [], [], []
    for a, b, c, d in zip(x1, x2, x3, x4):
        ba = b - a
        e1.append((ba + c) - d)
        e2.append((c - (a + b)) + d)
        e3.append((c - ba) - d)
    return tuple(e1), tuple(e2), tuple(e3)


def _coefficients(e1: Point, e2: Point, e3: Point) -> tuple[np.ndarray, ...]:
    """(c0, c1, c2) of det J = c0 + c1 xi + c2 eta, from 2-D axes."""
    return cross2(e1, e2), cross2(e1, e3), cross2(e3, e2)


def _det_at(c: tuple[np.ndarray, ...], points: np.ndarray) -> list[np.ndarray]:
    """det J at reference ``points`` (m, 2): a list of m (n,) arrays."""
    c0, c1, c2 = c
    return [(c0 + c1 * xi) + c2 * eta for xi, eta in points.tolist()]


def _det_extremes(c: tuple[np.ndarray, ...], scale: float) -> dict[str, np.ndarray]:
    """Smallest and largest det J over the 2x2 Gauss points and over the corners, and
    det J at the centre.

    At (+-t, +-t) det J is c0 +- c1 t +- c2 t, so the smallest is (c0 - |c1| t) - |c2| t
    and the largest (c0 + |c1| t) + |c2| t: the same numbers as the minimum and maximum
    of :func:`_det_at` (rounding is monotonic and symmetric). ``scale`` (a power of two)
    takes out the factor the coefficients carry.
    """
    c0, c1, c2 = c
    a1, a2 = np.abs(c1), np.abs(c2)
    g1, g2 = a1 * _G, a2 * _G
    out = {
        "gauss_lo": (c0 - g1) - g2,
        "gauss_hi": (c0 + g1) + g2,
        "corner_lo": (c0 - a1) - a2,
        "corner_hi": (c0 + a1) + a2,
    }
    for v in out.values():
        v *= scale
        v += 0.0  # a collapsed element's zero is never -0.0
    out["centre"] = c0 * scale  # det J at the centre: a quarter of the signed area
    return out


# -- public array-form functions ------------------------------------------------------
def principal_axes(p: np.ndarray) -> np.ndarray:
    """Robinson's vectors e0, e1, e2, e3 of each quad, shape (n, 4, d)."""
    e = _axes(split(p))
    return np.stack([np.stack(v, axis=-1) for v in e], axis=1)


def jacobian_coefficients(e: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(c0, c1, c2) with det J(xi, eta) = c0 + c1 xi + c2 eta, from 2-D principal axes."""
    e1, e2, e3 = (tuple(e[:, i, k] for k in range(2)) for i in (1, 2, 3))
    return _coefficients(e1, e2, e3)


def jacobian_determinant(p: np.ndarray, points: np.ndarray) -> np.ndarray:
    """det J of the bilinear map at reference ``points`` (m, 2): shape (n, m).

    A 2b x 2h rectangle gives b*h everywhere (common practice check value).
    """
    _, e1, e2, e3 = _axes(split(p))
    return np.stack(_det_at(_coefficients(e1, e2, e3), np.asarray(points)), axis=1)


def gauss_jacobians(p: np.ndarray) -> np.ndarray:
    """det J at the 2x2 Gauss points (+-1/sqrt 3), shape (n, 4)."""
    return jacobian_determinant(p, QUAD_GAUSS_2X2)


def corner_jacobians(p: np.ndarray) -> np.ndarray:
    """det J at the four corners, shape (n, 4); the true extremes of a planar quad."""
    return jacobian_determinant(p, QUAD_CORNERS)


def jacobian_ratio(gauss: np.ndarray) -> np.ndarray:
    """max / min of det J over the Gauss points; 1 for any parallelogram, >= 1 otherwise.

    Convention: infinite when the smallest Gauss-point det J is zero or negative.
    """
    return _ratio(gauss.min(axis=1), gauss.max(axis=1))


def _ratio(lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        out = hi / lo
    np.copyto(out, np.inf, where=~(lo > 0.0))
    return out


def scaled_jacobian(p: np.ndarray) -> np.ndarray:
    """Knupp's scaled Jacobian: min over corners of det[a, b] / (|a| |b|), in [-1, 1].

    a, b are the edges leaving the corner to the next and previous node. 1 for any
    rectangle, sin(theta) for a parallelogram with angle theta. P. M. Knupp, "Algebraic
    mesh quality metrics", SIAM J. Sci. Comput. 23 (2001) 193-218 (citation from memory).
    """
    return polygon_corners(split(p)).scaled_jacobian()


def condition(p: np.ndarray) -> np.ndarray:
    """Knupp's condition number, worst corner: max_k (|a|^2 + |b|^2) / (2 det[a, b]).

    This is |A|_F |A^-1|_F / 2 of each corner matrix A = [a, b]; 1 for a square, infinite
    for a corner with det[a, b] <= 0. Knupp (2001), as for the scaled Jacobian.
    """
    return polygon_corners(split(p)).condition()


def shape_parameters(e: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Robinson's aspect ratio, skew (degrees) and taper from 2-D principal axes.

    - aspect ratio = max(|e1|, |e2|) / min(|e1|, |e2|): 1 for a square, 4 for a 4x1
      rectangle;
    - skew = |90 deg - angle(e1, e2)|: 0 when the principal axes are perpendicular;
    - taper = max(|alpha|, |beta|) with e3 = alpha e1 + beta e2: 0 for any parallelogram,
      |c - a| / (c + a) for a trapezoid with parallel sides a and c; infinite where e1
      and e2 are parallel (no such decomposition: a bow-tie whose lobes cancel, corners
      on a line).

    Where an axis has zero length the aspect ratio is infinite (a quad collapsed to a
    point included).
    """
    e1, e2, e3 = (tuple(e[:, i, k] for k in range(2)) for i in (1, 2, 3))
    return _shape_parameters(e1, e2, _coefficients(e1, e2, e3))


def _shape_parameters(
    e1: Point, e2: Point, c: tuple[np.ndarray, ...]
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Aspect ratio, skew and taper; the axes and ``c`` may carry any common factor.

    Aspect ratio is sqrt(max(|e1|^2, |e2|^2) / min(...)), one square root instead of
    two (equal to round-off); infinite where min(...) = 0 (the 0/0 of a point too).
    Taper is max(|c1|, |c2|) / |c0|, the same number as max(|c2 / c0|, |c1 / c0|)
    (division by |c0| is monotonic); infinite where c0 = 0 (the 0/0 of a quad whose
    corners lie on a line too).
    """
    c0, c1, c2 = c
    q1, q2 = square(e1), square(e2)
    abs_c0, a1, a2 = np.abs(c0), np.abs(c1), np.abs(c2)
    with np.errstate(divide="ignore", invalid="ignore"):
        aspect = np.maximum(q1, q2)
        aspect /= np.minimum(q1, q2)
        np.sqrt(aspect, out=aspect)
        angle = np.arctan2(abs_c0, dot(e1, e2))
        angle *= DEGREES
        skew = np.abs(90.0 - angle)
        taper = np.maximum(a1, a2)
        taper /= abs_c0
    flat = np.flatnonzero(c0 == 0.0)
    if flat.size:
        taper[flat] = np.inf
        aspect[flat[np.isnan(aspect[flat])]] = np.inf  # only c0 = 0 can have an axis 0
    return aspect, skew, taper


def warp(coords3: np.ndarray) -> np.ndarray:
    """Warp angle in degrees of quads in 3-D (n, 4, 3), in [0, 180]: how far the element
    is folded out of one plane; 0 for any flat quad that does not cross itself.

    The quad is split along each diagonal into two triangles, each with its normal in
    the element's own winding (split 1-3: nodes 1 2 3 and 1 3 4; split 2-4: nodes 2 3 4
    and 2 4 1). A split's fold angle is the angle between its two normals, 0 to 180: a
    square folded about a diagonal until its triangles' normals are theta apart reads
    theta on that split. Only splits whose two triangles both face along the element
    normal N (the area vector, half the cross product of the diagonals; n . N >= 0)
    count: a flat re-entrant quad's split along its outside diagonal has one triangle
    facing back, so only the inside split counts and the quad reads 0. Warp is the
    larger fold angle of the splits that count; where neither counts (a bow-tie, whose
    lobes face apart) the larger of both, 180 for a flat bow-tie. A collapsed triangle
    (zero normal) faces every way and folds nothing. A unit square with one corner lifted
    by h reads arccos(1 / (1 + h^2)) (the split along the diagonal through the lifted
    corner; the other reads less). Common practice, no single source.

    Each angle is atan2(|na x nb|, na . nb), which stays accurate near 0 and 180 (an
    arccos of the cosine resolves only ~1e-6 degrees there).
    """
    return _warp(split(coords3))


def _warp(x: tuple[Point, ...]) -> np.ndarray:
    x1, x2, x3, x4 = x
    normal = cross3(sub(x3, x1), sub(x4, x2))  # twice the area vector
    angles, counts = [], []
    for (a1, a2, a3), (b1, b2, b3) in (((x1, x2, x3), (x1, x3, x4)), ((x2, x3, x4), (x2, x4, x1))):
        na = cross3(sub(a2, a1), sub(a3, a1))
        nb = cross3(sub(b2, b1), sub(b3, b1))
        angles.append(np.arctan2(length(cross3(na, nb)), dot(na, nb)) * DEGREES)
        counts.append((dot(na, normal) >= 0.0) & (dot(nb, normal) >= 0.0))
    return _larger_counted(angles, counts)


def _larger_counted(angles: list[np.ndarray], counts: list[np.ndarray]) -> np.ndarray:
    """The larger of the two splits' ``angles`` that count, or of both where neither
    does (angles are >= 0, so -1 marks one that does not count)."""
    first = np.where(counts[0], angles[0], -1.0)
    second = np.where(counts[1], angles[1], -1.0)
    out = np.maximum(first, second)
    neither = out < 0.0
    out[neither] = np.maximum(angles[0][neither], angles[1][neither])
    return out


def gauss_normals(coords3: np.ndarray) -> np.ndarray:
    """x_xi cross x_eta at the 2x2 Gauss points of quads in 3-D (n, 4, 3): (n, 4, 3)."""
    normals = _gauss_normals(*_axes(split(coords3))[1:])
    return np.stack([np.stack(v, axis=-1) for v in normals], axis=1)


def _gauss_normals(e1: Point, e2: Point, e3: Point) -> list[Point]:
    normals = []
    for xi, eta in QUAD_GAUSS_2X2.tolist():
        dxi = tuple(a + b * eta for a, b in zip(e1, e3))
        deta = tuple(a + b * xi for a, b in zip(e2, e3))
        normals.append(cross3(dxi, deta))
    return normals


def surface_area(coords3: np.ndarray) -> np.ndarray:
    """Area of the bilinear surface of quads in 3-D (n, 4, 3), model units^2.

    See :func:`area_from_normals`: exactly the polygon area of a flat quad, convex or not.
    """
    return _area(_gauss_normals(*_axes(split(coords3))[1:]))


def area_from_normals(normals: np.ndarray) -> np.ndarray:
    """Area from the Gauss-point ``normals`` (n, 4, 3): 2x2 Gauss rule of |x_xi cross x_eta|.

    Each point counts with the sign of its normal against the element's area vector, so
    where the map folds over (a re-entrant quad, whose det J changes sign) the fold is
    not counted twice: a flat quad gets exactly its polygon area, convex or not (a bow-tie
    the difference of its two lobes, as the shoelace formula gives); a warped quad the
    Gauss estimate of its surface area.
    """
    return _area(_normal_points(normals))


def swept_area(normals: np.ndarray) -> np.ndarray:
    """2x2 Gauss rule of |x_xi cross x_eta|: the area the map sweeps, folds counted twice.

    Zero only when the element is collapsed; a bow-tie whose two lobes cancel in
    :func:`surface_area` still sweeps both, so this is the measure for degeneracy.
    """
    return _swept(_normal_points(normals))


def _normal_points(normals: np.ndarray) -> list[Point]:
    return [tuple(normals[:, g, i] for i in range(3)) for g in range(normals.shape[1])]


def _area(normals: list[Point]) -> np.ndarray:
    total = tuple(((n0 + n1) + n2) + n3 for n0, n1, n2, n3 in zip(*normals))
    out = None
    for normal in normals:
        term = np.sign(dot(normal, total)) * length(normal)
        out = term if out is None else out + term
    return out


def _swept(normals: list[Point]) -> np.ndarray:
    out = length(normals[0])
    for normal in normals[1:]:
        out = out + length(normal)
    return out


def _flat_in_z(x: tuple[Point, ...]) -> bool:
    """True when every node of every element has the same z (a mesh in a plane z = c)."""
    z0 = x[0][2][:1]
    return all(bool((pt[2] == z0).all()) for pt in x)


# In a plane z = c the x and y parts of every 3-D normal are signed zeros and the 3-D
# formulas reduce exactly to 2-D ones: n . m = n_z m_z + 0.0 and |n| = sqrt(n_z n_z),
# which is |n_z| (barring underflow). Each Gauss term of :func:`_area` is then
# sign(total) * n_z, so the signed-fold area is |n_z0 + n_z1 + n_z2 + n_z3| to the bit;
# the fold angle of a split is 0, or 180 where its triangles' normals point apart.
def _flat_areas(xy: tuple[Point, ...]) -> tuple[np.ndarray, np.ndarray]:
    """(signed-fold area, swept area) of quads in a plane z = c, as :func:`_area` and
    :func:`_swept` give them, from the x-y columns ``xy``."""
    e1, e2, e3 = _axes_times_4(xy)
    u = tuple(a * _G for a in e3)
    dxi = (sub(e1, u), tuple(a + b for a, b in zip(e1, u)))  # at eta = -t, +t
    deta = (sub(e2, u), tuple(a + b for a, b in zip(e2, u)))  # at xi = -t, +t
    # Gauss points in the order of QUAD_GAUSS_2X2: (-t,-t), (t,-t), (t,t), (-t,t).
    n0, n1, n2, n3 = (cross2(dxi[j], deta[i]) for i, j in ((0, 0), (1, 0), (1, 1), (0, 1)))
    area = ((n0 + n1) + n2) + n3
    np.abs(area, out=area)
    swept = np.abs(n0)
    for n in (n1, n2, n3):
        swept += np.abs(n)
    area *= 1.0 / 16.0
    swept *= 1.0 / 16.0
    return area, swept


def _flat_warp(xy: tuple[Point, ...], sides: list[Point]) -> np.ndarray:
    """:func:`_warp` of quads in a plane z = c, from the signed doubled areas of the split
    triangles: 0, or 180 where the splits that count (:func:`_warp`) fold (a bow-tie).

    ``sides`` are the edge vectors (node k+1 - node k). Where both triangles of split 1-3
    have a nonzero area of one sign, that split counts and folds nothing, and the area
    vector (their sum) is not 0, so the other split cannot both count and fold: 0. Only
    the other elements are looked at further.
    """
    x1, x2, x3, x4 = xy
    d13 = sub(x3, x1)
    first_a = cross2(sides[0], d13)  # triangle 1 2 3
    first_b = cross2(sides[3], d13)  # triangle 1 3 4: (x3 - x1) x (x4 - x1)
    out = np.zeros(len(first_a))
    rows = np.flatnonzero(~(first_a * first_b > 0.0))
    if rows.size:
        pick = [tuple(v[rows] for v in pt) for pt in (x1, x2, x4)]
        side1, side2 = (tuple(v[rows] for v in sides[k]) for k in (0, 1))
        d13r = tuple(v[rows] for v in d13)
        d24 = sub(pick[2], pick[1])
        normal = cross2(d13r, d24)
        splits = ((first_a[rows], first_b[rows]), (cross2(side2, d24), cross2(side1, d24)))
        angles, counts = [], []
        for a, b in splits:
            angles.append(np.where(a * b < 0.0, 180.0, 0.0))
            counts.append((a * normal >= 0.0) & (b * normal >= 0.0))
        out[rows] = _larger_counted(angles, counts)
    return out


def self_intersecting(p: np.ndarray) -> np.ndarray:
    """Bow-tie quads: edge 1-2 properly crosses edge 3-4, or edge 2-3 crosses edge 4-1."""
    x = split(p)
    return _self_intersecting(x, polygon_corners(x))


def _self_intersecting(x: tuple[Point, ...], corners: PolygonCorners) -> np.ndarray:
    """Segments p1-p2 and q1-q2 cross properly when q1, q2 lie strictly on opposite sides
    of p1-p2 and p1, p2 strictly on opposite sides of q1-q2. Of the four side tests of
    each pair of opposite edges, two are corner determinants already at hand and the
    other two use a diagonal (reversed where the test has it the other way round,
    which flips the sign of the product)."""
    x1, x2, x3, x4 = x
    sides, cross = corners.to_next, corners.cross
    d13, d24 = sub(x3, x1), sub(x4, x2)
    first = (cross2(sides[0], d13) * cross[0] < 0.0) & (cross2(sides[2], d13) * cross[2] > 0.0)
    second = (cross2(sides[1], d24) * cross[1] < 0.0) & (cross2(sides[3], d24) * cross[3] > 0.0)
    return first | second


def _plane_metrics(x2d: tuple[Point, ...]) -> dict[str, np.ndarray]:
    """det J, shape and corner metrics from the nodes in the measuring plane."""
    e1, e2, e3 = _axes_times_4(x2d)
    c = _coefficients(e1, e2, e3)  # 16 (c0, c1, c2)
    out = _det_extremes(c, 1.0 / 16.0)
    out["aspect"], out["skew"], out["taper"] = _shape_parameters(e1, e2, c)
    corners = polygon_corners(x2d)
    orientation = 1.0 - 2.0 * (c[0] < 0.0)
    out["min_angle"], out["max_angle"] = corners.angle_range(orientation)
    out["scaled_jacobian"] = corners.scaled_jacobian()
    out["condition"] = corners.condition()
    out["longest"] = corners.longest_edge()
    out["crossing"] = _self_intersecting(x2d, corners)
    return out


def _surface_metrics(x3d: tuple[Point, ...]) -> tuple[np.ndarray, ...]:
    """(area, warp, collapsed) from the nodes in space."""
    if _flat_in_z(x3d):  # the common 2-D case: same numbers, far less arithmetic
        xy = tuple(pt[:2] for pt in x3d)
        sides = edges(xy)
        area, swept = _flat_areas(xy)
        return area, _flat_warp(xy, sides), degenerate_edges(sides, swept, _diagonals(xy))
    sides = edges(x3d)
    area, swept = _spatial_areas(x3d)
    return area, _spatial_warp(x3d, sides), degenerate_edges(sides, swept, _diagonals(x3d))


def _diagonals(x: tuple[Point, ...]) -> tuple[Point, Point]:
    """Diagonals 1-3 and 2-4: two opposite corners at the same place collapse a quad."""
    return sub(x[2], x[0]), sub(x[3], x[1])


def _shared_gauss_normals(x: tuple[Point, ...]) -> list[Point]:
    """16 x the normals of :func:`_gauss_normals`, in the same order, from 4 e.

    x_xi = e1 + e3 eta and x_eta = e2 + e3 xi at eta, xi = +-t share e3 t, and the
    factor 16 = 4 x 4 is exact, so each normal is 16 times that of the plain form.
    """
    e1, e2, e3 = _axes_times_4(x)
    u = tuple(a * _G for a in e3)
    dxi = (sub(e1, u), tuple(a + b for a, b in zip(e1, u)))  # at eta = -t, +t
    deta = (sub(e2, u), tuple(a + b for a, b in zip(e2, u)))  # at xi = -t, +t
    # Gauss points in the order of QUAD_GAUSS_2X2: (-t,-t), (t,-t), (t,t), (-t,t).
    return [cross3(dxi[j], deta[i]) for i, j in ((0, 0), (1, 0), (1, 1), (0, 1))]


def _spatial_areas(x3d: tuple[Point, ...]) -> tuple[np.ndarray, np.ndarray]:
    """(:func:`_area`, :func:`_swept`) of quads in space, to the bit, each normal's
    length taken once (a power-of-two factor passes exactly through the sign, the
    square root and the sums)."""
    normals = _shared_gauss_normals(x3d)
    total = tuple(((n0 + n1) + n2) + n3 for n0, n1, n2, n3 in zip(*normals))
    sizes = [length(n) for n in normals]
    area = np.sign(dot(normals[0], total)) * sizes[0]
    for normal, size in zip(normals[1:], sizes[1:]):
        area += np.sign(dot(normal, total)) * size
    swept = sizes[0] + sizes[1]
    for size in sizes[2:]:
        swept += size
    area *= 1.0 / 16.0
    swept *= 1.0 / 16.0
    return area, swept


def _spatial_warp(x: tuple[Point, ...], sides: list[Point]) -> np.ndarray:
    """:func:`_warp` from the edge vectors ``sides`` (node k+1 - node k) and the two
    diagonals: each triangle normal is the cross product of one side and one diagonal,
    in the element's own winding (triangle 1 3 4: (x3 - x1) x (x4 - x1) = side 4 x d13;
    triangle 2 4 1: (x4 - x2) x (x1 - x2) = side 1 x d24)."""
    x1, x2, x3, x4 = x
    d13, d24 = sub(x3, x1), sub(x4, x2)
    normal = cross3(d13, d24)
    angles, counts = [], []
    for na, nb in (
        (cross3(sides[0], d13), cross3(sides[3], d13)),
        (cross3(sides[1], d24), cross3(sides[0], d24)),
    ):
        angle = np.arctan2(length(cross3(na, nb)), dot(na, nb))
        angle *= DEGREES
        angles.append(angle)
        counts.append((dot(na, normal) >= 0.0) & (dot(nb, normal) >= 0.0))
    return _larger_counted(angles, counts)


def measure(
    coords3: np.ndarray, p: np.ndarray
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """All quad metrics (but ``score``, added with the verdict: :mod:`meshaudit.judge.score`)
    and validity flags.

    ``coords3`` (n, 4, 3) are the nodes in space, ``p`` (n, 4, 2) the same nodes laid in
    the measuring plane. Returns (metrics, flags) dictionaries of (n,) arrays.
    """
    m = _plane_metrics(split(p))
    area, warp_deg, collapsed = _surface_metrics(split(coords3))
    bowtie = m["crossing"] & ~collapsed
    threshold = -1e-12 * np.maximum(m["longest"], 1e-300) ** 2
    inverted = (m["corner_lo"] < threshold) & ~collapsed  # some corner det J negative
    # wound clockwise in the measuring plane: negative signed area (det J at the centre is
    # a quarter of it; never without a negative corner, so always inverted too). A
    # bow-tie's outline has no winding to reverse: it is self-intersecting instead.
    reversed_ = (m["centre"] < threshold) & ~collapsed & ~bowtie
    nonconvex = (m["max_angle"] > 180.0) & ~bowtie & ~collapsed

    metrics = {
        "area": area,
        "det_j_min": m["gauss_lo"],
        "det_j_max": m["gauss_hi"],
        "det_j_corner_min": m["corner_lo"],
        "jacobian_ratio": _ratio(m["gauss_lo"], m["gauss_hi"]),
        "scaled_jacobian": m["scaled_jacobian"],
        "aspect_ratio": m["aspect"],
        "skew": m["skew"],
        "taper": m["taper"],
        "warp": warp_deg,
        "min_angle": m["min_angle"],
        "max_angle": m["max_angle"],
        "condition": m["condition"],
    }
    flags = {
        "inverted": inverted,
        "reversed": reversed_,
        "nonconvex": nonconvex,
        "self_intersecting": bowtie,
        "degenerate": collapsed,
    }
    return metrics, flags
