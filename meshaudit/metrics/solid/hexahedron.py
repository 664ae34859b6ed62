"""Metrics and flags of hexahedra: ``hexahedron`` (8 nodes, trilinear), ``hexahedron20``
(serendipity) and ``hexahedron27`` (triquadratic), in meshio's node order
(:mod:`meshaudit.metrics.solid.hex_reference`).

Every element is the image of the reference cube [-1, 1]^3 (volume 8) under its
isoparametric map x(xi, eta, zeta); det J = det[x_xi, x_eta, x_zeta] is in length^3 per
unit of reference volume, so the unit cube reads 1/8 everywhere and an a x b x c box
abc/8. Metrics (each (n,) float64):

- ``volume`` (length^3): the integral of det J over the reference cube by the full Gauss
  rule, exact since the rule integrates det J's degree (2 x 2 x 2 points for degree 2 in
  each variable, 3 x 3 x 3 for degree 5). Signed: negative for a mirrored element.
  ``area``: NaN (areas are for surface elements).
- ``det_j_min``, ``det_j_max`` (length^3): extremes of det J at the full rule's Gauss
  points (2 x 2 x 2 at +-1/sqrt(3) for the trilinear hexahedron, 3 x 3 x 3 at 0,
  +-sqrt(0.6) for the quadratic ones). ``jacobian_ratio`` = det_j_max / det_j_min, 1 for
  any parallelepiped, infinite when det_j_min <= 0 (meshaudit's convention).
- ``det_j_corner_min`` (length^3): smallest det J at the nodes. For the trilinear
  hexahedron the nodes are the corners and det J there is det[a, b, c] / 8, a, b, c the
  three edge vectors leaving the corner in right-handed order (the "corner Jacobian"
  divided by the reference cube's 2 x 2 x 2); for the quadratic ones every node
  (corners, midside nodes, and the face and centre nodes of hexahedron27).
- ``det_j_lower_bound`` (length^3): det J >= this everywhere in the element, certified:
  the smallest tensor Bernstein coefficient of det J (degree 2 in each variable for the
  trilinear map, 5 for the quadratic ones), refined by subdivision into eight where it is
  negative but no value found is (:mod:`meshaudit.metrics.solid.hex_bernstein`; Johnen,
  Remacle and Geuzaine, J. Comput. Phys. 233 (2013) 359-372, from memory). Even the
  trilinear hexahedron's det J can be negative inside while positive at every corner and
  Gauss point. A bound negative only by round-off (above the floor, see ``inverted``)
  reads 0.
- ``scaled_jacobian`` (1): min over the 8 corners of det[a, b, c] / (|a| |b| |c|): 1 for a
  box, sin(theta) for a parallelepiped sheared by theta, 0 at a corner with a zero-length
  edge, negative at a corner turned inside out. ``condition`` (1): max over the corners
  of |A|_F |A^-1|_F / 3, A = [a b c] (Frobenius norms; |A^-1|_F = |adj A|_F / det A, the
  rows of adj A being b x c, c x a, a x b): 1 for a cube, infinite at a corner with
  det <= 0. P. M. Knupp, "Algebraic mesh quality metrics", SIAM J. Sci. Comput. 23
  (2001) 193-218, and "Achieving finite element mesh quality via optimization of the
  Jacobian matrix norm and associated quantities. Part II", Int. J. Numer. Meth. Engng
  48 (2000) 1165-1185 (from memory); the worst corner is meshaudit's choice.
- Principal axes (Robinson's quadrilateral shape parameters carried to three axes: J.
  Robinson, "Some new distortion measures for quadrilaterals", Finite Elements in
  Analysis and Design 3 (1987) 183-197, from memory; the three-axis form is meshaudit's).
  The trilinear map through the corners is written
  x = e0 + e1 xi + e2 eta + e3 zeta + e4 xi eta + e5 eta zeta + e6 zeta xi + e7 xi eta zeta,
  e_k = (1/8) sum_i m_k(corner i) x_i; e1 is half the vector between the centres of the
  faces xi = -1 and xi = +1, and so on.

  - ``aspect_ratio`` = max(|e1|, |e2|, |e3|) / min(...): a / min for an a x b x c box;
    infinite when an axis has zero length.
  - ``skew`` (degrees) = max over the pairs of |90 - angle(e_i, e_j)|: 0 when the axes
    are mutually perpendicular, 90 - theta for a parallelepiped with a face angle theta.
  - ``taper`` = the largest of |alpha_1|, |alpha_2| (e4 = alpha_1 e1 + alpha_2 e2 +
    alpha_3 e3), |beta_2|, |beta_3| (e5 = beta_1 e1 + beta_2 e2 + beta_3 e3), |gamma_3|,
    |gamma_1| (e6 = gamma_1 e1 + ...): each bilinear term's components along the two
    axes of its own plane, how fast those axes grow across it (the quadrilateral's
    max(|alpha|, |beta|) on each of the three axis planes). 0 for any parallelepiped;
    |a - c| / (a + c) for a frustum of a square pyramid with sides a and c; infinite when
    the three axes are coplanar. The out-of-plane components (a twist of the faces) are
    left to ``warp``, the trilinear term e7 to the Jacobian metrics.
- ``warp`` (degrees, 0 to 180): the worst face's fold angle, defined like the quad warp:
  split the face along each diagonal into two triangles; the fold is the angle between
  the two triangles' normals (in the face's own winding); only splits whose two
  triangles both face along the face normal N = (x3 - x1) x (x4 - x2) count (the larger
  of those; both where neither does). A unit-square face with a corner lifted by h reads
  arccos(1 / (1 + h^2)); a flat face 0. Common practice, no single source.
- ``edge_ratio`` (1): longest / shortest of the 12 edges, infinite for a zero-length edge.
- ``min_angle``, ``max_angle`` (degrees): the 24 corner angles of the 6 faces; a corner
  whose normal (next - corner) x (previous - corner) points against its face's normal N
  (a re-entrant face corner) reads 360 minus the angle between its edges; a corner with
  a zero-length edge reads 0.
- ``min_dihedral``, ``max_dihedral`` (degrees): at each of the 12 edges, 180 minus the
  signed angle between the two faces' normals N (the sign: whether the normals turn
  about the edge the way a convex solid's do), so 90 for a box, theta and 180 - theta
  for a parallelepiped sheared by theta, above 180 at a re-entrant edge.
- ``midside_offset_along``, ``midside_offset_across`` (quadratic only, NaN for the
  trilinear hexahedron): over the 12 midside nodes, the largest |offset along the chord|
  and the largest distance from the chord, from the chord's midpoint, as fractions of
  the chord length (as for the quadratic surface elements); a zero-length chord is left
  out (NaN when every one is).

The shape metrics (scaled Jacobian to dihedral angles) of hexahedron20 and hexahedron27
are those of the eight corners, so a straight-sided quadratic element reports what its
trilinear twin does; det J, volume and the flags ``inverted`` and ``reversed`` come from
the full quadratic map.

Flags (each (n,) bool); L is the longest edge:

- ``degenerate``: two of the eight corners closer than 1e-9 L (any of the 28 pairs), or
  det J within 1e-9 L^3 / 8 of zero everywhere (every Bernstein coefficient: the element
  is flat, its volume zero). Zero net volume alone is not degenerate. The other flags are
  not raised for a degenerate element.
- ``inverted``: det J < floor somewhere in the element, floor = -1e-10 L^3 (a round-off
  allowance): its certified lower bound is below the floor. An element whose sign is
  still undecided after the deepest subdivision counts as inverted (when in doubt,
  report).
- ``reversed``: det J < floor at every node and every Gauss point: the node order is
  mirrored (e.g. the two faces' corners swapped); always ``inverted`` too.
- ``self_intersecting``: a face crosses itself: two of its four corner normals point
  against the face normal N (against its largest corner normal where N vanishes, as for
  a bow-tie whose two lobes balance). A hex twisted by 180 degrees has such faces.
- ``nonconvex``: a re-entrant corner: the corner Jacobians (of the corners' trilinear
  map) disagree in sign (some below the floor, some above minus the floor), or a face has
  one or three corners turned against its normal; not when self-intersecting.
"""

