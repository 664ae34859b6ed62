"""The score agrees with the verdict, and every limited metric moves it.

Definition under test (README "Metrics", meshaudit's own composite): score =
(2 - verdict + 2^-T)/3, 0 for an invalid element, T = sum over the limited metrics of
max(0, (value - ideal)/(fail limit - ideal)). So failing elements score below 1/3, warn
elements from 1/3 to 2/3, ok elements above 2/3. The analytic shapes and their closed
forms are in tests/analytic_elements.py (common practice).
"""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest
from analytic_elements import (
    audit_shapes,
    cap_triangle,
    lift_for_warp,
    lifted_square,
    needle_triangle,
    rectangle,
    rhombus,
    shifted_midside,
    trapezoid,
)
from hypothesis import given, settings
from hypothesis import strategies as st

import meshaudit
from meshaudit.engine import run as engine
from meshaudit.judge.profiles import BUILTIN, Profile, ProfileError, profile_from_dict
from meshaudit.mesh.reading import load
from meshaudit.metrics import METRIC_INFO
from meshaudit.results.report import metric_statistics

PROFILES = sorted(BUILTIN)


def _assert_banded(report: meshaudit.Report) -> None:
    """fail < 1/3 <= warn <= 2/3 < ok, invalid exactly 0, everything in [0, 1]."""
    s, v = report.score, report.verdict
    assert np.isfinite(s).all() and (s >= 0).all() and (s <= 1).all()
    assert (s[v == 2] < 1 / 3).all()
    assert ((s[v == 1] >= 1 / 3) & (s[v == 1] <= 2 / 3)).all()
    assert (s[v == 0] > 2 / 3).all()
    invalid = np.zeros(len(s), dtype=bool)
    for name in ("inverted", "nonconvex", "self_intersecting", "degenerate"):
        invalid |= report.flag(name)
    assert (s[invalid] == 0).all()


def _random_mesh(seed: int, spread: float, lift: float) -> meshio.Mesh:
    """Rectangles and equilateral triangles, each set apart, with every node moved at
    random by up to ``spread`` in the plane and ``lift`` out of it: from near ideal to
    invalid."""
    rng = np.random.default_rng(seed)
    square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    quads = square[None] * rng.uniform(0.3, 3.0, (60, 1, 2))
    tris = np.array([[0, 0], [1, 0], [0.5, math.sqrt(0.75)]])[None].repeat(40, axis=0)
    parts = []
    for k, element in enumerate([*quads, *tris]):
        moved = element + rng.uniform(-spread, spread, element.shape) + [5.0 * k, 0.0]
        parts.append(np.column_stack([moved, rng.uniform(-lift, lift, len(element))]))
    cells = [
        ("quad", np.arange(240).reshape(60, 4)),
        ("triangle", 240 + np.arange(120).reshape(40, 3)),
    ]
    return meshio.Mesh(np.vstack(parts), cells)


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1), st.floats(0.0, 0.7), st.sampled_from([0.0, 0.0, 0.05, 0.3]))
def test_failing_below_warn_below_ok_on_random_quads_and_triangles(seed, spread, lift):
    mesh = _random_mesh(seed, spread, lift)
    for profile in PROFILES:
        report = meshaudit.audit(mesh, profile=profile)
        _assert_banded(report)
        s, v = report.score, report.verdict
        for worse, better in ((2, 1), (1, 0), (2, 0)):
            if (v == worse).any() and (v == better).any():
                assert s[v == worse].max() < s[v == better].min()


def _strictly_falling(values: np.ndarray) -> bool:
    return bool((np.diff(values) < 0).all())


# Families of analytic shapes, each moving its metrics monotonically away from the
# ideal (parameters in order): which limited metrics each moves, in the same direction.
QUAD_FAMILIES = {
    "rectangle": (
        [rectangle(w) for w in np.linspace(1.0, 25.0, 40)],
        ("aspect_ratio", "condition"),
    ),
    "rhombus": (
        [rhombus(t) for t in np.linspace(90.0, 8.0, 40)],
        ("skew", "min_angle", "max_angle", "scaled_jacobian", "condition"),
    ),
    "trapezoid": ([trapezoid(k) for k in np.linspace(1.0, 0.05, 40)], ("taper", "jacobian_ratio")),
    "lifted": ([lifted_square(h) for h in np.linspace(0.0, 0.8, 40)], ("warp",)),
}
TRIANGLE_FAMILIES = {
    "cap": (
        [cap_triangle(p) for p in np.linspace(60.0, 4.0, 40)],
        ("aspect_ratio", "condition", "min_angle", "max_angle", "scaled_jacobian"),
    ),
    "needle": (
        [needle_triangle(a) for a in np.linspace(60.0, 4.0, 40)],
        ("aspect_ratio", "condition", "min_angle", "scaled_jacobian"),
    ),
}


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize("family", [*QUAD_FAMILIES, *TRIANGLE_FAMILIES])
def test_the_score_falls_along_each_family_of_shapes(profile, family):
    shapes, _ = {**QUAD_FAMILIES, **TRIANGLE_FAMILIES}[family]
    report = audit_shapes(shapes, profile)
    _assert_banded(report)
    assert report.score[0] == pytest.approx(1.0) or family == "lifted"
    assert _strictly_falling(report.score), report.score


