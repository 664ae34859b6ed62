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
"""

from __future__ import annotations

import numpy as np

from ..reference import QUAD_AXES, QUAD_CORNERS, QUAD_GAUSS_2X2
from .common import corner_edges, cross2, degenerate, interior_angles, norm, score


def principal_axes(p: np.ndarray) -> np.ndarray:
    """Robinson's vectors e0, e1, e2, e3 of each quad, shape (n, 4, d)."""
    return np.einsum("ij,njd->nid", QUAD_AXES, p)


def jacobian_coefficients(e: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(c0, c1, c2) with det J(xi, eta) = c0 + c1 xi + c2 eta, from 2-D principal axes."""
    e1, e2, e3 = e[:, 1], e[:, 2], e[:, 3]
    return cross2(e1, e2), cross2(e1, e3), cross2(e3, e2)


def jacobian_determinant(p: np.ndarray, points: np.ndarray) -> np.ndarray:
    """det J of the bilinear map at reference ``points`` (m, 2): shape (n, m).

    A 2b x 2h rectangle gives b*h everywhere (common practice check value).
    """
    c0, c1, c2 = jacobian_coefficients(principal_axes(p))
    return c0[:, None] + c1[:, None] * points[:, 0] + c2[:, None] * points[:, 1]


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
    lo, hi = gauss.min(axis=1), gauss.max(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(lo > 0.0, hi / lo, np.inf)


def scaled_jacobian(p: np.ndarray) -> np.ndarray:
    """Knupp's scaled Jacobian: min over corners of det[a, b] / (|a| |b|), in [-1, 1].

    a, b are the edges leaving the corner to the next and previous node. 1 for any
    rectangle, sin(theta) for a parallelogram with angle theta. P. M. Knupp, "Algebraic
    mesh quality metrics", SIAM J. Sci. Comput. 23 (2001) 193-218 (citation from memory).
    """
    a, b = corner_edges(p)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (cross2(a, b) / (norm(a) * norm(b))).min(axis=1)


def condition(p: np.ndarray) -> np.ndarray:
    """Knupp's condition number, worst corner: max_k (|a|^2 + |b|^2) / (2 det[a, b]).

    This is |A|_F |A^-1|_F / 2 of each corner matrix A = [a, b]; 1 for a square, infinite
    for a corner with det[a, b] <= 0. Knupp (2001), as for the scaled Jacobian.
    """
    a, b = corner_edges(p)
    d = cross2(a, b)
    frob = np.einsum("nki,nki->nk", a, a) + np.einsum("nki,nki->nk", b, b)
    with np.errstate(divide="ignore", invalid="ignore"):
        kappa = np.where(d > 0.0, frob / (2.0 * d), np.inf)
    return kappa.max(axis=1)


def shape_parameters(e: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Robinson's aspect ratio, skew (degrees) and taper from 2-D principal axes.

    - aspect ratio = max(|e1|, |e2|) / min(|e1|, |e2|): 1 for a square, 4 for a 4x1
      rectangle;
    - skew = |90 deg - angle(e1, e2)|: 0 when the principal axes are perpendicular;
    - taper = max(|alpha|, |beta|) with e3 = alpha e1 + beta e2: 0 for any parallelogram,
      |c - a| / (c + a) for a trapezoid with parallel sides a and c.
    """
    e1, e2, e3 = e[:, 1], e[:, 2], e[:, 3]
    l1, l2 = norm(e1), norm(e2)
    c0 = cross2(e1, e2)
    with np.errstate(divide="ignore", invalid="ignore"):
        aspect = np.maximum(l1, l2) / np.minimum(l1, l2)
        angle = np.degrees(np.arctan2(np.abs(c0), np.einsum("ni,ni->n", e1, e2)))
        skew = np.abs(90.0 - angle)
        alpha = cross2(e3, e2) / c0
        beta = cross2(e1, e3) / c0
        taper = np.maximum(np.abs(alpha), np.abs(beta))
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
    x1, x2, x3, x4 = (coords3[:, i] for i in range(4))
    angles = []
    for (a1, a2, a3), (b1, b2, b3) in (((x1, x2, x3), (x1, x3, x4)), ((x2, x3, x4), (x2, x4, x1))):
        na = np.cross(a2 - a1, a3 - a1)
        nb = np.cross(b2 - b1, b3 - b1)
        sine = norm(np.cross(na, nb))
        cosine = np.abs(np.einsum("ni,ni->n", na, nb))
        angle = np.degrees(np.arctan2(sine, cosine))
        angles.append(np.where(norm(na) * norm(nb) > 0.0, angle, np.nan))
    return np.fmax(angles[0], angles[1])


def gauss_normals(coords3: np.ndarray) -> np.ndarray:
    """x_xi cross x_eta at the 2x2 Gauss points of quads in 3-D (n, 4, 3): (n, 4, 3)."""
    e = principal_axes(coords3)
    g = QUAD_GAUSS_2X2
    dxi = e[:, None, 1] + e[:, None, 3] * g[None, :, 1, None]
    deta = e[:, None, 2] + e[:, None, 3] * g[None, :, 0, None]
    return np.cross(dxi, deta)


def surface_area(coords3: np.ndarray) -> np.ndarray:
    """Area of the bilinear surface of quads in 3-D (n, 4, 3), model units^2.

    See :func:`area_from_normals`: exactly the polygon area of a flat quad, convex or not.
    """
    return area_from_normals(gauss_normals(coords3))


def area_from_normals(normals: np.ndarray) -> np.ndarray:
    """Area from the Gauss-point ``normals`` (n, 4, 3): 2x2 Gauss rule of |x_xi cross x_eta|.

    Each point counts with the sign of its normal against the element's area vector, so
    where the map folds over (a re-entrant quad, whose det J changes sign) the fold is
    not counted twice: a flat quad gets exactly its polygon area, convex or not (a bow-tie
    the difference of its two lobes, as the shoelace formula gives); a warped quad the
    Gauss estimate of its surface area.
    """
    facing = np.einsum("ngi,ni->ng", normals, normals.sum(axis=1))
    return (np.sign(facing) * norm(normals)).sum(axis=1)


def swept_area(normals: np.ndarray) -> np.ndarray:
    """2x2 Gauss rule of |x_xi cross x_eta|: the area the map sweeps, folds counted twice.

    Zero only when the element is collapsed; a bow-tie whose two lobes cancel in
    :func:`surface_area` still sweeps both, so this is the measure for degeneracy.
    """
    return norm(normals).sum(axis=1)


def self_intersecting(p: np.ndarray) -> np.ndarray:
    """Bow-tie quads: edge 1-2 properly crosses edge 3-4, or edge 2-3 crosses edge 4-1."""

    def crosses(p1, p2, q1, q2):
        o1 = cross2(p2 - p1, q1 - p1)
        o2 = cross2(p2 - p1, q2 - p1)
        o3 = cross2(q2 - q1, p1 - q1)
        o4 = cross2(q2 - q1, p2 - q1)
        return (o1 * o2 < 0.0) & (o3 * o4 < 0.0)

    x1, x2, x3, x4 = (p[:, i] for i in range(4))
    return crosses(x1, x2, x3, x4) | crosses(x2, x3, x4, x1)


def measure(
    coords3: np.ndarray, p: np.ndarray
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """All quad metrics and validity flags.

    ``coords3`` (n, 4, 3) are the nodes in space, ``p`` (n, 4, 2) the same nodes laid in
    the measuring plane. Returns (metrics, flags) dictionaries of (n,) arrays.
    """
    e = principal_axes(p)
    c0, c1, c2 = jacobian_coefficients(e)
    gauss = c0[:, None] + c1[:, None] * QUAD_GAUSS_2X2[:, 0] + c2[:, None] * QUAD_GAUSS_2X2[:, 1]
    corners = c0[:, None] + c1[:, None] * QUAD_CORNERS[:, 0] + c2[:, None] * QUAD_CORNERS[:, 1]
    aspect, skew, taper = shape_parameters(e)
    normals = gauss_normals(coords3)
    area = area_from_normals(normals)
    warp_deg = warp(coords3)
    a, b = corner_edges(p)
    orientation = np.where(c0 < 0.0, -1.0, 1.0)
    angles = interior_angles(a, b, orientation)
    sj = scaled_jacobian(p)
    cond = condition(p)

    collapsed = degenerate(coords3, swept_area(normals))
    bowtie = self_intersecting(p) & ~collapsed
    scale = np.maximum(norm(a).max(axis=1), 1e-300) ** 2
    negative = corners < -1e-12 * scale[:, None]
    n_negative = negative.sum(axis=1)
    inverted = (n_negative > 0) & ~collapsed
    reversed_ = (n_negative == 4) & ~collapsed
    reflex = (angles > 180.0).any(axis=1)
    nonconvex = reflex & ~bowtie & ~collapsed
    invalid = collapsed | bowtie | inverted | nonconvex

    metrics = {
        "area": area,
        "det_j_min": gauss.min(axis=1),
        "det_j_max": gauss.max(axis=1),
        "det_j_corner_min": corners.min(axis=1),
        "jacobian_ratio": jacobian_ratio(gauss),
        "scaled_jacobian": sj,
        "aspect_ratio": aspect,
        "skew": skew,
        "taper": taper,
        "warp": warp_deg,
        "min_angle": angles.min(axis=1),
        "max_angle": angles.max(axis=1),
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
