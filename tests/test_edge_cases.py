"""Edge cases of the metric contract: collapsed shapes, bow-ties, folds, and how the JSON
and CSV reports write numbers that are not finite.

Outside references, named beside each check: closed-form values of the shapes (a
corner with a zero edge has det[a, b] = 0; a square folded about its diagonal until its
halves' normals are theta apart), sympy for the angle between the two halves' normals,
shapely for polygon areas and validity, numpy's SVD for the least-squares plane of a set
of points.
"""

from __future__ import annotations

import csv
import io
import json
import math

import meshio
import numpy as np
import pytest
import shapely
import sympy as sp

import meshaudit
from meshaudit.mesh.frames import element_normals
from meshaudit.metrics import METRIC_NAMES, SOLID_METRICS, STIFFNESS_METRICS
from meshaudit.outputs import csv_report, json_report

# volumes and dihedral angles mean nothing for a surface element
TRIANGLE_UNDEFINED = ("skew", "taper", "warp", "midside_offset_along", "midside_offset_across")
TRIANGLE_UNDEFINED += SOLID_METRICS + STIFFNESS_METRICS  # the latter: no material given
QUAD_UNDEFINED = ("midside_offset_along", "midside_offset_across", *SOLID_METRICS)
QUAD_UNDEFINED += STIFFNESS_METRICS


def audit_one(nodes, cell: str = "quad"):
    pts = np.asarray(nodes, dtype=float)
    report = meshaudit.audit(meshio.Mesh(pts, [(cell, [list(range(len(pts)))])]))
    return {m: float(v[0]) for m, v in report.metrics.items()}, report.flags_of(0), report


def positive_zero(x: float) -> bool:
    return x == 0.0 and math.copysign(1.0, x) > 0.0


# -- collapsed shapes: real numbers that breach, never NaN or -0 -------------------------

COLLAPSED = {
    # name: (cell, nodes); each has two corners at one place or its corners on one line
    "quad, collapsed edge": ("quad", [[0, 0], [1, 0], [1, 0], [0, 1]]),
    "quad, corners 1 and 3 together": ("quad", [[0, 0], [1, 0], [0, 0], [0, 1]]),
    "quad, corners on a line": ("quad", [[0, 0], [1, 0], [2, 0], [3, 0]]),
    "quad, three corners on a line": ("quad", [[0, 0], [1, 0], [2, 0], [2, 0]]),
    "quad, a point": ("quad", [[2, 3], [2, 3], [2, 3], [2, 3]]),
    "triangle, collapsed edge": ("triangle", [[0, 0], [1, 0], [1, 0]]),
    "triangle, corners on a line": ("triangle", [[0, 0], [1, 1], [3, 3]]),
    "triangle, a point": ("triangle", [[1, 1], [1, 1], [1, 1]]),
}


@pytest.mark.parametrize("name", sorted(COLLAPSED))
def test_collapsed_elements_read_numbers_that_fail(name: str):
    cell, nodes = COLLAPSED[name]
    m, flags, report = audit_one(nodes, cell)
    assert "degenerate" in flags and report.verdict[0] == 2
    undefined = TRIANGLE_UNDEFINED if cell == "triangle" else QUAD_UNDEFINED
    for metric in METRIC_NAMES:
        value = m[metric]
        if metric in undefined:
            assert math.isnan(value), metric
        else:
            assert not math.isnan(value), metric
            assert not (value == 0.0 and math.copysign(1.0, value) < 0.0), f"{metric} is -0"
    # Closed form: a corner with a zero-length edge, or on a straight line, has
    # det[a, b] = 0, so the scaled Jacobian is at most 0 and breaches the fail limit.
    assert m["scaled_jacobian"] <= 0.0
    assert "scaled_jacobian" in flags
    # shapely: the outline's area is 0 except where a collapsed edge leaves a triangle
    assert m["area"] == pytest.approx(abs(shapely.area(shapely.Polygon(nodes))), abs=1e-12)


def test_collapsed_edge_reads_zero_scaled_jacobian_and_zero_angle():
    # Closed form: nodes 2 and 3 together leave the right triangle (0,0), (1,0), (0,1); the
    # corner at the collapsed edge has det[a, b] = 0 with |a| = 0 (0, not 0/0), and no
    # angle (0); the other corners read sin 90 = 1 and sin 45 = 0.707.
    m, _, _ = audit_one([[0, 0], [1, 0], [1, 0], [0, 1]])
    assert positive_zero(m["scaled_jacobian"])
    assert positive_zero(m["min_angle"])
    assert m["max_angle"] == pytest.approx(90.0)
    assert m["warp"] == 0.0  # flat: a collapsed triangle folds nothing
    assert m["taper"] == pytest.approx(1.0)  # trapezoid with sides 1 and 0: |0 - 1|/(0 + 1)


