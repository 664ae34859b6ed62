"""The table of cell types (``meshaudit.cells.CELL_TYPES``) against outside references.

Outside references: meshio's own tables of nodes per cell and topological dimension (the
library every mesh is read with), sympy (shape functions solved from their interpolation
conditions in the element's standard polynomial space, then differentiated; exact
integrals over the reference element for the Gauss rules), the divergence theorem (the
faces close around the reference volume) and facts of the trade (reference areas and
volumes, Gauss rules, corner loops: common practice).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
import sympy as sp
from meshio._common import num_nodes_per_cell
from meshio._mesh import topological_dimension

from meshaudit.cells import CELL_TYPES

NAMES = list(CELL_TYPES)
SURFACES = [n for n in NAMES if CELL_TYPES[n].dimension == 2]
SOLIDS = [n for n in NAMES if CELL_TYPES[n].dimension == 3]

#: Standard reference elements (common practice): the square [-1, 1]^2 with node 1 at
#: (-1, -1), counter-clockwise, midside nodes of edges 1-2, 2-3, 3-4, 4-1, then the centre;
#: the triangle (0, 0), (1, 0), (0, 1), midside nodes of edges 1-2, 2-3, 3-1.
SQUARE = [(-1, -1), (1, -1), (1, 1), (-1, 1), (0, -1), (1, 0), (0, 1), (-1, 0), (0, 0)]
TRIANGLE = [
    (0, 0),
    (1, 0),
    (0, 1),
    (sp.Rational(1, 2), 0),
    (sp.Rational(1, 2), sp.Rational(1, 2)),
    (0, sp.Rational(1, 2)),
]
#: Solids, in meshio's (VTK's) node order (common practice; VTK's cell documentation):
#: the unit tetrahedron, tetra10's midside nodes on the edges 0-1, 1-2, 2-0, 0-3, 1-3,
#: 2-3; the cube [-1, 1]^3, corners 0-3 counter-clockwise on zeta = -1 and 4-7 above them,
#: midside nodes on the edges 0-1, 1-2, 2-3, 3-0, 4-5, 5-6, 6-7, 7-4, 0-4, 1-5, 2-6, 3-7,
#: hexahedron27's face centres on xi = -1, +1, eta = -1, +1, zeta = -1, +1, then the
#: centre; the wedge (unit triangle x [-1, 1], meshio's order: triangle 0 1 2 at
#: t = -1 facing triangle 3 4 5); the pyramid on the base [-1, 1]^2 with its apex at
#: (0, 0, 1).
HALF = sp.Rational(1, 2)
TET = [(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1)]
TET10 = TET + [
    tuple((sp.Integer(TET[a][k]) + TET[b][k]) / 2 for k in range(3))
    for a, b in ((0, 1), (1, 2), (2, 0), (0, 3), (1, 3), (2, 3))
]
CUBE = [(-1, -1, -1), (1, -1, -1), (1, 1, -1), (-1, 1, -1)]
CUBE += [(x, y, 1) for x, y, _ in CUBE]
CUBE_EDGES = ((0, 1), (1, 2), (2, 3), (3, 0), (4, 5), (5, 6), (6, 7), (7, 4))
CUBE_EDGES += ((0, 4), (1, 5), (2, 6), (3, 7))
HEX20 = CUBE + [tuple((CUBE[a][k] + CUBE[b][k]) // 2 for k in range(3)) for a, b in CUBE_EDGES]
HEX27 = [*HEX20, (-1, 0, 0), (1, 0, 0), (0, -1, 0), (0, 1, 0), (0, 0, -1), (0, 0, 1), (0, 0, 0)]
WEDGE = [(0, 0, -1), (1, 0, -1), (0, 1, -1), (0, 0, 1), (1, 0, 1), (0, 1, 1)]
PYRAMID = [(-1, -1, 0), (1, -1, 0), (1, 1, 0), (-1, 1, 0), (0, 0, 1)]

X, Y, Z = sp.symbols("x y z")
QUADRATIC_3D = [X**a * Y**b * Z**c for a in range(3) for b in range(3) for c in range(3)]
#: Polynomial space of each cell type (common practice): hexahedron20's serendipity space
#: is the complete quadratic plus x^2 y, x^2 z, y^2 x, y^2 z, z^2 x, z^2 y, x y z and the
#: three monomials x^2 y z, x y^2 z, x y z^2; the wedge's is (1, r, s) x (1, t).
SPACES = {
    "quad": ([1, X, Y, X * Y], SQUARE[:4], 4),
    "quad8": ([1, X, Y, X**2, X * Y, Y**2, X**2 * Y, X * Y**2], SQUARE[:8], 4),
    "quad9": ([X**a * Y**b for a in range(3) for b in range(3)], SQUARE, 4),
    "triangle": ([1, X, Y], TRIANGLE[:3], sp.Rational(1, 2)),
    "triangle6": ([1, X, Y, X**2, X * Y, Y**2], TRIANGLE, sp.Rational(1, 2)),
    "tetra": ([1, X, Y, Z], TET, sp.Rational(1, 6)),
    "tetra10": (
        [1, X, Y, Z, X**2, Y**2, Z**2, X * Y, Y * Z, Z * X],
        TET10,
        sp.Rational(1, 6),
    ),
    "hexahedron": (
        [X**a * Y**b * Z**c for a in range(2) for b in range(2) for c in range(2)],
        CUBE,
        8,
    ),
    "hexahedron20": (
        [m for m in QUADRATIC_3D if sp.Poly(m, X, Y, Z).total_degree() <= 2]
        + [X**2 * Y, X**2 * Z, Y**2 * X, Y**2 * Z, Z**2 * X, Z**2 * Y, X * Y * Z]
        + [X**2 * Y * Z, X * Y**2 * Z, X * Y * Z**2],
        HEX20,
        8,
    ),
    "hexahedron27": (QUADRATIC_3D, HEX27, 8),
    "wedge": ([1, X, Y, Z, X * Z, Y * Z], WEDGE, 1),
    "pyramid": (None, PYRAMID, sp.Rational(4, 3)),
}


def _bedrosian_pyramid() -> list[sp.Expr]:
    """The pyramid's rational shape functions in Bedrosian's form (G. Bedrosian, Int. J.
    Numer. Meth. Engng 35 (1992) 95-108, from memory): base node (xi_i, eta_i):
    ((1 + xi_i x)(1 + eta_i y) - z + xi_i eta_i x y z / (1 - z)) / 4; apex: z."""
    base = [
        ((1 + a * X) * (1 + b * Y) - Z + a * b * X * Y * Z / (1 - Z)) / 4 for a, b, _ in PYRAMID[:4]
    ]
    return [*base, Z]


def _symbols(name: str) -> tuple[sp.Symbol, ...]:
    return (X, Y, Z)[: CELL_TYPES[name].dimension]


def _sympy_shape_functions(name: str) -> list[sp.Expr]:
    """N_i(node_j) = delta_ij solved in the cell's polynomial space (the pyramid: its
    rational functions as published)."""
    basis, nodes, _ = SPACES[name]
    if basis is None:
        return _bedrosian_pyramid()
    symbols = _symbols(name)
    basis = [sp.sympify(b) for b in basis]
    vander = sp.Matrix([[b.subs(dict(zip(symbols, n))) for b in basis] for n in nodes])
    coeffs = vander.inv()
    return [sum(coeffs[k, i] * basis[k] for k in range(len(basis))) for i in range(len(nodes))]


def _inside_points(name: str, count: int = 9) -> np.ndarray:
    """Random points strictly inside the reference element."""
    rng = np.random.default_rng(7)
    if CELL_TYPES[name].dimension == 2:
        return rng.uniform(0.0, 0.5, (count, 2))
    if name.startswith("tetra"):
        return rng.uniform(0.0, 0.3, (count, 3))
    if name == "wedge":
        return np.column_stack([rng.uniform(0.0, 0.45, (count, 2)), rng.uniform(-0.9, 0.9, count)])
    if name == "pyramid":
        z = rng.uniform(0.05, 0.9, count)
        return np.column_stack([rng.uniform(-0.9, 0.9, (count, 2)) * (1.0 - z)[:, None], z])
    return rng.uniform(-0.9, 0.9, (count, 3))


def test_every_registered_cell_type_has_a_reference_here():
    # a new entry must come with its outside reference in this file
    assert set(NAMES) == set(SPACES)


@pytest.mark.parametrize("name", NAMES)
def test_node_count_and_dimension_agree_with_meshio(name):
    # Outside reference: meshio's tables for the same cell type name.
    cell = CELL_TYPES[name]
    assert cell.n_nodes == num_nodes_per_cell[name]
    assert cell.dimension == topological_dimension[name]
    assert cell.reference_nodes.shape == (cell.n_nodes, cell.dimension)


@pytest.mark.parametrize("name", NAMES)
def test_reference_nodes_are_the_standard_ones(name):
    # Common practice: the standard reference element, in meshio's node order.
    expected = np.array(SPACES[name][1], dtype=float)
    np.testing.assert_array_equal(CELL_TYPES[name].reference_nodes, expected)


@pytest.mark.parametrize("name", NAMES)
def test_shape_functions_and_derivatives_match_sympy(name):
    # Outside reference: sympy solves the interpolation conditions (the pyramid: its
    # published rational functions) and differentiates.
    cell = CELL_TYPES[name]
    symbols = _symbols(name)
    funcs = _sympy_shape_functions(name)
    values = sp.lambdify(symbols, funcs)
    slopes = [sp.lambdify(symbols, [sp.diff(f, s) for f in funcs]) for s in symbols]
    points = _inside_points(name)

    def column(fn, p):
        return np.broadcast_to(np.array(fn(*p), float), (len(funcs),))

    expected = np.array([column(values, p) for p in points])
    np.testing.assert_allclose(cell.shape_functions(points), expected, atol=1e-13)
    derivs = np.array([[column(d, p) for d in slopes] for p in points])
    np.testing.assert_allclose(cell.shape_derivatives(points), derivs, atol=1e-13)


@pytest.mark.parametrize("name", NAMES)
def test_shape_functions_interpolate_the_nodes_and_reproduce_linear_fields(name):
    # Facts of any isoparametric element (common practice): N_i(node_j) = delta_ij, and
    # sum_i N_i x_i = x (the element maps itself onto itself, linear fields are exact).
    cell = CELL_TYPES[name]
    nodes = cell.reference_nodes
    np.testing.assert_allclose(cell.shape_functions(nodes), np.eye(cell.n_nodes), atol=1e-13)
    points = _inside_points(name)
    np.testing.assert_allclose(cell.shape_functions(points) @ nodes, points, atol=1e-13)


def _exact_integral(name: str, monomial: sp.Expr) -> sp.Expr:
    """sympy's exact integral of ``monomial`` over the reference element."""
    if name.startswith("quad"):
        return sp.integrate(monomial, (X, -1, 1), (Y, -1, 1))
    if name.startswith("triangle"):
        return sp.integrate(monomial, (Y, 0, 1 - X), (X, 0, 1))
    if name.startswith("tetra"):
        return sp.integrate(monomial, (Z, 0, 1 - X - Y), (Y, 0, 1 - X), (X, 0, 1))
    if name.startswith("hexahedron"):
        return sp.integrate(monomial, (X, -1, 1), (Y, -1, 1), (Z, -1, 1))
    if name == "wedge":
        return sp.integrate(monomial, (Y, 0, 1 - X), (X, 0, 1), (Z, -1, 1))
    return sp.integrate(monomial, (X, Z - 1, 1 - Z), (Y, Z - 1, 1 - Z), (Z, 0, 1))


