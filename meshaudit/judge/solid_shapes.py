"""The analytic solids the built-in limits of the solid families are derived from.

Each :class:`Shape` is a one-parameter family of elements leaving the family's ideal
element in one direction (a regular tetrahedron flattened into a sliver, a cube sheared
into a parallelepiped, ...). It knows, in closed form:

- ``reach(anchors)``: the parameter at which it first reaches one of the anchor limits
  of one level (``anchors``: metric -> limit), or None when it reaches none of them;
- ``read(p)``: the metrics it reads at parameter p, as the family's kernel measures them
  (:mod:`meshaudit.metrics.solid`), for the metrics it is a candidate for.

A derived limit is the loosest value the family's shapes read where each first reaches an
anchor limit (:func:`loosest`), so on none of them does a derived rule fire before the
anchor that names its distortion, and on the shape that sets it both fire at the same
element. Every closed form is checked against the kernels, shape by shape, in
``tests/test_builtin_limits_solid.py``. Angles in degrees.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

SQRT2, SQRT3, SQRT6 = math.sqrt(2.0), math.sqrt(3.0), math.sqrt(6.0)
#: Gauss coordinates: the 2-point rule (hexahedron, wedge, pyramid) and the outermost
#: point of the 3-point rule (the quadratic hexahedra).
GAUSS2, GAUSS3 = 1.0 / SQRT3, math.sqrt(0.6)
#: Apex height of the regular tetrahedron over its unit base, and its dihedral angle.
REGULAR_HEIGHT = math.sqrt(2.0 / 3.0)
REGULAR_DIHEDRAL = math.degrees(math.acos(1.0 / 3.0))

Anchors = Mapping[str, float]


def _rad(deg: float) -> float:
    return math.radians(deg)


def _deg(rad: float) -> float:
    return math.degrees(rad)


@dataclass(frozen=True)
class Shape:
    """A one-parameter family of analytic elements (see the module docstring)."""

    name: str
    reach: Callable[[Anchors], float | None]
    read: Callable[[float], dict[str, float]]


def loosest(
    shapes: Sequence[Shape], metric: str, worse: str, anchors: Anchors
) -> tuple[float, Shape]:
    """The loosest value of ``metric`` (the largest for ``worse`` "high") among the
    ``shapes`` that read it, each where it first reaches one of ``anchors``, and the
    shape that reads it."""
    found = []
    for shape in shapes:
        p = shape.reach(anchors)
        if p is not None and metric in (values := shape.read(p)):
            found.append((values[metric], shape))
    if not found:
        raise ValueError(f"no shape derives {metric}")  # pragma: no cover - a table error
    pick = max if worse == "high" else min
    return pick(found, key=lambda item: item[0])


def first(candidates: Sequence[float | None], nearest: Callable = min) -> float | None:
    """The parameter reached first, ``nearest`` the ideal of the ``candidates`` found."""
    found = [p for p in candidates if p is not None]
    return nearest(found) if found else None


def box_condition(r: float) -> float:
    """Condition number of the affine image of an ideal element stretched r:1 along one
    axis (a box r:1:1 or r:r:1, a prism or pyramid stretched or flattened 1:r), equal at
    every corner: |T| |T^-1| / 3 with T = diag(r, 1, 1), sqrt((r^2 + 2)(1/r^2 + 2)) / 3."""
    return math.sqrt((r * r + 2.0) * (1.0 / (r * r) + 2.0)) / 3.0


def shear_condition(theta: float) -> float:
    """Condition number of a corner whose edges are the ideal's but one turned by
    90 - theta in the plane of another (T = [[1, cos, 0], [0, sin, 0], [0, 0, 1]]):
    sqrt(3 (2 + (1 + cos^2) / sin^2)) / 3; 1/sin for the quad's rhombus in 2-D."""
    c, s = math.cos(_rad(theta)), math.sin(_rad(theta))
    return math.sqrt(3.0 * (2.0 + (1.0 + c * c) / (s * s))) / 3.0


# -- tetrahedra ----------------------------------------------------------------------------
# S(h): the regular tetrahedron of edge 2 squeezed or stretched along its two-fold axis (the
# line joining the midpoints of two opposite edges): corners (+-1, 0, 0), (0, +-1, h),
# regular at h = sqrt 2. Four faces congruent, edges 2 (twice) and s = sqrt(2 + h^2).
# P(H): the regular tetrahedron of edge 1 squeezed or stretched along its three-fold axis:
# a unit equilateral base and the apex over its centroid at height H, lateral edges
# L = sqrt(1/3 + H^2); regular at H = sqrt(2/3).


