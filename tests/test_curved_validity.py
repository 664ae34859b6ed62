"""det J over the whole quadratic element: the Bernstein bound, the planted negative region
that Gauss and nodal sampling miss, and the quarter-point treatment.

Outside references: sympy (the exact det J polynomial of the element's map, from shape
functions solved from their interpolation conditions; its degree; its minimum over the
reference element, exact on the edges, from dense sampling polished by solving for the
critical point inside), scikit-fem (det J at the Gauss points and nodes, independently of
our code), closed forms for straight-sided elements (a 2b x 2h rectangle has det J = b h
everywhere, common practice; an affine triangle has det J = twice its area), and the
quarter-point rule (R. D. Henshell and K. G. Shaw 1975; R. S. Barsoum 1976: det J zero
at the tip corner, positive inside).
"""

from __future__ import annotations

import json
from pathlib import Path

import meshio
import numpy as np
import pytest
import sympy as sp
from test_quadratic import (
    NODES,
    collapsed_quad8,
    distorted,
    quarter_point_element,
    skfem_det_j,
    straight_sided,
    sympy_shape_functions,
)

from meshaudit import audit, audit_mesh, explain
from meshaudit.cells import quad as quad_ref
from meshaudit.cells import triangle as triangle_ref
from meshaudit.judge.profiles import STANDARD
from meshaudit.judge.verdicts import judge
from meshaudit.metrics import bernstein, quadratic

SQUARE = np.array([[-1.0, -1.0], [1.0, -1.0], [1.0, 1.0], [-1.0, 1.0]])
TRIANGLE = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]])
GAUSS = {
    "quad8": quad_ref.QUAD_GAUSS_3X3,
    "quad9": quad_ref.QUAD_GAUSS_3X3,
    "triangle6": triangle_ref.TRIANGLE_GAUSS_3,
}


# -- sympy: the exact det J polynomial and its minimum ---------------------------------------
def exact_det_j(cell_type: str, nodes: np.ndarray) -> tuple[sp.Poly, sp.Symbol, sp.Symbol]:
    """det J of the isoparametric map as an exact polynomial (each node coordinate is the
    exact rational value of its float)."""
    funcs, x, y = sympy_shape_functions(cell_type)
    xs = [sp.Rational(float(v)) for v in nodes[:, 0]]
    ys = [sp.Rational(float(v)) for v in nodes[:, 1]]
    mx = sum(f * v for f, v in zip(funcs, xs))
    my = sum(f * v for f, v in zip(funcs, ys))
    det = sp.expand(sp.diff(mx, x) * sp.diff(my, y) - sp.diff(mx, y) * sp.diff(my, x))
    return sp.Poly(det, x, y), x, y


def _edges(cell_type: str) -> list[tuple[tuple[float, float], tuple[float, float]]]:
    corners = TRIANGLE if cell_type == "triangle6" else SQUARE
    return [
        (tuple(corners[i]), tuple(corners[(i + 1) % len(corners)])) for i in range(len(corners))
    ]


def exact_minimum(cell_type: str, nodes: np.ndarray) -> tuple[float, np.ndarray]:
    """Minimum of det J over the reference element, and where.

    On each edge det J is a polynomial in one variable: its minimum is at an end or at a
    real root of its derivative, found exactly (sympy real_roots). Inside, the minimum is a
    critical point: dense sampling finds its basin and sympy's nsolve polishes it.
    """
    poly, x, y = exact_det_j(cell_type, nodes)
    t = sp.Symbol("t")
    best = (np.inf, None)
    for a, b in _edges(cell_type):
        a = [sp.nsimplify(v) for v in a]
        b = [sp.nsimplify(v) for v in b]
        on_edge = sp.Poly(
            poly.as_expr().subs({x: a[0] + t * (b[0] - a[0]), y: a[1] + t * (b[1] - a[1])}), t
        )
        candidates = [sp.Integer(0), sp.Integer(1)]
        if on_edge.degree() > 1:
            candidates += [r for r in sp.real_roots(on_edge.diff(t)) if 0 <= r <= 1]
        for r in candidates:
            value = float(on_edge.eval(r))
            if value < best[0]:
                r = float(r)
                best = (
                    value,
                    np.array(
                        [float(a[0]) + r * float(b[0] - a[0]), float(a[1]) + r * float(b[1] - a[1])]
                    ),
                )
    f = sp.lambdify((x, y), poly.as_expr())
    lo = 0.0 if cell_type == "triangle6" else -1.0
    g = np.linspace(lo, 1.0, 241)
    gx, gy = np.meshgrid(g, g)
    inside = (gx + gy <= 1.0) if cell_type == "triangle6" else np.ones_like(gx, dtype=bool)
    values = np.where(inside, f(gx, gy), np.inf)
    k = np.unravel_index(np.argmin(values), values.shape)
    start = (gx[k], gy[k])
    grad = [poly.diff(x).as_expr(), poly.diff(y).as_expr()]
    try:
        root = sp.nsolve(grad, (x, y), start, tol=1e-20, prec=40)
        px, py = float(root[0]), float(root[1])
        in_domain = (
            (px > 0 and py > 0 and px + py < 1)
            if cell_type == "triangle6"
            else (abs(px) < 1 and abs(py) < 1)
        )
        if in_domain:
            value = float(poly.eval((root[0], root[1])))
            if value < best[0]:
                best = (value, np.array([px, py]))
    except (ValueError, ZeroDivisionError):
        pass  # no critical point near the grid's minimum: it is on the boundary
    return best


