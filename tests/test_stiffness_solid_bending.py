"""The bending error of solids checked against outside references.

* sympy: the trilinear box and the linear tetrahedron on alternate corners of a box, the
  exact 3-D pure-bending field interpolated at their nodes, the energy of the strain
  error (interpolant's strain minus the exact one) and the exact energy integrated
  symbolically (the box from its eight shape functions, exactly, and checked equal to
  the old energy difference; the tetrahedron from the linear interpolant its four nodes
  define, a constant strain, against the exact strain's mean over the element, the
  value at its one Gauss point, the centroid), in every frame of two box axes; the closed
  forms come out of sympy here, as functions of the half-lengths and nu.
* Facts of the trade (common practice): quadratic elements (tetra10, hexahedron20,
  hexahedron27) hold every quadratic displacement field when straight-sided (an affine
  map), so they represent the linear strains of pure bending exactly; the error of the
  linear hexahedron grows as it is sheared (the trend Lee and Bathe 1993 and MacNeal and
  Harder 1985 report for distorted elements, from memory); a rigid motion changes no
  strain energy.
"""

from __future__ import annotations

import itertools
import math
from functools import cache

import meshio
import numpy as np
import pytest
import sympy as sp
from scipy.spatial.transform import Rotation

import meshaudit
from meshaudit.cells.registry import CELL_TYPES
from meshaudit.metrics import stiffness
from meshaudit.metrics.stiffness import solid_axes

SOLIDS = ["hexahedron", "hexahedron20", "hexahedron27", "tetra", "tetra10", "wedge", "pyramid"]
_X = sp.symbols("x y z", real=True)
_A = sp.symbols("A B C", positive=True)  # half-lengths of the box along x, y, z
_NU = sp.Symbol("nu", real=True)


def _law(nu: float) -> tuple[float, float]:
    """Lame's constants of E = 1 and ``nu``."""
    return nu / ((1 + nu) * (1 - 2 * nu)), 1 / (2 * (1 + nu))


def _ours(cell_type: str, nodes: np.ndarray, nu: float = 0.3) -> dict[str, float]:
    lam, mu = _law(nu)
    out, failed = stiffness.measure_nodes(
        CELL_TYPES[cell_type], nodes[None], np.array([False]), np.array([lam]),
        np.array([mu]), np.array([1.0]),
    )  # fmt: skip
    assert not failed[0]
    return {k: float(v[0]) for k, v in out.items()}


def _field(a: int, b: int) -> list[sp.Expr]:
    """The exact field (curvature 1) with X along coordinate a, Y along b, Z the third:
    u_X = -X Y, u_Y = (X^2 + nu (Y^2 - Z^2))/2, u_Z = nu Y Z (the sign of Z does not
    matter: u_Z Z-hat is even in it)."""
    c = 3 - a - b
    big_x, big_y, big_z = _X[a], _X[b], _X[c]
    u = [sp.Integer(0)] * 3
    u[a] = -big_x * big_y
    u[b] = (big_x**2 + _NU * (big_y**2 - big_z**2)) / 2
    u[c] = _NU * big_y * big_z
    return u


def _energy_density(grad: sp.Matrix) -> sp.Expr:
    """lambda/2 (tr eps)^2 + mu eps:eps of E = 1, from the displacement gradient."""
    lam = _NU / ((1 + _NU) * (1 - 2 * _NU))
    mu = 1 / (2 * (1 + _NU))
    eps = (grad + grad.T) / 2
    return lam / 2 * eps.trace() ** 2 + mu * sum(e**2 for e in eps)


def _gradient(u: list[sp.Expr]) -> sp.Matrix:
    return sp.Matrix(3, 3, lambda i, j: sp.diff(u[i], _X[j]))


@cache
def _box_errors() -> dict[tuple[int, int], sp.Expr]:
    """The strain-error energy over the exact energy of the trilinear box [-A, A] x
    [-B, B] x [-C, C] for each frame (a, b), symbolic in A, B, C and nu; checked equal to
    (U_element - U_exact) / U_exact (the exact stress, sigma_X alone, does no work on the
    strain error: eps_X of the interpolant is exact)."""
    signs = list(itertools.product((-1, 1), repeat=3))
    corners = [tuple(s * h for s, h in zip(sign, _A)) for sign in signs]
    shape = [sp.prod([(1 + s * x / h) / 2 for s, x, h in zip(sign, _X, _A)]) for sign in signs]
    limits = [(x, -h, h) for x, h in zip(_X, _A)]
    out = {}
    for a, b in itertools.permutations(range(3), 2):
        exact_u = _field(a, b)
        nodal = [
            sum(n * f.subs(dict(zip(_X, corner))) for n, corner in zip(shape, corners))
            for f in exact_u
        ]
        element = sp.integrate(_energy_density(_gradient(nodal)), *limits)
        exact = sp.integrate(_energy_density(_gradient(exact_u)), *limits)
        assert sp.simplify(exact - sp.integrate(_X[b] ** 2 / 2, *limits)) == 0  # E Y^2 / 2
        error_gradient = _gradient(nodal) - _gradient(exact_u)
        error = sp.integrate(sp.expand(_energy_density(error_gradient)), *limits)
        out[a, b] = sp.simplify(error / exact)
        assert sp.simplify(out[a, b] - (element / exact - 1)) == 0
    return out


