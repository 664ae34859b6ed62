"""The bending error as the energy of the strain error, checked against outside references.

* sympy: the linear triangle's error, derived symbolically from the linear interpolant of
  the exact field at its three corners (a constant strain) and the exact strain's mean
  over the triangle (integrated), in both frames, as a function of its shape and nu.
* scikit-fem (general-purpose finite-element library): the nodal interpolant of the exact
  field in its Lagrange basis (the degrees of freedom at its own node locations), the
  strain of that interpolant minus the exact strain at the quadrature points of the same
  Gauss rule, the error energy and the exact energy integrated by its assembly of a
  functional: distorted quadrilaterals (linear, eight- and nine-node), a triangle and a
  distorted hexahedron, frames from their principal axes.
* Facts: the error energy is an integral of a positive-definite quadratic form with
  positive weights, so it is never negative (common practice); the four-node element's
  bending worsens under trapezoidal (taper) distortion (MacNeal and Harder 1985, *Finite
  Elements in Analysis and Design* 1, "A proposed standard set of problems to test
  finite element accuracy", from memory).
"""

from __future__ import annotations

import itertools
import math
from functools import cache

import numpy as np
import pytest
import skfem
import sympy as sp
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from meshaudit.cells.registry import CELL_TYPES
from meshaudit.metrics import stiffness

CELLS = [
    "quad", "quad8", "quad9", "triangle", "triangle6",
    "hexahedron", "hexahedron20", "hexahedron27", "tetra", "tetra10", "wedge", "pyramid",
]  # fmt: skip


def _law(dimension: int, nu: float) -> tuple[float, float]:
    """Lame's constants of E = 1: plane stress (lambda*) for surfaces, 3-D for solids."""
    if dimension == 2:
        return nu / (1 - nu**2), 1 / (2 * (1 + nu))
    return nu / ((1 + nu) * (1 - 2 * nu)), 1 / (2 * (1 + nu))


def _ours(cell_type: str, nodes: np.ndarray, nu: float = 0.3) -> tuple[dict[str, float], bool]:
    cell = CELL_TYPES[cell_type]
    lam, mu = _law(cell.dimension, nu)
    out, failed = stiffness.measure_nodes(
        cell, np.asarray(nodes, dtype=float)[None], np.array([False]), np.array([lam]),
        np.array([mu]), np.array([1.0]),
    )  # fmt: skip
    return {k: float(v[0]) for k, v in out.items()}, bool(failed[0])


# --- sympy: the linear triangle ---------------------------------------------------------

_B, _C, _H = sp.symbols("b c h", positive=True)  # corners (0, 0), (b, 0), (c, h)
_NU = sp.Symbol("nu", real=True)
_XY = sp.symbols("x y", real=True)


def _plane_density(grad: sp.Matrix) -> sp.Expr:
    """Plane-stress energy density of E = 1 from a displacement gradient."""
    exx, eyy, gxy = grad[0, 0], grad[1, 1], grad[0, 1] + grad[1, 0]
    return (exx**2 + eyy**2 + 2 * _NU * exx * eyy) / (2 * (1 - _NU**2)) + gxy**2 / (4 * (1 + _NU))