def sliver_family(h: float) -> dict[str, float]:
    """Metrics of S(h): dihedral angles 2 atan(1/h) at the two edges of length 2 and
    acos(1/(1 + h^2)) at the four others; scaled Jacobian 2 sqrt2 h / (2 + h^2); mean ratio
    3 (2h)^(2/3) / (4 + h^2); condition and radius ratio both
    sqrt((4 + h^2)(1 + h^2)) / (3h); faces (2, s, s)."""
    s = math.sqrt(2.0 + h * h)
    dihedral = (_deg(2.0 * math.atan(1.0 / h)), _deg(math.acos(1.0 / (1.0 + h * h))))
    face = (_deg(math.acos(1.0 / s)), _deg(2.0 * math.asin(1.0 / s)))
    cond = math.sqrt((4.0 + h * h) * (1.0 + h * h)) / (3.0 * h)
    return {
        "edge_ratio": max(s / 2.0, 2.0 / s),
        "scaled_jacobian": 2.0 * SQRT2 * h / (2.0 + h * h),
        "mean_ratio": 3.0 * (2.0 * h) ** (2.0 / 3.0) / (4.0 + h * h),
        "condition": cond,
        "radius_ratio": cond,
        "min_dihedral": min(dihedral),
        "max_dihedral": max(dihedral),
        "min_angle": min(face),
        "max_angle": max(face),
    }


def pyramid_family(height: float) -> dict[str, float]:
    """Metrics of P(H): dihedral angles beta = atan(2 sqrt3 H) at the base edges and
    acos(sin^2 beta / 2 - cos^2 beta) at the lateral ones; scaled Jacobian
    sqrt6 H / (2 max(L, L^3)) (a base corner, or the apex when L > 1); mean ratio
    12 (sqrt3 H / 4)^(2/3) / (4 + 3 H^2); condition sqrt((4 + 3H^2)(1 + 3H^2)) / (3 sqrt3 H);
    radius ratio 2 L^2 S / (3 sqrt3 H^2), S the surface sqrt3/4 + (3/2) sqrt(H^2 + 1/12)."""
    big_h = height
    lat = math.sqrt(1.0 / 3.0 + big_h * big_h)
    beta = math.atan(2.0 * SQRT3 * big_h)
    cos_lateral = math.sin(beta) ** 2 / 2.0 - math.cos(beta) ** 2
    dihedral = (_deg(beta), _deg(math.acos(cos_lateral)))
    face = (60.0, _deg(2.0 * math.asin(1.0 / (2.0 * lat))), _deg(math.acos(1.0 / (2.0 * lat))))
    surface = SQRT3 / 4.0 + 1.5 * math.sqrt(big_h * big_h + 1.0 / 12.0)
    return {
        "edge_ratio": max(lat, 1.0 / lat),
        "scaled_jacobian": SQRT6 * big_h / (2.0 * max(lat, lat**3)),
        "mean_ratio": 12.0 * (SQRT3 * big_h / 4.0) ** (2.0 / 3.0) / (4.0 + 3.0 * big_h**2),
        "condition": math.sqrt((4.0 + 3.0 * big_h**2) * (1.0 + 3.0 * big_h**2))
        / (3.0 * SQRT3 * big_h),
        "radius_ratio": 2.0 * lat * lat * surface / (3.0 * SQRT3 * big_h**2),
        "min_dihedral": min(dihedral),
        "max_dihedral": max(dihedral),
        "min_angle": min(face),
        "max_angle": max(face),
    }


def _sliver_reach(a: Anchors) -> float | None:
    """S flattened (h from sqrt2 down): the four side dihedrals acos(1/(1 + h^2)) reach the
    min_dihedral limit at h = sqrt(sec theta - 1); the faces' base angles acos(1/s) fall
    only to 45 deg."""
    hs: list[float | None] = [None, None]
    if (theta := a.get("min_dihedral")) is not None and theta < REGULAR_DIHEDRAL:
        hs[0] = math.sqrt(1.0 / math.cos(_rad(theta)) - 1.0)
    if (alpha := a.get("min_angle")) is not None and 45.0 < alpha < 60.0:
        hs[1] = math.sqrt(1.0 / math.cos(_rad(alpha)) ** 2 - 2.0)
    return first(hs, max)


