"""Quadratic elements: shape derivatives, det J at Gauss points, area, midside checks.

Outside references: sympy (shape functions built from their interpolation conditions),
scikit-fem (isoparametric det J at quadrature points), Archimedes' parabolic segment
(area 2/3 of base times height), and the quarter-point rule (Henshell and Shaw 1975,
Barsoum 1976).
"""

from __future__ import annotations

from dataclasses import dataclass

import meshio
import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from skfem import (
    ElementQuad2,
    ElementQuadS2,
    ElementTriP2,
    MappingIsoparametric,
    MeshQuad1,
    MeshQuad2,
    MeshTri1,
    MeshTri2,
)

from meshaudit import audit
from meshaudit.cells import quad as quad_ref
from meshaudit.cells import triangle as triangle_ref
from meshaudit.judge.profiles import BUILTIN, with_limit
from meshaudit.mesh.reading import load
from meshaudit.mesh.topology import edge_table, interior_pairs
from meshaudit.metrics import quadratic

SHAPE_METRICS = (
    "scaled_jacobian",
    "aspect_ratio",
    "skew",
    "taper",
    "warp",
    "min_angle",
    "max_angle",
    "condition",
)

# -- reference nodes of each cell type, and a straight-sided element of each --------------
NODES = {
    "quad8": quad_ref.QUAD8_NODES,
    "quad9": quad_ref.QUAD9_NODES,
    "triangle6": triangle_ref.TRIANGLE6_NODES,
}
LINEAR = {"quad8": "quad", "quad9": "quad", "triangle6": "triangle"}


def straight_sided(cell_type: str, corners: np.ndarray) -> np.ndarray:
    """Nodes of a quadratic element with midside (and centre) nodes at the chord midpoints.

    Built by the linear map of the corners (bilinear / affine), evaluated at the reference
    node positions: the standard way a mesher places them on straight edges.
    """
    r = NODES[cell_type]
    if cell_type == "triangle6":
        n = np.column_stack([1 - r[:, 0] - r[:, 1], r[:, 0], r[:, 1]])
    else:
        n = np.stack(
            [(1 + r[:, 0] * c[0]) * (1 + r[:, 1] * c[1]) / 4 for c in quad_ref.QUAD_CORNERS], axis=1
        )
    return n @ corners


# -- sympy: shape functions from their defining interpolation conditions -----------------
def sympy_shape_functions(cell_type: str) -> tuple[list[sp.Expr], sp.Symbol, sp.Symbol]:
    """Solve N_i(node_j) = delta_ij in the element's polynomial space, symbolically.

    Spaces (common practice): serendipity quad8 {1, x, y, x^2, xy, y^2, x^2 y, x y^2},
    Lagrange quad9 {x^a y^b : a, b <= 2}, quadratic triangle {1, x, y, x^2, xy, y^2}.
    """
    x, y = sp.symbols("x y")
    spaces = {
        "quad8": [1, x, y, x**2, x * y, y**2, x**2 * y, x * y**2],
        "quad9": [x**a * y**b for a in range(3) for b in range(3)],
        "triangle6": [1, x, y, x**2, x * y, y**2],
    }
    basis = [sp.sympify(b) for b in spaces[cell_type]]
    nodes = [[sp.Rational(str(c)) for c in row] for row in NODES[cell_type]]
    vander = sp.Matrix([[b.subs({x: n[0], y: n[1]}) for b in basis] for n in nodes])
    coeffs = vander.inv()  # column i: coefficients of N_i
    funcs = [sum(coeffs[k, i] * basis[k] for k in range(len(basis))) for i in range(len(nodes))]
    return funcs, x, y


