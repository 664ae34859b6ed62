"""Any finite scale: the same verdicts, flags and dimensionless metrics, areas scaled by
the square of the factor, and valid JSON, from shapes of side 1e-170 to 1e154.

References (closed forms, common practice): a w x h rectangle has area w h, det J = w h / 4
on the reference square [-1, 1]^2, aspect ratio max(w, h) / min(w, h) (Robinson's
principal axes), condition number (r^2 + 1) / (2 r) and scaled Jacobian 1; a rhombus of
side 1 and angle 60 degrees has area sin 60, angles 60 and 120, skew 30 and scaled
Jacobian sin 60; the equilateral triangle of side 1 has area sqrt(3) / 4, angles 60 and
aspect ratio, condition and scaled Jacobian 1. JSON validity: Python's json module with
NaN and Infinity refused (RFC 8259 has neither).
"""

from __future__ import annotations

import json
import math

import meshio
import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

import meshaudit
from meshaudit.metrics import METRIC_INFO, length_power
from meshaudit.outputs import json_report

SIN60 = math.sin(math.radians(60.0))
#: Smallest positive normal double: below it a product has lost precision (or is 0).
NORMAL = float(np.finfo(np.float64).tiny)

# Each shape: corners (counter-clockwise), cell type, closed-form values, verdict at
# scale 1 under the standard profile (6:1 rectangle: aspect ratio past the warn limit 5).
SHAPES = [
    ([(0, 0), (1, 0), (1, 1), (0, 1)], "quad", {"area": 1.0, "aspect_ratio": 1.0}, "ok"),
    (
        [(0, 0), (2, 0), (2, 1), (0, 1)],
        "quad",
        {"area": 2.0, "det_j_min": 0.5, "aspect_ratio": 2.0, "condition": 1.25},
        "ok",
    ),
    (
        [(0, 0), (6, 0), (6, 1), (0, 1)],
        "quad",
        {"area": 6.0, "det_j_min": 1.5, "aspect_ratio": 6.0, "condition": 37.0 / 12.0},
        "warn",
    ),
    (
        [(0, 0), (1, 0), (1.5, SIN60), (0.5, SIN60)],
        "quad",
        {
            "area": SIN60,
            "min_angle": 60.0,
            "max_angle": 120.0,
            "skew": 30.0,
            "scaled_jacobian": SIN60,
        },
        "ok",
    ),
    (
        [(0, 0), (1, 0), (0.5, SIN60)],
        "triangle",
        {
            "area": math.sqrt(3.0) / 4.0,
            "min_angle": 60.0,
            "aspect_ratio": 1.0,
            "condition": 1.0,
            "scaled_jacobian": 1.0,
        },
        "ok",
    ),
]

DIMENSIONLESS = [m for m in METRIC_INFO if length_power(m, 2) == 0]
AREAS = [m for m in METRIC_INFO if length_power(m, 2) == 2]


def shapes_mesh(scale: float, tilt_deg: float = 0.0) -> meshio.Mesh:
    """The shapes side by side (8 units apart), every coordinate times ``scale``; with
    ``tilt_deg`` the plane is turned about the x axis (a planar mesh out of x-y)."""
    points, quads, tris = [], [], []
    for k, (corners, kind, _values, _verdict) in enumerate(SHAPES):
        start = len(points)
        points += [(x + 8.0 * k, y, 0.0) for x, y in corners]
        (quads if kind == "quad" else tris).append(list(range(start, start + len(corners))))
    pts = np.array(points)
    if tilt_deg:
        t = math.radians(tilt_deg)
        turn = np.array([[1, 0, 0], [0, math.cos(t), -math.sin(t)], [0, math.sin(t), math.cos(t)]])
        pts = pts @ turn.T
    return meshio.Mesh(pts * scale, [("quad", np.array(quads)), ("triangle", np.array(tris))])


def strict_json(text: str) -> object:
    def refuse(name: str) -> None:
        raise ValueError(f"not JSON: {name}")

    return json.loads(text, parse_constant=refuse)


def order() -> list[int]:
    """Report rows of SHAPES (quads come first in the mesh, then the triangle)."""
    quads = [k for k, s in enumerate(SHAPES) if s[1] == "quad"]
    return quads + [k for k, s in enumerate(SHAPES) if s[1] == "triangle"]


REFERENCE = meshaudit.audit(shapes_mesh(1.0))


def test_scale_one_matches_the_closed_forms() -> None:
    rows = order()
    for row, k in enumerate(rows):
        _corners, _kind, values, verdict = SHAPES[k]
        assert REFERENCE.verdict_names[row] == verdict
        for name, value in values.items():
            assert REFERENCE.metrics[name][row] == pytest.approx(value, rel=1e-12)