def _spindle_reach(a: Anchors) -> float | None:
    """S stretched (h from sqrt2 up): the faces' apex angle 2 asin(1/s) reaches the
    min_angle limit at s = 1/sin(alpha/2); the dihedral 2 atan(1/h) the min_dihedral limit
    at h = cot(theta/2)."""
    hs: list[float | None] = [None, None]
    if (alpha := a.get("min_angle")) is not None and alpha < 60.0:
        hs[0] = math.sqrt(1.0 / math.sin(_rad(alpha / 2.0)) ** 2 - 2.0)
    if (theta := a.get("min_dihedral")) is not None and theta < REGULAR_DIHEDRAL:
        hs[1] = 1.0 / math.tan(_rad(theta / 2.0))
    return first(hs, min)


def _needle_reach(a: Anchors) -> float | None:
    """P stretched (H up): the lateral faces' apex angle 2 asin(1/(2L)) reaches the
    min_angle limit at L = 1/(2 sin(alpha/2)); the lateral dihedral angles fall only to 60
    deg (cos^2 beta = (1 - 2 cos theta)/3 where they reach a higher limit)."""
    hs: list[float | None] = [None, None]
    if (alpha := a.get("min_angle")) is not None and alpha < 60.0:
        lat = 1.0 / (2.0 * math.sin(_rad(alpha / 2.0)))
        hs[0] = math.sqrt(lat * lat - 1.0 / 3.0)
    if (theta := a.get("min_dihedral")) is not None and 60.0 < theta < REGULAR_DIHEDRAL:
        cos2 = (1.0 - 2.0 * math.cos(_rad(theta))) / 3.0
        hs[1] = math.sqrt(1.0 / cos2 - 1.0) / (2.0 * SQRT3)
    return first(hs, min)


def _cap_reach(a: Anchors) -> float | None:
    """P flattened (H down): the base dihedral atan(2 sqrt3 H) reaches the min_dihedral
    limit at H = tan(theta) / (2 sqrt3); the lateral faces' base angles acos(1/(2L)) fall
    only to 30 deg (L = 1/(2 cos alpha) where they reach a higher min_angle limit)."""
    hs: list[float | None] = [None, None]
    if (theta := a.get("min_dihedral")) is not None and theta < REGULAR_DIHEDRAL:
        hs[0] = math.tan(_rad(theta)) / (2.0 * SQRT3)
    if (alpha := a.get("min_angle")) is not None and 30.0 < alpha < 60.0:
        lat = 1.0 / (2.0 * math.cos(_rad(alpha)))
        hs[1] = math.sqrt(lat * lat - 1.0 / 3.0)
    return first(hs, max)


FLAT_SLIVER = Shape("the flat sliver", _sliver_reach, sliver_family)
SPINDLE = Shape("the spindle", _spindle_reach, sliver_family)
NEEDLE = Shape("the needle", _needle_reach, pyramid_family)
FLAT_CAP = Shape("the flat cap", _cap_reach, pyramid_family)
TETRA_SHAPES = (FLAT_SLIVER, FLAT_CAP, NEEDLE, SPINDLE)


def tetra10_jacobian_ratio(along: float) -> float:
    """det J ratio over the 4 Gauss points of a straight tetra10 whose one midside node is
    moved ``along`` (a fraction of its edge) towards corner j: det J is proportional to
    1 + 4 d (L_i - L_j), and L_i - L_j takes +-(b - a) = +-1/sqrt5 at the points:
    (1 + 4d/sqrt5) / (1 - 4d/sqrt5)."""
    x = 4.0 * along / math.sqrt(5.0)
    return (1.0 + x) / (1.0 - x)


# -- hexahedra -----------------------------------------------------------------------------


def _box(r: float) -> dict[str, float]:
    return {
        "aspect_ratio": r,
        "edge_ratio": r,
        "condition": box_condition(r),
        "scaled_jacobian": 1.0,
        "skew": 0.0,
        "min_angle": 90.0,
        "max_angle": 90.0,
        "min_dihedral": 90.0,
        "max_dihedral": 90.0,
        "jacobian_ratio": 1.0,
    }


