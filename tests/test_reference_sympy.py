"""The bilinear map's Jacobian checked against sympy's symbolic derivative (outside reference).

sympy differentiates x(xi, eta) = sum_i N_i(xi, eta) x_i with the standard shape functions
N_i = (1 + xi xi_i)(1 + eta eta_i) / 4 written out here, independently of meshaudit's
Robinson-form coefficients, and the resulting det J is evaluated numerically.
"""

from __future__ import annotations

import meshio
import numpy as np
import sympy as sp

import meshaudit
from meshaudit.cells import CELL_TYPES
from meshaudit.metrics import quad

XI, ETA = sp.symbols("xi eta", real=True)
XS = sp.symbols("x1:5", real=True)
YS = sp.symbols("y1:5", real=True)
#: Reference-square corners, node 1 at (-1, -1), counter-clockwise (common practice).
CORNERS = ((-1, -1), (1, -1), (1, 1), (-1, 1))
SHAPE = [(1 + XI * a) * (1 + ETA * b) / 4 for a, b in CORNERS]


def _symbolic_det_j() -> sp.Expr:
    """det of d(x, y)/d(xi, eta) for the bilinear map, by sympy."""
    x = sum(n * xk for n, xk in zip(SHAPE, XS))
    y = sum(n * yk for n, yk in zip(SHAPE, YS))
    jac = sp.Matrix([[sp.diff(x, XI), sp.diff(x, ETA)], [sp.diff(y, XI), sp.diff(y, ETA)]])
    return sp.expand(jac.det())


DET_J = _symbolic_det_j()
DET_J_NUM = sp.lambdify((XI, ETA, *XS, *YS), DET_J, "numpy")


def _random_quads(rng: np.random.Generator, n: int) -> np.ndarray:
    """Random quads near a unit square (convex and re-entrant, some inverted)."""
    square = np.array(CORNERS, dtype=float)
    return square * rng.uniform(0.3, 3.0, size=(n, 1, 2)) + rng.normal(0.0, 0.4, size=(n, 4, 2))


def _sympy_det_j(p: np.ndarray, points: np.ndarray) -> np.ndarray:
    """sympy's det J of quads ``p`` (n, 4, 2) at reference ``points`` (m, 2): (n, m)."""
    args = [p[:, None, k, 0] for k in range(4)] + [p[:, None, k, 1] for k in range(4)]
    return np.broadcast_to(DET_J_NUM(points[:, 0], points[:, 1], *args), (len(p), len(points)))


def test_sympy_det_j_is_linear_in_xi_and_eta():
    """Source: sympy; the xi*eta terms of det J cancel, so its extremes over the element
    lie at the corners (what det_j_corner_min relies on)."""
    poly = sp.Poly(DET_J, XI, ETA)
    assert poly.total_degree() == 1


def test_gauss_and_corner_det_j_match_sympy():
    """Source: sympy's symbolic det J, at the 2x2 Gauss points (+-1/sqrt 3) and corners."""
    rng = np.random.default_rng(30)
    p = _random_quads(rng, 500)
    g = 1.0 / np.sqrt(3.0)
    gauss_points = np.array([[-g, -g], [g, -g], [g, g], [-g, g]])
    corners = np.array(CORNERS, dtype=float)
    sym_gauss = _sympy_det_j(p, gauss_points)
    sym_corner = _sympy_det_j(p, corners)
    scale = np.abs(sym_gauss).max()
    np.testing.assert_allclose(
        np.sort(quad.gauss_jacobians(p), axis=1), np.sort(sym_gauss, axis=1), atol=1e-13 * scale
    )
    np.testing.assert_allclose(quad.corner_jacobians(p), sym_corner, atol=1e-13 * scale)

    report = meshaudit.audit(
        meshio.Mesh(p.reshape(-1, 2), [("quad", np.arange(2000).reshape(500, 4))])
    )
    np.testing.assert_allclose(report.metrics["det_j_min"], sym_gauss.min(1), atol=1e-13 * scale)
    np.testing.assert_allclose(report.metrics["det_j_max"], sym_gauss.max(1), atol=1e-13 * scale)
    np.testing.assert_allclose(
        report.metrics["det_j_corner_min"], sym_corner.min(1), atol=1e-13 * scale
    )


