"""The stiffness metrics checked against outside references.

* scikit-fem (general-purpose finite-element library): its assembly of the linear
  elasticity form and of the mass form on a one-element mesh gives K and the consistent
  mass M; the stable time step 2/omega_max follows from scipy.linalg.eigh(K, M_lumped),
  M_lumped the row sums of M (linear cells) or its diagonal scaled to the element's mass
  (quadratic cells). Eigenvalues do not depend on how either side numbers its degrees of
  freedom.
* sympy: the bilinear rectangle's strain energy under pure bending, integrated
  symbolically from its shape functions, as a function of the aspect ratio and nu; the
  six-node right prism's stiffness, integrated exactly from its shape functions.
* Facts of the trade (common practice): the bar's step L / c with c = sqrt(E / rho), and
  the scaling laws dt ~ size, dt ~ sqrt(rho / E).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg
import skfem
import sympy as sp
from skfem import BilinearForm
from skfem.helpers import dot
from skfem.models.elasticity import linear_elasticity

from meshaudit.cells.registry import CELL_TYPES
from meshaudit.metrics import stiffness

LAM, MU, RHO = 0.7, 0.4, 2.5  # any law: 3-D Lame constants (2-D: plane strain)


@BilinearForm
def _mass(u, v, w):
    return dot(u, v)


def _skfem_step(mesh, element, intorder: int, diagonal: bool) -> float:
    """2/omega_max from scikit-fem's K (the rule ``intorder``) and consistent mass (a
    rule exact for it: order 8), lumped."""
    basis = skfem.Basis(mesh, skfem.ElementVector(element), intorder=intorder)
    k = skfem.asm(linear_elasticity(LAM, MU), basis).toarray()
    fine = skfem.Basis(mesh, skfem.ElementVector(element), intorder=8)
    m = skfem.asm(_mass, fine).toarray() * RHO
    if diagonal:  # diagonal scaled to the total mass, per displacement component
        lumped = np.diag(m) * (m.sum() / np.diag(m).sum())
    else:
        lumped = m.sum(axis=1)
    omega2 = scipy.linalg.eigh(k, np.diag(lumped), eigvals_only=True).max()
    return 2.0 / np.sqrt(omega2)


def _ours(cell_type: str, nodes: np.ndarray) -> dict[str, np.ndarray]:
    """Our metrics of one element (nodes (k, d), already in its plane for 2-D)."""
    cell = CELL_TYPES[cell_type]
    out, _ = stiffness.measure_nodes(
        cell, nodes[None], np.array([False]), np.array([LAM]), np.array([MU]), np.array([RHO])
    )
    return out


def _with_midside(linear: str, quadratic: str, corners: np.ndarray) -> np.ndarray:
    """The quadratic cell's nodes on the straight-sided element with these corners."""
    ref = CELL_TYPES[quadratic].reference_nodes
    return CELL_TYPES[linear].shape_functions(ref) @ corners


QUAD = np.array([[0.0, 0.0], [2.2, 0.3], [2.5, 1.7], [-0.2, 1.2]])  # a distorted quad
TRIANGLE = np.array([[0.0, 0.0], [3.0, 0.4], [0.8, 1.1]])
TETRA = np.array([[0.0, 0.0, 0.0], [1.2, 0.1, 0.0], [0.3, 0.9, 0.1], [0.2, 0.3, 1.4]])
CUBE = np.array(
    [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]],
    dtype=float,
)


def _distorted(p: np.ndarray) -> np.ndarray:
    """A smooth distortion of the unit cube's corners (points (..., 3))."""
    x, y, z = p[..., 0], p[..., 1], p[..., 2]
    return np.stack([1.3 * x + 0.2 * y * z, y + 0.15 * x * x, 0.8 * z + 0.1 * x * y], axis=-1)


