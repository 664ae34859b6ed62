"""Every built-in limit of the solid families breaches where the README's reasoning says.

The kernels (meshaudit.metrics.solid) measure analytic solids (tests/analytic_solids.py,
closed forms worked out there, common practice) and ``judge`` reads their breach levels
under each built-in profile; no engine is involved.

The reasoning under test (README, "Profiles"): each solid family has a few anchor limits
(its own, or the quad's, triangle's and tetrahedra's carried over to its faces and axes);
each named analytic shape leaves the ideal element until it first reaches an anchor limit;
every other limit is the loosest value the named shapes read there. So, for every profile,
level and named shape, just inside its first anchor limit no rule of that level fires; at
the anchor, one named shape reads each derived limit (to its five-figure rounding); just
past, that shape breaches the derived rule with its anchor. The anchor crossings are found
by bisection on the kernels' own readings, not from meshaudit's closed forms.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from analytic_solids import (
    CUBE,
    IDEAL_PYRAMID,
    IDEAL_WEDGE,
    REGULAR_APEX,
    REGULAR_H,
    Path,
    axial_prism,
    axial_pyramid,
    box,
    flat_prism,
    hexahedron20,
    judge_solids,
    lifted_cube,
    lifted_prism,
    lifted_pyramid,
    long_pyramid,
    oblique_prism,
    positive,
    regular_tetra,
    sheared_cube,
    sheared_pyramid,
    square_frustum,
    tetra10,
    three_fold,
    trapezoid_pyramid,
    triangle_frustum,
    two_fold,
)
from conftest import SAMPLES
from hypothesis import given, settings
from hypothesis import strategies as st

from meshaudit.errors import ProfileError
from meshaudit.judge.profiles import BUILTIN, Limit, load_profile, with_limit
from meshaudit.judge.verdicts import judge
from meshaudit.metrics.solid import tetra as tetra_kernel

PROFILES = sorted(BUILTIN)
LEVELS = (("warn", 1), ("fail", 2))
EPS = 1e-3  # relative step either side of a limit: well past the five-figure rounding


def _limit(profile: str, family: str, metric: str, kind: str) -> float:
    return getattr(BUILTIN[profile].limit(family, metric), kind)


def _carried(family: str, metric: str):
    return lambda profile, kind: _limit(profile, family, metric, kind)


def _squat(profile: str, kind: str) -> float:
    """k where the base-side dihedral atan(sqrt2 k) is at the tetra min_dihedral limit."""
    return math.tan(math.radians(_limit(profile, "tetra", "min_dihedral", kind))) / math.sqrt(2)


CUBE_IDEAL = 1.0
PATHS = {
    "tetra": [
        Path("flat sliver", "tetra", two_fold, REGULAR_H, 1e-4),
        Path("spindle", "tetra", two_fold, REGULAR_H, 200.0),
        Path("needle", "tetra", three_fold, REGULAR_APEX, 200.0),
        Path("flat cap", "tetra", three_fold, REGULAR_APEX, 1e-4),
    ],
    "hexahedron": [
        Path("box", "hexahedron20", lambda r: hexahedron20(box(r)), CUBE_IDEAL, 100.0),
        Path("sheared", "hexahedron20", lambda a: hexahedron20(sheared_cube(a)), 90.0, 0.5),
        Path("frustum", "hexahedron20", lambda t: hexahedron20(square_frustum(t)), 1e-9, 0.99),
        Path("lifted", "hexahedron20", lambda h: hexahedron20(lifted_cube(h)), 1e-9, 5.0),
    ],
    "wedge": [
        Path("axial prism", "wedge", axial_prism, 1.0, 100.0),
        Path("flat prism", "wedge", flat_prism, 1.0, 100.0),
        Path("oblique prism", "wedge", oblique_prism, 90.0, 0.5),
        Path(
            "triangle frustum",
            "wedge",
            triangle_frustum,
            1e-9,
            0.99,
            _carried("quad", "taper"),
        ),
        Path("lifted prism", "wedge", lifted_prism, 1e-9, 5.0),
    ],
    "pyramid": [
        Path("long pyramid", "pyramid", long_pyramid, 1.0, 100.0),
        Path("tall pyramid", "pyramid", axial_pyramid, 1.0, 100.0),
        Path("squat pyramid", "pyramid", axial_pyramid, 1.0, 1e-4, _squat),
        Path("sheared pyramid", "pyramid", sheared_pyramid, 90.0, 5.0),
        Path(
            "trapezoid pyramid",
            "pyramid",
            trapezoid_pyramid,
            1e-9,
            0.99,
            _carried("quad", "taper"),
        ),
        Path("lifted pyramid", "pyramid", lifted_pyramid, 1e-9, 5.0),
    ],
}
#: The anchors each family's own kernel measures (README, Profiles).
ANCHORS = {
    "tetra": ("min_angle", "min_dihedral"),
    "hexahedron": ("min_angle", "aspect_ratio", "taper", "warp"),
    "wedge": ("min_angle", "edge_ratio", "warp"),
    "pyramid": ("min_angle", "warp"),
}
#: The limits derived from the named shapes (README, Profiles).
DERIVED = {
    "tetra": (
        "max_dihedral",
        "edge_ratio",
        "scaled_jacobian",
        "mean_ratio",
        "condition",
        "radius_ratio",
    ),
    "hexahedron": (
        "skew",
        "max_angle",
        "min_dihedral",
        "max_dihedral",
        "scaled_jacobian",
        "edge_ratio",
        "condition",
        "jacobian_ratio",
    ),
    "wedge": ("max_angle", "scaled_jacobian", "condition", "jacobian_ratio"),
    "pyramid": ("max_angle", "edge_ratio", "scaled_jacobian", "condition", "jacobian_ratio"),
}


def _anchor_level(family: str, path: Path, p: float, profile: str) -> int:
    judged = judge_solids(path.cell_type, [path.build(p)], profile)
    return max(int(judged.levels[m][0]) for m in ANCHORS[family])


def first_anchor(family: str, path: Path, profile: str, kind: str, level: int) -> float:
    """Where ``path`` first reaches an anchor limit of ``level``: bisection on the kernel's
    breach levels (relative 1e-12), or the carried anchor when that comes first."""
    end = path.carried(profile, kind) if path.carried else path.far
    if _anchor_level(family, path, end, profile) < level:
        assert path.carried, f"{path.name} never reaches a {kind} anchor"
        return end
    inside, past = path.ideal, end
    assert _anchor_level(family, path, inside, profile) < level
    while abs(past - inside) > 1e-12 * abs(past):
        mid = 0.5 * (inside + past)
        if _anchor_level(family, path, mid, profile) >= level:
            past = mid
        else:
            inside = mid
    return past


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
@pytest.mark.parametrize("family", sorted(PATHS))
def test_derived_limits_are_the_loosest_reading_of_the_named_shapes(family, profile, kind, level):
    paths = PATHS[family]
    found = {path.name: first_anchor(family, path, profile, kind, level) for path in paths}
    at = {}
    for path in paths:
        p = found[path.name]
        inside, edge, past = (path.step(p, e) for e in (-EPS, 0.0, EPS))
        judged = judge_solids(
            path.cell_type, [path.build(x) for x in (inside, edge, past)], profile
        )
        at[path.name] = (judged, path)
        # just inside its first anchor limit no rule of this level fires, derived or anchor
        for metric, levels in judged.levels.items():
            assert levels[0] < level, (path.name, metric, levels.tolist())
        if not path.carried or p < path.carried(profile, kind):
            assert max(judged.levels[m][2] for m in ANCHORS[family]) >= level, path.name
    for metric in DERIVED[family]:
        limit = _limit(profile, family, metric, kind)
        readings = {name: j.metrics[metric][1] for name, (j, _) in at.items()}
        near = {n: v for n, v in readings.items() if abs(v - limit) <= 1e-4 * abs(limit)}
        # the shape that sets the limit reads it at its anchor (five figures, outward) ...
        assert near, (metric, limit, readings)
        # ... and just past its anchor it breaches the derived rule too
        assert any(at[n][0].levels[metric][2] >= level for n in near), (metric, near)


# -- closed forms the reasoning quotes --------------------------------------------------------


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize("kind", ("warn", "fail"))
def test_the_flat_sliver_reads_the_quoted_dihedral_closed_forms(profile, kind):
    # S(h): side dihedral acos(1/(1 + h^2)) = theta at h^2 = sec theta - 1; the two others
    # 2 atan(1/h), so cos(max) = (h^2 - 1)/(h^2 + 1) = 1 - 2 cos theta
    theta = _limit(profile, "tetra", "min_dihedral", kind)
    h = math.sqrt(1 / math.cos(math.radians(theta)) - 1)
    judged = judge_solids("tetra", [two_fold(h)], profile)
    assert judged.metrics["min_dihedral"][0] == pytest.approx(theta, rel=1e-9)
    largest = math.degrees(math.acos(1 - 2 * math.cos(math.radians(theta))))
    assert judged.metrics["max_dihedral"][0] == pytest.approx(largest, rel=1e-9)
    assert judged.metrics["scaled_jacobian"][0] == pytest.approx(2 * math.sqrt(2) * h / (2 + h * h))
    assert _limit(profile, "tetra", "max_dihedral", kind) == pytest.approx(largest, rel=1e-4)
    # face angles and edge ratio see nothing: base angles acos(1/s) >= 45 deg, ratio <= sqrt2
    assert judged.metrics["min_angle"][0] > 45 and judged.metrics["edge_ratio"][0] < math.sqrt(2)


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize("kind", ("warn", "fail"))
def test_the_needle_reads_the_quoted_edge_ratio(profile, kind):
    # P(H) with lateral faces of apex angle alpha: L = 1/(2 sin(alpha/2)) = its edge ratio
    alpha = _limit(profile, "tetra", "min_angle", kind)
    lateral = 1 / (2 * math.sin(math.radians(alpha / 2)))
    judged = judge_solids("tetra", [three_fold(math.sqrt(lateral**2 - 1 / 3))], profile)
    assert judged.metrics["min_angle"][0] == pytest.approx(alpha, rel=1e-9)
    assert judged.metrics["edge_ratio"][0] == pytest.approx(lateral, rel=1e-9)
    assert _limit(profile, "tetra", "edge_ratio", kind) >= lateral


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_a_tetra10_midside_moved_along_its_edge_reaches_both_rules_together(profile, kind, level):
    # det J = det J_lin (1 + 4d (L_i - L_j)) (matrix determinant lemma); at the 4-point rule
    # (a, a, a, b), b - a = 1/sqrt5: ratio (1 + 4d/sqrt5)/(1 - 4d/sqrt5)
    d = _limit(profile, "tetra", "midside_offset_along", kind)
    ratio = _limit(profile, "tetra", "jacobian_ratio", kind)
    assert ratio == pytest.approx((1 + 4 * d / math.sqrt(5)) / (1 - 4 * d / math.sqrt(5)), rel=1e-4)
    shifts, shapes = [d * (1 - EPS), d * (1 + EPS)], []
    for x in shifts:
        nodes = tetra10(regular_tetra())
        nodes[4] += x * (nodes[1] - nodes[0])  # the midside node of edge 0-1
        shapes.append(nodes)
    judged = judge_solids("tetra10", shapes, profile)
    expected = [(1 + 4 * x / math.sqrt(5)) / (1 - 4 * x / math.sqrt(5)) for x in shifts]
    np.testing.assert_allclose(judged.metrics["jacobian_ratio"], expected, rtol=1e-9)
    assert judged.levels["jacobian_ratio"].tolist() == [level - 1, level]
    assert judged.levels["midside_offset_along"].tolist() == [level - 1, level]
    # a linear tetrahedron reads 1
    assert judge_solids("tetra", [regular_tetra()], profile).metrics["jacobian_ratio"][0] == 1.0


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_the_frustum_reaches_taper_and_the_hexahedron_jacobian_ratio_together(profile, kind, level):
    # det J of the frustum is proportional to (1 + t zeta)^2: over the 3x3x3 Gauss points of
    # the quadratic hexahedra the ratio is ((1 + t sqrt0.6)/(1 - t sqrt0.6))^2, over the
    # 2x2x2 points of the trilinear one ((1 + t/sqrt3)/(1 - t/sqrt3))^2, smaller
    t = _limit(profile, "hexahedron", "taper", kind)
    g3, g2 = math.sqrt(0.6), 1 / math.sqrt(3)
    ratio = _limit(profile, "hexahedron", "jacobian_ratio", kind)
    assert ratio == pytest.approx(((1 + g3 * t) / (1 - g3 * t)) ** 2, rel=1e-4)
    tapers = [t * (1 - EPS), t * (1 + EPS)]
    quadratic = judge_solids(
        "hexahedron20", [hexahedron20(square_frustum(x)) for x in tapers], profile
    )
    np.testing.assert_allclose(quadratic.metrics["taper"], tapers, rtol=1e-9)
    assert quadratic.levels["taper"].tolist() == [level - 1, level]
    assert quadratic.levels["jacobian_ratio"].tolist() == [level - 1, level]
    linear = judge_solids("hexahedron", [square_frustum(x) for x in tapers], profile)
    expected = [((1 + g2 * x) / (1 - g2 * x)) ** 2 for x in tapers]
    np.testing.assert_allclose(linear.metrics["jacobian_ratio"], expected, rtol=1e-9)
    assert (linear.metrics["jacobian_ratio"] < ratio).all()


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize("kind", ("warn", "fail"))
def test_the_box_at_the_aspect_limit_reads_the_quoted_condition_number(profile, kind):
    r = _limit(profile, "hexahedron", "aspect_ratio", kind)
    condition = math.sqrt((r * r + 2) * (1 / (r * r) + 2)) / 3  # |A| |A^-1| / 3, A = diag(r,1,1)
    judged = judge_solids("hexahedron", [box(r), CUBE * [r, r, 1.0]])  # r:1:1 and r:r:1
    np.testing.assert_allclose(judged.metrics["condition"], [condition, condition], rtol=1e-12)
    assert _limit(profile, "hexahedron", "condition", kind) == pytest.approx(condition, rel=1e-4)
    # the wedge and the pyramid stretched r:1 along an axis are affine images of their ideal
    # element, so every corner reads the same number (at the wedge's edge-ratio limit)
    r = _limit(profile, "wedge", "edge_ratio", kind)
    condition = math.sqrt((r * r + 2) * (1 / (r * r) + 2)) / 3
    for cell, shape in (("wedge", axial_prism(r)), ("pyramid", axial_pyramid(r))):
        got = judge_solids(cell, [shape], profile).metrics["condition"][0]
        assert got == pytest.approx(condition, rel=1e-12)


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_a_trapezoid_base_reaches_the_pyramid_jacobian_ratio_at_the_quad_taper(
    profile, kind, level
):
    # det J of a pyramid over a flat base is the apex height times the base's bilinear
    # det J, sampled at the collapsed 2x2 points u, v = +-1/sqrt3: (1 + t/sqrt3)/(1 - t/sqrt3)
    t = _limit(profile, "quad", "taper", kind)
    g2 = 1 / math.sqrt(3)
    assert _limit(profile, "pyramid", "jacobian_ratio", kind) == pytest.approx(
        (1 + g2 * t) / (1 - g2 * t), rel=1e-4
    )
    tapers = [t * (1 - EPS), t * (1 + EPS)]
    judged = judge_solids("pyramid", [trapezoid_pyramid(x) for x in tapers], profile)
    np.testing.assert_allclose(
        judged.metrics["jacobian_ratio"], [(1 + g2 * x) / (1 - g2 * x) for x in tapers], rtol=1e-9
    )
    assert judged.levels["jacobian_ratio"].tolist() == [level - 1, level]
    # the wedge: ends scaled 1 -+ t, det J proportional to (1 + t zeta)^2 at zeta = +-1/sqrt3
    assert _limit(profile, "wedge", "jacobian_ratio", kind) == pytest.approx(
        ((1 + g2 * t) / (1 - g2 * t)) ** 2, rel=1e-4
    )
    judged = judge_solids("wedge", [triangle_frustum(x) for x in tapers], profile)
    np.testing.assert_allclose(
        judged.metrics["jacobian_ratio"],
        [((1 + g2 * x) / (1 - g2 * x)) ** 2 for x in tapers],
        rtol=1e-9,
    )
    assert judged.levels["jacobian_ratio"].tolist() == [level - 1, level]


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_the_sheared_cube_reaches_every_angle_rule_together(profile, kind, level):
    theta = _limit(profile, "hexahedron", "min_angle", kind)
    judged = judge_solids(
        "hexahedron", [sheared_cube(theta * (1 + EPS)), sheared_cube(theta * (1 - EPS))], profile
    )
    np.testing.assert_allclose(
        judged.metrics["min_dihedral"], [theta * (1 + EPS), theta * (1 - EPS)]
    )
    np.testing.assert_allclose(
        judged.metrics["scaled_jacobian"],
        np.sin(np.radians([theta * (1 + EPS), theta * (1 - EPS)])),
    )
    for metric in (
        "min_angle",
        "max_angle",
        "skew",
        "min_dihedral",
        "max_dihedral",
        "scaled_jacobian",
    ):
        assert judged.levels[metric].tolist() == [level - 1, level], metric


def test_the_ideal_solids_score_one_under_every_profile():
    # the score's ideals: the regular tetrahedron, the cube, the right prism and the pyramid
    # with all edges equal read every limited metric at its ideal
    for profile in PROFILES:
        for cell, shape in (
            ("tetra", regular_tetra()),
            ("tetra10", tetra10(regular_tetra())),
            ("hexahedron", box(1.0)),
            ("hexahedron20", hexahedron20(box(1.0))),
            ("wedge", IDEAL_WEDGE),
            ("pyramid", IDEAL_PYRAMID),
        ):
            judged = judge_solids(cell, [shape], profile)
            assert judged.verdict[0] == 0
            assert judged.score[0] == pytest.approx(1.0, abs=1e-9), (profile, cell)


# -- random solids ----------------------------------------------------------------------------

IDEALS = {
    "tetra": regular_tetra(),
    "tetra10": tetra10(regular_tetra()),
    "hexahedron": box(1.0),
    "hexahedron20": hexahedron20(box(1.0)),
    "wedge": IDEAL_WEDGE,
    "pyramid": IDEAL_PYRAMID,
}


def _random_solids(cell: str, seed: int, spread: float) -> np.ndarray:
    """80 ideal elements stretched at random along the axes and turned, every node moved at
    random by up to ``spread``: from near ideal to inverted, folded and flat."""
    rng = np.random.default_rng(seed)
    ideal = IDEALS[cell]
    stretched = ideal[None] * rng.uniform(0.2, 3.0, (80, 1, 3))
    turn, _ = np.linalg.qr(rng.normal(size=(3, 3)))
    moved = stretched @ turn.T + rng.uniform(-spread, spread, (80, *ideal.shape))
    moved[:8] = stretched[:8] @ turn.T  # a few undisturbed ones
    return moved


def _assert_banded(judged) -> None:
    """fail < 1/3 <= warn <= 2/3 < ok, invalid exactly 0, everything in [0, 1] (README)."""
    s, v = judged.score, judged.verdict
    assert np.isfinite(s).all() and (s >= 0).all() and (s <= 1).all()
    assert (s[v == 2] < 1 / 3).all()
    assert ((s[v == 1] >= 1 / 3) & (s[v == 1] <= 2 / 3)).all()
    assert (s[v == 0] > 2 / 3).all()
    assert (s[judged.invalid()] == 0).all() and (v[judged.invalid()] == 2).all()


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**32 - 1), st.floats(0.0, 0.8), st.sampled_from(sorted(IDEALS)))
def test_failing_below_warn_below_ok_on_random_solids(seed, spread, cell):
    shapes = _random_solids(cell, seed, spread)
    for profile in PROFILES:
        judged = judge_solids(cell, shapes, profile)
        _assert_banded(judged)


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize("family", sorted(PATHS))
def test_the_score_falls_along_every_named_shape(family, profile):
    # README, The score: every limited metric moves it, and the verdict only worsens as a
    # named shape leaves its ideal element, so the score never rises along the way
    for path in PATHS[family]:
        far = path.far
        if path.carried:  # half as far again as its fail anchor, within the path
            far = min(far, path.step(path.carried(profile, "fail"), 0.5), key=path.distance)
        steps = np.linspace(0.0, 1.0, 41) ** 2
        shapes = [path.build(path.ideal + f * (far - path.ideal)) for f in steps]
        judged = judge_solids(path.cell_type, shapes, profile)
        assert judged.score[0] == pytest.approx(1.0, abs=1e-6), path.name
        assert (np.diff(judged.score) <= 1e-12).all(), (path.name, judged.score.round(4).tolist())
        assert (np.diff(judged.verdict.astype(int)) >= 0).all(), path.name


def test_the_random_solids_cover_every_verdict_and_invalid_elements():
    # the strategy above is not idle: over a few seeds each family sees ok, warn, fail and
    # invalid elements
    for cell in sorted(IDEALS):
        seen = set()
        invalid = 0
        for seed in range(6):
            for spread in (0.05, 0.2, 0.6):
                judged = judge_solids(cell, _random_solids(cell, seed, spread), "standard")
                seen |= set(judged.verdict.tolist())
                invalid += int(judged.invalid().sum())
        assert seen == {0, 1, 2}, cell
        assert invalid > 0, cell


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_every_tetrahedron_past_max_angle_is_past_min_angle(seed):
    # face by face, as for triangles: a face's largest angle is at most 180 - 2 x its
    # smallest, so a face past 180 - 2 alpha has an angle below alpha
    rng = np.random.default_rng(seed)
    shapes = [positive(t) for t in rng.normal(size=(300, 4, 3))]
    for profile in PROFILES:
        judged = judge_solids("tetra", shapes, profile)
        ok = ~judged.invalid()
        assert (judged.levels["max_angle"][ok] <= judged.levels["min_angle"][ok]).all()


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(*[st.floats(0.05, 20.0)] * 3), min_size=1, max_size=30))
def test_every_box_past_the_condition_limit_is_past_the_aspect_ratio_limit(sides):
    # an a:b:c box reads sqrt((a^2 + b^2 + c^2)(1/a^2 + 1/b^2 + 1/c^2))/3, convex in the
    # middle side squared, so at most the r:1:1 (= r:r:1) box's value at its aspect ratio r
    shapes = [CUBE * np.array(s) for s in sides]
    for profile in PROFILES:
        judged = judge_solids("hexahedron", shapes, profile)
        a, b, c = np.array(sides).T
        expected = np.sqrt((a * a + b * b + c * c) * (1 / a**2 + 1 / b**2 + 1 / c**2)) / 3
        np.testing.assert_allclose(judged.metrics["condition"], expected, rtol=1e-9)
        assert (judged.levels["condition"] <= judged.levels["aspect_ratio"]).all()


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_a_lifted_face_corner_reaches_the_warp_limits_of_every_family(profile, kind, level):
    # a unit-square face with one corner lifted by h reads acos(1/(1 + h^2)), the quad's
    # anchor: the cube's top face, the wedge's side face 0-1-4-3, the pyramid's base
    w = _limit(profile, "quad", "warp", kind)
    lifts = [math.sqrt(1 / math.cos(math.radians(w * f)) - 1) for f in (1 - EPS, 1 + EPS)]
    for family, cell, build in (
        ("hexahedron", "hexahedron", lifted_cube),
        ("wedge", "wedge", lifted_prism),
        ("pyramid", "pyramid", lifted_pyramid),
    ):
        assert _limit(profile, family, "warp", kind) == w
        judged = judge_solids(cell, [build(h) for h in lifts], profile)
        np.testing.assert_allclose(judged.metrics["warp"], [w * (1 - EPS), w * (1 + EPS)])
        assert judged.levels["warp"].tolist() == [level - 1, level], family


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_quadratic_solids_take_the_midside_limits_of_the_surface_elements(profile, kind, level):
    # a midside node moved d along its chord (or h across it, as a fraction of the chord)
    for metric in ("midside_offset_along", "midside_offset_across"):
        d = _limit(profile, "quad", metric, kind)
        for cell, nodes, edge in (
            ("tetra10", tetra10(regular_tetra()), (0, 1, 4)),
            ("hexahedron20", hexahedron20(box(1.0)), (0, 1, 8)),
        ):
            family = "tetra" if cell == "tetra10" else "hexahedron"
            assert _limit(profile, family, metric, kind) == d
            a, b, m = edge
            chord = nodes[b] - nodes[a]
            across = np.cross(chord, [0.3, 0.4, 1.0])
            across *= np.linalg.norm(chord) / np.linalg.norm(across)
            move = chord if metric == "midside_offset_along" else across
            shapes = []
            for f in (1 - EPS, 1 + EPS):
                shifted = nodes.copy()
                shifted[m] += d * f * move
                shapes.append(shifted)
            judged = judge_solids(cell, shapes, profile)
            np.testing.assert_allclose(judged.metrics[metric], [d * (1 - EPS), d * (1 + EPS)])
            assert judged.levels[metric].tolist() == [level - 1, level], (cell, metric)


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(("kind", "level"), LEVELS)
def test_a_flat_isosceles_face_reaches_both_tetra_face_angle_rules(profile, kind, level):
    # base angles phi on the unit edge, apex 180 - 2 phi, circumradius R = 1/(2 sin 2 phi);
    # the fourth corner over the circumcentre, R + 0.3 from the face's corners: the other
    # faces are isosceles with apex angles 2 asin(c / (2 (R + 0.3))) between phi and 180 - 2 phi
    phi = _limit(profile, "tetra", "min_angle", kind)
    assert _limit(profile, "tetra", "max_angle", kind) == 180 - 2 * phi
    shapes = []
    for f in (1 + EPS, 1 - EPS):
        tan = math.tan(math.radians(phi * f))
        radius = 1 / (2 * math.sin(math.radians(2 * phi * f)))
        face = np.array([[0.0, 0, 0], [1.0, 0, 0], [0.5, 0.5 * tan, 0]])
        centre = [0.5, 0.25 * (tan - 1 / tan), math.sqrt((radius + 0.3) ** 2 - radius**2)]
        shapes.append(positive(np.vstack([face, centre])))
    judged = judge_solids("tetra", shapes, profile)
    np.testing.assert_allclose(judged.metrics["min_angle"], [phi * (1 + EPS), phi * (1 - EPS)])
    assert judged.levels["min_angle"].tolist() == [level - 1, level]
    assert judged.levels["max_angle"].tolist() == [level - 1, level]


# -- profile files and the solid families -------------------------------------------------


def test_a_profile_file_overrides_a_solid_family_and_judge_applies_it(tmp_path):
    # the README's example profile: [tetra] min_dihedral = { warn = 18, fail = 12 }; a flat
    # sliver with its side dihedral angles at 16 deg (closed form h^2 = sec 16 - 1) passes
    # 'standard' (warn below 15) and warns under the file
    path = tmp_path / "bracket-fine.toml"
    path.write_text('extends = "standard"\n[tetra]\nmin_dihedral = { warn = 18, fail = 12 }\n')
    mine = load_profile(path)
    assert mine.limit("tetra", "min_dihedral") == Limit(18.0, 12.0, f"user profile {path}")
    sliver = two_fold(math.sqrt(1 / math.cos(math.radians(16)) - 1))
    metrics, _ = tetra_kernel.measure(sliver[None], "tetra")
    assert metrics["min_dihedral"][0] == pytest.approx(16.0)
    full = judge_solids("tetra", [sliver], "standard")
    levels, _, _ = judge("tetra", full.metrics, full.flags, mine)
    assert levels["min_dihedral"].tolist() == [1]
    assert full.levels["min_dihedral"].tolist() == [0]


@pytest.mark.parametrize("metric", ["volume", "edge_ratio", "mean_ratio", "min_dihedral"])
def test_a_surface_family_cannot_limit_a_metric_only_solids_measure(tmp_path, run_cli, metric):
    # a quad never reads these: the limit is refused at once, in one line, exit status 2
    path = tmp_path / "p.toml"
    path.write_text(f"[quad]\n{metric} = {{ warn = 2, fail = 1 }}\n")
    with pytest.raises(ProfileError, match="solid elements only"):
        load_profile(path)
    with pytest.raises(ProfileError, match="solid elements only"):
        with_limit(BUILTIN["standard"], "triangle", metric, Limit(2.0, 1.0))
    res = run_cli("check", SAMPLES / "bracket_plate.msh", "--profile", path)
    assert res.returncode == 2
    assert res.stderr.count("\n") == 1 and "solid elements only" in res.stderr