@cache
def _triangle_errors() -> list[sp.Expr]:
    """e of the triangle (0, 0), (b, 0), (c, h) in its two frames (X along the base, Y
    across it; X across it, Y = -x), symbolic in b, c, h and nu: the interpolant's
    constant strain against the exact strain's mean, V/2 (eps_h - mean eps)^T D (...)
    over the exact energy int Y^2 / 2."""
    corners = [(0, 0), (_B, 0), (_C, _H)]
    centroid = [sum(p[i] for p in corners) / 3 for i in range(2)]
    s, t = sp.symbols("s t", nonnegative=True)
    point = {_XY[0]: _B * s + _C * t, _XY[1]: _H * t}  # the affine map, det = b h
    area = _B * _H / 2

    def over(f: sp.Expr) -> sp.Expr:
        return sp.integrate(f.subs(point) * _B * _H, (t, 0, 1 - s), (s, 0, 1))

    matrix = sp.Matrix([[1, *p] for p in corners])
    out = []
    for xv, yv in (((1, 0), (0, 1)), ((0, 1), (-1, 0))):
        rel = [_XY[i] - centroid[i] for i in range(2)]
        big_x = rel[0] * xv[0] + rel[1] * xv[1]
        big_y = rel[0] * yv[0] + rel[1] * yv[1]
        u_x, u_y = -big_x * big_y, (big_x**2 + _NU * big_y**2) / 2
        field = [u_x * xv[i] + u_y * yv[i] for i in range(2)]
        exact_grad = sp.Matrix(2, 2, lambda i, j, field=field: sp.diff(field[i], _XY[j]))
        rows = []
        for f in field:
            values = sp.Matrix([f.subs(dict(zip(_XY, p))) for p in corners])
            rows.append(list(matrix.solve(values)[1:]))
        mean = exact_grad.applyfunc(lambda g: over(g) / area)
        error = area * _plane_density(sp.Matrix(rows) - mean)
        exact = over(_plane_density(exact_grad))
        assert sp.simplify(exact - over(big_y**2 / 2)) == 0  # sigma_X = -E Y alone
        out.append(sp.simplify(error / exact))
    return out


@pytest.mark.parametrize(
    ("b", "c", "h", "nu"),
    [
        (1.0, 0.5, math.sqrt(3) / 2, 0.3),  # equilateral
        (math.sqrt(2), math.sqrt(2) / 2, math.sqrt(2) / 2, 0.3),  # right isosceles
        (3.0, 0.8, 1.1, 0.0),
        (2.0, 1.4, 0.5, 0.45),
    ],
)
def test_linear_triangle_is_the_sympy_constant_strain_value(b, c, h, nu):
    values = {_B: b, _C: c, _H: h, _NU: nu}
    expected = max(float(e.subs(values)) for e in _triangle_errors())
    got, _ = _ours("triangle", np.array([[0.0, 0.0], [b, 0.0], [c, h]]), nu)
    assert got["bending_error"] == pytest.approx(expected, rel=1e-10)
    # the interpolant's strain is constant and the exact one's mean is 0 (origin at the
    # centroid): e is the element's own strain energy over the exact one, so at least
    # the energy the old difference |U_element - U_exact| / U_exact missed whenever the
    # element's energy fell short of the exact one
    assert got["bending_error"] > 0


# --- scikit-fem: the same definition, assembled independently ----------------------------


def _skfem_error(mesh, element, intorder, frames, nu: float) -> float:
    """max over ``frames`` (X, Y) of the strain-error energy of the nodal interpolant
    over the exact energy, assembled by scikit-fem with the rule ``intorder`` (an order,
    or (points, weights) on the reference element)."""
    dim = mesh.p.shape[0]
    lam, mu = _law(dim, nu)
    modulus = 1.0  # E' = E = 1 (plane stress)
    ratio = lam / (lam + 2 * mu) if dim == 2 else nu  # nu' (plane stress: nu)
    if isinstance(intorder, int):
        basis = skfem.Basis(mesh, element, intorder=intorder)
    else:
        basis = skfem.Basis(mesh, element, quadrature=intorder)
    fine = skfem.Basis(mesh, element, intorder=10)
    volume = skfem.Functional(lambda w: 1.0 + 0.0 * w.x[0]).assemble(fine)
    centroid = np.array(
        [skfem.Functional(lambda w, i=i: w.x[i]).assemble(fine) / volume for i in range(dim)]
    )
    worst = 0.0
    for frame in frames:
        axes = [np.asarray(v, dtype=float) for v in frame]

        def field(x, axes=axes):  # x (dim, ...): the exact displacement (dim, ...)
            rel = [x[i] - centroid[i] for i in range(dim)]
            c = [sum(rel[i] * v[i] for i in range(dim)) for v in axes]
            comps = [-c[0] * c[1], (c[0] ** 2 + ratio * c[1] ** 2) / 2]
            if dim == 3:
                comps[1] = comps[1] - ratio * c[2] ** 2 / 2
                comps.append(ratio * c[1] * c[2])
            return [sum(comps[k] * axes[k][i] for k in range(dim)) for i in range(dim)]

        nodal = field(basis.doflocs)
        fields = {f"u{i}": basis.interpolate(nodal[i]) for i in range(dim)}

        def error_density(w, axes=axes):
            y = sum((w.x[i] - centroid[i]) * axes[1][i] for i in range(dim))
            exact = -np.einsum("a,b->ab", axes[0], axes[0]) + ratio * np.outer(axes[1], axes[1])
            if dim == 3:
                exact = exact + ratio * np.outer(axes[2], axes[2])
            grads = [w[f"u{i}"].grad for i in range(dim)]
            e = [
                [0.5 * (grads[a][b] + grads[b][a]) - y * exact[a, b] for b in range(dim)]
                for a in range(dim)
            ]
            trace = sum(e[a][a] for a in range(dim))
            square = sum(e[a][b] ** 2 for a in range(dim) for b in range(dim))
            return 0.5 * lam * trace**2 + mu * square

        def exact_density(w, axes=axes):
            y = sum((w.x[i] - centroid[i]) * axes[1][i] for i in range(dim))
            return 0.5 * modulus * y**2

        error = skfem.Functional(error_density).assemble(basis, **fields)
        exact = skfem.Functional(exact_density).assemble(fine)
        worst = max(worst, error / exact)
    return worst