DERIVATIVES = {
    "quad8": quad_ref.quad8_shape_derivatives,
    "quad9": quad_ref.quad9_shape_derivatives,
    "triangle6": triangle_ref.triangle6_shape_derivatives,
}


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_shape_derivatives_match_sympy(cell_type):
    # Outside reference: sympy differentiates the shape functions it solved for.
    funcs, x, y = sympy_shape_functions(cell_type)
    dx = sp.lambdify((x, y), [sp.diff(f, x) for f in funcs])
    dy = sp.lambdify((x, y), [sp.diff(f, y) for f in funcs])
    pts = np.random.default_rng(1).uniform(0.0, 0.5, (7, 2)) * [1.3, 0.9]
    ours = DERIVATIVES[cell_type](pts)
    expected = np.array([[np.broadcast_to(dx(*q), (len(funcs),)), dy(*q)] for q in pts])
    np.testing.assert_allclose(ours, expected.astype(float), atol=1e-13)


def test_gauss_rules_integrate_what_they_claim():
    # Common practice: 3x3 Gauss-Legendre integrates x^5 y^4 exactly on [-1,1]^2 (zero for an
    # odd power, 2/5 * 2/5 for x^4 y^4); the 3-point interior triangle rule integrates
    # degree 2 exactly: int x^2 = int xy * 2 = 1/12 on the reference triangle.
    g, w = quad_ref.QUAD_GAUSS_3X3, quad_ref.QUAD_WEIGHTS_3X3
    assert w @ (g[:, 0] ** 4 * g[:, 1] ** 4) == pytest.approx(4 / 25)
    assert w @ (g[:, 0] ** 5 * g[:, 1] ** 4) == pytest.approx(0.0, abs=1e-15)
    t, v = triangle_ref.TRIANGLE_GAUSS_3, triangle_ref.TRIANGLE_WEIGHTS_3
    assert v @ t[:, 0] ** 2 == pytest.approx(1 / 12)
    assert v @ (t[:, 0] * t[:, 1]) == pytest.approx(1 / 24)


# -- scikit-fem: det J of the isoparametric map at the quadrature points -------------------
@dataclass(repr=False)
class MeshQuadS2(MeshQuad2):
    """scikit-fem's quadratic quad mesh, mapped with the 8-node serendipity element."""

    elem: type = ElementQuadS2


SKFEM = {
    "quad8": (MeshQuadS2, MeshQuad1, ElementQuadS2),
    "quad9": (MeshQuad2, MeshQuad1, ElementQuad2),
    "triangle6": (MeshTri2, MeshTri1, ElementTriP2),
}


def skfem_det_j(cell_type: str, nodes: np.ndarray, ref_points: np.ndarray) -> np.ndarray:
    """det J by scikit-fem's MappingIsoparametric at our reference points (m, 2).

    scikit-fem's quad is [0, 1]^2 (X = (xi + 1) / 2, so its det J is 4 times ours on
    [-1, 1]^2); its triangle is the same as ours. Its local basis order equals meshio's.
    """
    mesh_cls, linear_cls, elem = SKFEM[cell_type]
    k = 3 if cell_type == "triangle6" else 4
    base = mesh_cls.from_mesh(linear_cls(nodes[:k].T.copy(), np.arange(k)[:, None]))
    doflocs = base.doflocs.copy()
    doflocs[:, base.dofs.element_dofs[:, 0]] = nodes.T
    mapping = MappingIsoparametric(mesh_cls(doflocs, base.t), elem())
    if cell_type == "triangle6":
        X, scale = ref_points.T, 1.0
    else:
        X, scale = (ref_points.T + 1.0) / 2.0, 0.25
    # det of mapping.J (its detDF refuses an exact zero, which the quarter point gives).
    jac = [[mapping.J(i, j, X)[0] for j in range(2)] for i in range(2)]
    return scale * (jac[0][0] * jac[1][1] - jac[0][1] * jac[1][0])