def _parallelepiped(theta: float) -> dict[str, float]:
    return {
        "aspect_ratio": 1.0,
        "edge_ratio": 1.0,
        "condition": shear_condition(theta),
        "scaled_jacobian": math.sin(_rad(theta)),
        "skew": 90.0 - theta,
        "min_angle": theta,
        "max_angle": 180.0 - theta,
        "min_dihedral": theta,
        "max_dihedral": 180.0 - theta,
        "jacobian_ratio": 1.0,
    }


def frustum_jacobian_ratio(taper: float, gauss: float) -> float:
    """det J ratio of the frustum of a square pyramid whose sides taper t (det J
    proportional to (1 + t zeta)^2) over Gauss points at zeta = +-gauss."""
    return ((1.0 + gauss * taper) / (1.0 - gauss * taper)) ** 2


def _anchor(metric: str) -> Callable[[Anchors], float | None]:
    return lambda a: a.get(metric)


BOX = Shape("the r:1:1 box", _anchor("aspect_ratio"), _box)
PARALLELEPIPED = Shape("the sheared parallelepiped", _anchor("min_angle"), _parallelepiped)
FRUSTUM = Shape(
    "the frustum",
    _anchor("taper"),
    lambda t: {"taper": t, "jacobian_ratio": frustum_jacobian_ratio(t, GAUSS3)},
)
HEXAHEDRON_SHAPES = (BOX, PARALLELEPIPED, FRUSTUM)


# -- wedges --------------------------------------------------------------------------------
# The ideal wedge: the right prism over the unit equilateral triangle, of height 1.


def _axial_prism(r: float) -> dict[str, float]:
    return {
        "edge_ratio": r,
        "condition": box_condition(r),
        "scaled_jacobian": 1.0,
        "min_angle": 60.0,
        "max_angle": 90.0,
        "jacobian_ratio": 1.0,
    }


def _flat_prism(r: float) -> dict[str, float]:
    """The ideal stretched r:1 along a triangle edge: ends isosceles with base angles
    beta = atan(sqrt3 / r), scaled Jacobian (2/sqrt3) sin beta (the right prism over a
    triangle reads that triangle's scaled Jacobian)."""
    beta = _deg(math.atan(SQRT3 / r))
    return {
        "edge_ratio": r,
        "condition": box_condition(r),
        "scaled_jacobian": 2.0 / SQRT3 * math.sin(_rad(beta)),
        "min_angle": beta,
        "max_angle": max(90.0, 180.0 - 2.0 * beta),
        "jacobian_ratio": 1.0,
    }


def _flat_prism_reach(a: Anchors) -> float | None:
    r_angle = None
    if (alpha := a.get("min_angle")) is not None and alpha < 60.0:
        r_angle = SQRT3 / math.tan(_rad(alpha))
    return first([r_angle, a.get("edge_ratio")], min)


def _oblique_prism(theta: float) -> dict[str, float]:
    return {
        "edge_ratio": 1.0,
        "condition": shear_condition(theta),
        "scaled_jacobian": math.sin(_rad(theta)),
        "min_angle": theta,
        "max_angle": 180.0 - theta,
        "jacobian_ratio": 1.0,
    }


AXIAL_PRISM = Shape("the prism stretched along its axis", _anchor("edge_ratio"), _axial_prism)
FLAT_PRISM = Shape("the prism over a flat triangle", _flat_prism_reach, _flat_prism)
OBLIQUE_PRISM = Shape("the oblique prism", _anchor("min_angle"), _oblique_prism)
PRISM_FRUSTUM = Shape(
    "the frustum of a triangular pyramid",
    _anchor("taper"),
    lambda t: {"jacobian_ratio": frustum_jacobian_ratio(t, GAUSS2)},
)
WEDGE_SHAPES = (AXIAL_PRISM, FLAT_PRISM, OBLIQUE_PRISM, PRISM_FRUSTUM)


# -- pyramids ------------------------------------------------------------------------------
# The ideal pyramid: a unit square base and four equilateral sides (height 1/sqrt2).