@pytest.mark.parametrize(
    ("linear", "quadratic", "element", "intorder"),
    [
        ("quad", None, skfem.ElementQuad1(), 3),
        ("quad", "quad8", skfem.ElementQuadS2(), 5),
        ("quad", "quad9", skfem.ElementQuad2(), 5),
    ],
)
def test_quad_time_step_matches_skfem(linear, quadratic, element, intorder):
    # scikit-fem: intorder 3 is the 2x2 Gauss rule, 5 the 3x3 (the rules we integrate with)
    mesh = skfem.MeshQuad(QUAD.T, np.array([[0, 1, 2, 3]]).T)
    expected = _skfem_step(mesh, element, intorder, quadratic is not None)
    nodes = QUAD if quadratic is None else _with_midside(linear, quadratic, QUAD)
    got = _ours(quadratic or linear, nodes)["stable_time_step"][0]
    assert got == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(
    ("quadratic", "element"), [(None, skfem.ElementTriP1()), ("triangle6", skfem.ElementTriP2())]
)
def test_triangle_time_step_matches_skfem(quadratic, element):
    mesh = skfem.MeshTri(TRIANGLE.T, np.array([[0, 1, 2]]).T)
    expected = _skfem_step(mesh, element, 4, quadratic is not None)
    nodes = TRIANGLE if quadratic is None else _with_midside("triangle", quadratic, TRIANGLE)
    got = _ours(quadratic or "triangle", nodes)["stable_time_step"][0]
    assert got == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(
    ("quadratic", "element"), [(None, skfem.ElementTetP1()), ("tetra10", skfem.ElementTetP2())]
)
def test_tetra_time_step_matches_skfem(quadratic, element):
    mesh = skfem.MeshTet(TETRA.T, np.array([[0, 1, 2, 3]]).T)
    expected = _skfem_step(mesh, element, 4, quadratic is not None)
    nodes = TETRA if quadratic is None else _with_midside("tetra", quadratic, TETRA)
    got = _ours(quadratic or "tetra", nodes)["stable_time_step"][0]
    assert got == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(
    ("quadratic", "element", "intorder"),
    [
        (None, skfem.ElementHex1(), 3),
        ("hexahedron20", skfem.ElementHexS2(), 5),
        ("hexahedron27", skfem.ElementHex2(), 5),
    ],
)
def test_hexahedron_time_step_matches_skfem(quadratic, element, intorder):
    sk = skfem.MeshHex()  # the unit cube, in scikit-fem's own node order
    mesh = skfem.MeshHex(_distorted(sk.p.T).T, sk.t)
    expected = _skfem_step(mesh, element, intorder, quadratic is not None)
    corners = _distorted(CUBE)  # the same corners in meshio's order
    nodes = corners if quadratic is None else _with_midside("hexahedron", quadratic, corners)
    got = _ours(quadratic or "hexahedron", nodes)["stable_time_step"][0]
    assert got == pytest.approx(expected, rel=1e-9)


def _sympy_rectangle_bending_error(aspect: float, nu: float) -> float:
    """The bilinear rectangle [-a, a] x [-1, 1] (a = aspect) in plane stress under the
    exact pure-bending field about its long axis, nodal values imposed, integrated by
    sympy from the shape functions: the energy of the strain error eps_h - eps over the
    exact energy, which equals (U_element - U_exact) / U_exact here (the cross term
    int sigma : (eps_h - eps) vanishes: sigma_x alone, and eps_x is exact)."""
    x, y, a, v = sp.symbols("x y a nu", real=True)
    corners = [(-a, -1), (a, -1), (a, 1), (-a, 1)]
    shape = [(1 + sx * x / a) * (1 + sy * y) / 4 for sx, sy in ((-1, -1), (1, -1), (1, 1), (-1, 1))]
    exact_u = -x * y
    exact_v = (x**2 + v * y**2) / 2
    u = sum(n * exact_u.subs({x: cx, y: cy}) for n, (cx, cy) in zip(shape, corners))
    w = sum(n * exact_v.subs({x: cx, y: cy}) for n, (cx, cy) in zip(shape, corners))
    e = 1  # E: the ratio does not depend on it

    def density(u, w):
        exx, eyy, gxy = sp.diff(u, x), sp.diff(w, y), sp.diff(u, y) + sp.diff(w, x)
        return e / (1 - v**2) * (exx**2 + eyy**2 + 2 * v * exx * eyy) + e / (2 * (1 + v)) * gxy**2

    def over(f):
        return sp.integrate(sp.integrate(f, (x, -a, a)), (y, -1, 1))

    element = over(density(u, w) / 2)
    exact = over(density(exact_u, exact_v) / 2)
    assert sp.simplify(exact - over(e * y**2 / 2)) == 0  # sigma_x = -E y alone
    error = over(density(u - exact_u, w - exact_v) / 2)  # the strains are linear in u
    ratio = sp.simplify(error / exact)
    # the error energy is the old energy difference here, and the closed form it reduces
    # to: nu^2 / (1 - nu^2) + a^2 / (2 (1 + nu))
    assert sp.simplify(ratio - (element / exact - 1)) == 0
    assert sp.simplify(ratio - (v**2 / (1 - v**2) + a**2 / (2 * (1 + v)))) == 0
    return float(ratio.subs({a: aspect, v: nu}))