from __future__ import annotations

import numpy as np

from .hex_jacobian import jacobian_part
from .hex_reference import REFERENCE
from .hex_shape import DEGENERATE_TOLERANCE, shape

CELL_TYPES = tuple(REFERENCE)

#: Metrics every hexahedron reports (NaN where not defined).
METRICS = (
    "volume",
    "area",
    "det_j_min",
    "det_j_max",
    "det_j_corner_min",
    "det_j_lower_bound",
    "jacobian_ratio",
    "scaled_jacobian",
    "condition",
    "aspect_ratio",
    "skew",
    "taper",
    "warp",
    "edge_ratio",
    "min_angle",
    "max_angle",
    "min_dihedral",
    "max_dihedral",
    "midside_offset_along",
    "midside_offset_across",
)

FLAGS = ("inverted", "reversed", "degenerate", "nonconvex", "self_intersecting")


def midside_offsets(coords: np.ndarray, edges: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(along, across), each (n, s): midside node offsets from their chord midpoints as
    fractions of the chord; ``along`` signed, positive towards the edge's second corner;
    NaN for a zero-length chord."""
    a, b, m = (coords[:, edges[:, k]] for k in range(3))
    chord = b - a
    length2 = np.einsum("nsd,nsd->ns", chord, chord)
    offset = m - 0.5 * (a + b)
    with np.errstate(divide="ignore", invalid="ignore"):
        along = np.einsum("nsd,nsd->ns", offset, chord) / length2
        rest = offset - along[..., None] * chord
        across = np.sqrt(np.einsum("nsd,nsd->ns", rest, rest) / length2)
    return along, across


#: Elements measured together: the temporaries stay a few MB, and each numpy call is long
#: enough that two threads overlap (measured on 2 cores, 10^6 distorted hexahedra in
#: chunks of 32768: 1024 per block took 0.75 s per 8 chunks alone and in two threads
#: alike, 4096 took 0.65 s alone and 0.43 s in two threads). det J of the quadratic cells
#: goes in smaller blocks (see hex_jacobian.BLOCK).
BLOCK = 4096


def measure(
    coords: np.ndarray, cell_type: str
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Metrics and flags of hexahedra ``coords`` (n, k, 3) of ``cell_type``
    (``hexahedron``, ``hexahedron20`` or ``hexahedron27``), see the module docstring."""
    if cell_type not in REFERENCE:
        raise ValueError(f"not a hexahedron cell type: {cell_type!r}")
    coords = np.asarray(coords, dtype=np.float64)
    reference = REFERENCE[cell_type]
    if coords.ndim != 3 or coords.shape[1:] != (len(reference.nodes), 3):
        raise ValueError(f"{cell_type} needs coordinates (n, {len(reference.nodes)}, 3)")
    size = BLOCK
    if len(coords) <= size:
        return _measure_block(coords, cell_type)
    parts = [_measure_block(coords[s : s + size], cell_type) for s in range(0, len(coords), size)]
    metrics = {k: np.concatenate([p[0][k] for p in parts]) for k in parts[0][0]}
    flags = {k: np.concatenate([p[1][k] for p in parts]) for k in parts[0][1]}
    return metrics, flags


def _measure_block(
    coords: np.ndarray, cell_type: str
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """:func:`measure` on one block of elements."""
    reference = REFERENCE[cell_type]
    n = len(coords)
    with np.errstate(all="ignore"):
        sh = shape(coords[:, :8])
        jac = jacobian_part(cell_type, coords)
        floor = jac.floor
        longest = sh["longest"]
        flat = ~(8.0 * jac.largest > DEGENERATE_TOLERANCE * longest**3)
        degenerate = sh["coincident"] | flat
        valid = ~degenerate
        lo, hi = jac.gauss.min(axis=0), jac.gauss.max(axis=0)
        ratio = np.where(lo > 0.0, hi / lo, np.inf)
        lower = np.where((jac.lower < 0.0) & (jac.lower >= floor), 0.0, jac.lower)
        corner = sh["corner_det"] / 8.0
        mixed = (corner < floor).any(axis=0) & (corner > -floor).any(axis=0)
        crossing = sh["face_crossing"] & valid
        if len(reference.midside_edges):
            along, across = midside_offsets(coords, reference.midside_edges)
            worst_along = np.fmax.reduce(np.abs(along), axis=1)
            worst_across = np.fmax.reduce(across, axis=1)
        else:
            worst_along = worst_across = np.full(n, np.nan)
    metrics = {
        "volume": jac.volume,
        "area": np.full(n, np.nan),
        "det_j_min": lo,
        "det_j_max": hi,
        "det_j_corner_min": jac.nodal.min(axis=0),
        "det_j_lower_bound": lower,
        "jacobian_ratio": ratio,
        "scaled_jacobian": sh["scaled_jacobian"],
        "condition": sh["condition"],
        "aspect_ratio": sh["aspect_ratio"],
        "skew": sh["skew"],
        "taper": sh["taper"],
        "warp": sh["warp"],
        "edge_ratio": sh["edge_ratio"],
        "min_angle": sh["min_angle"],
        "max_angle": sh["max_angle"],
        "min_dihedral": sh["min_dihedral"],
        "max_dihedral": sh["max_dihedral"],
        "midside_offset_along": worst_along,
        "midside_offset_across": worst_across,
    }
    flags = {
        "inverted": (jac.lower < floor) & valid,
        "reversed": (jac.gauss < floor).all(axis=0) & (jac.nodal < floor).all(axis=0) & valid,
        "degenerate": degenerate,
        "nonconvex": (mixed | sh["face_reentrant"]) & valid & ~crossing,
        "self_intersecting": crossing,
    }
    # never -0.0; float64 (n,) arrays of their own
    metrics = {k: np.asarray(v, dtype=np.float64) + 0.0 for k, v in metrics.items()}
    flags = {k: np.asarray(v, dtype=bool).copy() for k, v in flags.items()}
    return metrics, flags
