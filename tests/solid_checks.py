"""Checks shared by the solid-kernel tests: rotations, the divergence-theorem volume, the
invariance comparison and the contract on degenerate input."""

from __future__ import annotations

import warnings
from collections.abc import Callable

import numpy as np
import pytest
import sympy as sp
from hypothesis import strategies as st

#: Metrics in length^3: multiplied by c^3 when the element is scaled by c.
LENGTH3 = {"volume", "det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound"}


#: A rigid motion and a scaling: (quaternion, translation, scale factor).
MOTIONS = st.tuples(
    st.lists(st.floats(0.1, 1.0), min_size=4, max_size=4),
    st.lists(st.floats(-100.0, 100.0), min_size=3, max_size=3),
    st.floats(1e-3, 1e3),
)


def moved(x: np.ndarray, order: list[int], motion: tuple) -> np.ndarray:
    """``x`` renumbered by ``order``, then turned, scaled and moved by ``motion``."""
    quaternion, move, scale = motion
    return scale * x[order] @ rotation(quaternion).T + move


def rotation(q: list[float]) -> np.ndarray:
    """Rotation matrix of the (normalised) quaternion q."""
    w, a, b, c = np.asarray(q) / np.linalg.norm(q)
    return np.array(
        [
            [1 - 2 * (b * b + c * c), 2 * (a * b - c * w), 2 * (a * c + b * w)],
            [2 * (a * b + c * w), 1 - 2 * (a * a + c * c), 2 * (b * c - a * w)],
            [2 * (a * c - b * w), 2 * (b * c + a * w), 1 - 2 * (a * a + b * b)],
        ]
    )


def divergence_volume(x: np.ndarray, faces: tuple[tuple[int, ...], ...]) -> sp.Expr:
    """Divergence theorem, exactly (sympy): (1/3) sum over the faces of the integral of
    x . n dA, quadrilateral faces as bilinear patches over [0, 1]^2, triangles flat, each
    face wound as given (right-hand normal outward for a positive element)."""
    s, t = sp.symbols("s t")
    pts = [[sp.Rational(float(c)) for c in row] for row in x]
    total = sp.Integer(0)
    for face in faces:
        p = [sp.Matrix(pts[i]) for i in face]
        if len(face) == 4:
            surf = (1 - s) * (1 - t) * p[0] + s * (1 - t) * p[1] + s * t * p[2] + (1 - s) * t * p[3]
            limits = [(s, 0, 1), (t, 0, 1)]
        else:
            surf = p[0] + s * (p[1] - p[0]) + t * (p[2] - p[0])
            limits = [(s, 0, 1 - t), (t, 0, 1)]
        flux = surf.dot(surf.diff(s).cross(surf.diff(t)))
        total += sp.integrate(sp.expand(flux), *limits)
    return total / 3


def assert_invariant(measure: Callable, x: np.ndarray, order: list[int], motion: tuple) -> None:
    """``x`` renumbered by ``order`` (keeping orientation), turned, moved and scaled by
    ``motion``: lengths^3 scale by scale^3, every ratio and angle and every flag stays."""
    scale = motion[2]
    before, flags_before = measure(x[None])
    after, flags_after = measure(moved(x, order, motion)[None])
    for name, value in before.items():
        expected = value[0] * (scale**3 if name in LENGTH3 else 1.0)
        if name == "area":
            assert np.isnan(after[name][0])
        elif name in ("warp", "min_angle", "max_angle"):
            assert after[name][0] == pytest.approx(expected, abs=1e-6), name
        else:
            assert after[name][0] == pytest.approx(expected, rel=1e-6, abs=1e-12 * scale**3), name
    for name in flags_before:
        assert flags_before[name][0] == flags_after[name][0], name


def assert_quiet_on_degenerate(measure: Callable, ideal: np.ndarray) -> None:
    """The kernel contract on degenerate input: every node at one point, every node on a
    line, and -0.0 coordinates give no warning, no -0.0 and no NaN (but ``area``); the
    first two are degenerate."""
    k = len(ideal)
    points = np.zeros((1, k, 3))
    line = np.array([[[t, 0.0, 0.0] for t in range(k)]], dtype=float)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        metrics, flags = measure(np.concatenate([points, line, -0.0 * ideal[None]]))
    for name, value in metrics.items():
        assert not np.any(np.signbit(value) & (value == 0.0)), name
        if name != "area":
            assert not np.any(np.isnan(value)), name
    assert flags["degenerate"][:2].all()


def assert_any_scale(measure: Callable, x: np.ndarray) -> None:
    """Scale invariance over the whole float range: ``x`` scaled by 10^k (k = -300 ... 300)
    and moved by 3 x 10^k keeps every ratio, angle and flag; lengths^3 scale by 10^(3k)
    (0 or infinite where that leaves the float range)."""
    base, base_flags = measure(x[None])
    for k in range(-300, 301, 25):
        s = 10.0**k
        metrics, flags = measure((s * x + 3.0 * s)[None])
        for name, value in base.items():
            if name == "area":
                continue
            if name in LENGTH3:
                with np.errstate(over="ignore", under="ignore"):
                    expected = value[0] * np.float64(s) ** 3
                if np.isinf(expected):
                    assert metrics[name][0] == expected, (name, k)
                elif abs(expected) > 1e-290:
                    assert metrics[name][0] == pytest.approx(expected, rel=1e-9), (name, k)
                else:  # below the normal range: 0 or a subnormal
                    assert abs(metrics[name][0]) < 1e-290, (name, k)
            else:
                assert metrics[name][0] == pytest.approx(value[0], rel=1e-9, abs=1e-9), (name, k)
        for name, flag in base_flags.items():
            assert flags[name][0] == flag[0], (name, k)