#: The degree each full rule integrates exactly (common practice): per variable for the
#: tensor rules, total for the simplex rules; the wedge's 3-point triangle rule times
#: 2-point Gauss-Legendre is exact to degree 2 in (r, s) and 3 in t; the pyramid's
#: collapsed 2 x 2 x 2 rule for the linear monomials.
RULE_DEGREE = {
    "quad": (3, "each"),
    "quad8": (5, "each"),
    "quad9": (5, "each"),
    "triangle": (1, "total"),
    "triangle6": (2, "total"),
    "tetra": (1, "total"),
    "tetra10": (2, "total"),
    "hexahedron": (3, "each"),
    "hexahedron20": (5, "each"),
    "hexahedron27": (5, "each"),
    "wedge": (2, "wedge"),
    "pyramid": (1, "total"),
}


def _exact_monomials(name: str) -> list[sp.Expr]:
    degree, kind = RULE_DEGREE[name]
    symbols = _symbols(name)
    out = []
    for powers in itertools.product(range(degree + 2), repeat=len(symbols)):
        if kind == "each" and max(powers) > degree:
            continue
        if kind == "total" and sum(powers) > degree:
            continue
        if kind == "wedge" and (powers[0] + powers[1] > 2 or powers[2] > 3):
            continue
        out.append(sp.Mul(*(s**k for s, k in zip(symbols, powers))))
    return out