def negative_fraction(cell_type: str, nodes: np.ndarray) -> float:
    """Share of the reference element where the exact det J is negative (dense sampling)."""
    poly, x, y = exact_det_j(cell_type, nodes)
    f = sp.lambdify((x, y), poly.as_expr())
    if cell_type == "triangle6":
        g = (np.arange(600) + 0.5) / 600
        gx, gy = np.meshgrid(g, g)
        inside = gx + gy < 1.0
        return float((f(gx, gy)[inside] < 0).mean())
    g = -1.0 + (np.arange(600) + 0.5) / 300
    gx, gy = np.meshgrid(g, g)
    return float((f(gx, gy) < 0).mean())


def one(cell_type: str, nodes: np.ndarray):
    return audit(meshio.Mesh(nodes, [(cell_type, [list(range(len(nodes)))])]))


def located(cell_type: str, nodes: np.ndarray) -> quadratic.JacobianPart:
    return quadratic.jacobian_part(quadratic.ELEMENTS[cell_type], nodes[None], locate=True)


# -- the polynomial space ------------------------------------------------------------------
@pytest.mark.parametrize(
    ("cell_type", "degree_x", "degree_y", "total"),
    [("triangle6", 2, 2, 2), ("quad9", 3, 3, 5), ("quad8", 3, 3, 4)],
)
def test_det_j_has_the_degree_the_bernstein_space_holds(cell_type, degree_x, degree_y, total):
    # sympy: det J of a generic element (random integer nodes). triangle6: total degree 2;
    # quad9: degree 3 in each variable, total 5 (the xi^3 eta^3 terms cancel); quad8:
    # degree 3 in each, total 4 (its xi^3 eta and xi eta^3 terms cancel too). Each fits the
    # space its Bernstein basis spans (total degree 2; tensor degree (3, 3)).
    rng = np.random.default_rng(5)
    nodes = straight_sided(cell_type, TRIANGLE if cell_type == "triangle6" else SQUARE)
    nodes = nodes * 7 + rng.integers(-3, 4, nodes.shape)
    poly, x, y = exact_det_j(cell_type, nodes)
    assert poly.degree(x) == degree_x and poly.degree(y) == degree_y
    assert poly.total_degree() == total
    if cell_type == "quad9":
        assert poly.coeff_monomial(x**3 * y**2) != 0
    if cell_type == "quad8":
        assert poly.coeff_monomial(x**3 * y) == 0 and poly.coeff_monomial(x * y**3) == 0
        assert poly.coeff_monomial(x**2 * y**2) != 0 and poly.coeff_monomial(x**3) != 0


# -- the bound against the exact minimum ------------------------------------------------------
def _random_elements():
    cases = []
    for cell_type in ("quad8", "quad9", "triangle6"):
        for seed in range(3):
            cases.append((cell_type, distorted(cell_type, seed)))  # nudged by 8%: valid
        rng = np.random.default_rng(11)
        base = straight_sided(cell_type, TRIANGLE if cell_type == "triangle6" else SQUARE)
        for _ in range(3):  # midside nodes thrown by up to 35% of the size: often folded
            nodes = base.copy()
            k = 3 if cell_type == "triangle6" else 4
            nodes[k:] += rng.uniform(-0.35, 0.35, nodes[k:].shape) * (2 if k == 4 else 1)
            cases.append((cell_type, nodes))
    return cases


