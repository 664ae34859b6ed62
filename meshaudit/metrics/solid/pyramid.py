"""Metrics of the 5-node pyramid, meshio cell type ``pyramid``.

**Node order.** meshio's, which is VTK's and gmsh's (meshio reorders neither): nodes
0 1 2 3 the quadrilateral base, node 4 the apex, the base wound so that its right-hand
normal points towards the apex (vtkPyramid's documentation and gmsh's reference pyramid,
both from memory; meshio's VTK and gmsh readers pass pyramids through unchanged).

**Reference element and map.** The base [-1, 1]^2 at zeta = 0 (node i at (xi_i, eta_i) =
(-1, -1), (1, -1), (1, 1), (-1, 1)), the apex at (0, 0, 1); reference volume 4/3. The
rational shape functions N_i = (1 - zeta + xi_i xi)(1 - zeta + eta_i eta) / (4 (1 - zeta)),
N_4 = zeta (G. Bedrosian, "Shape functions and integration formulas for three-dimensional
finite element analysis", Int. J. Numer. Meth. Engng 35 (1992) 95-108, from memory). With
the collapsed coordinates u = xi / (1 - zeta), v = eta / (1 - zeta) in [-1, 1]^2 this is the
collapsed-hex map x = (1 - zeta) B(u, v) + zeta x_4, B the bilinear map of the base (M. G.
Duffy, "Quadrature over a pyramid or cube of integrands with a singularity at a vertex",
SIAM J. Numer. Anal. 19 (1982) 1260-1262, from memory, for the collapsed coordinates). det J
is in length^3 per unit reference volume: a right pyramid over a 2b x 2b square of height
h has det J = b^2 h everywhere (volume 4 b^2 h / 3).

**det J of the rational map.** det J(xi, eta, zeta) = D(u, v) = det[B_u, B_v, x_4 - B(u, v)]
(the Jacobian of the collapsed map, (1 - zeta)^2 D, over that of (u, v, zeta) -> (xi, eta,
zeta), (1 - zeta)^2). D is *bilinear* in (u, v): its u^2 v and u v^2 terms cancel. So det J is
constant along each ray from the apex and its range over the element is that of D over
[-1, 1]^2, spanned by its four corner values D_i = det[x_(i+1) - x_i, x_(i-1) - x_i,
x_4 - x_i] / 4: a quarter of six times the volume of the tetrahedron (i - 1, i, i + 1, apex).
These four tetrahedra are exactly those of the two splits of the pyramid along its base
diagonals (0 2: tetrahedra at corners 1 and 3; 1 3: at corners 0 and 2), the common
practical test of pyramid validity. What is certified: det J of this map is >= min D_i
everywhere in the element but the apex, where J is undefined (its limits, along different
rays, lie in [min D_i, max D_i]); ``inverted`` is exact for this map. A degenerate
hexahedron with its four top nodes on the apex maps the same way (its det J is
((1 - w) / 2)^2 D / 2 in the hexahedron's w, same sign, zero at the apex). Not certified:
other pyramid formulations (higher order, or other rational bases) and anything beyond the
element itself (overlap with neighbours).

**Gauss rule.** The collapsed 2 x 2 x 2 rule: u, v = -+1/sqrt(3) (weights 1) times 2-point
Gauss-Legendre in zeta on [0, 1] (zeta = (1 -+ 1/sqrt(3)) / 2, weights 1/2), at
(xi, eta, zeta) = (u (1 - zeta), v (1 - zeta), zeta) with weight w_u w_v w_zeta (1 - zeta)^2
(the Jacobian of the collapse); weights sum to 4/3. det J there is D(u, v), bilinear, and
the factor (1 - zeta)^2 is of degree 2 in zeta, so the rule integrates det J exactly: the
Gauss sum is the exact volume, (D_0 + D_1 + D_2 + D_3) / 3, the mean of the two diagonal
splits' volumes (common practice, no single source).

Metrics (each (n,) float64):

- ``volume`` (length^3): the Gauss sum of det J, exact: the signed volume enclosed by the
  bilinear base and the four flat triangles (negative for a mirrored element).
  ``area``: NaN.
- ``det_j_min``, ``det_j_max`` (length^3): extremes over the 8 Gauss points (four
  distinct values D(-+1/sqrt 3, -+1/sqrt 3)).
- ``det_j_corner_min`` (length^3): min D_i, det J at the base corners; det J at base
  corner i is det[e1, e2, e3] / 4 of its edges in the right-handed order of
  ``PYRAMID.corner_triples`` (the 1/4: the reference base edges have length 2). The apex
  has four edges; each of its four triples of consecutive edges spans the tetrahedron of
  one base corner, so the apex adds no other value.
- ``det_j_lower_bound`` (length^3): min D_i, the exact minimum of det J (above).
- ``jacobian_ratio``: det_j_max / det_j_min over the Gauss points; infinite when
  det_j_min <= 0.
- ``scaled_jacobian``, ``condition``: Knupp's corner matrices (P. M. Knupp, "Algebraic mesh
  quality metrics", SIAM J. Sci. Comput. 23 (2001) 193-218; Part II, Int. J. Numer. Meth.
  Engng 48 (2000) 1165-1185; from memory) at eight corner triples: the four base corners
  (edges to the next and previous base corner and to the apex) and the apex's four triples
  of consecutive edges, each relative to the same triple of the ideal pyramid (square base,
  four equilateral sides: all eight edges equal). Scaled Jacobian = worst triple of
  det[e1, e2, e3] / (|e1||e2||e3|) / (1/sqrt 2), clipped to [-1, 1]; condition = worst triple
  of |T| |T^-1| / 3, T = A W^-1. Both read 1 for the ideal. The apex triples catch a tall
  or flat pyramid whose base corners alone look fine.
- ``edge_ratio``: longest / shortest of the eight edges.
- ``warp`` (degrees): the base's fold angle, as the quad warp.
- ``min_angle``, ``max_angle`` (degrees): extremes of the 16 face-corner angles (base and
  four triangles).

Flags ("negative": below -1e-12 x (longest edge)^3; a bound negative only by that reads 0):

- ``inverted``: det J negative somewhere in the element: some tetrahedron of the two
  diagonal splits is negative (exact for the map above).
- ``reversed``: negative at all four base corners (all four tetrahedra): node order
  mirrored, or the apex below the base.
- ``degenerate``: shortest edge <= 1e-9 x longest edge L, or |volume| <= 1e-9 L^3 (the apex
  in the base plane, a collapsed base; common practice, no single source).
"""