def distorted(cell_type: str, seed: int) -> np.ndarray:
    """A straight-sided element with every node nudged by up to 8% of its size."""
    corners = {
        "triangle6": np.array([[0.0, 0.0], [2.0, 0.3], [0.4, 1.7]]),
    }.get(cell_type, np.array([[0.0, 0.0], [2.0, 0.2], [2.3, 1.5], [-0.1, 1.2]]))
    nodes = straight_sided(cell_type, corners)
    return nodes + np.random.default_rng(seed).uniform(-0.16, 0.16, nodes.shape)


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_det_j_at_gauss_points_and_nodes_match_scikit_fem(cell_type, seed):
    nodes = distorted(cell_type, seed)
    element = quadratic.ELEMENTS[cell_type]
    gauss_points = (
        triangle_ref.TRIANGLE_GAUSS_3 if cell_type == "triangle6" else quad_ref.QUAD_GAUSS_3X3
    )
    ours = quadratic.jacobian_determinants(element.gauss_derivatives, nodes[None])[0]
    np.testing.assert_allclose(ours, skfem_det_j(cell_type, nodes, gauss_points), rtol=1e-12)
    at_nodes = quadratic.jacobian_determinants(element.node_derivatives, nodes[None])[0]
    expected = skfem_det_j(cell_type, nodes, NODES[cell_type])
    np.testing.assert_allclose(at_nodes, expected, rtol=1e-12, atol=1e-12)
    # The audit reports their extremes.
    mesh = meshio.Mesh(nodes, [(cell_type, [list(range(len(nodes)))])])
    report = audit(mesh)
    skf = skfem_det_j(cell_type, nodes, gauss_points)
    assert report.metrics["det_j_min"][0] == pytest.approx(skf.min(), rel=1e-12)
    assert report.metrics["det_j_max"][0] == pytest.approx(skf.max(), rel=1e-12)
    assert report.metrics["det_j_corner_min"][0] == pytest.approx(expected.min(), rel=1e-12)


# -- area of curved elements: Archimedes' parabolic segment ---------------------------------
@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_area_of_a_bulging_edge_is_the_parabolic_segment(cell_type):
    # Archimedes: the segment between a parabola and its chord has 2/3 of base x height.
    # A quadratic edge through its midside node h off a chord of length L is such a
    # parabola, so bulging one edge outward adds 2/3 * L * h to the straight element's area.
    corners = np.array([[0.0, 0.0], [3.0, 0.0], [3.0, 2.0], [0.0, 2.0]])
    straight_area = 6.0
    if cell_type == "triangle6":
        corners = corners[[0, 1, 3]]
        straight_area = 3.0
    nodes = straight_sided(cell_type, corners)
    h = 0.4
    first_midside = 4 if cell_type != "triangle6" else 3  # edge 1-2, chord along y = 0
    nodes[first_midside, 1] -= h  # bulge outward (below the chord); the area of the
    # region depends only on its boundary curves, so the quad9 centre node may stay put
    report = audit(meshio.Mesh(nodes, [(cell_type, [list(range(len(nodes)))])]))
    expected = straight_area + 2.0 / 3.0 * 3.0 * h
    assert report.metrics["area"][0] == pytest.approx(expected, rel=1e-12)


# -- quarter-point rule --------------------------------------------------------------------
def quarter_point_element(cell_type: str, fraction: float) -> np.ndarray:
    """A straight-sided element whose edge 1-2 midside node sits ``fraction`` of the
    edge length from corner 1 (0.5: midpoint; 0.25: quarter point)."""
    corners = np.array([[0.0, 0.0], [2.0, 0.0], [2.0, 1.5], [0.0, 1.5]])
    if cell_type == "triangle6":
        corners = corners[[0, 1, 3]]
    nodes = straight_sided(cell_type, corners)
    first_midside = 3 if cell_type == "triangle6" else 4
    nodes[first_midside] = [2.0 * fraction, 0.0]
    return nodes


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_quarter_point_makes_det_j_vanish_at_the_corner(cell_type):
    # Henshell & Shaw (1975), Barsoum (1976): a midside node at the quarter point makes
    # det J zero at the corner; scikit-fem's isoparametric map confirms it independently.
    nodes = quarter_point_element(cell_type, 0.25)
    corner = NODES[cell_type][:1]
    assert skfem_det_j(cell_type, nodes, corner)[0] == pytest.approx(0.0, abs=1e-12)
    report = audit(meshio.Mesh(nodes, [(cell_type, [list(range(len(nodes)))])]))
    assert report.metrics["det_j_corner_min"][0] == pytest.approx(0.0, abs=1e-12)
    assert report.metrics["midside_offset_along"][0] == pytest.approx(0.25)
    assert report.flags_of(0)[0] == "quarter_point"
    assert "inverted" not in report.flags_of(0)
    assert report.verdict_names[0] == "warn"  # reported, neither passed nor failed


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_past_the_quarter_point_det_j_is_negative_and_the_element_fails(cell_type):
    # Same source: nearer the corner than a quarter of the edge, det J < 0 at the corner.
    nodes = quarter_point_element(cell_type, 0.2)
    corner = NODES[cell_type][:1]
    assert skfem_det_j(cell_type, nodes, corner)[0] < 0.0
    report = audit(meshio.Mesh(nodes, [(cell_type, [list(range(len(nodes)))])]))
    assert report.metrics["det_j_corner_min"][0] < 0.0
    assert "inverted" in report.flags_of(0) and "quarter_point" not in report.flags_of(0)
    assert report.verdict_names[0] == "fail"


