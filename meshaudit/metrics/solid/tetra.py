"""Metrics of the tetrahedra ``tetra`` and ``tetra10``, vectorised over elements.

``measure(coords, cell_type)`` takes node coordinates (n, k, 3) in meshio's node order
(see :mod:`meshaudit.metrics.solid.tet_reference`: the unit reference tetrahedron,
tetra10's midside nodes on the edges 0-1, 1-2, 2-0, 0-3, 1-3, 2-3) and returns
(metrics, flags), each value an (n,) array. det J is that of the map from the unit
reference tetrahedron, in length^3 per unit reference volume (6 x the signed volume of
a linear tetrahedron).

Metrics (NaN where a metric means nothing for the element):

- ``volume`` (length^3): the signed volume, the integral of det J over the reference
  element (negative for a mirrored element; parts where det J < 0 subtract). Linear:
  det J / 6. tetra10: det J is a cubic whose Bernstein coefficients c_a have equal
  integrals, so the volume is exactly mean(c_a) / 6. ``area``: NaN (surface elements only).
- ``det_j_min``, ``det_j_max``: det J at the Gauss points of the full rule: the centroid
  (1 point; det J is constant) for tetra, the 4-point rule of degree 2 for tetra10 (the
  usual full integration of a tetra10 stiffness, exact for a straight-sided element);
  ``jacobian_ratio`` = det_j_max / det_j_min, infinite when det_j_min <= 0 (1 for any
  linear tetrahedron with positive volume).
- ``det_j_corner_min``: tetra: the corner Jacobian det[x_b - x_c, ...] of the three
  edges leaving a corner in right-handed order, the same at every corner and equal to det
  J; tetra10: det J of the quadratic map at every node, corners and midside nodes (at a
  corner it is the determinant of the three edge tangents there), as for the 2-D
  quadratic elements.
- ``det_j_lower_bound``: det J >= this everywhere in the element. tetra: det J itself
  (exact). tetra10: the smallest Bernstein coefficient of det J after cutting undecided
  elements (:mod:`meshaudit.metrics.solid.tet_bernstein`); a value negative only by
  round-off (above the floor, -1e-12 x the longest corner edge cubed) reads 0.
- ``scaled_jacobian``: sqrt(2) x min over the four corners of det[a, b, c] / (|a| |b|
  |c|), a, b, c the corner's edges in right-handed order; 1 for the regular tetrahedron
  (its corner value is 1/sqrt 2), at most 1 for any tetrahedron (clipped to [-1, 1] for
  round-off), negative when inverted, 0 for a corner with a zero-length edge. Knupp 2001
  ("Algebraic mesh quality metrics", SIAM J. Sci. Comput. 23, 193-218) and Knupp 2000
  (Part II, Int. J. Numer. Meth. Engng 48, 1165-1185), from memory; the worst corner
  is common practice.
- ``condition``: Knupp's condition number |T|_F |T^-1|_F / 3 of the corner matrix
  relative to the regular tetrahedron, T = A W^-1 (A the corner matrix, W the regular
  tetrahedron's). For a linear tetrahedron T = M R at every corner (M the linear map
  from the regular tetrahedron, R a rotation: the corner triples are even
  permutations), so every corner gives the same value, worked out in closed form as
  sqrt(sum of squared edge lengths x sum of squared face areas) / (18 V); 1 regular,
  infinite when V <= 0. Knupp 2001, 2000 (from memory).
- ``mean_ratio``: 12 (3 |V|)^(2/3) / sum of squared edge lengths, = 3 det(T)^(2/3) /
  |T|_F^2 with T as above; 1 regular, 0 degenerate, in (0, 1] for a valid tetrahedron,
  negative (the same magnitude) for an inverted one. A. Liu and B. Joe, "Relationship
  between tetrahedron shape measures", BIT 34 (1994) 268-287 (from memory).
- ``radius_ratio``: R / (3 r), circumradius over three times the inradius; 1 regular,
  larger is worse, infinite for zero volume. R = |l_a^2 (b x c) + l_b^2 (c x a) +
  l_c^2 (a x b)| / (2 |det[a, b, c]|) (a, b, c the edges from corner 0), r = 3 |V| / S
  (S the total face area). Common practice (Liu and Joe 1994 compare it, from memory).
- ``edge_ratio``: longest / shortest of the six edges (infinite for a zero-length edge).
- ``min_dihedral``, ``max_dihedral`` (degrees): interior angles between the two faces at
  each edge, pi - the angle between their outward normals; 70.53 (arccos 1/3) for the
  regular tetrahedron, 0 at the edges of a face of zero area. J. R. Shewchuk, "What is
  a good linear finite element?", 2002, relates small and large dihedral angles to
  conditioning and interpolation error (from memory).
- ``min_angle``, ``max_angle`` (degrees): the 12 face angles; 60 regular; 0 at a corner
  with a zero-length edge.
- ``midside_offset_along``, ``midside_offset_across`` (tetra10): worst midside node's
  offset from its chord midpoint along the chord (absolute, a quarter-point node reads
  0.25) and across it, as fractions of the chord length (as the 2-D quadratic elements).
- ``aspect_ratio``, ``skew``, ``taper``, ``warp``: NaN (quadrilateral-face metrics).

Shape metrics of a tetra10 (scaled Jacobian, condition, mean ratio, radius ratio,
edge ratio, angles) are those of its four corners: a straight-sided tetra10 reads as
its linear twin.

Flags:

- ``degenerate``: coincident corners or zero volume: the shortest edge <= 1e-9 x the
  longest edge L, or |V| <= 1e-9 x L^3 (V of the corner tetrahedron), or L not > 0.
- ``inverted``: det J < 0 somewhere in the element, and not degenerate. tetra: V < 0.
  tetra10: the corner tetrahedron is inverted, or the certified lower bound of det J is
  below the floor (a value found below it, or the sign left undecided by the cutting:
  not shown to stay positive).
- ``reversed``: node order mirrored: V < 0 for tetra; tetra10: the corner tetrahedron is
  reversed or det J is below the floor at every Gauss point and node.
- ``quarter_point`` (tetra10, a warning): a midside node within 0.01 of the edge length
  of the quarter point, along and across the chord, the element neither inverted nor
  degenerate: det J vanishes at the corner next to it (the crack-tip construction;
  Henshell and Shaw 1975, Barsoum 1976, from memory). For such elements the metrics
  the quarter point spoils by itself are measured again with those nodes at their chord
  midpoints, under ``"<metric>|without_quarter_points"`` (NaN for other elements).
- ``nonconvex``, ``self_intersecting``: always False (a tetrahedron with straight edges is
  convex; a curved tetra10 that folds is ``inverted``).
"""

