"""Built-in limits of the solid families (tetra, hexahedron, wedge, pyramid).

As for the surface families (:mod:`meshaudit.judge.profiles`), each family has a few
anchor limits, most of them carried over from the quad and triangle anchors of the same
profile (a hexahedron's faces are quads, a tetrahedron's faces triangles), plus the
tetrahedra's smallest dihedral angle; every other limit is derived from them through the
named analytic shapes of :mod:`meshaudit.judge.solid_shapes`: its value is the loosest
that the family's shapes read where each first reaches an anchor limit, so on none of them
does a derived rule fire before the anchor named after its distortion, and on the shape
that sets it both fire at the same element. Derived values are rounded to five
significant figures away from the ideal (:func:`meshaudit.judge.derived.outward`).

Each builder returns ``{metric: (warn, fail, source)}``; pairs of numbers are
(warn, fail) limits of the profile.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from ..metrics import METRIC_INFO
from . import solid_shapes as sh
from .derived import midside, outward

Pair = tuple[float, float]
Rule = tuple[float, float, str]

#: Where the smallest dihedral angle comes from (the anchor's published reasoning).
DIHEDRAL_NOTE = (
    "small dihedral angles spoil the conditioning of the stiffness matrix, large ones the "
    "interpolation of gradients (J. R. Shewchuk, What is a good linear finite element?, "
    "2002, from memory)"
)


def _derived(shapes: Sequence[sh.Shape], metric: str, levels: tuple[dict, dict], why: str) -> Rule:
    """The loosest reading of ``metric`` among ``shapes`` at each level's anchors."""
    worse = METRIC_INFO[metric].worse
    (warn, by_warn), (fail, by_fail) = (sh.loosest(shapes, metric, worse, a) for a in levels)
    setter = by_warn.name if by_warn is by_fail else f"{by_warn.name} (warn), {by_fail.name} (fail)"
    return (outward(warn, worse), outward(fail, worse), f"{why}; set by {setter}")


def _levels(**pairs: Pair) -> tuple[dict, dict]:
    """({metric: warn limit}, {metric: fail limit}) of the anchors ``pairs``."""
    return ({m: p[0] for m, p in pairs.items()}, {m: p[1] for m, p in pairs.items()})


def _lift(warp: float) -> str:
    """Corner lift h of the unit square that reads this warp: acos(1/(1 + h^2)) = warp."""
    return f"{math.sqrt(1.0 / math.cos(math.radians(warp)) - 1.0):.3f}"


def _warp(warp: Pair, anchor: str, faces: str) -> Rule:
    lifts = f"a unit-square face with one corner lifted by {_lift(warp[0])} ({_lift(warp[1])})"
    return (*warp, f"{anchor}; the quad's anchor, on {faces}: {lifts} reads the warn (fail) limit")


_TET_SHAPES = "the flat sliver, the flat cap, the needle and the spindle"


def tetra(
    face: Pair, dihedral: Pair, along: Pair, across: Pair, anchor: str, own: str
) -> dict[str, Rule]:
    """Tetrahedra (tetra, tetra10). Anchors: the triangle's smallest angle on every face
    (``face``) and the smallest dihedral angle (``dihedral``); the rest from the regular
    tetrahedron squeezed or stretched along its two-fold axis (flat sliver, spindle) or
    its three-fold axis (flat cap, needle)."""
    levels = _levels(min_angle=face, min_dihedral=dihedral)
    shapes = sh.TETRA_SHAPES
    loose = (
        f"the loosest reading of {_TET_SHAPES} where each first reaches a min_angle or "
        "min_dihedral limit"
    )
    rules = {
        "min_angle": (*face, f"{anchor}; the triangle's anchor, on every face"),
        "max_angle": (
            180.0 - 2.0 * face[0],
            180.0 - 2.0 * face[1],
            "180 deg minus twice the min-angle limits, face by face as for triangles: the "
            "flat isosceles face reaches both; no face breaches this alone",
        ),
        "min_dihedral": (*dihedral, f"{anchor}; {DIHEDRAL_NOTE}"),
        "max_dihedral": _derived(
            shapes,
            "max_dihedral",
            levels,
            "the flat sliver at the min-dihedral limits theta reads acos(1 - 2 cos theta) and "
            f"reaches both; {loose}",
        ),
        "edge_ratio": _derived(
            shapes,
            "edge_ratio",
            levels,
            "the needle and the spindle at the min-angle limits alpha read 1/(2 sin(alpha/2)); "
            + loose,
        ),
        "scaled_jacobian": _derived(shapes, "scaled_jacobian", levels, loose),
        "mean_ratio": _derived(shapes, "mean_ratio", levels, loose),
        "condition": _derived(shapes, "condition", levels, loose),
        "radius_ratio": _derived(
            shapes,
            "radius_ratio",
            levels,
            f"{loose}; a flat cap's circumsphere grows without bound, hence the high values",
        ),
        "jacobian_ratio": (
            outward(sh.tetra10_jacobian_ratio(along[0]), "high"),
            outward(sh.tetra10_jacobian_ratio(along[1]), "high"),
            "det J ratio (1 + 4d/sqrt5)/(1 - 4d/sqrt5) of a straight tetra10 whose midside node "
            "is moved d along its edge, at the along-offset limits d; a linear tetra reads 1",
        ),
    }
    return {**rules, **midside(along, across, own)}