@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_short_of_the_quarter_point_det_j_stays_positive(cell_type):
    # Same source, other side: at 0.3 of the edge the corner det J is still positive.
    nodes = quarter_point_element(cell_type, 0.3)
    assert skfem_det_j(cell_type, nodes, NODES[cell_type][:1])[0] > 0.0
    report = audit(meshio.Mesh(nodes, [(cell_type, [list(range(len(nodes)))])]))
    assert report.metrics["det_j_corner_min"][0] > 0.0
    assert not {"inverted", "quarter_point"} & set(report.flags_of(0))
    assert report.metrics["midside_offset_along"][0] == pytest.approx(0.2)


def test_a_quarter_point_node_off_the_chord_is_not_the_singular_element():
    # Same source: the singular element has its node on the straight edge, a quarter of
    # it from the corner. Pushed off the chord by 10% of the edge it is a distorted edge,
    # not that construction: no quarter_point flag, and its along-edge offset of 0.25
    # breaches the fail limit like any other badly placed node.
    nodes = quarter_point_element("quad8", 0.25)
    nodes[4, 1] += 0.2
    report = audit(meshio.Mesh(nodes, [("quad8", [list(range(8))])]))
    assert report.metrics["midside_offset_across"][0] == pytest.approx(0.1)
    assert report.metrics["midside_offset_along"][0] == pytest.approx(0.25)
    assert "quarter_point" not in report.flags_of(0)
    assert report.verdict_names[0] == "fail"


# -- straight-sided quadratic == linear ------------------------------------------------------
@pytest.mark.parametrize("cell_type", ["quad8", "quad9", "triangle6"])
def test_straight_sided_quadratic_reports_the_linear_shape_metrics(cell_type):
    # Common practice: with midside nodes at the chord midpoints the quadratic map equals
    # the linear one, so every corner-based shape parameter must read the same.
    rng = np.random.default_rng(7)
    k = 3 if cell_type == "triangle6" else 4
    base = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])[:k]
    linear, quad = [], []
    for _ in range(20):
        corners = base * rng.uniform(0.5, 3.0, 2) + rng.uniform(-0.2, 0.2, (k, 2))
        linear.append(corners)
        quad.append(straight_sided(cell_type, corners))
    points = np.vstack([np.vstack(linear), np.vstack(quad)])
    n_lin = 20 * k
    lin_cells = np.arange(n_lin).reshape(20, k)
    nq = len(NODES[cell_type])
    quad_cells = n_lin + np.arange(20 * nq).reshape(20, nq)
    mesh = meshio.Mesh(points, [(LINEAR[cell_type], lin_cells), (cell_type, quad_cells)])
    report = audit(mesh)
    for name in (*SHAPE_METRICS, "area"):
        np.testing.assert_allclose(
            report.metrics[name][20:], report.metrics[name][:20], rtol=1e-12, err_msg=name
        )
    assert np.all(report.metrics["midside_offset_along"][20:] < 1e-12)
    # The score counts the Jacobian ratio, which the quadratic element samples at other
    # Gauss points; under limits on the shape parameters only, the twins score the same.
    shape_only = with_limit(BUILTIN["standard"], "quad", "jacobian_ratio", None)
    shape_only = with_limit(shape_only, "triangle", "jacobian_ratio", None)
    score = audit(mesh, profile=shape_only).score
    np.testing.assert_allclose(score[20:], score[:20], rtol=1e-12)
    assert np.all(np.isnan(report.metrics["midside_offset_along"][:20]))