def _only(profile: str, family: str, metric: str) -> Profile:
    """The profile with one limit kept: only that metric counts in the score."""
    return Profile(
        f"{profile}-{metric}",
        "one limit",
        {family: {metric: BUILTIN[profile].limit(family, metric)}},
    )


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(
    ("family", "shapes_of", "cell", "metric"),
    [
        ("quad", name, None, metric)
        for name, (_, metrics) in QUAD_FAMILIES.items()
        for metric in metrics
    ]
    + [
        ("triangle", name, None, metric)
        for name, (_, metrics) in TRIANGLE_FAMILIES.items()
        for metric in metrics
    ],
)
def test_each_limited_metric_alone_lowers_the_score(profile, family, shapes_of, cell, metric):
    shapes, _ = {**QUAD_FAMILIES, **TRIANGLE_FAMILIES}[shapes_of]
    report = audit_shapes(shapes, _only(profile, family, metric))
    values = report.metrics[metric]
    worse = METRIC_INFO[metric].worse
    moving = np.diff(values) > 1e-12 if worse == "high" else np.diff(values) < -1e-12
    drops = np.diff(report.score)
    assert (drops[moving] < 0).all(), (metric, values, report.score)
    assert (drops[~moving] <= 1e-12).all()


@pytest.mark.parametrize("profile", PROFILES)
@pytest.mark.parametrize(
    ("corners", "cell"), [(rectangle(1.0), "quad8"), (cap_triangle(60.0), "triangle6")]
)
@pytest.mark.parametrize("metric", ["midside_offset_along", "midside_offset_across"])
def test_midside_offsets_alone_lower_the_score(profile, corners, cell, metric):
    family = "quad" if cell == "quad8" else "triangle"
    steps = np.linspace(0.0, 0.24, 13)
    if metric == "midside_offset_along":
        shapes = [shifted_midside(corners, d) for d in steps]
    else:
        shapes = [shifted_midside(corners, 0.0, d) for d in steps]
    report = audit_shapes(shapes, _only(profile, family, metric), cell)
    np.testing.assert_allclose(report.metrics[metric], steps, atol=1e-12)
    assert report.score[0] == 1.0
    assert _strictly_falling(report.score)


def test_metrics_without_a_limit_do_not_move_the_score():
    # aspect ratio only: every rhombus has aspect ratio 1 (equal principal axes)
    only_aspect = Profile(
        "aspect",
        "one limit",
        {"quad": {"aspect_ratio": BUILTIN["standard"].limit("quad", "aspect_ratio")}},
    )
    report = audit_shapes([rhombus(t) for t in (90.0, 60.0, 20.0)], only_aspect)
    np.testing.assert_allclose(report.score, 1.0)
    # a linear element's midside offsets are NaN (undefined): the square still scores 1
    square = audit_shapes([rectangle(1.0)])
    assert np.isnan(square.metrics["midside_offset_along"][0]) and square.score[0] == 1.0


def test_the_score_is_its_closed_form_on_a_rectangle():
    # w x 1 rectangle: only aspect ratio (w) and condition ((w^2 + 1)/(2w)) leave their
    # ideals; standard fail limits 10 and 101/20 (the 10:1 rectangle)
    widths = [1.0, 3.0, 7.0, 12.0]
    report = audit_shapes([rectangle(w) for w in widths])
    for k, w in enumerate(widths):
        t = (w - 1) / (10 - 1) + ((w * w + 1) / (2 * w) - 1) / (101 / 20 - 1)
        verdict = int(report.verdict[k])
        assert report.score[k] == pytest.approx((2 - verdict + 2.0**-t) / 3, rel=1e-12)
    assert report.verdict.tolist() == [0, 0, 1, 2]


def test_a_warped_quad_scores_below_a_clean_5_to_1_rectangle():
    # 23 degrees of warp is past the standard fail limit (20); the 5:1 rectangle sits at
    # the aspect-ratio and condition warn limits without breaching them
    warped = audit_shapes([lifted_square(lift_for_warp(23.0))])
    clean = audit_shapes([rectangle(5.0)])
    assert warped.metrics["warp"][0] == pytest.approx(23.0)
    assert warped.verdict_names.tolist() == ["fail"] and clean.verdict_names.tolist() == ["ok"]
    assert warped.score[0] < 1 / 3 < 2 / 3 < clean.score[0]