@pytest.mark.parametrize("name", NAMES)
def test_gauss_rule_is_exact_to_its_degree_and_lies_inside(name):
    # Common practice: the square [-1, 1]^2 has area 4, the reference triangle 1/2, the
    # unit tetrahedron 1/6, the cube [-1, 1]^3 8, the wedge 1, the pyramid 4/3; the rule
    # integrates its degree exactly (outside reference: sympy's exact integrals) and every
    # Gauss point lies inside the element.
    cell = CELL_TYPES[name]
    measure = float(SPACES[name][2])
    assert cell.reference_measure == pytest.approx(measure, rel=1e-15)
    assert cell.gauss_weights.sum() == pytest.approx(measure, rel=1e-14)
    g = cell.gauss_points
    symbols = _symbols(name)
    for monomial in _exact_monomials(name):
        f = sp.lambdify(symbols, monomial)
        got = float(np.sum(cell.gauss_weights * np.broadcast_to(f(*g.T), len(g))))
        assert got == pytest.approx(float(_exact_integral(name, monomial)), abs=1e-13), monomial
    if name.startswith(("quad", "hexahedron")):
        assert (np.abs(g) < 1.0).all()
    elif name.startswith(("triangle", "tetra")):
        assert (g > 0.0).all() and (g.sum(axis=1) < 1.0).all()
    elif name == "wedge":
        assert (g[:, :2] > 0.0).all() and (g[:, :2].sum(axis=1) < 1.0).all()
        assert (np.abs(g[:, 2]) < 1.0).all()
    else:  # pyramid
        assert ((g[:, 2] > 0.0) & (np.abs(g[:, :2]).max(axis=1) < 1.0 - g[:, 2])).all()