@pytest.mark.parametrize(("aspect", "nu"), [(1.0, 0.3), (2.0, 0.3), (4.0, 0.0), (0.5, 0.45)])
def test_rectangle_bending_error_is_the_sympy_closed_form(aspect, nu):
    e = 1.0
    lam, mu = e * nu / (1 - nu**2), e / (2 * (1 + nu))  # plane stress
    nodes = np.array([[-aspect, -1.0], [aspect, -1.0], [aspect, 1.0], [-aspect, 1.0]])
    out, _ = stiffness.measure_nodes(
        CELL_TYPES["quad"], nodes[None], np.array([False]), np.array([lam]), np.array([mu]),
        np.array([1.0]),
    )  # fmt: skip
    # the worst axis is the long one: bending along it puts the most parasitic shear in
    long = max(aspect, 1.0 / aspect)
    expected = _sympy_rectangle_bending_error(long, nu)
    assert out["bending_error"][0] == pytest.approx(expected, rel=1e-12)
    assert out["bending_error_distortion"][0] == pytest.approx(0.0, abs=1e-12)


def _plane_stress(e: float, nu: float) -> tuple[np.ndarray, np.ndarray]:
    return np.array([e * nu / (1 - nu**2)]), np.array([e / (2 * (1 + nu))])


def test_thin_bar_step_is_the_wave_estimate():
    # common practice: an explicit step of L / c, c = sqrt(E / rho), for a bar element
    # of length L. A long thin quad (nu = 0) stretched along its length is such a bar:
    # its highest mode is through the thickness h, so dt is near h / c, below it by the
    # two-dimensional coupling (the square reads 1/sqrt(2) of it: factor stated here)
    e, rho, length, h = 210e3, 7.85e-9, 50.0, 2.0
    lam, mu = _plane_stress(e, 0.0)
    nodes = np.array([[0.0, 0.0], [length, 0.0], [length, h], [0.0, h]])
    out, _ = stiffness.measure_nodes(
        CELL_TYPES["quad"], nodes[None], np.array([False]), lam, mu, np.array([rho])
    )
    estimate = h / np.sqrt(e / rho)
    ratio = out["stable_time_step"][0] / estimate
    assert 0.9 <= ratio <= 1.0
    # and the square, same material: between 1/sqrt(2) and 1 of side / c
    square = np.array([[0.0, 0.0], [h, 0.0], [h, h], [0.0, h]])
    out, _ = stiffness.measure_nodes(
        CELL_TYPES["quad"], square[None], np.array([False]), lam, mu, np.array([rho])
    )
    # (the square with nu = 0 reaches side / c exactly: 1 to rounding)
    assert 1 / np.sqrt(2) - 1e-12 <= out["stable_time_step"][0] / estimate <= 1.0 + 1e-12