def check_scaled(report: meshaudit.Report, scale: float) -> None:
    assert list(report.verdict_names) == list(REFERENCE.verdict_names)
    assert report.flag_bits.tolist() == REFERENCE.flag_bits.tolist()  # no degenerate flag
    assert not report.flag("degenerate").any()
    for name in DIMENSIONLESS:
        np.testing.assert_allclose(
            report.metrics[name], REFERENCE.metrics[name], rtol=1e-9, atol=1e-9, err_msg=name
        )
    for name in AREAS:
        with np.errstate(over="ignore", under="ignore"):
            expected = REFERENCE.metrics[name] * scale * scale
        got = report.metrics[name]
        normal = np.isfinite(expected) & (np.abs(expected) >= NORMAL)
        np.testing.assert_allclose(got[normal], expected[normal], rtol=1e-9, err_msg=name)
        # beyond the range of a double: infinite, or below the smallest normal number
        assert np.isposinf(got[np.isposinf(expected)]).all(), name
        small = ~normal & np.isfinite(expected)
        assert (np.abs(got[small]) <= 2.0 * NORMAL).all(), name
    doc = strict_json(json_report.render(report, every_element=True))
    assert [e["verdict"] for e in doc["elements"]] == list(REFERENCE.verdict_names)


@settings(max_examples=60, deadline=None)
@given(st.integers(min_value=-170, max_value=154))
@example(-170)
@example(154)
@example(0)
def test_same_verdicts_and_metrics_at_any_scale(k: int) -> None:
    scale = 10.0**k
    check_scaled(meshaudit.audit(shapes_mesh(scale)), scale)


@settings(max_examples=15, deadline=None)
@given(st.integers(min_value=-170, max_value=154))
@example(-170)
@example(154)
@example(46)  # the warp of a quad in space multiplies eight lengths: 1e46^8 overflows
def test_a_tilted_plane_at_any_scale(k: int) -> None:
    # a planar mesh out of x-y is measured in its own plane: the same shapes
    scale = 10.0**k
    report = meshaudit.audit(shapes_mesh(scale, tilt_deg=30.0))
    assert report.summary.frame == "planar"
    check_scaled(report, scale)


def test_a_tiny_element_beside_an_ordinary_one() -> None:
    # one mesh holding a unit square and a square of side 1e-170 near the origin: the
    # tiny one is measured at its own scale (a ratio of sizes no mesh scale can cover)
    pts = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [3, 3], [4, 3], [4, 4], [3, 4]], dtype=float)
    pts[:4] *= 1e-170
    report = meshaudit.audit(meshio.Mesh(pts, [("quad", np.array([[0, 1, 2, 3], [4, 5, 6, 7]]))]))
    assert list(report.verdict_names) == ["ok", "ok"]
    for name in ("aspect_ratio", "scaled_jacobian", "condition", "min_angle", "skew"):
        assert report.metrics[name][0] == pytest.approx(report.metrics[name][1], rel=1e-12)
    assert report.metrics["area"][0] == 0.0  # 1e-340: below the smallest double


@pytest.mark.parametrize("k", [-300, -170, 0, 154, 300])
def test_the_plot_frames_the_mesh_at_any_scale(k: int) -> None:
    # matplotlib lays out no axes on coordinates below about 1e-280: the page counts in a
    # power of ten near the mesh size, and the axes say so; the mesh fills the frame
    from meshaudit import audit_mesh
    from meshaudit.outputs import plot

    audited = audit_mesh(shapes_mesh(10.0**k))
    fig = plot.draw(audited.report, audited.elements, insets=0)
    ax = fig.axes[0]
    faces = next(c for c in ax.collections if c.get_gid() == "faces")
    page = np.concatenate([p.vertices for p in faces.get_paths()])
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    assert x0 <= page[:, 0].min() and page[:, 0].max() <= x1
    assert y0 <= page[:, 1].min() and page[:, 1].max() <= y1
    assert (x1 - x0) <= 1.5 * np.ptp(page[:, 0])  # framed, not lost in a default range
    assert ("in units of" in ax.get_xlabel()) == (abs(k) > 30)


@pytest.mark.parametrize("tilt", [0.0, 30.0], ids=["x-y", "tilted"])
def test_every_power_of_ten(tilt: float) -> None:
    # every scale 10^k, k from -170 to 154, in turn: no window of scales is missed
    for k in range(-170, 155):
        check_scaled(meshaudit.audit(shapes_mesh(10.0**k, tilt_deg=tilt)), 10.0**k)