from __future__ import annotations

import numpy as np

from meshaudit.metrics.solid.wedge_pyramid_common import (
    SolidReference,
    assemble,
    checked,
    corner_shape,
    ideal_corners,
    normalised,
)

CELL_TYPE = "pyramid"

_BASE = np.array([[-1.0, -1.0], [1.0, -1.0], [1.0, 1.0], [-1.0, 1.0]])
_NODES = np.vstack([np.column_stack([_BASE, np.zeros(4)]), [[0.0, 0.0, 1.0]]])


def _gauss() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Points (8, 3), weights (8,) of the collapsed 2 x 2 x 2 rule, and (8, 2) their
    collapsed coordinates (u, v)."""
    g = 1.0 / np.sqrt(3.0)
    points, weights, collapsed = [], [], []
    for zeta in ((1.0 - g) / 2.0, (1.0 + g) / 2.0):
        for v in (-g, g):
            for u in (-g, g):
                points.append([u * (1.0 - zeta), v * (1.0 - zeta), zeta])
                weights.append(0.5 * (1.0 - zeta) ** 2)
                collapsed.append([u, v])
    return np.array(points), np.array(weights), np.array(collapsed)


_GAUSS_POINTS, _GAUSS_WEIGHTS, _GAUSS_UV = _gauss()


def _collapsed(points: np.ndarray) -> tuple[np.ndarray, ...]:
    """(xi, eta, zeta, u, v) of reference points; u = v = 0 at the apex (the limit along
    the axis: elsewhere on zeta = 1 the rational terms have no limit)."""
    xi, eta, zeta = np.asarray(points, dtype=np.float64).T
    rest = 1.0 - zeta
    apex = rest == 0.0
    safe = np.where(apex, 1.0, rest)
    return xi, eta, zeta, np.where(apex, 0.0, xi / safe), np.where(apex, 0.0, eta / safe)


def shape_functions(points: np.ndarray) -> np.ndarray:
    """N (m, 5) at reference points (m, 3) = (xi, eta, zeta): Bedrosian's rational
    functions, (1 - zeta)(1 + xi_i u)(1 + eta_i v) / 4 and zeta."""
    _, _, zeta, u, v = _collapsed(points)
    base = (1.0 + _BASE[:, 0] * u[:, None]) * (1.0 + _BASE[:, 1] * v[:, None]) / 4.0
    return np.column_stack([base * (1.0 - zeta)[:, None], zeta])


def shape_derivatives(points: np.ndarray) -> np.ndarray:
    """dN_i / d(xi, eta, zeta) (m, 5, 3) at reference points (m, 3): for a base node,
    (xi_i (1 + eta_i v), eta_i (1 + xi_i u), -1 + xi_i eta_i u v) / 4; for the apex (0, 0, 1).
    At the apex itself the base nodes' values are their limits along the axis."""
    _, _, _, u, v = _collapsed(points)
    xi_i, eta_i = _BASE[:, 0], _BASE[:, 1]
    out = np.zeros((len(u), 5, 3))
    out[:, :4, 0] = xi_i * (1.0 + eta_i * v[:, None]) / 4.0
    out[:, :4, 1] = eta_i * (1.0 + xi_i * u[:, None]) / 4.0
    out[:, :4, 2] = (-1.0 + xi_i * eta_i * (u * v)[:, None]) / 4.0
    out[:, 4, 2] = 1.0
    return out