@pytest.mark.parametrize(("cell_type", "nodes"), _random_elements())
def test_bound_brackets_the_exact_minimum(cell_type, nodes):
    # sympy's exact minimum m of det J: our lower bound is <= m, the smallest value we
    # found is >= m and is det J at the point we name, and the element is inverted exactly
    # when m < 0.
    m, _ = exact_minimum(cell_type, nodes)
    part = located(cell_type, nodes)
    scale = max(1.0, abs(m))
    assert part.lower[0] <= m + 1e-12 * scale
    assert part.bounds.upper[0] >= m - 1e-12 * scale
    poly = exact_det_j(cell_type, nodes)[0]
    xi, eta = part.bounds.where[0]
    assert float(poly.eval((sp.nsimplify(xi), sp.nsimplify(eta)))) == pytest.approx(
        part.bounds.upper[0], rel=1e-9, abs=1e-12
    )
    report = one(cell_type, nodes)
    assert report.metrics["det_j_lower_bound"][0] == pytest.approx(part.lower[0])
    assert ("inverted" in report.flags_of(0)) == (m < 0)


# -- planted: a small negative region between the sample points --------------------------
def planted(cell_type: str) -> np.ndarray:
    """An element with det J down to about -0.064 on under 1 % of its reference area,
    away from every node and Gauss point (found by a search over node offsets)."""
    if cell_type == "triangle6":
        nodes = straight_sided(cell_type, TRIANGLE)
        nodes[3] += [-0.06, 0.3]
        nodes[5] += [-0.49, 0.05]
        return nodes
    nodes = straight_sided(cell_type, SQUARE)
    if cell_type == "quad9":
        nodes[4] += [0.32, 0.64]
    else:
        nodes[4] += [-0.3, 0.3]
        nodes[7] += [-0.5, -0.81]
    return nodes


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_planted_negative_region_missed_by_sampling_is_flagged_inverted(cell_type):
    nodes = planted(cell_type)
    m, where = exact_minimum(cell_type, nodes)
    # sympy: det J really dips to about -0.064, on under 1 % of the element ...
    assert -0.07 < m < -0.06
    assert 0.0 < negative_fraction(cell_type, nodes) < 0.01
    # ... scikit-fem: every Gauss point and node has det J > 0 (sampling misses it) ...
    assert (skfem_det_j(cell_type, nodes, GAUSS[cell_type]) > 0.0).all()
    assert (skfem_det_j(cell_type, nodes, NODES[cell_type]) > 0.0).all()
    # ... and the audit flags it, with a certified bound below the true minimum.
    report = one(cell_type, nodes)
    assert report.metrics["det_j_min"][0] > 0.0 and report.metrics["det_j_corner_min"][0] > 0.0
    assert "inverted" in report.flags_of(0)
    assert report.verdict_names[0] == "fail"
    assert report.metrics["det_j_lower_bound"][0] <= m
    # The search for explain names the minimum to within a few percent, at its place.
    part = located(cell_type, nodes)
    assert part.bounds.upper[0] == pytest.approx(m, rel=0.05)
    assert np.linalg.norm(part.bounds.where[0] - where) < 0.1


