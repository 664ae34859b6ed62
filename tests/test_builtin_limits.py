"""Every built-in limit breaches where the README's "Profiles" reasoning says it does.

Each check puts an analytic shape (closed forms in tests/analytic_elements.py, common
practice) just inside and just past a limit and reads the breach levels. The limits are
read from the profiles; the shapes and their closed forms are worked out here:

- a w:1 rectangle reads aspect ratio w (Robinson's principal axes) and condition number
  (w^2 + 1)/(2w) at every corner (Knupp 2001): the condition limits sit at the
  rectangles of the aspect-ratio limits;
- a parallelogram (rhombus) of acute angle theta reads skew 90 - theta, min angle theta,
  max angle 180 - theta and scaled Jacobian sin(theta): the four rules breach together;
- a trapezoid with parallel sides 1 and k reads taper (1 - k)/(1 + k) (Robinson); its
  det J is proportional to 1 + t eta, so over the 3x3 Gauss points of a quad8 its ratio
  is (1 + t sqrt0.6)/(1 - t sqrt0.6) and over the 2x2 points of a bilinear quad
  (1 + t/sqrt3)/(1 - t/sqrt3);
- a unit square with one corner lifted by h reads warp acos(1/(1 + h^2));
- a triangle's angles fix its other metrics: for the flat isosceles triangle with base
  angles phi, aspect ratio sqrt3 cot(phi), max angle 180 - 2 phi, scaled Jacobian
  2/sqrt3 sin(phi), condition (cot A + cot B + cot C)/sqrt3 = (r^2 + 1)/(2r);
- a straight triangle6 whose midside node is moved d along its edge has det J
  proportional to 1 + 4d(1 - 2 xi - eta): ratio (1 + 2d)/(1 - 2d) over its 3 Gauss points.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from analytic_elements import (
    audit_shapes,
    cap_triangle,
    double_taper,
    lift_for_warp,
    lifted_square,
    needle_triangle,
    rectangle,
    rhombus,
    shifted_midside,
    trapezoid,
    with_midsides,
)
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from meshaudit.judge.profiles import BUILTIN

PROFILES = sorted(BUILTIN)
LEVELS = (("warn", 1), ("fail", 2))
EPS = 1e-3  # relative step either side of a limit: well past the 4-figure rounding


def _limit(profile: str, family: str, metric: str, kind: str) -> float:
    return getattr(BUILTIN[profile].limit(family, metric), kind)


def _levels(report, metrics: tuple[str, ...]) -> dict[str, list[int]]:
    return {m: report.levels[m].tolist() for m in metrics}


def _inside_and_past(level: int) -> list[int]:
    """Breach levels expected just inside (level - 1) and just past (level) a limit."""
    return [level - 1, level]


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_rectangles_reach_aspect_ratio_and_condition_limits_together(profile, kind, level):
    r = _limit(profile, "quad", "aspect_ratio", kind)
    cond = _limit(profile, "quad", "condition", kind)
    # the rectangle at the aspect-ratio limit sits at the condition limit
    assert cond == pytest.approx((r * r + 1) / (2 * r), rel=1e-3)
    assert cond >= (r * r + 1) / (2 * r)  # rounded outward: that rectangle does not breach
    report = audit_shapes(
        [rectangle(r), rectangle(r * (1 - EPS)), rectangle(r * (1 + EPS))], profile
    )
    got = _levels(report, ("aspect_ratio", "condition"))
    assert got["aspect_ratio"] == [level - 1, level - 1, level]
    assert got["condition"] == [level - 1, level - 1, level]


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_parallelograms_reach_skew_and_the_angle_limits_together(profile, kind, level):
    theta = _limit(profile, "quad", "min_angle", kind)
    assert _limit(profile, "quad", "skew", kind) == 90 - theta
    assert _limit(profile, "quad", "max_angle", kind) == 180 - theta
    assert _limit(profile, "quad", "scaled_jacobian", kind) == pytest.approx(
        math.sin(math.radians(theta)), rel=1e-3
    )
    report = audit_shapes([rhombus(theta + 0.05), rhombus(theta - 0.05)], profile)
    for metric in ("min_angle", "skew", "max_angle", "scaled_jacobian"):
        assert report.levels[metric].tolist() == _inside_and_past(level), metric


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_trapezoids_reach_taper_and_the_quadratic_jacobian_ratio_together(profile, kind, level):
    t = _limit(profile, "quad", "taper", kind)
    jr = _limit(profile, "quad", "jacobian_ratio", kind)
    g3 = math.sqrt(0.6)
    assert jr == pytest.approx((1 + g3 * t) / (1 - g3 * t), rel=1e-3)
    # top/base ratio k of the trapezoid of taper t: (1 - t)/(1 + t)
    shapes = [trapezoid((1 - t * s) / (1 + t * s)) for s in (1 - EPS, 1 + EPS)]
    linear = audit_shapes(shapes, profile)
    quadratic = audit_shapes([with_midsides(x) for x in shapes], profile, "quad8")
    np.testing.assert_allclose(linear.metrics["taper"], [t * (1 - EPS), t * (1 + EPS)])
    assert linear.levels["taper"].tolist() == _inside_and_past(level)
    assert quadratic.levels["taper"].tolist() == _inside_and_past(level)
    assert quadratic.levels["jacobian_ratio"].tolist() == _inside_and_past(level)
    # the bilinear quad samples det J nearer the centre: its ratio stays below the limit
    g2 = 1 / math.sqrt(3)
    np.testing.assert_allclose(
        linear.metrics["jacobian_ratio"],
        [(1 + g2 * x) / (1 - g2 * x) for x in (t * (1 - EPS), t * (1 + EPS))],
    )
    assert (linear.metrics["jacobian_ratio"] < jr).all()


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_a_bilinear_quad_reaches_the_jacobian_ratio_limit_tapered_both_ways(profile, kind, level):
    jr = _limit(profile, "quad", "jacobian_ratio", kind)
    # det J = 1 + beta xi + alpha eta: ratio (1 + s/sqrt3)/(1 - s/sqrt3), s = |alpha| + |beta|
    s = math.sqrt(3) * (jr - 1) / (jr + 1)
    shapes = [double_taper(s * f / 2, s * f / 2) for f in (1 - EPS, 1 + EPS)]
    report = audit_shapes(shapes, profile)
    np.testing.assert_allclose(report.metrics["taper"], [s * (1 - EPS) / 2, s * (1 + EPS) / 2])
    assert report.levels["jacobian_ratio"].tolist() == _inside_and_past(level)
    # the same ratio needs a one-way taper beyond the taper limit of the same level
    assert s > _limit(profile, "quad", "taper", kind)


def test_the_standard_taper_limits_name_their_trapezoids():
    # README: warns when the short side is under 3/7 of the long one, fails under 1/4;
    # the trapezoid whose top is a third of its base reads (1 - 1/3)/(1 + 1/3) = 0.5.
    ks = [3 / 7 * (1 + EPS), 3 / 7 * (1 - EPS), 1 / 3, 1 / 4 * (1 + EPS), 1 / 4 * (1 - EPS)]
    report = audit_shapes([trapezoid(k) for k in ks])
    assert report.metrics["taper"][2] == pytest.approx(0.5)
    assert report.levels["taper"].tolist() == [0, 1, 1, 1, 2]


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_lifted_corners_reach_the_warp_limits(profile, kind, level):
    w = _limit(profile, "quad", "warp", kind)
    report = audit_shapes(
        [lifted_square(lift_for_warp(w * f)) for f in (1 - EPS, 1 + EPS)], profile
    )
    np.testing.assert_allclose(report.metrics["warp"], [w * (1 - EPS), w * (1 + EPS)], rtol=1e-9)
    assert report.levels["warp"].tolist() == _inside_and_past(level)


TRIANGLE_SHAPE = ("min_angle", "max_angle", "aspect_ratio", "condition", "scaled_jacobian")


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_the_flat_isosceles_triangle_reaches_every_triangle_shape_limit_together(
    profile, kind, level
):
    phi = _limit(profile, "triangle", "min_angle", kind)
    r = math.sqrt(3) / math.tan(math.radians(phi))
    assert _limit(profile, "triangle", "max_angle", kind) == 180 - 2 * phi
    assert _limit(profile, "triangle", "aspect_ratio", kind) == pytest.approx(r, rel=1e-3)
    cot = 1 / math.tan(math.radians(phi))
    cond = (2 * cot + 1 / math.tan(math.radians(180 - 2 * phi))) / math.sqrt(3)
    assert cond == pytest.approx((r * r + 1) / (2 * r), rel=1e-12)
    assert _limit(profile, "triangle", "condition", kind) == pytest.approx(cond, rel=1e-3)
    sj = 2 / math.sqrt(3) * math.sin(math.radians(phi))
    assert _limit(profile, "triangle", "scaled_jacobian", kind) == pytest.approx(sj, rel=1e-3)
    report = audit_shapes([cap_triangle(phi + 0.05), cap_triangle(phi - 0.05)], profile)
    for metric in TRIANGLE_SHAPE:
        assert report.levels[metric].tolist() == _inside_and_past(level), metric


@pytest.mark.parametrize("profile", PROFILES)
def test_a_needle_triangle_breaches_min_angle_long_before_aspect_ratio(profile):
    # apex alpha, two unit sides: aspect sqrt3/(2 sin alpha), the least for its min angle
    alpha = _limit(profile, "triangle", "min_angle", "fail") - 0.05
    report = audit_shapes([needle_triangle(alpha)], profile)
    assert report.metrics["aspect_ratio"][0] == pytest.approx(
        math.sqrt(3) / (2 * math.sin(math.radians(alpha)))
    )
    assert report.levels["min_angle"].tolist() == [2]
    assert report.levels["aspect_ratio"].tolist() != [2]


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_a_shifted_triangle6_midside_reaches_jacobian_ratio_and_along_limits_together(
    profile, kind, level
):
    d = _limit(profile, "triangle", "midside_offset_along", kind)
    jr = _limit(profile, "triangle", "jacobian_ratio", kind)
    assert jr == pytest.approx((1 + 2 * d) / (1 - 2 * d), rel=1e-3)
    equilateral = cap_triangle(60.0)
    shapes = [shifted_midside(equilateral, d * f) for f in (1 - EPS, 1 + EPS)]
    report = audit_shapes(shapes, profile, "triangle6")
    expected = [(1 + 2 * x) / (1 - 2 * x) for x in (d * (1 - EPS), d * (1 + EPS))]
    np.testing.assert_allclose(report.metrics["jacobian_ratio"], expected, rtol=1e-9)
    assert report.levels["jacobian_ratio"].tolist() == _inside_and_past(level)
    assert report.levels["midside_offset_along"].tolist() == _inside_and_past(level)


# -- consistency over random shapes: the README's "every ... past it is past ... too" ------

angles = st.floats(1.0, 178.0)


def _triangle_with_angles(a: float, b: float) -> np.ndarray:
    """Vertices with angles a at (0, 0) and b at (1, 0) (law of sines)."""
    c = 180.0 - a - b
    side = math.sin(math.radians(b)) / math.sin(math.radians(c))  # from (0, 0)
    return np.array(
        [
            [0.0, 0.0],
            [1.0, 0.0],
            [side * math.cos(math.radians(a)), side * math.sin(math.radians(a))],
        ]
    )


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(angles, angles), min_size=1, max_size=20))
def test_every_triangle_past_a_shape_limit_is_past_the_min_angle_limit(pairs):
    shapes = []
    for a, b in pairs:
        assume(a + b < 179.0)
        shapes.append(_triangle_with_angles(a, b))
    for profile in PROFILES:
        report = audit_shapes(shapes, profile)
        lo = report.levels["min_angle"]
        for metric in ("max_angle", "aspect_ratio", "condition", "scaled_jacobian"):
            assert (report.levels[metric] <= lo).all(), (profile, metric)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(5.0, 175.0), st.floats(0.3, 3.0)), min_size=1, max_size=20))
def test_a_parallelogram_breaches_skew_exactly_when_it_breaches_min_angle(pairs):
    # sides 1 and s at angle theta: skew 90 - min(theta, 180 - theta), min angle the same
    shapes = []
    for theta, s in pairs:
        acute = min(theta, 180.0 - theta)
        for profile in PROFILES:
            for kind in ("warn", "fail"):
                assume(abs(acute - _limit(profile, "quad", "min_angle", kind)) > 1e-6)
        c, sn = math.cos(math.radians(theta)), math.sin(math.radians(theta))
        shapes.append(np.array([[0, 0], [1, 0], [1 + s * c, s * sn], [s * c, s * sn]]))
    for profile in PROFILES:
        report = audit_shapes(shapes, profile)
        np.testing.assert_array_equal(report.levels["skew"], report.levels["min_angle"])
        np.testing.assert_array_equal(report.levels["max_angle"], report.levels["min_angle"])


def test_a_quad8_midside_node_moved_along_its_edge_reads_the_ratio_the_readme_quotes():
    # Unit-square quad8, the midside node of edge 1-2 (reference (0, -1)) moved d along x:
    # x = bilinear + d N5, N5 = (1 - xi^2)(1 - eta)/2, so det J = (1 - 2 d xi (1 - eta))/4,
    # and over the 3x3 Gauss points |xi (1 - eta)| peaks at m = sqrt0.6 (1 + sqrt0.6):
    # ratio (1 + 2 m d)/(1 - 2 m d): 1.76 at d = 0.1 and 3.44 at d = 0.2 (README, Profiles).
    m = math.sqrt(0.6) * (1 + math.sqrt(0.6))
    report = audit_shapes(
        [shifted_midside(rectangle(1.0), d) for d in (0.1, 0.2)], cell_type="quad8"
    )
    expected = [(1 + 2 * m * d) / (1 - 2 * m * d) for d in (0.1, 0.2)]
    np.testing.assert_allclose(report.metrics["jacobian_ratio"], expected, rtol=1e-9)
    assert [round(x, 2) for x in expected] == [1.76, 3.44]
    # standard: at d = 0.1 (the along warn limit) the ratio is still below its warn limit
    # (1.8979); at d = 0.2 (the along fail limit) it is past its fail limit (2.7367)
    assert report.levels["jacobian_ratio"].tolist() == [0, 2]


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_a_convex_quad_breaches_scaled_jacobian_exactly_when_it_breaches_an_angle_limit(seed):
    # in a convex quad each corner's scaled Jacobian is the sine of its angle, and sine
    # is least at the extreme angles: min(sin(min_angle), sin(max_angle))
    rng = np.random.default_rng(seed)
    square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    shapes = list(
        square[None] * rng.uniform(0.2, 5.0, (200, 1, 2)) + rng.normal(0, 0.3, (200, 4, 2))
    )
    for profile in PROFILES:
        report = audit_shapes(shapes, profile)
        valid = np.ones(len(report), dtype=bool)
        for name in ("inverted", "nonconvex", "self_intersecting", "degenerate"):
            valid &= ~report.flag(name)
        # leave out the few within round-off of a limit (the rounded sine limits)
        for metric in ("min_angle", "max_angle"):
            for kind in ("warn", "fail"):
                limit = _limit(profile, "quad", metric, kind)
                valid &= np.abs(report.metrics[metric] - limit) > 1e-3
        angles = np.maximum(report.levels["min_angle"], report.levels["max_angle"])
        np.testing.assert_array_equal(report.levels["scaled_jacobian"][valid], angles[valid])
        assert valid.sum() > 20