def _unit(v: np.ndarray) -> np.ndarray:
    return v / np.linalg.norm(v)


def _quad_frames(c: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
    """Robinson's e1, e2 (the lines joining opposite edge midpoints), Y = X turned +90."""
    e1 = _unit(-c[0] + c[1] + c[2] - c[3])
    e2 = _unit(-c[0] - c[1] + c[2] + c[3])
    return [(d, np.array([-d[1], d[0]])) for d in (e1, e2)]


QUAD = np.array([[0.0, 0.0], [2.2, 0.3], [2.5, 1.7], [-0.2, 1.2]])  # a distorted quad
TRAPEZOID = np.array([[0.0, 0.0], [2.0, 0.0], [1.4, 2.0], [0.6, 2.0]])


@pytest.mark.parametrize(
    ("cell_type", "corners", "element", "intorder"),
    [
        ("quad", QUAD, skfem.ElementQuad1(), 3),  # intorder 3: the 2x2 Gauss rule
        ("quad", TRAPEZOID, skfem.ElementQuad1(), 3),
        ("quad8", TRAPEZOID, skfem.ElementQuadS2(), 5),  # 5: the 3x3 rule
        ("quad9", QUAD, skfem.ElementQuad2(), 5),
    ],
)
def test_quad_error_matches_skfem(cell_type, corners, element, intorder):
    mesh = skfem.MeshQuad(corners.T, np.array([[0, 1, 2, 3]]).T)
    expected = _skfem_error(mesh, element, intorder, _quad_frames(corners), 0.3)
    nodes = CELL_TYPES["quad"].shape_functions(CELL_TYPES[cell_type].reference_nodes) @ corners
    got, _ = _ours(cell_type, nodes)
    assert got["bending_error"] == pytest.approx(expected, rel=1e-9, abs=1e-14)
    if cell_type in ("quad", "quad8"):
        assert expected > 1e-4  # distorted: something to compare


def test_triangle_error_matches_skfem():
    corners = np.array([[0.0, 0.0], [3.0, 0.4], [0.8, 1.1]])  # longest edge: 0-1
    d1 = _unit(corners[1] - corners[0])
    d2 = np.array([-d1[1], d1[0]])
    frames = [(d, np.array([-d[1], d[0]])) for d in (d1, d2)]
    mesh = skfem.MeshTri(corners.T, np.array([[0, 1, 2]]).T)
    centroid_rule = (np.array([[1 / 3], [1 / 3]]), np.array([0.5]))  # the one-point rule
    expected = _skfem_error(mesh, skfem.ElementTriP1(), centroid_rule, frames, 0.3)
    got, _ = _ours("triangle", corners)
    assert got["bending_error"] == pytest.approx(expected, rel=1e-9)
    # integrated exactly (scikit-fem's 3-point rule, exact for the square of a linear
    # error), the error takes in the exact strain's own variation about its mean too,
    # which no constant strain can follow: one exact energy more, in every frame
    exact = _skfem_error(mesh, skfem.ElementTriP1(), 2, frames, 0.3)
    assert exact == pytest.approx(expected + 1.0, rel=1e-9)


def test_distorted_hexahedron_error_matches_skfem():
    def distort(p):  # a smooth distortion of the unit cube's corners
        x, y, z = p[..., 0], p[..., 1], p[..., 2]
        return np.stack([1.3 * x + 0.2 * y * z, y + 0.15 * x * x, 0.8 * z + 0.1 * x * y], -1)

    sk = skfem.MeshHex()  # the unit cube, in scikit-fem's own node order
    mesh = skfem.MeshHex(distort(sk.p.T).T, sk.t)
    ref = CELL_TYPES["hexahedron"].reference_nodes  # meshio's order, corners at +-1
    corners = distort((ref + 1.0) / 2.0)
    # principal axes: the lines joining the centres of opposite faces
    axes = [corners[ref[:, a] > 0].mean(0) - corners[ref[:, a] < 0].mean(0) for a in range(3)]
    frames = []
    for a, b in itertools.permutations(range(3), 2):
        x = _unit(axes[a])
        y = _unit(axes[b] - (axes[b] @ x) * x)
        frames.append((x, y, np.cross(x, y)))
    expected = _skfem_error(mesh, skfem.ElementHex1(), 3, frames, 0.3)  # the 2x2x2 rule
    got, _ = _ours("hexahedron", corners)
    assert got["bending_error"] == pytest.approx(expected, rel=1e-9)
    assert expected > 0.5


# --- never negative, and the taper trend ------------------------------------------------


@settings(max_examples=60, deadline=None)
@given(
    cell_type=st.sampled_from(CELLS),
    seed=st.integers(0, 2**31 - 1),
    amplitude=st.floats(0.0, 0.25),
    stretch=st.floats(0.05, 20.0),
    nu=st.floats(-0.9, 0.49),
)
def test_the_error_is_never_negative(cell_type, seed, amplitude, stretch, nu):
    # an integral of a positive-definite quadratic form (-1 < nu < 1/2) with positive
    # weights w_g det J_g (common practice): no frame, shape or law makes it negative,
    # so nothing cancels
    cell = CELL_TYPES[cell_type]
    rng = np.random.default_rng(seed)
    nodes = cell.reference_nodes * np.r_[stretch, np.ones(cell.dimension - 1)]
    nodes = nodes + amplitude * rng.uniform(-1.0, 1.0, nodes.shape)
    got, failed = _ours(cell_type, nodes, nu)
    assume(not failed)
    assume(math.isfinite(got["bending_error"]))
    assert got["bending_error"] >= 0.0


def test_taper_raises_the_linear_quads_error():
    # MacNeal and Harder 1985 (from memory): trapezoidal elements bend worse than
    # rectangular ones; the old energy difference read the tapered quad as better than
    # the square (the element's energy fell towards the exact one while its strains got
    # worse). The strain error rises with the taper.
    values = [
        _ours("quad", np.array([[0, 0], [2, 0], [2 - t, 2], [t, 2]], dtype=float))[0]
        for t in (0.0, 0.2, 0.4, 0.6)
    ]
    distortion = [v["bending_error_distortion"] for v in values]
    assert distortion[0] == pytest.approx(0.0, abs=1e-12)
    assert all(b > a for a, b in itertools.pairwise(distortion))


def test_straight_sided_six_node_triangle_bends_exactly():
    # common practice: the six-node triangle's span holds every quadratic field under an
    # affine map (straight sides, midside nodes at the middle), so its strains are the
    # exact linear ones at every Gauss point; a curved side breaks that
    corners = np.array([[0.0, 0.0], [3.0, 0.4], [0.8, 1.1]])
    ref = CELL_TYPES["triangle6"].reference_nodes
    nodes = CELL_TYPES["triangle"].shape_functions(ref) @ corners
    got, _ = _ours("triangle6", nodes)
    assert got["bending_error"] < 1e-12
    bent = nodes.copy()
    bent[3] += [0.0, -0.2]  # the midside node of the longest edge off its chord
    got, failed = _ours("triangle6", bent)
    assert not failed and got["bending_error"] > 1e-4