#: Base corner i with the next and previous base corner and the apex; then the apex with
#: three consecutive base corners (i - 1, i + 1, i): right-handed for a positive element.
_TRIPLES = np.array(
    [[i, (i + 1) % 4, (i - 1) % 4, 4] for i in range(4)]
    + [[4, (i - 1) % 4, (i + 1) % 4, i] for i in range(4)]
)

PYRAMID = SolidReference(
    cell_type=CELL_TYPE,
    nodes=_NODES,
    corners=5,
    edges=((0, 1), (1, 2), (2, 3), (3, 0), (0, 4), (1, 4), (2, 4), (3, 4)),
    faces=((0, 3, 2, 1), (0, 1, 4), (1, 2, 4), (2, 3, 4), (3, 0, 4)),
    gauss_points=_GAUSS_POINTS,
    gauss_weights=_GAUSS_WEIGHTS,
    corner_triples=_TRIPLES,
    shape_functions=shape_functions,
    shape_derivatives=shape_derivatives,
)

#: The ideal pyramid: unit square base, four equilateral triangles (height 1/sqrt 2).
IDEAL = np.array(
    [[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.0], [0.0, 1.0, 0.0], [0.5, 0.5, np.sqrt(0.5)]]
)
_IDEAL = ideal_corners(IDEAL, _TRIPLES)

#: D at the Gauss points = this (8, 4) table @ the corner values D_i (4, n): the bilinear
#: interpolation (1 + u_i u)(1 + v_i v) / 4.
_GAUSS_TABLE = (1.0 + _BASE[:, 0] * _GAUSS_UV[:, :1]) * (1.0 + _BASE[:, 1] * _GAUSS_UV[:, 1:]) / 4.0


def measure(
    coords: np.ndarray, cell_type: str = CELL_TYPE
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Metrics and flags (dicts of (n,) arrays) of pyramids ``coords`` (n, 5, 3) in
    meshio's node order; see the module docstring for every definition."""
    xc, exponent = normalised(checked(coords, cell_type, PYRAMID))
    with np.errstate(all="ignore"):
        scaled, condition, dets = corner_shape(xc, _TRIPLES, _IDEAL)
        corners = dets[:4] / 4.0  # D_i, det J at the base corners
        gauss = _GAUSS_TABLE @ corners  # (8, n)
        return assemble(
            xc, PYRAMID, gauss, corners, corners.min(axis=0), (scaled, condition), exponent
        )