# -- midside offsets --------------------------------------------------------------------------
def test_midside_offsets_are_fractions_of_the_edge_length():
    # Analytic: chord from (0, 0) to (4, 0); a node at (2 + 0.6, 0.8) is 0.6 / 4 along and
    # 0.8 / 4 across; lifted out of the plane by 0.3 as well it is 0.5 / 4 across.
    nodes = straight_sided("quad8", np.array([[0.0, 0.0], [4.0, 0.0], [4.0, 4.0], [0.0, 4.0]]))
    nodes = np.column_stack([nodes, np.zeros(8)])
    nodes[4] += [0.6, -0.4, 0.3]
    along, across = quadratic.midside_offsets(nodes[None], quad_ref.QUAD_MIDSIDE_EDGES)
    assert along[0, 0] == pytest.approx(0.15)
    assert across[0, 0] == pytest.approx(0.5 / 4.0)
    np.testing.assert_allclose(along[0, 1:], 0.0, atol=1e-15)


def test_quadratic_and_linear_elements_share_edges_by_their_corners():
    # A quad8 and a triangle6 sharing the edge between nodes 1 and 2 (corner pairs name
    # an edge; midside nodes lie on it): one interior edge, used twice, no clash.
    pts = np.array(
        [
            [0, 0],
            [1, 0],
            [1, 1],
            [0, 1],
            [0.5, 0],
            [1, 0.5],
            [0.5, 1],
            [0, 0.5],
            [2, 0.5],
            [1.5, 0.25],
            [1.5, 0.75],
        ],
        dtype=float,
    )
    mesh = meshio.Mesh(
        pts, [("quad8", [[0, 1, 2, 3, 4, 5, 6, 7]]), ("triangle6", [[1, 8, 2, 9, 10, 5]])]
    )
    table = edge_table(load(mesh))
    assert table.n_edges == 6
    first, second, same = interior_pairs(table)
    assert [*first, *second] == [0, 1] and not same.any()


# -- invariance -------------------------------------------------------------------------------
def _roll_quadratic(cells: np.ndarray, k: int, shift: np.ndarray) -> np.ndarray:
    """Cyclic renumbering: corners and midside nodes roll together (quad9 centre stays)."""
    order = (np.arange(k)[None, :] + shift[:, None]) % k
    corners = np.take_along_axis(cells[:, :k], order, 1)
    midsides = np.take_along_axis(cells[:, k : 2 * k], order, 1)
    return np.hstack([corners, midsides, cells[:, 2 * k :]])