def test_region_elements_are_scored_under_their_region_profile(tmp_path):
    # the same 4:1 rectangle twice: ok under standard (aspect 5/10), warn under strict (3/5)
    mesh = meshio.Mesh(
        np.vstack([rectangle(4.0), rectangle(4.0) + np.array([10.0, 0.0])]),
        [("quad", np.array([[0, 1, 2, 3], [4, 5, 6, 7]]))],
        cell_sets={"fillet": [np.array([1])]},
    )
    report = meshaudit.audit(mesh, regions={"fillet": "strict"})
    assert report.verdict_names.tolist() == ["ok", "warn"]
    cond = (16 + 1) / 8  # (w^2 + 1)/(2w) at w = 4
    standard = (4 - 1) / (10 - 1) + (cond - 1) / (101 / 20 - 1)
    strict = (4 - 1) / (5 - 1) + (cond - 1) / (26 / 10 - 1)  # the 5:1 rectangle: 26/10
    assert report.score[0] == pytest.approx((2 + 2.0**-standard) / 3)
    assert report.score[1] == pytest.approx((1 + 2.0**-strict) / 3)


def _bent_strip_with_a_flipped_element() -> meshio.Mesh:
    """A strip of four squares bent into a shell (a fold along x = 2), the second element
    wound the other way: its normal disagrees with its neighbours'."""
    xs = np.arange(5.0)
    top = [[x, 0.0, abs(x - 2.0) * 0.5] for x in xs]
    bottom = [[x, 1.0, abs(x - 2.0) * 0.5] for x in xs]
    pts = np.array(top + bottom)
    cells = np.array([[i, i + 1, i + 6, i + 5] for i in range(4)])
    cells[1] = cells[1][[0, 3, 2, 1]]
    return meshio.Mesh(pts, [("quad", cells)])


def test_a_flipped_shell_element_scores_in_the_warn_band():
    report = meshaudit.audit(_bent_strip_with_a_flipped_element())
    assert report.summary.frame == "shell"
    flipped = report.flag("flipped_normal")
    assert flipped.tolist() == [False, True, False, False]
    _assert_banded(report)
    # same shape as element 0 (a 1 x 1.118 rectangle, mirrored): the same place in its band
    assert report.verdict_names.tolist() == ["ok", "warn", "ok", "ok"]
    assert report.score[1] == pytest.approx(report.score[0] - 1 / 3)


def test_score_statistics_follow_the_flipped_element_on_the_thread_pool(monkeypatch):
    # one element per chunk, so the threaded engine works out the statistics itself; they
    # must see the scores as the orientation check leaves them
    monkeypatch.setattr(engine, "CHUNK_SIZE", 1)
    seen = []

    def statistics(metrics, levels):
        seen.append(metrics["score"].copy())
        return metric_statistics(metrics, levels)

    monkeypatch.setattr(engine, "metric_statistics", statistics)
    report = engine.audit_elements(load(_bent_strip_with_a_flipped_element()), workers=2)
    assert len(seen) == 1
    np.testing.assert_array_equal(seen[0], report.score)
    assert report.statistics()["score"]["min"] == report.score.min() < 2 / 3


def test_quarter_point_elements_score_in_the_warn_band():
    from conftest import SAMPLES

    report = meshaudit.audit(SAMPLES / "bracket_crack_tip.vtu")
    tip = report.flag("quarter_point")
    assert tip.sum() == 8
    _assert_banded(report)
    assert ((report.score[tip] >= 1 / 3) & (report.score[tip] <= 2 / 3)).all()


def test_worst_lists_failing_then_warn_then_ok_lowest_score_first():
    shapes = [rectangle(w) for w in (1.0, 12.0, 7.0, 3.0, 15.0, 6.0)]
    report = audit_shapes(shapes)
    order = report.worst(6, only_flagged=False)
    assert report.verdict[order].tolist() == sorted(report.verdict.tolist(), reverse=True)
    assert _strictly_falling(-report.score[order])  # worst first: rising scores


def test_a_profile_cannot_limit_the_score():
    # the score is worked out from the verdict: a limit on it would judge by itself
    with pytest.raises(ProfileError, match="not a metric that takes limits"):
        profile_from_dict({"quad": {"score": {"warn": 0.5, "fail": 0.2}}})


def test_explain_says_where_the_score_sits():
    # 6 x 1 rectangle under standard: warn (aspect 6 > 5); T = (6 - 1)/(10 - 1) +
    # (37/12 - 1)/(101/20 - 1) from the closed forms of aspect ratio and condition
    from meshaudit import audit_mesh, explain

    pts = np.vstack([rectangle(6.0), rectangle(1.0) + np.array([10.0, 0.0])])
    audited = audit_mesh(meshio.Mesh(pts, [("quad", np.array([[0, 1, 2, 3], [4, 5, 6, 7]]))]))
    lines = {m.name: m for m in explain(audited, 0).metrics}
    t = 5 / 9 + (37 / 12 - 1) / (101 / 20 - 1)
    assert lines["score"].value == pytest.approx((1 + 2.0**-t) / 3)
    assert "warn band" in lines["score"].reason and f"T = {t:.3g}" in lines["score"].reason
    assert "T = 0 " in {m.name: m for m in explain(audited, 1).metrics}["score"].reason