@cache
def _tetra_errors() -> dict[tuple[int, int], sp.Expr]:
    """The same for the linear tetrahedron on the corners (A, B, C), (-A, B, -C),
    (A, -B, -C), (-A, -B, C) of the box: the linear interpolant of each component solved
    from its four nodal values (a constant gradient, hence a constant strain eps_h),
    against the exact strain's mean over the element (integrated): the one-point rule's
    Gauss point is the centroid, where the linear exact strain takes its mean, so the
    error energy is V/2 (eps_h - mean eps)^T D (eps_h - mean eps)."""
    signs = [(1, 1, 1), (-1, 1, -1), (1, -1, -1), (-1, -1, 1)]
    corners = [[s * h for s, h in zip(sign, _A)] for sign in signs]
    matrix = sp.Matrix([[1, *corner] for corner in corners])
    # volume and integrals over the tetrahedron, from the affine map of the unit one
    p = [sp.Matrix(c) for c in corners]
    jac = sp.Matrix.hstack(p[1] - p[0], p[2] - p[0], p[3] - p[0])
    s, t, r = sp.symbols("s t r", nonnegative=True)
    point = p[0] + jac * sp.Matrix([s, t, r])
    volume = sp.Abs(jac.det()) / 6

    def over_tetra(f: sp.Expr) -> sp.Expr:
        g = f.subs(dict(zip(_X, point))) * sp.Abs(jac.det())
        return sp.integrate(g, (r, 0, 1 - s - t), (t, 0, 1 - s), (s, 0, 1))

    out = {}
    for a, b in itertools.permutations(range(3), 2):
        grad_rows = []
        for f in _field(a, b):
            values = sp.Matrix([f.subs(dict(zip(_X, c))) for c in corners])
            coeffs = matrix.solve(values)  # f ~ c0 + c1 x + c2 y + c3 z on the element
            grad_rows.append(list(coeffs[1:]))
        mean = _gradient(_field(a, b)).applyfunc(lambda g: over_tetra(g) / volume)
        error = volume * _energy_density(sp.Matrix(grad_rows) - mean)
        exact = over_tetra(_X[b] ** 2 / 2)
        out[a, b] = sp.simplify(error / exact)
    return out


def _worst(errors: dict[tuple[int, int], sp.Expr], half: tuple[float, ...], nu: float) -> float:
    values = {**dict(zip(_A, half)), _NU: nu}
    return max(float(e.subs(values)) for e in errors.values())


BOXES = [
    ((1.0, 1.0, 1.0), 0.3),
    ((2.0, 1.0, 1.0), 0.3),
    ((3.0, 1.0, 0.5), 0.0),
    ((0.5, 2.0, 4.0), 0.45),
]


@pytest.mark.parametrize(("half", "nu"), BOXES)
def test_box_bending_error_is_the_sympy_closed_form(half, nu):
    nodes = CELL_TYPES["hexahedron"].reference_nodes * np.array(half)
    got = _ours("hexahedron", nodes, nu)
    assert got["bending_error"] == pytest.approx(_worst(_box_errors(), half, nu), rel=1e-10)
    assert got["bending_error_distortion"] == pytest.approx(0.0, abs=1e-10)


def test_box_closed_form_is_parasitic_shear():
    # what sympy finds for bending along x towards y: the u_Y interpolant is constant
    # (its nodal values are), so eps_Y and the shear gamma_XY = -X carry the error; for
    # the cube at nu = 0 it is the square's 1/2 (no Poisson terms, the same shear)
    ratio = _box_errors()[0, 1]
    assert float(ratio.subs({_A[0]: 1, _A[1]: 1, _A[2]: 1, _NU: 0})) == pytest.approx(0.5)
    # the shear grows with the square of the length along the bending axis
    grow = [float(ratio.subs({_A[0]: a, _A[1]: 1, _A[2]: 1, _NU: 0.3})) for a in (1, 2, 4)]
    assert grow[1] - grow[0] == pytest.approx((grow[2] - grow[0]) / 5)