@pytest.mark.parametrize("name", SURFACES)
def test_edges_run_around_the_corners_and_the_surface_is_its_own_face(name):
    # Common practice: the boundary of a polygon visits corner i, then corner i + 1.
    cell = CELL_TYPES[name]
    k = cell.n_corners
    np.testing.assert_array_equal(
        cell.edges, np.column_stack([np.arange(k), (np.arange(k) + 1) % k])
    )
    assert cell.faces == (tuple(range(k)),)
    if cell.is_quadratic:
        # each midside node sits halfway between the two corners of its edge
        a, b, m = cell.midside_edges.T
        nodes = cell.reference_nodes
        np.testing.assert_array_equal(nodes[m], 0.5 * (nodes[a] + nodes[b]))
        np.testing.assert_array_equal(cell.midside_edges[:, :2], cell.edges)


@pytest.mark.parametrize("name", SOLIDS)
def test_solid_faces_close_outward_around_the_reference_volume(name):
    # The divergence theorem: the flux of x / 3 out through the faces is the volume, so
    # faces wound counter-clockwise seen from outside give +volume (a face turned inwards
    # or missing would not). Euler's formula V - E + F = 2 for a closed polyhedron, and
    # every edge is the side of exactly two faces (common practice).
    cell = CELL_TYPES[name]
    corners = cell.corners
    flux = 0.0
    sides = []
    for face in cell.faces:
        loop = corners[list(face)]
        area = 0.5 * sum(np.cross(loop[k], loop[(k + 1) % len(loop)]) for k in range(len(loop)))
        flux += float(loop.mean(axis=0) @ area) / 3.0
        sides += [frozenset((face[k], face[(k + 1) % len(face)])) for k in range(len(face))]
    assert flux == pytest.approx(cell.reference_measure, rel=1e-14)
    edges = [frozenset(e) for e in cell.edges.tolist()]
    assert len(set(edges)) == len(edges)
    assert sorted(map(sorted, sides)) == sorted(map(sorted, edges + edges))
    assert cell.n_corners - len(edges) + len(cell.faces) == 2


@pytest.mark.parametrize("name", SOLIDS)
def test_corner_triples_are_right_handed_edges(name):
    # A corner's matrix is built from three edges leaving it, right-handed on the
    # reference element (positive determinant: common practice for corner Jacobians).
    cell = CELL_TYPES[name]
    edges = {frozenset(e) for e in cell.edges.tolist()}
    for corner, *far in cell.corner_triples.tolist():
        assert all(frozenset((corner, f)) in edges for f in far)
        vectors = cell.corners[far] - cell.corners[corner]
        assert np.linalg.det(vectors) > 0.0


@pytest.mark.parametrize("name", [n for n in NAMES if CELL_TYPES[n].is_quadratic])
def test_midside_nodes_sit_halfway_along_their_edges(name):
    cell = CELL_TYPES[name]
    a, b, m = cell.midside_edges.T
    nodes = cell.reference_nodes
    np.testing.assert_array_equal(nodes[m], 0.5 * (nodes[a] + nodes[b]))
    edges = {frozenset(e) for e in cell.edges.tolist()}
    assert all(frozenset(pair) in edges for pair in cell.midside_edges[:, :2].tolist())
    assert len(cell.midside_edges) == len(cell.edges)