from __future__ import annotations

import numpy as np

from . import tet_bernstein as tb
from .tet_reference import (
    EDGE_FACES,
    EDGES,
    FACES,
    GAUSS_4,
    REFERENCES,
    TETRA10,
    SolidReference,
    barycentric,
)

__all__ = ["REFERENCES", "SolidReference", "det_j_bounds", "det_j_coefficients", "measure"]

#: Relative tolerance of the degenerate flag (edges: of the longest edge; volume: of its
#: cube). Common practice, no single source.
DEGENERATE_TOLERANCE = 1e-9

#: How close to the quarter point (fraction of the edge, along and across) a midside
#: node counts as placed there on purpose. Common practice, no single source.
QUARTER_POINT_TOLERANCE = 0.01

#: det J below -FLOOR_FACTOR x (longest corner edge)^3 counts as negative: round-off at
#: an exact zero (a quarter-point corner) is not a fold. Common practice, no single
#: source (the 2-D quadratic elements use the same factor on the chord squared).
FLOOR_FACTOR = 1e-12

#: Metrics a quarter-point node spoils by itself (measured again without it).
QUARTER_POINT_METRICS = (
    "det_j_min",
    "det_j_corner_min",
    "det_j_lower_bound",
    "jacobian_ratio",
    "midside_offset_along",
)