# -- straight-sided elements: the linear twin's det J -----------------------------------------
@pytest.mark.parametrize("cell_type", ["quad", "quad8", "quad9"])
def test_rectangle_lower_bound_is_b_times_h(cell_type):
    # Common practice: a 2b x 2h rectangle maps [-1, 1]^2 with det J = b h everywhere.
    b, h = 1.5, 0.4
    corners = np.array([[3.0, -1.0], [3 + 2 * b, -1.0], [3 + 2 * b, 2 * h - 1], [3.0, 2 * h - 1]])
    nodes = corners if cell_type == "quad" else straight_sided(cell_type, corners)
    report = one(cell_type, nodes)
    assert report.metrics["det_j_lower_bound"][0] == pytest.approx(b * h, rel=1e-14)
    assert report.metrics["det_j_corner_min"][0] == pytest.approx(b * h, rel=1e-14)


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_straight_sided_lower_bound_is_the_linear_minimum(cell_type):
    # det J of a straight-sided quadratic element is the linear twin's: bilinear for a
    # quad (its minimum is at a corner) and constant for a triangle (twice its area, in
    # closed form). The bound must be that minimum exactly, not merely below it.
    rng = np.random.default_rng(3)
    k = 3 if cell_type == "triangle6" else 4
    linear = "triangle" if k == 3 else "quad"
    for _ in range(10):
        corners = (TRIANGLE if k == 3 else SQUARE) * rng.uniform(0.5, 3.0, 2)
        corners = corners + rng.uniform(-0.3, 0.3, corners.shape)
        twin = one(linear, corners)
        report = one(cell_type, straight_sided(cell_type, corners))
        expected = twin.metrics["det_j_corner_min"][0]
        if k == 3:
            a, b, c = corners
            expected_closed = (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
            assert expected == pytest.approx(expected_closed, rel=1e-12)
        assert twin.metrics["det_j_lower_bound"][0] == expected
        assert report.metrics["det_j_lower_bound"][0] == pytest.approx(expected, rel=1e-12)


# -- the quarter point -------------------------------------------------------------------------
@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_quarter_point_element_stays_valid(cell_type):
    # Henshell & Shaw (1975), Barsoum (1976): det J is zero at the tip corner and
    # positive inside. sympy: the exact minimum is 0, at the corner.
    nodes = quarter_point_element(cell_type, 0.25)
    m, where = exact_minimum(cell_type, nodes)
    assert m == pytest.approx(0.0, abs=1e-12)
    np.testing.assert_allclose(where, NODES[cell_type][0], atol=1e-9)
    report = one(cell_type, nodes)
    assert report.metrics["det_j_lower_bound"][0] == 0.0  # round-off below zero reads 0
    assert "quarter_point" in report.flags_of(0) and "inverted" not in report.flags_of(0)
    assert report.verdict_names[0] == "warn"


def _with_second_edge(cell_type: str, along: float) -> np.ndarray:
    """The quarter-point element of ``quarter_point_element``, and on the edge from corner
    2 (not touching the tip) a midside node moved ``along`` of the edge towards corner 3."""
    nodes = quarter_point_element(cell_type, 0.25)
    a, b, mid = quadratic.ELEMENTS[cell_type].midside_edges[1]
    nodes[mid] = nodes[a] + (0.5 + along) * (nodes[b] - nodes[a])
    return nodes


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_quarter_point_does_not_soften_a_misplaced_node_elsewhere(cell_type):
    # The quarter-point node's own offset (0.25) is capped at warn; another edge's node at
    # 0.21 along (past the fail limit 0.2) fails as it would in any element.
    report = one(cell_type, _with_second_edge(cell_type, 0.21))
    assert "quarter_point" in report.flags_of(0)
    assert report.levels["midside_offset_along"][0] == 2
    assert report.verdict_names[0] == "fail"
    # Control: the same node at 0.05 (within limits) leaves the quarter-point element at warn.
    control = one(cell_type, _with_second_edge(cell_type, 0.05))
    assert control.verdict_names[0] == "warn"


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_quarter_point_does_not_hide_a_fold_elsewhere(cell_type):
    # A node past the quarter point of the other edge makes det J negative at that edge's
    # far corner (sympy: exact minimum < 0, away from the tip): inverted, fail.
    nodes = _with_second_edge(cell_type, 0.3)
    m, where = exact_minimum(cell_type, nodes)
    assert m < 0 and np.linalg.norm(where - NODES[cell_type][0]) > 0.5
    report = one(cell_type, nodes)
    assert "inverted" in report.flags_of(0) and report.verdict_names[0] == "fail"


def test_jacobian_ratio_breach_of_the_element_itself_is_not_capped():
    # The cap only forgives what the quarter point causes: the same element with its
    # quarter-point node moved back to the midpoint is judged too. A bulged opposite edge
    # that gives that twin a Jacobian ratio past the fail limit fails the element.
    nodes = quarter_point_element("quad8", 0.25)
    metrics, flags = quadratic.measure(
        "quad8", np.column_stack([nodes, np.zeros(8)])[None], nodes[None], *_corner_kernel(nodes)
    )
    assert flags["quarter_point"][0]
    levels, verdict, _score = judge("quad", metrics, flags, STANDARD)
    assert levels["jacobian_ratio"][0] == 1 and verdict[0] == 1  # ratio breached, capped
    twin_name = quadratic.without_quarter_points_name("jacobian_ratio")
    assert metrics[twin_name][0] < 2.5  # the twin is a plain rectangle
    metrics = dict(metrics)
    metrics[twin_name] = np.array([6.0])  # as if the rest of the element were distorted
    levels, verdict, _score = judge("quad", metrics, flags, STANDARD)
    assert levels["jacobian_ratio"][0] == 2 and verdict[0] == 2


def _corner_kernel(nodes: np.ndarray):
    from meshaudit.metrics import quad

    corners = nodes[None, :4]
    return quad.measure(np.concatenate([corners, np.zeros((1, 4, 1))], axis=2), corners)


# -- collapsed quad8 and triangle6 of the same crack-tip geometry ------------------------------
def _both(nodes8: np.ndarray):
    tri = nodes8[[0, 2, 3, 5, 6, 7]]
    points = np.vstack([nodes8, tri])
    mesh = meshio.Mesh(points, [("quad8", [list(range(8))]), ("triangle6", [list(range(8, 14))])])
    return audit(mesh)


def test_collapsed_quad8_and_triangle6_of_one_crack_tip_get_one_verdict():
    # Barsoum (1976): the collapsed quarter-point quad8 and the quarter-point triangle6 are
    # the same singular element: both quarter_point, both warn, neither inverted.
    report = _both(collapsed_quad8(0.25))
    for i in (0, 1):
        assert "quarter_point" in report.flags_of(i) and "inverted" not in report.flags_of(i)
    assert list(report.verdict_names) == ["warn", "warn"]
    # Their Jacobian ratios differ (det J ~ r^3 near the tip of the quad8, ~ r for the
    # triangle6), but both are forgiven by the same twin: the straight triangle6.
    name = quadratic.without_quarter_points_name("jacobian_ratio")
    metrics, _ = quadratic.measure(
        "quad8",
        np.column_stack([collapsed_quad8(0.25), np.zeros(8)])[None],
        collapsed_quad8(0.25)[None],
        *_corner_kernel(collapsed_quad8(0.25)),
    )
    assert metrics[name][0] == pytest.approx(1.0)


def test_collapsed_quad8_and_triangle6_fail_alike_for_a_defect_elsewhere():
    # A far-edge node bulged across its chord by 0.35 of it (past the fail limit 0.3):
    # both fail; the quarter points do not soften it in either.
    nodes = collapsed_quad8(0.25)
    nodes[6] += [0.35 * 1.5, 0.0]  # far edge (2, 0)-(2, 1.5), bulged outward
    report = _both(nodes)
    assert list(report.verdict_names) == ["fail", "fail"]
    assert report.levels["midside_offset_across"].tolist() == [2, 2]


def test_collapsed_quad8_of_the_sample_rosette_matches_its_triangle6():
    # The crack-tip rosette's tip elements (triangle6, curved far edge on the arc) built
    # as collapsed quad8 from the same nodes get the same verdict and flags.
    mesh = meshio.read(Path(__file__).resolve().parents[1] / "samples" / "bracket_crack_tip.vtu")
    tri = mesh.cells_dict["triangle6"]
    quads = np.column_stack(
        [tri[:, 0], tri[:, 0], tri[:, 1], tri[:, 2], tri[:, 0], tri[:, 3], tri[:, 4], tri[:, 5]]
    )
    report = audit(meshio.Mesh(mesh.points, [("quad8", quads), ("triangle6", tri)]))
    n = len(tri)
    assert list(report.verdict_names[:n]) == list(report.verdict_names[n:]) == ["warn"] * n
    assert report.flag("quarter_point").all() and not report.flag("inverted").any()


# -- undecided: det J touching zero inside -----------------------------------------------------
def test_det_j_touching_zero_on_a_line_inside_is_reported():
    # x = xi, y = eta (xi - 1/3)^2 is a quad9 map (degree <= 2 in each variable) with
    # det J = (xi - 1/3)^2 >= 0, zero on the whole line xi = 1/3: the element is pinched
    # there. sympy confirms the minimum 0; no halving of [-1, 1] lands on 1/3, so the sign
    # of the minimum stays undecided: reported as inverted (when in doubt, report).
    ref_nodes = quad_ref.QUAD9_NODES
    nodes = np.column_stack([ref_nodes[:, 0], ref_nodes[:, 1] * (ref_nodes[:, 0] - 1.0 / 3.0) ** 2])
    m, _ = exact_minimum("quad9", nodes)
    assert m == pytest.approx(0.0, abs=1e-9)
    part = located("quad9", nodes)
    assert part.bounds.undecided[0]
    report = one("quad9", nodes)
    assert "inverted" in report.flags_of(0) and report.verdict_names[0] == "fail"
    ex = explain(audit_mesh(meshio.Mesh(nodes, [("quad9", [list(range(9))])])), 0)
    assert ex.det_j_bound["undecided"] and "could not be shown" in ex.flag_reasons["inverted"]


def test_bounds_of_a_known_polynomial():
    # Common practice (Bernstein basis on [0, 1]): (x - 1/2)^2 - 1/64 on the square is
    # negative only for |x - 1/2| < 1/8, between the sample points -1/3 and 1/3 of xi.
    space = bernstein.SQUARE
    xi = space.points[:, 0]
    values = ((xi + 1) / 2 - 0.5) ** 2 - 1 / 64
    coeffs = (values @ space.to_bernstein)[:, None]
    found = bernstein.bounds(space, coeffs, np.array([-1e-12]), locate=True)
    assert found.lower[0] <= -1 / 64 and found.upper[0] == pytest.approx(-1 / 64, abs=1e-3)
    assert not found.undecided[0]


def test_too_many_open_pieces_stop_the_element_undecided(monkeypatch):
    # The work limit: an element still open in more than MAX_PIECES pieces stops there,
    # undecided (reported), instead of splitting on. (xi - 1/3)^2 is open along a line.
    space = bernstein.SQUARE
    values = (space.points[:, 0] - 1.0 / 3.0) ** 2
    coeffs = (values @ space.to_bernstein)[:, None]
    monkeypatch.setattr(bernstein, "MAX_PIECES", 2)
    found = bernstein.bounds(space, coeffs, np.array([-1e-12]))
    assert found.undecided[0] and found.lower[0] < 0.0 < found.upper[0]


# -- explain: the bound and where the minimum is -----------------------------------------------
def test_explain_names_the_negative_point_the_sampling_missed(run_cli, tmp_path):
    # The planted quad8: sympy's exact minimum (about -0.064) and its place; explain gives
    # an interval that holds it and a point near it, in text and JSON.
    nodes = planted("quad8")
    m, where = exact_minimum("quad8", nodes)
    source = tmp_path / "planted.vtu"
    meshio.write(
        source, meshio.Mesh(np.column_stack([nodes, np.zeros(8)]), [("quad8", [list(range(8))])])
    )
    result = run_cli("explain", source, "0", "--json", tmp_path / "e.json")
    assert result.returncode == 1, result.stderr
    doc = json.loads((tmp_path / "e.json").read_text())
    bound = doc["det_j_bound"]
    assert bound["lower"] <= m <= bound["upper"] < 0 and not bound["undecided"]
    assert np.hypot(bound["xi"] - where[0], bound["eta"] - where[1]) < 0.1
    assert "no node or Gauss point shows it" in doc["flag_reasons"]["inverted"]
    assert "det J over the whole element: at least" in result.stdout


def test_quarter_point_cap_holds_per_region():
    # Region profiles judge the same twin. The other edge's node at 0.15 along passes the
    # standard fail limit 0.2 (the quarter-point element warns) but not the strict 0.1;
    # under lenient (fail 0.22, below the quarter point's own 0.25) a node at 0.05 leaves
    # the quarter-point element at warn.
    parts = [
        _with_second_edge("quad8", a) + np.array([10.0 * k, 0.0])
        for k, a in enumerate((0.15, 0.15, 0.05))
    ]
    cells = [list(range(8 * k, 8 * k + 8)) for k in range(3)]
    mesh = meshio.Mesh(np.vstack(parts), [("quad8", cells)])
    mesh.cell_sets = {"fillet": [np.array([1])], "web": [np.array([2])]}
    report = audit(mesh, regions={"fillet": "strict", "web": "lenient"})
    assert report.flag("quarter_point").all()
    assert list(report.verdict_names) == ["warn", "fail", "warn"]
    assert report.levels["midside_offset_along"].tolist() == [1, 2, 1]