def test_corners_on_a_line_have_infinite_aspect_ratio_and_taper():
    # Closed form: e1 = (1, 0), e2 = (0, 0): the principal axes are parallel (one has
    # zero length), so there is no taper decomposition and no finite aspect ratio.
    m, _, _ = audit_one([[0, 0], [1, 0], [2, 0], [3, 0]])
    assert m["aspect_ratio"] == math.inf and m["taper"] == math.inf
    m, _, _ = audit_one([[2, 3], [2, 3], [2, 3], [2, 3]])
    assert m["aspect_ratio"] == math.inf and m["taper"] == math.inf
    m, _, _ = audit_one([[1, 1], [1, 1], [1, 1]], "triangle")
    assert m["aspect_ratio"] == math.inf


def test_degenerate_quad8_reads_numbers_too():
    # A quad8 with a collapsed edge (its midside node on it) and midside nodes at the
    # chord midpoints: its shape metrics are those of the linear quad with that edge
    # collapsed (closed form above).
    corners = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 0.0], [0.0, 1.0]])
    nodes = np.vstack([corners, 0.5 * (corners + np.roll(corners, -1, axis=0))])
    m, flags, _ = audit_one(nodes, "quad8")
    assert "degenerate" in flags
    assert positive_zero(m["scaled_jacobian"]) and positive_zero(m["min_angle"])


# -- bow-ties: zero net area is not degenerate, but fails -------------------------------


def test_symmetric_bow_tie_has_zero_net_area_and_fails_as_self_intersecting():
    # shapely: the outline is not a valid polygon and its lobes cancel (area 0); made
    # valid it is two triangles of area 1/4 each.
    nodes = [[0, 0], [1, 1], [1, 0], [0, 1]]
    outline = shapely.Polygon(nodes)
    assert not shapely.is_valid(outline) and shapely.area(outline) == 0.0
    assert shapely.area(shapely.make_valid(outline)) == pytest.approx(0.5)
    m, flags, report = audit_one(nodes)
    assert m["area"] == pytest.approx(0.0, abs=1e-15)
    assert "self_intersecting" in flags and "degenerate" not in flags
    assert "reversed" not in flags  # no winding to reverse
    assert report.verdict[0] == 2
    assert m["taper"] == math.inf  # e1 = (1/2, 0), e2 = 0: parallel axes
    assert m["warp"] == 180.0  # flat, its lobes face apart


# -- warp: the fold angle -----------------------------------------------------------------


def folded_square(theta_deg: float) -> np.ndarray:
    """A square with diagonal 1-3 on the y axis, its halves lifted by theta/2 each, so
    their normals are theta apart (theta = 0: flat; 180: folded shut)."""
    a = math.radians(theta_deg) / 2.0
    c, s = math.cos(a), math.sin(a)
    return np.array([[0.0, -1.0, 0.0], [c, 0.0, s], [0.0, 1.0, 0.0], [-c, 0.0, s]])


def sympy_fold_angle(theta_deg: float) -> float:
    """sympy: the angle between the normals of triangles 1 2 3 and 1 3 4 of the square."""
    a = sp.rad(sp.Rational(theta_deg).limit_denominator(10**6)) / 2
    x1, x2, x3, x4 = (
        sp.Matrix(v)
        for v in ([0, -1, 0], [sp.cos(a), 0, sp.sin(a)], [0, 1, 0], [-sp.cos(a), 0, sp.sin(a)])
    )
    na, nb = (x2 - x1).cross(x3 - x1), (x3 - x1).cross(x4 - x1)
    return float(sp.deg(sp.acos(sp.simplify(na.dot(nb) / (na.norm() * nb.norm())))))


@pytest.mark.parametrize("theta", [5.0, 30.0, 60.0, 89.0, 91.0, 120.0, 150.0, 175.0])
def test_a_folded_square_reads_its_fold_angle(theta: float):
    expected = sympy_fold_angle(theta)
    assert expected == pytest.approx(theta, abs=1e-6)  # the construction is right
    m, _, _ = audit_one(folded_square(theta))
    assert m["warp"] == pytest.approx(expected, abs=1e-9)
    # folded about the other diagonal: the same square numbered from node 2
    m, _, _ = audit_one(np.roll(folded_square(theta), 1, axis=0))
    assert m["warp"] == pytest.approx(expected, abs=1e-9)


def test_a_fold_past_90_degrees_no_longer_reads_as_a_small_warp():
    # The planes of the two halves of a 150-degree fold are 30 degrees apart; the fold
    # itself is 150 (closed form): warp must read the fold and fail the 20-degree limit.
    m, flags, _ = audit_one(folded_square(150.0))
    assert m["warp"] == pytest.approx(150.0) and "warp" in flags


@pytest.mark.parametrize("h", [0.05, 0.5, 1.0, 3.0])
def test_a_lifted_corner_still_reads_the_closed_form(h: float):
    # Common practice closed form for the unit square with corner 3 lifted by h.
    m, _, _ = audit_one([[0, 0, 0], [1, 0, 0], [1, 1, h], [0, 1, 0]])
    assert m["warp"] == pytest.approx(math.degrees(math.acos(1.0 / (1.0 + h * h))), abs=1e-9)


