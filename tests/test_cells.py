"""The table of cell types (``meshaudit.cells.CELL_TYPES``) against outside references.

Outside references: meshio's own tables of nodes per cell and topological dimension (the
library every mesh is read with), sympy (shape functions solved from their interpolation
conditions in the element's standard polynomial space, then differentiated), and facts of
the trade (reference areas, Gauss rules, corner loops: common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp
from meshio._common import num_nodes_per_cell
from meshio._mesh import topological_dimension

from meshaudit.cells import CELL_TYPES

NAMES = list(CELL_TYPES)

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
X, Y = sp.symbols("x y")
#: Polynomial space of each cell type (common practice).
SPACES = {
    "quad": ([1, X, Y, X * Y], SQUARE[:4], 4),
    "quad8": ([1, X, Y, X**2, X * Y, Y**2, X**2 * Y, X * Y**2], SQUARE[:8], 4),
    "quad9": ([X**a * Y**b for a in range(3) for b in range(3)], SQUARE, 4),
    "triangle": ([1, X, Y], TRIANGLE[:3], sp.Rational(1, 2)),
    "triangle6": ([1, X, Y, X**2, X * Y, Y**2], TRIANGLE, sp.Rational(1, 2)),
}


def _sympy_shape_functions(name: str) -> list[sp.Expr]:
    """N_i(node_j) = delta_ij solved in the cell's polynomial space."""
    basis, nodes, _ = SPACES[name]
    basis = [sp.sympify(b) for b in basis]
    vander = sp.Matrix([[b.subs({X: n[0], Y: n[1]}) for b in basis] for n in nodes])
    coeffs = vander.inv()
    return [sum(coeffs[k, i] * basis[k] for k in range(len(basis))) for i in range(len(nodes))]


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
    # Outside reference: sympy solves the interpolation conditions and differentiates.
    cell = CELL_TYPES[name]
    funcs = _sympy_shape_functions(name)
    values = sp.lambdify((X, Y), funcs)
    dx = sp.lambdify((X, Y), [sp.diff(f, X) for f in funcs])
    dy = sp.lambdify((X, Y), [sp.diff(f, Y) for f in funcs])
    points = np.random.default_rng(7).uniform(0.0, 0.5, (9, 2))
    expected = np.array(
        [np.broadcast_to(np.array(values(*p), float), (len(funcs),)) for p in points]
    )
    np.testing.assert_allclose(cell.shape_functions(points), expected, atol=1e-13)
    derivs = np.array(
        [
            [
                np.broadcast_to(np.array(dx(*p), float), (len(funcs),)),
                np.broadcast_to(np.array(dy(*p), float), (len(funcs),)),
            ]
            for p in points
        ]
    )
    np.testing.assert_allclose(cell.shape_derivatives(points), derivs, atol=1e-13)


@pytest.mark.parametrize("name", NAMES)
def test_gauss_rule_weights_sum_to_the_reference_area(name):
    # Common practice: the square [-1, 1]^2 has area 4, the reference triangle 1/2; every
    # Gauss point lies inside the element.
    cell = CELL_TYPES[name]
    area = float(SPACES[name][2])
    assert cell.reference_measure == area
    assert cell.gauss_weights.sum() == pytest.approx(area, rel=1e-15)
    g = cell.gauss_points
    if cell.n_corners == 4:
        assert (np.abs(g) < 1.0).all()
    else:
        assert (g > 0.0).all() and (g.sum(axis=1) < 1.0).all()


@pytest.mark.parametrize("name", NAMES)
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


@pytest.mark.parametrize("name", NAMES)
def test_jacobians_of_the_reference_element_itself_are_one(name):
    # Mapping the reference element onto itself: det J = 1 at every Gauss point and node.
    cell = CELL_TYPES[name]
    gauss, nodal = cell.jacobians(cell.reference_nodes[None])
    np.testing.assert_allclose(gauss, 1.0, rtol=1e-14)
    np.testing.assert_allclose(nodal, 1.0, rtol=1e-14)
    assert gauss.shape == (1, len(cell.gauss_points)) and nodal.shape == (1, cell.n_nodes)


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