def _long_pyramid(r: float) -> dict[str, float]:
    """The ideal stretched r:1 along a base edge: lateral edges sqrt((r^2 + 3)/4), the long
    sides' base angles beta = atan(sqrt3 / r); scaled Jacobian 2/sqrt(r^2 + 3) at a base
    corner, 8r/(r^2 + 3)^(3/2) at the apex, the smaller."""
    beta = _deg(math.atan(SQRT3 / r))
    q = r * r + 3.0
    return {
        "edge_ratio": r,
        "condition": box_condition(r),
        "scaled_jacobian": min(2.0 / math.sqrt(q), 8.0 * r / q**1.5),
        "min_angle": beta,
        "max_angle": max(90.0, 180.0 - 2.0 * beta),
        "jacobian_ratio": 1.0,
    }


def _long_pyramid_reach(a: Anchors) -> float | None:
    if (alpha := a.get("min_angle")) is not None and alpha < 60.0:
        return SQRT3 / math.tan(_rad(alpha))
    return None


def _axial_pyramid(k: float) -> dict[str, float]:
    """The ideal stretched (k > 1) or flattened (k < 1) k:1 along its axis: lateral edges
    l = sqrt((1 + k^2)/2); scaled Jacobian sqrt2 k / sqrt(1 + k^2) at a base corner,
    2 sqrt2 k / (1 + k^2)^(3/2) = k / l^3 at the apex, the smaller; base-side dihedral
    atan(sqrt2 k)."""
    lat = math.sqrt((1.0 + k * k) / 2.0)
    apex = _deg(2.0 * math.asin(min(1.0, 1.0 / (2.0 * lat))))
    base_angle = (180.0 - apex) / 2.0
    return {
        "edge_ratio": max(lat, 1.0 / lat),
        "condition": box_condition(k),
        "scaled_jacobian": min(SQRT2 * k / math.sqrt(1.0 + k * k), k / lat**3),
        "min_angle": min(apex, base_angle),
        "max_angle": max(90.0, apex),
        "jacobian_ratio": 1.0,
    }


def _tall_reach(a: Anchors) -> float | None:
    if (alpha := a.get("min_angle")) is not None and alpha < 60.0:
        lat = 1.0 / (2.0 * math.sin(_rad(alpha / 2.0)))
        return math.sqrt(2.0 * lat * lat - 1.0)
    return None


def _squat_reach(a: Anchors) -> float | None:
    """Flattened until its base-side dihedral angle atan(sqrt2 k) reaches the tetrahedra's
    min_dihedral limit (the pyramid's two diagonal splits have that dihedral there)."""
    if (theta := a.get("min_dihedral")) is not None and theta < _deg(math.atan(SQRT2)):
        return math.tan(_rad(theta)) / SQRT2
    return None


def _sheared_pyramid(theta: float) -> dict[str, float]:
    """The ideal sheared so its base is a rhombus of angle theta, the apex over its centre:
    scaled Jacobian sin theta / sqrt(1 + cos(theta)/2) at the acute base corners, edge
    ratio sqrt((2 + cos theta)/(2 - cos theta)); its sides' angles stay above theta for
    theta <= 40 deg."""
    c, s = math.cos(_rad(theta)), math.sin(_rad(theta))
    return {
        "edge_ratio": math.sqrt((2.0 + c) / (2.0 - c)),
        "condition": shear_condition(theta),
        "scaled_jacobian": s / math.sqrt(1.0 + c / 2.0),
        "min_angle": theta,
        "max_angle": 180.0 - theta,
        "jacobian_ratio": 1.0,
    }


def _sheared_reach(a: Anchors) -> float | None:
    alpha = a.get("min_angle")
    if alpha is not None and alpha > 40.0:  # pragma: no cover - not a built-in limit
        raise ValueError("the sheared pyramid's closed form holds for min_angle <= 40")
    return alpha


LONG_PYRAMID = Shape("the pyramid stretched along a base edge", _long_pyramid_reach, _long_pyramid)
TALL_PYRAMID = Shape("the tall pyramid", _tall_reach, _axial_pyramid)
SQUAT_PYRAMID = Shape("the squat pyramid", _squat_reach, _axial_pyramid)
SHEARED_PYRAMID = Shape("the pyramid over a rhombus", _sheared_reach, _sheared_pyramid)
TAPERED_PYRAMID = Shape(
    "the pyramid over a trapezoid",
    _anchor("taper"),
    lambda t: {"jacobian_ratio": (1.0 + GAUSS2 * t) / (1.0 - GAUSS2 * t)},
)
PYRAMID_SHAPES = (LONG_PYRAMID, TALL_PYRAMID, SQUAT_PYRAMID, SHEARED_PYRAMID, TAPERED_PYRAMID)