def test_flat_re_entrant_quads_read_zero_warp_either_way_round():
    # A flat dart (re-entrant at node 3): only the split along its inside diagonal keeps
    # both triangles facing the element's way; flat, so 0 (geometry fact), also tilted.
    dart = np.array([[0.0, 0.0, 0.0], [2.0, 1.0, 0.0], [0.0, 0.3, 0.0], [-2.0, 1.0, 0.0]])
    c, s = math.cos(0.7), math.sin(0.7)
    tilt = np.array([[c, 0.0, s], [0.0, 1.0, 0.0], [-s, 0.0, c]])
    for nodes in (dart, dart[::-1], dart @ tilt.T, dart[::-1] @ tilt.T):
        m, flags, _ = audit_one(nodes)
        assert m["warp"] == pytest.approx(0.0, abs=1e-9)
        assert "nonconvex" in flags


# -- the measuring plane of a folded shell quad ----------------------------------------


def test_a_shell_quad_is_measured_in_its_area_vector_plane_unless_that_is_short():
    # numpy SVD: the least-squares plane of four points is the singular vector of their
    # centred coordinates with the smallest singular value.
    def least_squares_normal(c):
        _, _, vt = np.linalg.svd(c - c.mean(axis=0))
        return vt[-1]

    def unit_area_vector(c):
        v = 0.5 * np.cross(c[2] - c[0], c[3] - c[1])
        return v / np.linalg.norm(v)

    cases = {
        # area vector at least half the corner-triangle measure: used as it is
        "warped convex": (np.array([[0, 0, 0], [1, 0, 0.1], [1, 1, 0], [0, 1, 0.1]]), "area"),
        "bow-tie, one lobe dominant": (
            np.array([[0, 0, 0], [6, 6, 0.2], [6, 0, 0], [0, 1, 0.1]]),
            "area",
        ),
        # short area vector: the least-squares plane of the corners
        "bow-tie, lobes nearly cancel": (
            np.array([[0, 0, 0], [1, 1, 0.1], [1, 0, 0], [0, 1.05, 0.1]]),
            "fit",
        ),
        "shallow dart": (np.array([[0, 0, 0], [2, 1, 0.05], [0, 0.9, 0], [-2, 1, 0.05]]), "area"),
        # the reflex corner nearly reaching the opposite one
        "deep dart": (np.array([[0, 0, 0], [2, 1, 0.05], [0, 0.3, 0], [-2, 1, 0.05]]), "fit"),
    }
    for name, (corners, rule) in cases.items():
        corners = corners.astype(float)
        got = element_normals(corners[None])[0]
        if rule == "area":
            np.testing.assert_allclose(got, unit_area_vector(corners), atol=1e-12, err_msg=name)
        else:
            fit = least_squares_normal(corners)
            fit *= np.sign(fit @ unit_area_vector(corners))
            np.testing.assert_allclose(got, fit, atol=1e-12, err_msg=name)


# -- JSON and CSV carry the same information --------------------------------------------


def test_json_and_csv_agree_cell_for_cell(tmp_path):
    # Elements with numbers that are infinite (collapsed, inverted) and not defined
    # (triangles' skew, linear elements' midside offsets), written by both reports.
    pts = np.array(
        [
            [0, 0], [1, 0], [1, 1], [0, 1],  # a square
            [2, 0], [3, 0], [3, 0], [2, 1],  # collapsed edge
            [4, 0], [4, 1], [5, 1], [5, 0],  # clockwise
            [6, 0], [7, 0], [6.5, 1],  # a triangle
            [8, 0], [9, 0], [10, 0],  # a flat triangle
        ],
        dtype=float,
    )  # fmt: skip
    mesh = meshio.Mesh(
        pts,
        [
            ("quad", [[0, 1, 2, 3], [4, 5, 6, 7], [8, 9, 10, 11]]),
            ("triangle", [[12, 13, 14], [15, 16, 17]]),
        ],
    )
    report = meshaudit.audit(mesh)
    doc = json.loads(json_report.render(report, every_element=True))
    rows = list(csv.DictReader(io.StringIO(csv_report.render(report))))
    seen = {"null": 0, "inf": 0, "number": 0}
    for rec, row in zip(doc["elements"], rows):
        assert str(rec["id"]) == row["id"]
        for name in METRIC_NAMES:
            value, cell = rec["metrics"][name], row[name]
            if value is None:
                assert cell == "", name
                seen["null"] += 1
            elif value in ("inf", "-inf"):
                assert cell == value, name
                seen["inf"] += 1
            else:
                assert isinstance(value, float) and cell != ""
                assert float(cell) == pytest.approx(value, rel=1e-9, abs=1e-300), name
                assert not cell.startswith("-0") or float(cell) != 0.0
                seen["number"] += 1
    assert min(seen.values()) > 0  # each kind of value occurred
    # the JSON is strict JSON: no bare Infinity or NaN
    json.loads(json_report.render(report, every_element=True), parse_constant=_refuse)


def _refuse(name: str):
    raise AssertionError(f"bare {name} in the JSON report")