def test_corner_minimum_is_the_minimum_over_the_element():
    """Source: sympy's det J sampled on a 21x21 grid over the reference square never goes
    below det_j_corner_min (and reaches it at a grid corner)."""
    rng = np.random.default_rng(31)
    p = _random_quads(rng, 200)
    t = np.linspace(-1.0, 1.0, 21)
    grid = np.stack(np.meshgrid(t, t), axis=-1).reshape(-1, 2)
    sampled = _sympy_det_j(p, grid)
    np.testing.assert_allclose(
        quad.corner_jacobians(p).min(axis=1), sampled.min(axis=1), rtol=1e-12, atol=1e-13
    )


def test_rectangle_det_j_is_b_times_h_everywhere():
    """Common practice: a 2b x 2h rectangle has det J = b*h at every point (sympy)."""
    b, h = sp.symbols("b h", positive=True)
    rect = {XS[0]: -b, XS[1]: b, XS[2]: b, XS[3]: -b, YS[0]: -h, YS[1]: -h, YS[2]: h, YS[3]: h}
    assert sp.simplify(DET_J.subs(rect) - b * h) == 0
    rng = np.random.default_rng(32)
    bh = rng.uniform(0.1, 10.0, size=(50, 2))
    p = np.array(CORNERS, dtype=float)[None] * bh[:, None, :] + rng.uniform(-9, 9, (50, 1, 2))
    expected = (bh[:, 0] * bh[:, 1])[:, None]
    np.testing.assert_allclose(quad.gauss_jacobians(p), np.broadcast_to(expected, (50, 4)))
    np.testing.assert_allclose(quad.corner_jacobians(p), np.broadcast_to(expected, (50, 4)))


def test_shape_functions_match_the_rectangle_closed_form():
    """Common practice: for a 2b x 2h rectangle centred at the origin with node 1 at
    (-b, -h), N1 = (b - x)(h - y) / (4bh), N2 = (b + x)(h - y) / (4bh),
    N3 = (b + x)(h + y) / (4bh), N4 = (b - x)(h + y) / (4bh). With x = b xi, y = h eta
    sympy turns these into functions of (xi, eta) that meshaudit's must equal, and
    likewise their derivatives."""
    b, h, x, y = sp.symbols("b h x y", positive=True)
    closed_form = [
        (b - x) * (h - y) / (4 * b * h),
        (b + x) * (h - y) / (4 * b * h),
        (b + x) * (h + y) / (4 * b * h),
        (b - x) * (h + y) / (4 * b * h),
    ]
    on_reference = [sp.simplify(n.subs({x: b * XI, y: h * ETA})) for n in closed_form]
    assert all(not ({b, h} & n.free_symbols) for n in on_reference)  # b and h cancel
    values = sp.lambdify((XI, ETA), on_reference, "numpy")
    d_xi = sp.lambdify((XI, ETA), [sp.diff(n, XI) for n in on_reference], "numpy")
    d_eta = sp.lambdify((XI, ETA), [sp.diff(n, ETA) for n in on_reference], "numpy")

    rng = np.random.default_rng(33)
    xi, eta = rng.uniform(-1.0, 1.0, size=(2, 300))
    ones = np.ones_like(xi)
    expected = np.stack([np.asarray(v) * ones for v in values(xi, eta)], axis=-1)
    points = np.column_stack([xi, eta])
    np.testing.assert_allclose(CELL_TYPES["quad"].shape_functions(points), expected, atol=1e-15)
    derivs = CELL_TYPES["quad"].shape_derivatives(points)  # (300, 2, 4)
    exp_xi = np.stack([np.asarray(v) * ones for v in d_xi(xi, eta)], axis=-1)
    exp_eta = np.stack([np.asarray(v) * ones for v in d_eta(xi, eta)], axis=-1)
    np.testing.assert_allclose(derivs[:, 0], exp_xi, atol=1e-15)
    np.testing.assert_allclose(derivs[:, 1], exp_eta, atol=1e-15)