@settings(max_examples=15, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    angle=st.floats(0.0, 2 * np.pi),
    log_scale=st.floats(-3.0, 3.0),
)
def test_quadratic_metrics_do_not_depend_on_place_size_or_numbering(seed, angle, log_scale):
    # Common practice: shape measures are unchanged by rigid motion, scaling and cyclic
    # renumbering; area and det J scale with the square of the length.
    rng = np.random.default_rng(seed)
    blocks, points, start = [], [], 0
    for cell_type in ("quad8", "quad9", "triangle6"):
        nodes = np.stack([distorted(cell_type, int(s)) for s in rng.integers(0, 10**6, 40)])
        nodes = nodes + rng.uniform(-20, 20, (40, 1, 2))
        k = nodes.shape[1]
        points.append(nodes.reshape(-1, 2))
        blocks.append((cell_type, start + np.arange(40 * k).reshape(40, k)))
        start += 40 * k
    points = np.column_stack([np.vstack(points), np.zeros(start)])
    ref_metrics = audit(meshio.Mesh(points, blocks)).metrics

    c, s = np.cos(angle), np.sin(angle)
    turn = np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])
    scale = 10.0**log_scale
    rolled = []
    for cell_type, cells in blocks:
        k = 3 if cell_type == "triangle6" else 4
        rolled.append((cell_type, _roll_quadratic(cells, k, rng.integers(0, k, len(cells)))))
    got = audit(meshio.Mesh(points @ turn.T * scale, rolled)).metrics
    squared = ("area", "det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound")
    for name, values in got.items():
        factor = scale**2 if name in squared else 1.0
        atol = 1e-7 if name in ("skew", "warp", "min_angle", "max_angle") else 0.0
        atol = max(atol, 1e-10 * factor)
        np.testing.assert_allclose(
            values, ref_metrics[name] * factor, rtol=1e-8, atol=atol, err_msg=name
        )


# -- the collapsed quarter-point quad ---------------------------------------------------------
def collapsed_quad8(fraction: float) -> np.ndarray:
    """quad8 with side 1-2 (and its midside node) collapsed onto the tip at the origin, the
    midside nodes of the sides meeting the tip ``fraction`` of the way from it."""
    tip, b, c = np.array([0.0, 0.0]), np.array([2.0, 0.0]), np.array([2.0, 1.5])
    return np.array(
        [tip, tip, b, c, tip, tip + fraction * (b - tip), (b + c) / 2, tip + fraction * (c - tip)]
    )


def test_collapsed_quarter_point_quad_is_the_crack_tip_element():
    # Barsoum (1976): an 8-node quad with one side collapsed to the crack tip and the
    # adjacent midside nodes at the quarter points; det J vanishes at the tip (checked with
    # scikit-fem) and is positive inside. Reported as quarter_point, not degenerate, with
    # the shape metrics of the triangle it has become (its triangle6 twin).
    nodes = collapsed_quad8(0.25)
    tip_nodes = NODES["quad8"][[0, 1, 4]]
    np.testing.assert_allclose(skfem_det_j("quad8", nodes, tip_nodes), 0.0, atol=1e-12)
    assert (skfem_det_j("quad8", nodes, quad_ref.QUAD_GAUSS_3X3) > 0.0).all()
    twin = nodes[[0, 2, 3, 5, 6, 7]]
    mesh = meshio.Mesh(
        np.vstack([nodes, twin]), [("quad8", [list(range(8))]), ("triangle6", [list(range(8, 14))])]
    )
    report = audit(mesh)
    flags = report.flags_of(0)
    assert "quarter_point" in flags and "degenerate" not in flags and "inverted" not in flags
    assert report.verdict_names[0] == "warn"
    for name in ("scaled_jacobian", "aspect_ratio", "min_angle", "max_angle", "condition"):
        assert report.metrics[name][0] == pytest.approx(report.metrics[name][1]), name
    assert report.metrics["area"][0] == pytest.approx(1.5)  # right triangle, legs 2 and 1.5


def test_collapsed_quad_without_quarter_points_stays_degenerate():
    # Not the crack-tip construction: a collapsed side with midpoint nodes is a degenerate
    # element, and fails as one.
    nodes = collapsed_quad8(0.5)
    report = audit(meshio.Mesh(nodes, [("quad8", [list(range(8))])]))
    assert "degenerate" in report.flags_of(0) and "quarter_point" not in report.flags_of(0)
    assert report.verdict_names[0] == "fail"


def test_collapsed_side_on_one_node_is_no_edge():
    # The tip written as one node index three times: the collapsed side is not an edge.
    nodes = collapsed_quad8(0.25)
    table = edge_table(load(meshio.Mesh(nodes, [("quad8", [[0, 0, 2, 3, 0, 5, 6, 7]])])))
    assert table.n_edges == 3 and (table.uses == 1).all()