def hexahedron(
    min_angle: Pair,
    aspect: Pair,
    taper: Pair,
    warp: Pair,
    along: Pair,
    across: Pair,
    anchor: str,
    own: str,
) -> dict[str, Rule]:
    """Hexahedra (8, 20, 27 nodes): the quad's anchors per face and per axis (smallest
    angle, aspect ratio, taper, warp); the rest from the r:1:1 box, the sheared
    parallelepiped and the frustum of a square pyramid."""
    levels = _levels(min_angle=min_angle, aspect_ratio=aspect, taper=taper)
    shapes = sh.HEXAHEDRON_SHAPES
    shear = "the parallelepiped sheared to face angle theta reads"
    rules = {
        "min_angle": (*min_angle, f"{anchor}; the quad's anchor, on every face"),
        "max_angle": _derived(
            shapes, "max_angle", levels, f"{shear} 180 deg - theta at the min-angle limits"
        ),
        "skew": _derived(
            shapes, "skew", levels, f"{shear} skew 90 deg - theta at the min-angle limits"
        ),
        "min_dihedral": _derived(
            shapes, "min_dihedral", levels, f"{shear} dihedral angles theta and 180 deg - theta"
        ),
        "max_dihedral": _derived(
            shapes, "max_dihedral", levels, f"{shear} dihedral angles theta and 180 deg - theta"
        ),
        "scaled_jacobian": _derived(
            shapes, "scaled_jacobian", levels, f"{shear} sin theta at the min-angle limits"
        ),
        "aspect_ratio": (*aspect, f"{anchor}; the quad's anchor, on the three principal axes"),
        "edge_ratio": _derived(
            shapes, "edge_ratio", levels, "the r:1:1 box at the aspect-ratio limits reads r"
        ),
        "condition": _derived(
            shapes,
            "condition",
            levels,
            "the r:1:1 (or r:r:1) box at the aspect-ratio limits reads "
            "sqrt((r^2 + 2)(1/r^2 + 2))/3; a sheared parallelepiped reads less",
        ),
        "taper": (
            *taper,
            f"{own}; the quad's anchor, per axis plane: the frustum of a square pyramid with "
            "sides a and c reads (a - c)/(a + c)",
        ),
        "jacobian_ratio": _derived(
            shapes,
            "jacobian_ratio",
            levels,
            "the frustum at the taper limits t, det J proportional to (1 + t zeta)^2, over the "
            "3x3x3 Gauss points of the quadratic hexahedra: ((1 + t sqrt0.6)/(1 - t sqrt0.6))^2; "
            "a trilinear one, sampled at +-1/sqrt3, reaches it only tapered further",
        ),
        "warp": _warp(warp, anchor, "every face"),
    }
    return {**rules, **midside(along, across, own)}


_ONE_ANGLE = (
    "the triangle's anchor, on every face: the ideal's triangles read 60 deg; its "
    "quadrilateral faces are held to the same limit, below the quad's own, as one limit "
    "serves both"
)


