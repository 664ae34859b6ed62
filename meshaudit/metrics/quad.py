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
is several times faster on large meshes; the public functions below and
:func:`measure` share the same column helpers, so they agree to the last bit.
"""

from __future__ import annotations

import numpy as np

from ..reference import QUAD_CORNERS, QUAD_GAUSS_2X2
from .columns import Point, cross2, cross3, dot, length, polygon_corners, split, sub
from .columns import degenerate as degenerate_columns
from .common import score

_G = float(QUAD_GAUSS_2X2[2, 0])  # 1 / sqrt(3)


# -- principal axes and det J, on columns ----------------------------------------------
def _axes(x: tuple[Point, ...]) -> tuple[Point, Point, Point, Point]:
    """Robinson's e0..e3 from node columns ``x`` (4 nodes x d coordinates).

    The rows of :data:`meshaudit.reference.QUAD_AXES`, written out term by term.
    """
    x1, x2, x3, x4 = x
    e0 = tuple(0.25 * (((a + b) + c) + d) for a, b, c, d in zip(x1, x2, x3, x4))
    e1 = tuple(0.25 * (((b - a) + c) - d) for a, b, c, d in zip(x1, x2, x3, x4))
    e2 = tuple(0.25 * (((-a - b) + c) + d) for a, b, c, d in zip(x1, x2, x3, x4))
    e3 = tuple(0.25 * (((a - b) + c) - d) for a, b, c, d in zip(x1, x2, x3, x4))
    return e0, e1, e2, e3


def _coefficients(e1: Point, e2: Point, e3: Point) -> tuple[np.ndarray, ...]:
    """(c0, c1, c2) of det J = c0 + c1 xi + c2 eta, from 2-D axes."""
    return cross2(e1, e2), cross2(e1, e3), cross2(e3, e2)


def _det_at(c: tuple[np.ndarray, ...], points: np.ndarray) -> list[np.ndarray]:
    """det J at reference ``points`` (m, 2): a list of m (n,) arrays."""
    c0, c1, c2 = c
    return [(c0 + c1 * xi) + c2 * eta for xi, eta in points.tolist()]


def _min_max(values: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    lo, hi = values[0], values[0]
    for v in values[1:]:
        lo, hi = np.minimum(lo, v), np.maximum(hi, v)
    return lo, hi


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
        return np.where(lo > 0.0, hi / lo, np.inf)


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
      |c - a| / (c + a) for a trapezoid with parallel sides a and c.
    """
    e1, e2, e3 = (tuple(e[:, i, k] for k in range(2)) for i in (1, 2, 3))
    return _shape_parameters(e1, e2, _coefficients(e1, e2, e3))