@pytest.mark.parametrize(
    "cell_type", ["quad", "triangle6", "tetra", "hexahedron20", "wedge", "pyramid"]
)
def test_step_scales_with_size_and_wave_speed(cell_type):
    # common practice: dt ~ L / c, so dt doubles with the element and goes as sqrt(rho / E)
    cell = CELL_TYPES[cell_type]
    rng = np.random.default_rng(4)
    nodes = cell.reference_nodes + rng.uniform(-0.05, 0.05, cell.reference_nodes.shape)
    lam, mu = np.array([LAM]), np.array([MU])

    def step(x, scale_e=1.0, rho=RHO):
        out, _ = stiffness.measure_nodes(
            cell, x[None], np.array([False]), lam * scale_e, mu * scale_e, np.array([rho])
        )
        return out["stable_time_step"][0]

    base = step(nodes)
    assert base > 0
    assert step(3.0 * nodes + 7.0) == pytest.approx(3.0 * base, rel=1e-9)
    assert step(nodes, scale_e=4.0) == pytest.approx(base / 2.0, rel=1e-9)
    assert step(nodes, rho=9.0 * RHO) == pytest.approx(3.0 * base, rel=1e-9)


def _sympy_prism_step(height: float) -> float:
    """2/omega_max of the right prism over the triangle (0, 0), (1, 0), (0, 1), z from 0 to
    ``height``, six nodes, from sympy: the shape functions L_i (1 -+ zeta)/2, B
    differentiated symbolically, K = int B^T D B integrated exactly monomial by monomial
    (int xi^a eta^b over the triangle = a! b! / (a + b + 2)!), row-sum masses."""
    xi, eta, zeta = sp.symbols("xi eta zeta")
    tri = [1 - xi - eta, xi, eta]
    shape = [t * (1 - zeta) / 2 for t in tri] + [t * (1 + zeta) / 2 for t in tri]
    dz = sp.Rational(2) / sp.nsimplify(height)  # d zeta / dz
    grads = [(sp.diff(n, xi), sp.diff(n, eta), sp.diff(n, zeta) * dz) for n in shape]
    rows = [[0] * 18 for _ in range(6)]
    for i, (gx, gy, gz) in enumerate(grads):
        u, v, w = 3 * i, 3 * i + 1, 3 * i + 2
        rows[0][u], rows[1][v], rows[2][w] = gx, gy, gz
        rows[3][v], rows[3][w] = gz, gy
        rows[4][u], rows[4][w] = gz, gx
        rows[5][u], rows[5][v] = gy, gx
    b = sp.Matrix(rows)
    lam, mu = sp.nsimplify(LAM), sp.nsimplify(MU)
    d = sp.zeros(6, 6)
    d[:3, :3] = sp.ones(3, 3) * lam
    for k in range(6):
        d[k, k] += 2 * mu if k < 3 else mu

    def integral(expr):
        poly = sp.Poly(sp.expand(expr), xi, eta, zeta)
        total = 0
        for (a, c, e), coeff in poly.terms():
            if e % 2:
                continue
            tri_part = sp.factorial(a) * sp.factorial(c) / sp.factorial(a + c + 2)
            total += coeff * tri_part * sp.Rational(2, e + 1)
        return total / dz  # dz = d zeta * height / 2

    k_matrix = (b.T * d * b).applyfunc(integral)
    masses = [float(integral(n)) * RHO for n in shape for _ in range(3)]
    k_num = np.array(k_matrix.tolist(), dtype=float)
    omega2 = scipy.linalg.eigh(k_num, np.diag(masses), eigvals_only=True).max()
    return 2.0 / np.sqrt(omega2)


def test_wedge_time_step_matches_sympy():
    # the six-point rule integrates the right prism's stiffness exactly
    ref = CELL_TYPES["wedge"].reference_nodes.copy()
    height = 1.7
    ref[:, 2] = (ref[:, 2] + 1.0) / 2.0 * height  # z from 0 to the height
    expected = _sympy_prism_step(height)
    assert _ours("wedge", ref)["stable_time_step"][0] == pytest.approx(expected, rel=1e-9)