_SQRT2 = np.sqrt(2.0)
#: (4, 3): the edges (indices into EDGES) leaving each corner.
CORNER_EDGES = np.array([np.flatnonzero((EDGES == c).any(axis=1)) for c in range(4)])
_NODE_POINTS = barycentric(TETRA10.nodes)
_GAUSS_POINTS = barycentric(GAUSS_4)
#: (20, 14): Bernstein coefficients -> det J at the 4 Gauss points, then the 10 nodes.
_SAMPLE = tb.basis(np.vstack([_GAUSS_POINTS, _NODE_POINTS])).T


def without_quarter_points_name(metric: str) -> str:
    """Key, in the metrics dict, of ``metric`` measured without quarter-point nodes."""
    return f"{metric}|without_quarter_points"


def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Cross product of column vectors (3, n)."""
    return np.stack(
        [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
    )


def _dot_columns(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Dot product of column vectors (..., 3, n) over the coordinate axis."""
    return a[..., 0, :] * b[..., 0, :] + a[..., 1, :] * b[..., 1, :] + a[..., 2, :] * b[..., 2, :]


def _angle_range(cot: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(smallest, largest) angle in degrees of each column of cotangents (k, n).

    A cotangent of 0/0 (a zero-length edge, a face of zero area) reads as the angle 0;
    +-inf reads 0 or 180. The angle is arctan2(1, cot), decreasing in cot.
    """
    cot = np.where(np.isnan(cot), np.inf, cot)
    return (
        np.degrees(np.arctan2(1.0, cot.max(axis=0))),
        np.degrees(np.arctan2(1.0, cot.min(axis=0))),
    )


def _face_corner_edges() -> np.ndarray:
    """(3, 12): for each face corner p of face (p, q, r), the edges pq, pr and qr."""
    index = {frozenset(e): k for k, e in enumerate(EDGES.tolist())}
    out = []
    for face in FACES.tolist():
        for i in range(3):
            p, q, r = face[i], face[(i + 1) % 3], face[(i + 2) % 3]
            out.append([index[frozenset(pair)] for pair in ((p, q), (p, r), (q, r))])
    return np.array(out).T


_FACE_CORNER_EDGES = _face_corner_edges()
_FACE_OF_CORNER = np.repeat(np.arange(4), 3)


def corner_shape(corners: np.ndarray) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Metrics and flags of linear tetrahedra with corners (n, 4, 3) (module docstring)."""
    return _corner_shape(columns(corners))[:2]


def columns(coords: np.ndarray) -> np.ndarray:
    """Node coordinates (n, k, 3) as contiguous columns (k, 3, n)."""
    return np.ascontiguousarray(coords.transpose(1, 2, 0))


def _corner_shape(p: np.ndarray) -> tuple[dict, dict, np.ndarray]:
    """(metrics, flags, longest edge) of linear tetrahedra from corner columns (4, 3, n).

    Worked out on coordinate columns (contiguous (3, n) arrays), from the edges a, b, c
    leaving corner 0 and their cross products, which give det J and every face's area
    vector; face angles from the squared edge lengths (law of cosines) and the face
    areas; dihedral angles from cot = -(N_f . N_g) / (|N_f x N_g|), where for the faces
    f, g meeting at edge e |N_f x N_g| = |det J| l_e / 4 (N the area vectors).
    """
    n = p.shape[2]
    a, b, c = p[1] - p[0], p[2] - p[0], p[3] - p[0]
    bc, ca, ab = _cross(b, c), _cross(c, a), _cross(a, b)
    det = _dot_columns(a, bc)  # 6 V = det J
    det += 0.0
    volume = det / 6.0
    # twice the area vectors of the faces (0,1,3), (1,2,3), (2,0,3), (0,2,1)
    normal = np.stack([-ca, bc + ca + ab, -bc, -ab])  # (4, 3, n)
    area2 = _dot_columns(normal, normal)  # (2 A)^2
    edge = np.stack([a, b - a, -b, c, c - a, c - b])  # (6, 3, n) along EDGES
    sq = _dot_columns(edge, edge)
    length = np.sqrt(sq)
    longest, shortest = length.max(axis=0), length.min(axis=0)
    sum_sq = sq.sum(axis=0)

    # scaled Jacobian: every corner determinant equals det (even permutations)
    products = length[CORNER_EDGES].prod(axis=1).max(axis=0)
    sj = np.where(products > 0.0, _SQRT2 * det / products, 0.0)
    sj = np.clip(sj, -1.0, 1.0)

    # sqrt(sum l^2 sum A^2) / (18 V), with A^2 = area2 / 4 and 18 V = 3 det
    cond = np.sqrt(sum_sq * area2.sum(axis=0)) / (6.0 * det)
    cond = np.where(det > 0.0, cond, np.inf)

    mean = 12.0 * np.cbrt(0.5 * np.abs(det)) ** 2 / sum_sq
    mean = np.where(sum_sq > 0.0, np.sign(det) * mean, 0.0)

    centre = sq[0] * bc + sq[2] * ca + sq[3] * ab  # 2 det x (circumcentre - x0)
    # R = |centre| / (2 |det|), r = |det| / (2 S): R / (3 r) = |centre| S / (3 det^2)
    surface = 0.5 * np.sqrt(area2).sum(axis=0)
    radius = np.sqrt(_dot_columns(centre, centre)) * surface / (3.0 * det * det)
    radius = np.where(det != 0.0, radius, np.inf)

    edge_ratio = np.where(shortest > 0.0, longest / shortest, np.inf)

    products_nn = _dot_columns(normal[EDGE_FACES[:, 0]], normal[EDGE_FACES[:, 1]])
    # (2 N_f) . (2 N_g) / (4 |N_f x N_g|) with |N_f x N_g| = |det| l / 4
    min_dihedral, max_dihedral = _angle_range(-products_nn / (np.abs(det) * length))

    pq, pr, qr = (sq[k] for k in _FACE_CORNER_EDGES)
    dots = 0.5 * (pq + pr - qr)  # (12, n): (x_q - x_p) . (x_r - x_p)
    min_angle, max_angle = _angle_range(dots / np.sqrt(area2)[_FACE_OF_CORNER])

    degenerate = ~(longest > 0.0) | (shortest <= DEGENERATE_TOLERANCE * longest)
    degenerate |= ~(np.abs(volume) > DEGENERATE_TOLERANCE * longest**3)
    inverted = (det < 0.0) & ~degenerate
    nan = np.full(n, np.nan)
    metrics = {
        "volume": volume,
        "area": nan,
        "det_j_min": det,
        "det_j_max": det.copy(),
        "det_j_corner_min": det.copy(),
        "det_j_lower_bound": det.copy(),
        "jacobian_ratio": np.where(det > 0.0, 1.0, np.inf),
        "scaled_jacobian": sj,
        "condition": cond,
        "mean_ratio": mean,
        "radius_ratio": radius,
        "edge_ratio": edge_ratio,
        "min_dihedral": min_dihedral,
        "max_dihedral": max_dihedral,
        "min_angle": min_angle,
        "max_angle": max_angle,
        "aspect_ratio": nan.copy(),
        "skew": nan.copy(),
        "taper": nan.copy(),
        "warp": nan.copy(),
        "midside_offset_along": nan.copy(),
        "midside_offset_across": nan.copy(),
    }
    false = np.zeros(n, dtype=bool)
    flags = {
        "inverted": inverted,
        "reversed": inverted.copy(),
        "degenerate": degenerate,
        "nonconvex": false,
        "self_intersecting": false.copy(),
        "quarter_point": false.copy(),
    }
    return metrics, flags, longest


def negative_floor(longest: np.ndarray) -> np.ndarray:
    """det J below this (n,) counts as negative: -1e-12 x the longest corner edge cubed,
    so round-off at an exact zero (a quarter-point corner) is not read as a fold."""
    return -FLOOR_FACTOR * np.maximum(longest, 1e-100) ** 3


def _midside_index() -> tuple[np.ndarray, np.ndarray]:
    """(4, 4) node of the midside node of edge {i, k} (i itself on the diagonal), and k."""
    mid = np.tile(np.arange(4)[:, None], (1, 4))
    for m, (i, k) in enumerate(EDGES.tolist()):
        mid[i, k] = mid[k, i] = 4 + m
    return mid, np.tile(np.arange(4), (4, 1))


_MID, _OTHER = _midside_index()
_DIAGONAL = np.eye(4, dtype=bool)[..., None, None]


def corner_jacobians(x: np.ndarray) -> np.ndarray:
    """Jacobians (4, 3, 3, n) of tetra10 maps at the four corners, from node columns
    x (10, 3, n): [corner i, row a (d/dxi_a), coordinate].

    At corner i, dx/dL_k = 4 m_ik - x_k for k != i and 3 x_i for k = i (m_ik the
    midside node of edge ik); row a is dx/dL_(a+1) - dx/dL_0.
    """
    d = np.where(_DIAGONAL, 3.0 * x[_MID], 4.0 * x[_MID] - x[_OTHER])  # (4, 4, 3, n)
    return d[:, 1:] - d[:, :1]


def _samples(coeffs: np.ndarray) -> np.ndarray:
    """det J (14, n) at the 4 Gauss points, then the 10 nodes, from coefficients (20, n)."""
    return np.einsum("sa,an->sn", _SAMPLE.T, coeffs)  # no threaded BLAS


_KNOWN_POINTS = np.vstack([_GAUSS_POINTS, _NODE_POINTS])


def det_j_coefficients(coords: np.ndarray) -> np.ndarray:
    """Bernstein coefficients (n, 20) of det J of tetra10 elements (n, 10, 3), in the
    order of :data:`meshaudit.metrics.solid.tet_bernstein.INDICES`."""
    x = columns(np.asarray(coords, dtype=np.float64))
    return tb.coefficients(corner_jacobians(x)).T


def det_j_bounds(coords: np.ndarray, floor: np.ndarray | None = None) -> tb.Bounds:
    """Certified bounds of det J over tetra10 elements (n, 10, 3): lower bound, the
    smallest value found and where (barycentric), undecided (see
    :func:`meshaudit.metrics.solid.tet_bernstein.bounds`). ``floor`` (n,): det J below
    it counts as negative (default: :func:`negative_floor` of the longest corner edge)."""
    x = columns(np.asarray(coords, dtype=np.float64))
    coeffs = tb.coefficients(corner_jacobians(x))
    if floor is None:
        with np.errstate(all="ignore"):
            floor = negative_floor(_corner_shape(x[:4])[2])
    return tb.bounds(coeffs, floor, _samples(coeffs), _KNOWN_POINTS)


def _jacobian_part(x: np.ndarray, floor: np.ndarray) -> tuple[dict, np.ndarray]:
    """det J metrics of tetra10 elements from node columns x (10, 3, n), and whether
    det J is below ``floor`` at every Gauss point and node."""
    coeffs = tb.coefficients(corner_jacobians(x))
    known = _samples(coeffs)
    gauss, nodal = known[:4], known[4:]
    found = tb.bounds(coeffs, floor, known, _KNOWN_POINTS)
    lower = np.where((found.lower < 0.0) & (found.lower >= floor), 0.0, found.lower)
    lo, hi = gauss.min(axis=0), gauss.max(axis=0)
    metrics = {
        "volume": coeffs.mean(axis=0) / 6.0,
        "det_j_min": lo,
        "det_j_max": hi,
        "det_j_corner_min": nodal.min(axis=0),
        "det_j_lower_bound": lower,
        "jacobian_ratio": np.where(lo > 0.0, hi / lo, np.inf),
        "negative": found.lower < floor,
    }
    everywhere = known.max(axis=0) < floor
    return metrics, everywhere


def midside_offsets(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(along, across), each (6, n), from node columns x (10, 3, n): midside nodes'
    offsets from their chord midpoints, as fractions of the chord; ``along`` signed,
    positive towards the edge's second corner (a quarter-point node next to the first
    corner reads -0.25)."""
    a, b = x[EDGES[:, 0]], x[EDGES[:, 1]]
    chord = b - a
    length2 = _dot_columns(chord, chord)
    offset = x[4:10] - 0.5 * (a + b)
    along = _dot_columns(offset, chord) / length2
    rest = offset - along[:, None] * chord
    across = np.sqrt(_dot_columns(rest, rest) / length2)
    return along, across


def _quadratic(
    x: np.ndarray,
    metrics: dict[str, np.ndarray],
    flags: dict[str, np.ndarray],
    longest: np.ndarray,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Overlay tetra10's curved det J and midside checks (node columns x (10, 3, n)) on
    its corner tetrahedron's metrics and flags."""
    n = x.shape[2]
    floor = negative_floor(longest)
    jac, everywhere = _jacobian_part(x, floor)
    negative = jac.pop("negative")
    along, across = midside_offsets(x)
    degenerate = flags["degenerate"]
    inverted = flags["inverted"] | (negative & ~degenerate)
    reversed_ = flags["reversed"] | (everywhere & ~degenerate)
    near = (np.abs(np.abs(along) - 0.25) <= QUARTER_POINT_TOLERANCE) & (
        across <= QUARTER_POINT_TOLERANCE
    )
    quarter = near.any(axis=0) & ~inverted & ~degenerate
    out = dict(metrics)
    out.update(jac)
    out["midside_offset_along"] = np.fmax.reduce(np.abs(along), axis=0)
    out["midside_offset_across"] = np.fmax.reduce(across, axis=0)
    for name in QUARTER_POINT_METRICS:
        out[without_quarter_points_name(name)] = np.full(n, np.nan)
    rows = np.flatnonzero(quarter)
    if rows.size:
        # the twin: every quarter-point node moved to its chord midpoint
        twin = x[:, :, rows].copy()
        centre = 0.5 * (twin[EDGES[:, 0]] + twin[EDGES[:, 1]])
        moved = near[:, None, rows]
        twin[4:10] = np.where(moved, centre, twin[4:10])
        twin_jac, _ = _jacobian_part(twin, floor[rows])
        twin_jac["midside_offset_along"] = np.fmax.reduce(
            np.where(near[:, rows], 0.0, np.abs(along[:, rows])), axis=0
        )
        for name in QUARTER_POINT_METRICS:
            out[without_quarter_points_name(name)][rows] = twin_jac[name]
    out_flags = dict(flags, inverted=inverted, reversed=reversed_, quarter_point=quarter)
    return out, out_flags


def measure(
    coords: np.ndarray, cell_type: str
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Metrics and flags (each (n,)) of ``tetra`` or ``tetra10`` elements ``coords``
    (n, k, 3) in meshio's node order; see the module docstring for every definition."""
    if cell_type not in REFERENCES:
        raise ValueError(f"not a tetrahedron cell type: {cell_type!r}")
    coords = np.asarray(coords, dtype=np.float64)
    expected = len(REFERENCES[cell_type].nodes)
    if coords.ndim != 3 or coords.shape[1:] != (expected, 3):
        raise ValueError(f"{cell_type} coordinates must be (n, {expected}, 3)")
    x = columns(coords)
    with np.errstate(all="ignore"):
        metrics, flags, longest = _corner_shape(x[:4])
        if cell_type == "tetra10":
            metrics, flags = _quadratic(x, metrics, flags, longest)
        metrics = {name: values + 0.0 for name, values in metrics.items()}  # no -0.0
    return metrics, flags