@pytest.mark.parametrize("name", NAMES)
def test_jacobians_of_the_reference_element_itself_are_one(name):
    # Mapping the reference element onto itself: det J = 1 at every Gauss point and node
    # (the pyramid's apex has no det J: its limit there depends on the direction).
    cell = CELL_TYPES[name]
    gauss, nodal = cell.jacobians(cell.reference_nodes[None])
    np.testing.assert_allclose(gauss, 1.0, rtol=1e-14)
    defined = ~np.isnan(nodal)
    np.testing.assert_allclose(nodal[defined], 1.0, rtol=1e-14)
    assert defined.sum() == cell.n_nodes - (name == "pyramid")
    assert gauss.shape == (1, len(cell.gauss_points)) and nodal.shape == (1, cell.n_nodes)


@pytest.mark.parametrize("name", SOLIDS)
def test_solid_jacobians_scale_with_the_cube_of_length_and_match_the_kernel(name):
    # det J of the map x -> 2 R x + t (R a rotation) is 8 everywhere (closed form); the
    # registry's det J at the Gauss points is what the audit's kernel reports.
    cell = CELL_TYPES[name]
    c, s = np.cos(0.3), np.sin(0.3)
    turn = np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])
    coords = 2.0 * cell.reference_nodes @ turn.T + np.array([5.0, -3.0, 7.0])
    gauss, nodal = cell.jacobians(coords[None])
    np.testing.assert_allclose(gauss, 8.0, rtol=1e-13)
    np.testing.assert_allclose(nodal[~np.isnan(nodal)], 8.0, rtol=1e-13)
    rng = np.random.default_rng(3)
    moved = coords[None] + rng.uniform(-0.1, 0.1, (5, *coords.shape))
    gauss, _ = cell.jacobians(moved)
    metrics, _ = cell.kernel(moved)
    np.testing.assert_allclose(metrics["det_j_min"], gauss.min(axis=1), rtol=1e-12)
    np.testing.assert_allclose(metrics["det_j_max"], gauss.max(axis=1), rtol=1e-12)
    if name != "tetra10":  # its det J is a cubic; the 4-point rule is of degree 2
        volume = gauss @ cell.gauss_weights  # the full rule integrates det J exactly
        np.testing.assert_allclose(metrics["volume"], volume, rtol=1e-12)


def test_a_solid_entry_is_measured_in_space_with_no_plane():
    # The engine's plug-in point for solids: a dimension-3 entry's kernel gets every node
    # in space as given (no frame, no measuring plane), and the metrics it does not measure
    # come back NaN. The kernel here is the closed-form tetrahedron (common practice):
    # det J = (x2 - x1) x (x3 - x1) . (x4 - x1) = 6 x volume; legs of length 2 give 8.
    from dataclasses import replace

    from meshaudit.engine.measure import measure_elements
    from meshaudit.metrics import METRIC_NAMES

    received = []

    def tetra_kernel(coords):
        received.append(coords)
        a, b, c = (coords[:, k] - coords[:, 0] for k in (1, 2, 3))
        det = np.einsum("ni,ni->n", np.cross(a, b), c)
        measured = {"area": det / 6.0, "det_j_min": det, "det_j_corner_min": det}
        names = ("inverted", "reversed", "nonconvex", "self_intersecting", "degenerate")
        return measured, {name: det <= 0.0 for name in names}

    tetra = replace(
        CELL_TYPES["triangle"],
        name="tetra",
        family="tetra",
        dimension=3,
        n_corners=4,
        reference_nodes=np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]]),
        kernel=tetra_kernel,
    )
    coords = 2.0 * tetra.reference_nodes[None] + np.array([5.0, -3.0, 7.0])
    metrics, flags = measure_elements(tetra, coords, frame=None)
    assert len(received) == 1 and np.array_equal(received[0], coords)
    assert metrics["det_j_min"][0] == pytest.approx(8.0)
    assert metrics["area"][0] == pytest.approx(8.0 / 6.0)
    unmeasured = set(METRIC_NAMES) - {"area", "det_j_min", "det_j_corner_min", "score"}
    assert all(np.isnan(metrics[name]).all() for name in unmeasured)
    assert not flags["inverted"].any()
