"""Profiles and verdicts: limits are ceilings or floors by metric, invalid always fails."""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest

import meshaudit
from meshaudit.judge.profiles import BUILTIN, Limit, ProfileError, load_profile, with_limit
from meshaudit.judge.verdicts import breach_level
from meshaudit.metrics import METRIC_INFO


def _rectangles(widths: list[float]) -> meshio.Mesh:
    """Side-by-side rectangles of height 1 and the given widths (aspect ratio = width)."""
    pts, quads, x = [], [], 0.0
    for w in widths:
        base = len(pts)
        pts += [[x, 0.0], [x + w, 0.0], [x + w, 1.0], [x, 1.0]]
        quads.append([base, base + 1, base + 2, base + 3])
        x += w + 1.0
    return meshio.Mesh(np.array(pts), [("quad", np.array(quads))])


def test_every_builtin_limit_has_a_source_and_sane_order():
    for prof in BUILTIN.values():
        for family, limits in prof.limits.items():
            for metric, lim in limits.items():
                assert lim.source, (prof.name, family, metric)
                worse = METRIC_INFO[metric].worse
                assert worse in ("high", "low")
                if worse == "high":
                    assert lim.warn <= lim.fail
                else:
                    assert lim.warn >= lim.fail


def test_strict_is_never_looser_than_standard_nor_lenient_stricter():
    std, strict, lenient = BUILTIN["standard"], BUILTIN["strict"], BUILTIN["lenient"]
    for family, limits in std.limits.items():
        for metric, lim in limits.items():
            high = METRIC_INFO[metric].worse == "high"
            s, ln = strict.limit(family, metric), lenient.limit(family, metric)
            for attr in ("warn", "fail"):
                a, b, c = getattr(s, attr), getattr(lim, attr), getattr(ln, attr)
                assert (a <= b <= c) if high else (a >= b >= c), (family, metric, attr)


def test_breach_levels_are_strict_inequalities_and_ignore_nan():
    values = np.array([1.0, 5.0, 5.0001, 10.0, 10.5, math.nan, math.inf])
    lvl = breach_level(values, Limit(5.0, 10.0), "high")
    assert lvl.tolist() == [0, 0, 1, 1, 2, 0, 2]
    lvl = breach_level(-values, Limit(-5.0, -10.0), "low")
    assert lvl.tolist() == [0, 0, 1, 1, 2, 0, 2]


def test_aspect_ratio_verdicts_follow_the_limits():
    # A w x 1 rectangle has aspect ratio w (Robinson's principal axes: common practice).
    report = meshaudit.audit(_rectangles([1.0, 4.0, 7.0, 12.0]))
    np.testing.assert_allclose(report.metrics["aspect_ratio"], [1, 4, 7, 12])
    # standard: warn above 5, fail above 10; the 12:1 also breaks condition:
    # (144 + 1)/24 = 6.04 past the 10:1 rectangle's 101/20 (Knupp 2001 corner condition)
    assert report.verdict_names.tolist() == ["ok", "ok", "warn", "fail"]
    assert not report.passed
    assert {"aspect_ratio", "condition"} <= set(report.flags_of(3))


def test_fail_on_warn_gates_on_warnings():
    mesh = _rectangles([1.0, 7.0])
    assert meshaudit.audit(mesh).passed
    assert not meshaudit.audit(mesh, fail_on="warn").passed


def test_user_profile_overrides_extends_and_switches_off(tmp_path):
    path = tmp_path / "fine.toml"
    path.write_text(
        'name = "fine"\nextends = "lenient"\n'
        '[quad]\naspect_ratio = { warn = 2, fail = 3, source = "group rule" }\n'
        "condition = {}\n"
    )
    prof = load_profile(path)
    assert prof.name == "fine"
    assert prof.limit("quad", "aspect_ratio") == Limit(2.0, 3.0, "group rule")
    assert prof.limit("quad", "condition") is None
    assert prof.limit("quad", "skew") == BUILTIN["lenient"].limit("quad", "skew")
    report = meshaudit.audit(_rectangles([1.0, 2.5, 4.0]), profile=path)
    assert report.verdict_names.tolist() == ["ok", "warn", "fail"]


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("[quad]\naspect_ratio = { warn = 9, fail = 3 }\n", "above fail"),
        ("[quad]\nscaled_jacobian = { warn = 0.1, fail = 0.5 }\n", "below fail"),
        ("[quad]\nnot_a_metric = { warn = 1 }\n", "not a metric"),
        ("[polyhedron]\n", "unknown key"),
        ("[quad]\naspect_ratio = { warn = 'x' }\n", "finite number"),
        ('extends = "nope"\n', "unknown profile"),
        ("[quad\n", "not valid TOML"),
    ],
)
def test_malformed_profiles_are_refused(tmp_path, text, fragment):
    path = tmp_path / "bad.toml"
    path.write_text(text)
    with pytest.raises(ProfileError, match=fragment):
        load_profile(path)


def test_invalid_elements_fail_even_with_no_limits():
    # A clockwise square: all corner det J negative (reversed node order, by construction).
    mesh = meshio.Mesh(np.array([[0, 0], [0, 1], [1, 1], [1, 0.0]]), [("quad", [[0, 1, 2, 3]])])
    empty = meshaudit.Profile("none", "no limits", {})
    report = meshaudit.audit(mesh, profile=empty)
    assert report.verdict_names.tolist() == ["fail"]
    assert report.flag("reversed")[0] and report.flag("inverted")[0]


def test_with_limit_replaces_one_limit_only():
    prof = with_limit(BUILTIN["standard"], "quad", "skew", Limit(10.0, 20.0, "test"))
    assert prof.limit("quad", "skew").fail == 20.0
    # the built-in is untouched: its skew fail limit is 90 - 30 degrees (a parallelogram
    # whose acute angle is at the min_angle fail limit, 30, has skew 60)
    assert BUILTIN["standard"].limit("quad", "skew").fail == 60.0
    assert with_limit(prof, "quad", "skew", None).limit("quad", "skew") is None