def wedge(face: Pair, edge: Pair, taper: Pair, warp: Pair, anchor: str) -> dict[str, Rule]:
    """Wedges: the triangle's smallest angle on every face, the quad's aspect ratio as the
    edge ratio of a prism stretched along its axis, the quad's warp on the side faces; the
    rest from the stretched prism, the prism over a flat triangle, the oblique prism and
    the frustum of a triangular pyramid (whose side faces carry the quad's taper)."""
    levels = _levels(min_angle=face, edge_ratio=edge, taper=taper)
    shapes = sh.WEDGE_SHAPES
    return {
        "min_angle": (*face, f"{anchor}; {_ONE_ANGLE}"),
        "max_angle": _derived(
            shapes,
            "max_angle",
            levels,
            "the oblique prism (side faces parallelograms of angle theta) at the min-angle "
            "limits reads 180 deg - theta; alone it catches a side face's corner opening",
        ),
        "edge_ratio": (
            *edge,
            f"{anchor}; the quad's aspect-ratio anchor: a prism stretched r:1 along its axis "
            "has r:1 rectangles for side faces and reads r",
        ),
        "scaled_jacobian": _derived(
            shapes,
            "scaled_jacobian",
            levels,
            "the oblique prism reads sin theta, the prism over a flat triangle its triangle's "
            "(2/sqrt3) sin of the smallest angle; the looser at the min-angle limits",
        ),
        "condition": _derived(
            shapes,
            "condition",
            levels,
            "the prism stretched or flattened r:1 along its axis reads "
            "sqrt((r^2 + 2)(1/r^2 + 2))/3 at the edge-ratio limits; the other shapes less",
        ),
        "jacobian_ratio": _derived(
            shapes,
            "jacobian_ratio",
            levels,
            "the frustum of a triangular pyramid whose side faces are at the quad's taper "
            "limits t, det J proportional to (1 + t t')^2, over the Gauss levels t' = "
            "+-1/sqrt3: ((1 + t/sqrt3)/(1 - t/sqrt3))^2",
        ),
        "warp": _warp(warp, anchor, "each side face"),
    }


def pyramid(face: Pair, dihedral: Pair, taper: Pair, warp: Pair, anchor: str) -> dict[str, Rule]:
    """Pyramids: the triangle's smallest angle on every face, the quad's warp on the base;
    the rest from the pyramid stretched along a base edge, stretched (tall) or flattened
    (squat) along its axis, over a rhombus and over a trapezoid (the base carrying the
    quad's taper; the squat one the tetrahedra's smallest dihedral angle, which its two
    diagonal splits have at the base edges)."""
    levels = _levels(min_angle=face, min_dihedral=dihedral, taper=taper)
    shapes = sh.PYRAMID_SHAPES
    loose = (
        "the loosest reading of the pyramids stretched along a base edge, tall, squat (base-side "
        "dihedral at the tetra min-dihedral limits) and over a rhombus, each where it first "
        "reaches a limit"
    )
    return {
        "min_angle": (*face, f"{anchor}; {_ONE_ANGLE}"),
        "max_angle": _derived(
            shapes,
            "max_angle",
            levels,
            "the pyramid over a rhombus of angle theta at the min-angle limits reads "
            "180 deg - theta; alone it catches a base corner opening",
        ),
        "edge_ratio": _derived(
            shapes,
            "edge_ratio",
            levels,
            "the pyramid stretched r:1 along a base edge reaches the min-angle limits alpha at "
            "r = sqrt3 cot alpha (its long sides' base angles atan(sqrt3/r))",
        ),
        "scaled_jacobian": _derived(shapes, "scaled_jacobian", levels, loose),
        "condition": _derived(shapes, "condition", levels, loose),
        "jacobian_ratio": _derived(
            shapes,
            "jacobian_ratio",
            levels,
            "det J is the apex height times the base's: a base trapezoid at the quad's taper "
            "limits t reads (1 + t/sqrt3)/(1 - t/sqrt3) over the collapsed 2x2x2 Gauss points",
        ),
        "warp": _warp(warp, anchor, "the base"),
    }