def _shape_parameters(
    e1: Point, e2: Point, c: tuple[np.ndarray, ...]
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    c0, c1, c2 = c
    l1, l2 = length(e1), length(e2)
    with np.errstate(divide="ignore", invalid="ignore"):
        aspect = np.maximum(l1, l2) / np.minimum(l1, l2)
        angle = np.degrees(np.arctan2(np.abs(c0), dot(e1, e2)))
        skew = np.abs(90.0 - angle)
        taper = np.maximum(np.abs(c2 / c0), np.abs(c1 / c0))  # |alpha|, |beta|
    return aspect, skew, taper


def warp(coords3: np.ndarray) -> np.ndarray:
    """Warp angle in degrees of quads in 3-D (n, 4, 3): 0 for any planar quad.

    The quad is split into two triangles along each diagonal in turn; warp is the larger
    of the two angles between the triangles' planes (unsigned, so a planar re-entrant
    quad reads 0). Common practice, no single source.

    The angle is atan2(|na x nb|, |na . nb|) of the two normals, which stays accurate
    near 0 (an arccos of the cosine resolves only ~1e-6 degrees there). A split with a
    collapsed triangle has no angle (NaN) and the other split decides.
    """
    return _warp(split(coords3))


def _warp(x: tuple[Point, ...]) -> np.ndarray:
    x1, x2, x3, x4 = x
    angles = []
    for (a1, a2, a3), (b1, b2, b3) in (((x1, x2, x3), (x1, x3, x4)), ((x2, x3, x4), (x2, x4, x1))):
        na = cross3(sub(a2, a1), sub(a3, a1))
        nb = cross3(sub(b2, b1), sub(b3, b1))
        sine = length(cross3(na, nb))
        cosine = np.abs(dot(na, nb))
        angle = np.degrees(np.arctan2(sine, cosine))
        angles.append(np.where(length(na) * length(nb) > 0.0, angle, np.nan))
    return np.fmax(angles[0], angles[1])


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


def _flat_in_z(x: tuple[Point, ...]) -> bool:
    """True when every node of every element has the same z (a mesh in a plane z = c)."""
    z0 = x[0][2][:1]
    return all(bool((pt[2] == z0).all()) for pt in x)


# In a plane z = c the x and y parts of every 3-D normal below are signed zeros, and the
# 3-D formulas reduce exactly (to the last bit) to these 2-D ones: |n| = sqrt(n_z * n_z),
# n . m = n_z m_z + 0.0, and the warp of each split is 0 (NaN where a triangle collapses).
def _flat_normals(e1: Point, e2: Point, e3: Point) -> list[np.ndarray]:
    """z of x_xi cross x_eta at the 2x2 Gauss points, from x-y principal axes."""
    out = []
    for xi, eta in QUAD_GAUSS_2X2.tolist():
        dxi = tuple(a + b * eta for a, b in zip(e1, e3))
        deta = tuple(a + b * xi for a, b in zip(e2, e3))
        out.append(cross2(dxi, deta))
    return out


def _flat_area(normal_z: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """(signed-fold area, swept area) as :func:`_area` and :func:`_swept` give them."""
    n0, n1, n2, n3 = normal_z
    total = ((n0 + n1) + n2) + n3
    area = swept = None
    for n in normal_z:
        size = np.sqrt(n * n)
        facing = n * total
        facing += 0.0
        term = np.sign(facing) * size
        area = term if area is None else area + term
        swept = size if swept is None else swept + size
    return area, swept


def _flat_warp(x: tuple[Point, ...]) -> np.ndarray:
    """:func:`_warp` of quads in a plane z = c: 0, or NaN where both splits collapse."""
    x1, x2, x3, x4 = x
    angles = []
    for (a1, a2, a3), (b1, b2, b3) in (((x1, x2, x3), (x1, x3, x4)), ((x2, x3, x4), (x2, x4, x1))):
        na = cross2(sub(a2, a1), sub(a3, a1))
        nb = cross2(sub(b2, b1), sub(b3, b1))
        angles.append(np.where(np.sqrt(na * na) * np.sqrt(nb * nb) > 0.0, 0.0, np.nan))
    return np.fmax(angles[0], angles[1])


def _swept(normals: list[Point]) -> np.ndarray:
    out = length(normals[0])
    for normal in normals[1:]:
        out = out + length(normal)
    return out


def self_intersecting(p: np.ndarray) -> np.ndarray:
    """Bow-tie quads: edge 1-2 properly crosses edge 3-4, or edge 2-3 crosses edge 4-1."""
    return _self_intersecting(split(p))


def _self_intersecting(x: tuple[Point, ...]) -> np.ndarray:
    def crosses(p1, p2, q1, q2):
        o1 = cross2(sub(p2, p1), sub(q1, p1))
        o2 = cross2(sub(p2, p1), sub(q2, p1))
        o3 = cross2(sub(q2, q1), sub(p1, q1))
        o4 = cross2(sub(q2, q1), sub(p2, q1))
        return (o1 * o2 < 0.0) & (o3 * o4 < 0.0)

    x1, x2, x3, x4 = x
    return crosses(x1, x2, x3, x4) | crosses(x2, x3, x4, x1)


def measure(
    coords3: np.ndarray, p: np.ndarray
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """All quad metrics and validity flags.

    ``coords3`` (n, 4, 3) are the nodes in space, ``p`` (n, 4, 2) the same nodes laid in
    the measuring plane. Returns (metrics, flags) dictionaries of (n,) arrays.
    """
    x3d, x2d = split(coords3), split(p)
    _, e1, e2, e3 = _axes(x2d)
    c = _coefficients(e1, e2, e3)
    gauss_lo, gauss_hi = _min_max(_det_at(c, QUAD_GAUSS_2X2))
    corner_lo, corner_hi = _min_max(_det_at(c, QUAD_CORNERS))
    aspect, skew, taper = _shape_parameters(e1, e2, c)
    if _flat_in_z(x3d):  # the common 2-D case: same numbers, far less arithmetic
        normal_z = _flat_normals(*_axes(tuple(pt[:2] for pt in x3d))[1:])
        area, swept = _flat_area(normal_z)
        warp_deg = _flat_warp(tuple(pt[:2] for pt in x3d))
        edges_of = tuple(pt[:2] for pt in x3d)
    else:
        normals = _gauss_normals(*_axes(x3d)[1:])
        area, swept = _area(normals), _swept(normals)
        warp_deg = _warp(x3d)
        edges_of = x3d
    corners = polygon_corners(x2d)
    orientation = np.where(c[0] < 0.0, -1.0, 1.0)
    min_angle, max_angle = corners.angle_range(orientation)
    sj = corners.scaled_jacobian()
    cond = corners.condition()

    collapsed = degenerate_columns(edges_of, swept)
    bowtie = _self_intersecting(x2d) & ~collapsed
    threshold = -1e-12 * np.maximum(corners.longest_edge(), 1e-300) ** 2
    inverted = (corner_lo < threshold) & ~collapsed  # some corner det J negative
    reversed_ = (corner_hi < threshold) & ~collapsed  # all four negative
    nonconvex = (max_angle > 180.0) & ~bowtie & ~collapsed
    invalid = collapsed | bowtie | inverted | nonconvex

    metrics = {
        "area": area,
        "det_j_min": gauss_lo,
        "det_j_max": gauss_hi,
        "det_j_corner_min": corner_lo,
        "jacobian_ratio": _ratio(gauss_lo, gauss_hi),
        "scaled_jacobian": sj,
        "aspect_ratio": aspect,
        "skew": skew,
        "taper": taper,
        "warp": warp_deg,
        "min_angle": min_angle,
        "max_angle": max_angle,
        "condition": cond,
        "score": score(sj, cond, warp_deg, invalid),
    }
    flags = {
        "inverted": inverted,
        "reversed": reversed_,
        "nonconvex": nonconvex,
        "self_intersecting": bowtie,
        "degenerate": collapsed,
    }
    return metrics, flags