# -- solids: lengths^3 scale with the cube of the factor --------------------------------
SQRT2, SQRT3 = math.sqrt(2.0), math.sqrt(3.0)
#: Solids with closed-form values (common practice): the regular tetrahedron of edge 1
#: (volume 1/(6 sqrt 2), det J = 6 V on the unit reference tetrahedron, dihedral angle
#: arccos(1/3), mean ratio and radius ratio 1); the unit cube (det J 1/8 on [-1, 1]^3);
#: the right prism over the unit equilateral triangle, height 1 (volume sqrt(3)/4); the
#: pyramid on the unit square with equilateral sides (height 1/sqrt 2, volume sqrt(2)/6);
#: each reads scaled Jacobian and condition number 1 (its family's ideal shape).
SOLIDS = [
    (
        "tetra",
        [[0, 0, 0], [1, 0, 0], [0.5, SIN60, 0], [0.5, SIN60 / 3.0, math.sqrt(2.0 / 3.0)]],
        {
            "volume": 1.0 / (6.0 * SQRT2),
            "det_j_min": 1.0 / SQRT2,
            "min_dihedral": math.degrees(math.acos(1.0 / 3.0)),
            "mean_ratio": 1.0,
            "radius_ratio": 1.0,
        },
    ),
    (
        "hexahedron",
        [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]],
        {"volume": 1.0, "det_j_min": 0.125, "aspect_ratio": 1.0, "min_dihedral": 90.0},
    ),
    (
        "wedge",
        [[0, 0, 0], [1, 0, 0], [0.5, SIN60, 0], [0, 0, 1], [1, 0, 1], [0.5, SIN60, 1]],
        {"volume": SQRT3 / 4.0, "edge_ratio": 1.0},
    ),
    (
        "pyramid",
        [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0.5, 0.5, 1.0 / SQRT2]],
        {"volume": SQRT2 / 6.0, "edge_ratio": 1.0},
    ),
]
SOLID_DIMENSIONLESS = [m for m in METRIC_INFO if length_power(m, 3) == 0]
VOLUMES = [m for m in METRIC_INFO if length_power(m, 3) == 3]


def solids_mesh(scale: float) -> meshio.Mesh:
    """The four solids side by side, 3 units apart, every coordinate times ``scale``."""
    points, cells = [], []
    for k, (cell_type, nodes, _) in enumerate(SOLIDS):
        start = len(points)
        points += [[x + 3.0 * k, y, z] for x, y, z in nodes]
        cells.append((cell_type, np.array([list(range(start, start + len(nodes)))])))
    return meshio.Mesh(np.array(points) * scale, cells)


SOLID_REFERENCE = meshaudit.audit(solids_mesh(1.0))


def test_solids_at_scale_one_match_the_closed_forms() -> None:
    for row, (cell_type, _, values) in enumerate(SOLIDS):
        assert SOLID_REFERENCE.types[row] == cell_type
        assert SOLID_REFERENCE.verdict_names[row] == "ok"
        for name in ("scaled_jacobian", "condition"):
            assert SOLID_REFERENCE.metrics[name][row] == pytest.approx(1.0, rel=1e-12)
        for name, value in values.items():
            assert SOLID_REFERENCE.metrics[name][row] == pytest.approx(value, rel=1e-12), name


@pytest.mark.parametrize("k", [-300, -170, -101, -31, -30, 0, 30, 31, 101, 102, 154, 300])
def test_solids_read_the_same_at_any_scale(k: int) -> None:
    scale = 10.0**k
    report = meshaudit.audit(solids_mesh(scale))
    assert list(report.verdict_names) == list(SOLID_REFERENCE.verdict_names)
    assert report.flag_bits.tolist() == SOLID_REFERENCE.flag_bits.tolist()
    for name in SOLID_DIMENSIONLESS:
        np.testing.assert_allclose(
            report.metrics[name], SOLID_REFERENCE.metrics[name], rtol=1e-9, atol=1e-9, err_msg=name
        )
    for name in VOLUMES:  # volume and det J: length^3
        with np.errstate(over="ignore", under="ignore"):
            expected = SOLID_REFERENCE.metrics[name] * scale * scale * scale
        got = report.metrics[name]
        normal = np.isfinite(expected) & (np.abs(expected) >= NORMAL)
        np.testing.assert_allclose(got[normal], expected[normal], rtol=1e-9, err_msg=name)
        assert np.isposinf(got[np.isposinf(expected)]).all(), name
        small = ~normal & np.isfinite(expected)
        assert (np.abs(got[small]) <= 2.0 * NORMAL).all(), name
    strict_json(json_report.render(report, every_element=True))