@pytest.mark.parametrize(("half", "nu"), BOXES)
def test_linear_tetra_bending_error_is_the_sympy_constant_strain_value(half, nu):
    cell = CELL_TYPES["tetra"]
    nodes = solid_axes.undistorted(cell, 2.0 * np.array([half]))[0]
    got = _ours("tetra", nodes, nu)
    assert got["bending_error"] == pytest.approx(_worst(_tetra_errors(), half, nu), rel=1e-10)
    assert got["bending_error_distortion"] == pytest.approx(0.0, abs=1e-10)


def _parallelepiped(corners: np.ndarray) -> np.ndarray:
    """An affine image of ``corners`` (m, 3): a sheared, stretched and turned shape."""
    a = np.array([[1.3, 0.4, 0.1], [0.0, 0.8, 0.3], [0.2, -0.1, 1.1]])
    return corners @ a.T + np.array([3.0, -1.0, 2.0])


@pytest.mark.parametrize("cell_type", ["hexahedron20", "hexahedron27", "tetra10"])
def test_straight_sided_quadratic_solids_bend_exactly(cell_type):
    # common practice: a complete quadratic displacement field, under an affine map, is
    # in the span of the quadratic elements; pure bending's field is quadratic
    cell = CELL_TYPES[cell_type]
    for nodes in (
        solid_axes.undistorted(cell, np.array([[2.0, 1.0, 0.7]]))[0],
        _parallelepiped(cell.reference_nodes),
    ):
        got = _ours(cell_type, nodes)
        assert got["bending_error"] < 1e-10
        assert abs(got["bending_error_distortion"]) < 1e-10
    # a curved edge (a midside node moved off its chord) breaks that
    bent = cell.reference_nodes.copy()
    bent[cell.n_corners] += 0.15
    assert _ours(cell_type, bent)["bending_error"] > 1e-4


def _sheared_cube(angle: float) -> np.ndarray:
    cube = CELL_TYPES["hexahedron"].reference_nodes
    c, s = math.cos(math.radians(angle)), math.sin(math.radians(angle))
    return np.column_stack([cube[:, 0] + c * cube[:, 1], s * cube[:, 1], cube[:, 2]])


def test_hexahedron_bending_error_grows_with_shear():
    values = [
        _ours("hexahedron", _sheared_cube(a))["bending_error_distortion"]
        for a in (90, 75, 60, 45, 30)
    ]
    assert values[0] == pytest.approx(0.0, abs=1e-12)
    assert all(b > a for a, b in itertools.pairwise(values))


@pytest.mark.parametrize("cell_type", SOLIDS)
def test_bending_error_ignores_rigid_motion(cell_type):
    # a rigid rotation and translation leave every strain energy as it was
    cell = CELL_TYPES[cell_type]
    rng = np.random.default_rng(11)
    nodes = solid_axes.undistorted(cell, np.array([[2.0, 1.2, 0.8]]))[0]
    nodes = nodes + rng.uniform(-0.05, 0.05, nodes.shape)
    turn = Rotation.random(random_state=5).as_matrix()
    base = _ours(cell_type, nodes)
    moved = _ours(cell_type, nodes @ turn.T + np.array([40.0, -7.0, 3.0]))
    for name in ("bending_error", "bending_error_distortion"):
        assert math.isfinite(base[name])
        assert moved[name] == pytest.approx(base[name], rel=1e-9, abs=1e-12)
    # and a uniform scale (the error has no unit)
    scaled = _ours(cell_type, 1e-3 * nodes)
    assert scaled["bending_error"] == pytest.approx(base["bending_error"], rel=1e-9)


@pytest.mark.parametrize("cell_type", SOLIDS)
def test_twin_axes_are_its_coordinate_axes(cell_type):
    # the undistorted twin's own principal axes, by the same rules, are the coordinate
    # axes with the lengths it was built from, at right angles
    lengths = np.array([[2.0, 1.3, 0.6]])
    twin = solid_axes.undistorted(CELL_TYPES[cell_type], lengths)
    vectors, got = solid_axes.axes(CELL_TYPES[cell_type], twin)
    np.testing.assert_allclose(got, lengths, rtol=1e-12)
    np.testing.assert_allclose(np.abs(vectors[0]), np.diag(lengths[0]), atol=1e-12)


