"""Metrics of shapes whose values follow by hand (analytic references, derived below).

Conventions (from the metric definitions): reference square [-1, 1]^2 with node 1 at
(-1, -1), counter-clockwise; bilinear map x = e0 + e1 xi + e2 eta + e3 xi eta with
e1 = (-x1 + x2 + x3 - x4)/4, e2 = (-x1 - x2 + x3 + x4)/4, e3 = (x1 - x2 + x3 - x4)/4.
"""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest

import meshaudit

SQRT3 = math.sqrt(3.0)
G = 1.0 / SQRT3  # 2x2 Gauss point coordinate


def audit_one(nodes, cell_type: str | None = None):
    """Audit a single element given by its node coordinates; returns (metrics, flags, verdict)."""
    pts = np.asarray(nodes, dtype=float)
    cell_type = cell_type or {3: "triangle", 4: "quad"}[len(pts)]
    report = meshaudit.audit(meshio.Mesh(pts, [(cell_type, [list(range(len(pts)))])]))
    metrics = {k: float(v[0]) for k, v in report.metrics.items()}
    return metrics, set(report.flags_of(0)), report.verdict_names[0]


def cross2(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    return u[..., 0] * v[..., 1] - u[..., 1] * v[..., 0]


def approx(x: float, rel: float = 1e-12, abs_: float = 1e-12):
    return pytest.approx(x, rel=rel, abs=abs_)


# --- quads ------------------------------------------------------------------------------


@pytest.mark.parametrize(("a", "b"), [(4.0, 1.0), (1.0, 4.0), (3.0, 2.0)])
def test_rectangle(a: float, b: float):
    """Analytic: an a x b rectangle has e1 = (a/2, 0), e2 = (0, b/2), e3 = 0, so
    aspect = max(a, b)/min(a, b) (4 for 4 x 1), skew 0, taper 0, det J = ab/4 everywhere
    (Jacobian ratio 1), every corner 90 degrees (scaled Jacobian sin 90 = 1), and each
    corner matrix [a-edge, b-edge] gives condition (a^2 + b^2) / (2ab)."""
    m, flags, _ = audit_one([[0, 0], [a, 0], [a, b], [0, b]])
    assert m["aspect_ratio"] == approx(max(a, b) / min(a, b))
    assert m["skew"] == approx(0.0)
    assert m["taper"] == approx(0.0)
    assert m["scaled_jacobian"] == approx(1.0)
    assert m["jacobian_ratio"] == approx(1.0)
    assert m["min_angle"] == approx(90.0) and m["max_angle"] == approx(90.0)
    assert m["condition"] == approx((a * a + b * b) / (2 * a * b))
    assert m["det_j_min"] == approx(a * b / 4) and m["det_j_max"] == approx(a * b / 4)
    assert m["det_j_corner_min"] == approx(a * b / 4)
    assert m["area"] == approx(a * b)
    assert m["warp"] == approx(0.0, abs_=1e-6)
    assert not flags & {"inverted", "nonconvex", "self_intersecting", "degenerate"}


def test_parallelogram_with_a_60_degree_angle():
    """Analytic: sides u = (2, 0) and v = (cos 60, sin 60). e1 = u/2, e2 = v/2, e3 = 0:
    taper 0, skew = 90 - 60 = 30 degrees, aspect |u|/|v| = 2, det J = |u x v|/4 = sin60/2
    everywhere (ratio 1), corners 60 and 120 degrees so scaled Jacobian = sin 60, and the
    condition number (|a|^2 + |b|^2)/(2 |a||b| sin 60) = 5/(4 sin 60) at every corner."""
    s60, c60 = math.sin(math.radians(60)), math.cos(math.radians(60))
    m, flags, _ = audit_one([[0, 0], [2, 0], [2 + c60, s60], [c60, s60]])
    assert m["scaled_jacobian"] == approx(s60)
    assert m["skew"] == approx(30.0)
    assert m["taper"] == approx(0.0)
    assert m["aspect_ratio"] == approx(2.0)
    assert m["jacobian_ratio"] == approx(1.0)
    assert m["min_angle"] == approx(60.0) and m["max_angle"] == approx(120.0)
    assert m["condition"] == approx(5.0 / (4.0 * s60))
    assert m["det_j_min"] == approx(s60 / 2) and m["det_j_max"] == approx(s60 / 2)
    assert m["area"] == approx(2 * s60)
    assert not flags & {"inverted", "nonconvex", "self_intersecting", "degenerate"}


@pytest.mark.parametrize(("a", "c", "h"), [(2.0, 1.0, 1.0), (1.0, 3.0, 0.5), (4.0, 3.0, 2.0)])
def test_symmetric_trapezoid(a: float, c: float, h: float):
    """Analytic: nodes (-a/2, 0), (a/2, 0), (c/2, h), (-c/2, h) (parallel sides a, c).

    x(xi, eta) = xi [(a + c) + eta (c - a)] / 4,  y = h (1 + eta) / 2, so
    det J = h [(a + c) + eta (c - a)] / 8 (linear in eta, independent of xi):
    at the Gauss points eta = +-1/sqrt3: h [(a + c) +- (c - a)/sqrt3] / 8; at the corners
    h a / 4 and h c / 4. e1 = ((a + c)/4, 0), e2 = (0, h/2), e3 = ((c - a)/4, 0) = alpha e1
    with alpha = (c - a)/(c + a): taper |c - a|/(c + a), skew 0, aspect ratio of
    (a + c)/4 and h/2. Base angle atan2(h, (a - c)/2), top angle its supplement.
    """
    m, flags, _ = audit_one([[-a / 2, 0], [a / 2, 0], [c / 2, h], [-c / 2, h]])
    gauss = [h * ((a + c) + s * (c - a) * G) / 8 for s in (-1, 1)]
    assert m["det_j_min"] == approx(min(gauss))
    assert m["det_j_max"] == approx(max(gauss))
    assert m["jacobian_ratio"] == approx(max(gauss) / min(gauss))
    assert m["det_j_corner_min"] == approx(h * min(a, c) / 4)
    assert m["taper"] == approx(abs(c - a) / (c + a))
    assert m["skew"] == approx(0.0, abs_=1e-10)
    e1, e2 = (a + c) / 4, h / 2
    assert m["aspect_ratio"] == approx(max(e1, e2) / min(e1, e2))
    base = math.degrees(math.atan2(h, (a - c) / 2))
    assert m["min_angle"] == approx(min(base, 180 - base))
    assert m["max_angle"] == approx(max(base, 180 - base))
    assert m["scaled_jacobian"] == approx(math.sin(math.radians(base)))
    # Knupp's condition at a corner with edges p, q meeting at angle t:
    # (p^2 + q^2) / (2 p q sin t); legs have length L.
    leg = math.hypot((a - c) / 2, h)
    sin_t = math.sin(math.radians(base))
    kappa = max((s * s + leg * leg) / (2 * s * leg * sin_t) for s in (a, c))
    assert m["condition"] == approx(kappa)
    assert m["area"] == approx((a + c) * h / 2)
    assert not flags & {"inverted", "nonconvex", "self_intersecting", "degenerate"}


def test_square_is_ideal():
    """Analytic: the square is the ideal quad: aspect 1, skew 0, taper 0, scaled
    Jacobian 1, condition 1, Jacobian ratio 1, score 1, verdict ok."""
    m, flags, verdict = audit_one([[1, 1], [3, 1], [3, 3], [1, 3]])
    assert m["score"] == approx(1.0)
    assert m["aspect_ratio"] == approx(1.0) and m["condition"] == approx(1.0)
    assert m["scaled_jacobian"] == approx(1.0) and m["jacobian_ratio"] == approx(1.0)
    assert m["skew"] == approx(0.0) and m["taper"] == approx(0.0)
    assert flags == set() and verdict == "ok"


def test_clockwise_quad_is_inverted_and_reversed():
    """Analytic: a unit square listed clockwise in the x-y plane maps the reference square
    with det J = -1/4 at every point (all corners negative: reversed node order)."""
    m, flags, verdict = audit_one([[0, 0], [0, 1], [1, 1], [1, 0]])
    assert m["det_j_min"] == approx(-0.25) and m["det_j_corner_min"] == approx(-0.25)
    assert {"inverted", "reversed"} <= flags
    assert "nonconvex" not in flags and "self_intersecting" not in flags
    assert m["score"] == 0.0 and verdict == "fail"


@pytest.mark.parametrize("d", [0.0, 1e-10, 0.3])
def test_bow_tie_is_self_intersecting(d: float):
    """Analytic: nodes (0,0), (1,1+d), (1,0), (0,1): edges 1-2 and 3-4 cross. The two
    lobes have opposite winding, so the shoelace area is their difference, d/2; the
    element sweeps both lobes and is not collapsed, however close d is to 0."""
    m, flags, verdict = audit_one([[0, 0], [1, 1 + d], [1, 0], [0, 1]])
    assert "self_intersecting" in flags and "degenerate" not in flags
    assert verdict == "fail"
    assert m["area"] == approx(d / 2)


def test_dart_is_nonconvex():
    """Analytic: nodes (0,0), (2,0), (0.5,0.5), (0,2) make a dart. At node 3 the edges
    (1.5, -0.5) and (-0.5, 1.5) meet at acos(-1.5/2.5) = acos(-0.6) on the outside, so
    the interior angle is 360 - acos(-0.6) = 233.13 degrees (reflex)."""
    m, flags, verdict = audit_one([[0, 0], [2, 0], [0.5, 0.5], [0, 2]])
    assert "nonconvex" in flags and "self_intersecting" not in flags
    assert m["max_angle"] == approx(360.0 - math.degrees(math.acos(-0.6)))
    assert m["det_j_corner_min"] < 0.0  # det J changes sign at the reflex corner
    assert verdict == "fail"


@pytest.mark.parametrize(
    ("nodes", "area"),
    [
        ([[0, 0], [1, 0], [1, 1], [1, 1]], 0.5),  # quad, nodes 3 and 4 coincident: a triangle
        ([[0, 0], [1, 0], [2, 0], [3, 0]], 0.0),  # quad collapsed onto a line
        ([[0, 0], [1, 1], [2, 2]], 0.0),  # triangle with collinear nodes
        ([[0, 0], [0, 0], [0, 1]], 0.0),  # triangle with coincident nodes
    ],
)
def test_collapsed_elements_are_degenerate(nodes, area: float):
    """Analytic: coincident nodes collapse an edge to zero length; collinear nodes enclose
    zero area (shoelace area given beside each case)."""
    m, flags, verdict = audit_one(nodes)
    assert "degenerate" in flags and verdict == "fail"
    assert m["area"] == approx(area) and m["score"] == 0.0


def _rotation(rng: np.random.Generator) -> np.ndarray:
    q, r = np.linalg.qr(rng.normal(size=(3, 3)))
    q = q * np.sign(np.diag(r))
    return q if np.linalg.det(q) > 0 else -q


def test_planar_quad_rotated_in_space_has_no_warp():
    """Analytic: a planar quad stays planar under any rigid motion, so warp is 0 and its
    in-plane metrics are those of the unrotated quad. Its det J keeps its sign while the
    rotation keeps the plane facing +z; one that turns the plane over shows a 2-D solver
    reading x and y the mirror image: det J negated, the extremes swapped."""
    rng = np.random.default_rng(40)
    flat = np.array([[0.0, 0.0, 0.0], [3.0, 0.2, 0.0], [2.5, 1.8, 0.0], [0.4, 1.2, 0.0]])
    m0, _, _ = audit_one(flat)
    for _ in range(5):
        turn = _rotation(rng)
        moved = flat @ turn.T + rng.uniform(-10, 10, size=3)
        m, flags, _ = audit_one(moved)
        assert m["warp"] == approx(0.0, abs_=1e-9)
        for name in ("area", "aspect_ratio", "taper", "min_angle", "max_angle"):
            assert m[name] == approx(m0[name], rel=1e-9)
        if turn[2, 2] > 0.0:  # the plane still faces +z
            for name in ("det_j_min", "det_j_max", "condition"):
                assert m[name] == approx(m0[name], rel=1e-9)
            assert "reversed" not in flags
        else:
            assert m["det_j_min"] == approx(-m0["det_j_max"], rel=1e-9)
            assert m["det_j_max"] == approx(-m0["det_j_min"], rel=1e-9)
            assert "reversed" in flags


@pytest.mark.parametrize("h", [0.01, 0.1, 0.5, 2.0])
def test_unit_square_with_a_lifted_corner(h: float):
    """Analytic warp of the unit square with node 3 lifted to (1, 1, h).

    Split on diagonal 1-3: triangle normals (x2-x1)x(x3-x1) = (0, -h, 1) and
    (x3-x1)x(x4-x1) = (-h, 0, 1), cos = 1/(1 + h^2).
    Split on diagonal 2-4: normals (x3-x2)x(x4-x2) = (-h, -h, 1) and (0, 0, 1),
    cos = 1/sqrt(1 + 2h^2). Since (1 + h^2)^2 > 1 + 2h^2 the first angle is the larger:
    warp = acos(1/(1 + h^2)).
    """
    m, _, _ = audit_one([[0, 0, 0], [1, 0, 0], [1, 1, h], [0, 1, 0]])
    assert m["warp"] == approx(math.degrees(math.acos(1.0 / (1.0 + h * h))), rel=1e-9)
    assert m["warp"] > math.degrees(math.acos(1.0 / math.sqrt(1.0 + 2 * h * h)))


# --- triangles ----------------------------------------------------------------------------


@pytest.mark.parametrize("side", [1.0, 0.003, 250.0])
def test_equilateral_triangle_is_ideal(side: float):
    """Analytic: the equilateral triangle is the ideal triangle: 60-degree angles,
    scaled Jacobian 1, condition 1, aspect ratio 1, score 1; area sqrt3/4 s^2 and
    det J = 2 area on the reference triangle (0,0), (1,0), (0,1)."""
    m, flags, verdict = audit_one([[0, 0], [side, 0], [side / 2, side * SQRT3 / 2]])
    assert m["scaled_jacobian"] == approx(1.0) and m["condition"] == approx(1.0)
    assert m["aspect_ratio"] == approx(1.0) and m["score"] == approx(1.0)
    assert m["min_angle"] == approx(60.0) and m["max_angle"] == approx(60.0)
    assert m["area"] == approx(SQRT3 / 4 * side**2)
    assert m["det_j_min"] == approx(SQRT3 / 2 * side**2)
    for meaningless in ("skew", "taper", "warp"):
        assert math.isnan(m[meaningless])
    assert flags == set() and verdict == "ok"


def test_right_isosceles_triangle():
    """Analytic, legs L: angles 45, 45, 90. Scaled Jacobian = worst sin(angle) scaled so
    the equilateral reads 1: sin45 * 2/sqrt3 = sqrt(2/3). Aspect ratio = longest edge
    over shortest altitude (L sqrt2 / (L/sqrt2) = 2) over the equilateral's 2/sqrt3:
    sqrt3. Condition number relative to the equilateral triangle equals
    (l1^2 + l2^2 + l3^2) / (4 sqrt3 area) (the inverse of the mean-ratio quality):
    4L^2 / (2 sqrt3 L^2) = 2/sqrt3."""
    L = 1.7
    m, _, _ = audit_one([[0, 0], [L, 0], [0, L]])
    assert m["min_angle"] == approx(45.0) and m["max_angle"] == approx(90.0)
    assert m["scaled_jacobian"] == approx(math.sqrt(2.0 / 3.0))
    assert m["aspect_ratio"] == approx(SQRT3)
    assert m["condition"] == approx(2.0 / SQRT3)
    assert m["area"] == approx(L * L / 2) and m["det_j_min"] == approx(L * L)


def test_triangle_condition_equals_edge_formula():
    """Analytic identity: for T = A W^-1 (W the unit equilateral triangle),
    |T|_F^2 / (2 det T) = (l1^2 + l2^2 + l3^2) / (4 sqrt3 area), for any triangle."""
    rng = np.random.default_rng(41)
    p = rng.uniform(-1, 1, size=(300, 3, 2))
    p[:, [1, 2]] = np.where(  # make every triangle counter-clockwise
        (cross2(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]) < 0)[:, None, None],
        p[:, [2, 1]],
        p[:, [1, 2]],
    )
    cells = np.arange(900).reshape(300, 3)
    report = meshaudit.audit(meshio.Mesh(p.reshape(-1, 2), [("triangle", cells)]))
    l2 = (np.diff(p, axis=1, append=p[:, :1]) ** 2).sum(axis=(1, 2))
    area = np.abs(cross2(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0])) / 2
    np.testing.assert_allclose(report.metrics["condition"], l2 / (4 * SQRT3 * area), rtol=1e-9)
