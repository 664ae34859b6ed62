"""Analytic solids whose metrics have closed forms, and a judge of solid elements that
calls the kernels and the verdicts directly (no engine).

Each path is a one-parameter family of elements leaving the family's ideal element: the
parameter p runs from ``ideal`` (the ideal element) towards ``far`` (well past every fail
limit). The closed forms, worked out by hand (common practice; each checked against the
kernels in tests/test_builtin_limits_solid.py):

- tetrahedra, the regular tetrahedron squeezed or stretched along its two-fold axis,
  S(h) = (+-1, 0, 0), (0, +-1, h) (regular at h = sqrt2): dihedral angles 2 atan(1/h) at
  the two edges of length 2 and acos(1/(1 + h^2)) at the other four, so the flat sliver
  (h < sqrt2) at smallest dihedral theta reads largest dihedral acos(1 - 2 cos theta);
  scaled Jacobian 2 sqrt2 h / (2 + h^2). Along its three-fold axis, P(H): a unit
  equilateral base and the apex above its centroid at height H (regular at sqrt(2/3)):
  base dihedral angles atan(2 sqrt3 H); lateral edges L = sqrt(1/3 + H^2), the lateral
  faces' apex angle 2 asin(1/(2L));
- hexahedra: the r:1:1 box (aspect ratio and edge ratio r, condition
  sqrt((r^2 + 2)(1/r^2 + 2))/3 at every corner: |A| |A^-1| / 3 with A = diag(r, 1, 1)), the
  cube sheared to face angle theta (face and dihedral angles theta and 180 - theta, skew
  90 - theta, scaled Jacobian sin theta), the frustum of a square pyramid whose sides taper
  t (half-widths (1 -+ t)/2 at z = 0 and 1: taper t, det J proportional to (1 + t zeta)^2),
  the unit cube with a top corner lifted by h (that face's warp acos(1/(1 + h^2)));
- wedges: the unit right prism over the equilateral triangle stretched r:1 along its axis
  (edge ratio r, angles 60 and 90) or along a triangle edge (ends isosceles with base
  angles atan(sqrt3/r)), the oblique prism whose side edges lean by 90 - theta (a side
  face a parallelogram of angle theta: scaled Jacobian sin theta), the frustum of a
  triangular pyramid (ends scaled 1 -+ t about the centroid: side faces trapezoids of
  taper t, det J proportional to (1 + t zeta)^2), a side face's corner lifted;
- pyramids: the ideal (unit square base, equilateral sides, height 1/sqrt2) stretched
  r:1 along a base edge, stretched or flattened k:1 along its axis (base-side dihedral
  atan(sqrt2 k)), sheared over a rhombus of angle theta, over a trapezoid of taper t (det
  J is the apex height times the base's bilinear det J: ratio (1 + t/sqrt3)/(1 - t/sqrt3)
  over the collapsed Gauss points), a base corner lifted.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from meshaudit.judge.profiles import BUILTIN
from meshaudit.judge.verdicts import judge
from meshaudit.metrics import METRIC_INFO, VALIDITY_FLAGS, WARNING_FLAGS
from meshaudit.metrics.solid import hexahedron, pyramid, tetra, wedge
from meshaudit.metrics.solid.hex_reference import REFERENCE as HEX_REFERENCE
from meshaudit.metrics.solid.tet_reference import EDGES as TET_EDGES

KERNELS = {
    "tetra": tetra.measure,
    "tetra10": tetra.measure,
    "hexahedron": hexahedron.measure,
    "hexahedron20": hexahedron.measure,
    "hexahedron27": hexahedron.measure,
    "wedge": wedge.measure,
    "pyramid": pyramid.measure,
}
FAMILY = {
    "tetra": "tetra",
    "tetra10": "tetra",
    "hexahedron": "hexahedron",
    "hexahedron20": "hexahedron",
    "hexahedron27": "hexahedron",
    "wedge": "wedge",
    "pyramid": "pyramid",
}


@dataclass
class Judged:
    """Metrics, flags, breach levels, verdicts and scores of a batch of solids."""

    metrics: dict[str, np.ndarray]
    flags: dict[str, np.ndarray]
    levels: dict[str, np.ndarray]
    verdict: np.ndarray
    score: np.ndarray

    def invalid(self) -> np.ndarray:
        out = np.zeros(len(self.verdict), dtype=bool)
        for name in ("inverted", "nonconvex", "self_intersecting", "degenerate"):
            out |= self.flags[name]
        return out


def judge_solids(cell_type: str, elements, profile: str = "standard") -> Judged:
    """Measure ``elements`` (each (k, 3)) with the family's kernel and judge them under the
    built-in ``profile``, as the engine does: metrics the kernel does not measure are
    NaN, flags it does not raise are False."""
    coords = np.asarray(elements, dtype=float)
    metrics, flags = KERNELS[cell_type](coords, cell_type)
    n = len(coords)
    for name in METRIC_INFO:
        metrics.setdefault(name, np.full(n, np.nan))
    for name in (*VALIDITY_FLAGS, *WARNING_FLAGS):
        flags.setdefault(name, np.zeros(n, dtype=bool))
    levels, verdict, score = judge(FAMILY[cell_type], metrics, flags, BUILTIN[profile])
    return Judged(metrics, flags, levels, verdict, score)


def positive(tet: np.ndarray) -> np.ndarray:
    """The tetrahedron with corners 1 and 2 swapped if needed, so its volume is positive."""
    a, b, c = tet[1] - tet[0], tet[2] - tet[0], tet[3] - tet[0]
    return tet if np.dot(a, np.cross(b, c)) > 0 else tet[[0, 2, 1, 3]]


def with_midsides(corners: np.ndarray, edges: np.ndarray) -> np.ndarray:
    """Corners followed by the midpoints of ``edges`` (pairs of corners): the straight-sided
    quadratic twin."""
    return np.vstack([corners, 0.5 * (corners[edges[:, 0]] + corners[edges[:, 1]])])


def tetra10(tet: np.ndarray) -> np.ndarray:
    return with_midsides(tet, TET_EDGES)


def hexahedron20(hexa: np.ndarray) -> np.ndarray:
    return with_midsides(hexa, HEX_REFERENCE["hexahedron20"].midside_edges[:, :2])


# -- tetrahedra ------------------------------------------------------------------------------

REGULAR_H = math.sqrt(2.0)  # S(h)
REGULAR_APEX = math.sqrt(2.0 / 3.0)  # P(H)


def two_fold(h: float) -> np.ndarray:
    """S(h): the regular tetrahedron of edge 2 squeezed (h < sqrt2) or stretched."""
    return positive(np.array([[1.0, 0, 0], [-1.0, 0, 0], [0, 1.0, h], [0, -1.0, h]]))


def three_fold(height: float) -> np.ndarray:
    """P(H): unit equilateral base, apex above its centroid at ``height``."""
    base = np.array([[0.0, 0, 0], [1.0, 0, 0], [0.5, math.sqrt(0.75), 0]])
    return positive(np.vstack([base, base.mean(axis=0) + np.array([0, 0, height])]))


def regular_tetra() -> np.ndarray:
    return two_fold(REGULAR_H)


# -- hexahedra --------------------------------------------------------------------------------

CUBE = np.array(
    [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]],
    dtype=float,
)


def box(r: float) -> np.ndarray:
    return CUBE * [r, 1.0, 1.0]


def sheared_cube(theta: float) -> np.ndarray:
    c, s = math.cos(math.radians(theta)), math.sin(math.radians(theta))
    return CUBE @ np.array([[1.0, c, 0], [0, s, 0], [0, 0, 1.0]]).T


def square_frustum(t: float) -> np.ndarray:
    """Square sections of side 1 - t at z = 0 and 1 + t at z = 1, centred: taper t."""
    out = CUBE - [0.5, 0.5, 0.0]
    out[:, :2] *= np.where(out[:, 2:] == 0.0, 1.0 - t, 1.0 + t)
    return out


def lifted_cube(h: float) -> np.ndarray:
    out = CUBE.copy()
    out[6, 2] += h
    return out


# -- wedges -------------------------------------------------------------------------------

TRIANGLE = np.array([[0.0, 0, 0], [1.0, 0, 0], [0.5, math.sqrt(0.75), 0]])
IDEAL_WEDGE = np.vstack([TRIANGLE, TRIANGLE + np.array([0, 0, 1.0])])


def axial_prism(r: float) -> np.ndarray:
    return IDEAL_WEDGE * [1.0, 1.0, r]


def flat_prism(r: float) -> np.ndarray:
    return IDEAL_WEDGE * [r, 1.0, 1.0]


def oblique_prism(theta: float) -> np.ndarray:
    lean = math.radians(90.0 - theta)
    return np.vstack([TRIANGLE, TRIANGLE + np.array([math.sin(lean), 0, math.cos(lean)])])


def triangle_frustum(t: float) -> np.ndarray:
    centre = TRIANGLE.mean(axis=0)
    low, high = centre + (1 - t) * (TRIANGLE - centre), centre + (1 + t) * (TRIANGLE - centre)
    return np.vstack([low, high + np.array([0, 0, 1.0])])


def lifted_prism(h: float) -> np.ndarray:
    """Node 4 (the side face 0-1-4-3 is the unit square in y = 0) moved by h along -y."""
    out = IDEAL_WEDGE.copy()
    out[4, 1] -= h
    return out


# -- pyramids -----------------------------------------------------------------------------

IDEAL_PYRAMID = np.array(
    [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0.5, 0.5, 1 / math.sqrt(2.0)]], dtype=float
)


def long_pyramid(r: float) -> np.ndarray:
    return IDEAL_PYRAMID * [r, 1.0, 1.0]


def axial_pyramid(k: float) -> np.ndarray:
    return IDEAL_PYRAMID * [1.0, 1.0, k]


def sheared_pyramid(theta: float) -> np.ndarray:
    c, s = math.cos(math.radians(theta)), math.sin(math.radians(theta))
    return IDEAL_PYRAMID @ np.array([[1.0, c, 0], [0, s, 0], [0, 0, 1.0]]).T


def trapezoid_pyramid(t: float) -> np.ndarray:
    """Base a trapezoid with parallel sides 1 - t and 1 + t (taper t), apex at the ideal
    height above the base's centre."""
    base = [[-(1 - t) / 2, -0.5, 0], [(1 - t) / 2, -0.5, 0], [(1 + t) / 2, 0.5, 0]]
    base.append([-(1 + t) / 2, 0.5, 0])
    return np.array([*base, [0.0, 0.0, 1 / math.sqrt(2.0)]])


def lifted_pyramid(h: float) -> np.ndarray:
    out = IDEAL_PYRAMID.copy()
    out[2, 2] += h
    return out


@dataclass(frozen=True)
class Path:
    """A named analytic shape: ``build(p)`` from ``ideal`` towards ``far``; ``carried``
    (optional): the parameter where it reaches an anchor of another family, by
    construction, given the profile and the level ("warn" or "fail")."""

    name: str
    cell_type: str
    build: Callable[[float], np.ndarray]
    ideal: float
    far: float
    carried: Callable[[str, str], float] | None = None

    def distance(self, p: float) -> float:
        """How far p lies from the ideal along the path."""
        return abs(p - self.ideal)

    def step(self, p: float, eps: float) -> float:
        """p moved by the relative step ``eps`` away from the ideal (eps < 0: towards it)."""
        away = 1.0 if self.far > self.ideal else -1.0
        return p * (1.0 + away * eps)