def test_solids_in_an_audit_get_a_bending_error():
    points = np.array(
        [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1],
         [0.5, 0.5, 2]],
        dtype=float,
    )  # fmt: skip
    mesh = meshio.Mesh(points, [("hexahedron", [list(range(8))]), ("pyramid", [[4, 5, 6, 7, 8]])])
    steel = meshaudit.Material(E=210000.0, nu=0.3, rho=7.85e-9)
    report = meshaudit.audit(mesh, material=steel)
    # the unit cube: the sympy box value at nu = 0.3; the pyramid with its apex above the
    # centre of its square base is its own undistorted twin
    cube = _worst(_box_errors(), (0.5, 0.5, 0.5), 0.3)
    assert report.metrics["bending_error"][0] == pytest.approx(cube, rel=1e-10)
    assert report.metrics["bending_error"][1] > 0
    np.testing.assert_allclose(report.metrics["bending_error_distortion"], 0.0, atol=1e-10)


def test_explain_says_how_a_solid_bends(run_cli, tmp_path):
    # the cube of a one-element mesh: explain names the 3-D field and the box twin
    path = tmp_path / "cube.vtu"
    cube = (CELL_TYPES["hexahedron"].reference_nodes + 1.0) / 2.0
    meshio.write(path, meshio.Mesh(cube, [("hexahedron", [list(range(8))])]))
    res = run_cli("explain", path, "0", "--no-config", "--material", "E=210000,nu=0.3,rho=7.85e-9")
    assert res.returncode in (0, 1), res.stderr
    text = " ".join(res.stdout.split())
    assert "u_Z = kappa nu Y Z" in text and "six frames" in text
    assert "eps_Z = nu kappa Y" in " ".join(res.stdout.replace("│", " ").split())
    assert "box" in text and "not defined" not in text


def test_a_profile_limit_judges_a_solid_by_its_bending_error():
    # the cube is its own undistorted twin (distortion 0); the cube sheared to 60 degrees
    # adds more than the square's whole error in bending (the trend above): past a
    # fail limit of 1 set in the profile's [hexahedron] table
    from meshaudit.judge.profiles import profile_from_dict

    cube = (CELL_TYPES["hexahedron"].reference_nodes + 1.0) / 2.0
    sheared = (_sheared_cube(60) + 1.0) / 2.0 + 3.0
    mesh = meshio.Mesh(
        np.vstack([cube, sheared]), [("hexahedron", [list(range(8)), list(range(8, 16))])]
    )
    limits = {"bending_error_distortion": {"warn": 0.5, "fail": 1.0, "source": "test"}}
    profile = profile_from_dict({"name": "t", "extends": "standard", "hexahedron": limits}, "t")
    steel = meshaudit.Material(E=210000.0, nu=0.3, rho=7.85e-9)
    report = meshaudit.audit(mesh, profile=profile, material=steel)
    assert report.metrics["bending_error_distortion"][1] > 1.0
    assert report.verdict.tolist() == [0, 2]  # ok, fail
    # the built-in profile sets no such limit: both pass on their shapes
    assert meshaudit.audit(mesh, material=steel).verdict.tolist() == [0, 0]


def test_regular_tetra_reads_worse_than_the_cube():
    # the reason for measuring the strain error: a constant-strain tetrahedron cannot
    # bend, its nodal field puts about the bending energy into spurious shear, and the
    # energy difference |U_element - U_exact| / U_exact read it as nearly exact; its
    # strain error cannot cancel. sympy: the regular tetrahedron (A = B = C) reads
    # 5 (1 - nu)^2 / (2 (1 + nu)) in every frame, the cube (1 - 2 nu + 3 nu^2 - 4 nu^3) /
    # (2 (1 + nu) (1 - 2 nu)); at nu = 0.3 0.94 against the cube's 0.54
    cube = {_A[0]: 1, _A[1]: 1, _A[2]: 1}
    regular = {e.subs(cube) for e in _tetra_errors().values()}
    assert len({sp.simplify(e - next(iter(regular))) for e in regular}) == 1
    closed = 5 * (1 - _NU) ** 2 / (2 * (1 + _NU))
    assert sp.simplify(next(iter(regular)) - closed) == 0
    cube_closed = (1 - 2 * _NU + 3 * _NU**2 - 4 * _NU**3) / (2 * (1 + _NU) * (1 - 2 * _NU))
    assert sp.simplify(_box_errors()[0, 1].subs(cube) - cube_closed) == 0
    tet = _ours("tetra", solid_axes.undistorted(CELL_TYPES["tetra"], np.ones((1, 3)))[0])
    box = _ours("hexahedron", CELL_TYPES["hexahedron"].reference_nodes)
    assert tet["bending_error"] == pytest.approx(float(closed.subs(_NU, 0.3)), rel=1e-10)
    assert box["bending_error"] == pytest.approx(_worst(_box_errors(), (1, 1, 1), 0.3))
    assert tet["bending_error"] > box["bending_error"] + 0.3
