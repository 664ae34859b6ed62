"""Hexahedron kernels (hexahedron, hexahedron20, hexahedron27) against outside references.

Each check names its reference: scikit-fem (meshio converters, mappings, shape
functions), sympy (shape functions from their interpolation conditions, exact det J),
scipy's ConvexHull, the divergence theorem, and closed forms of analytic shapes.

scikit-fem's reference cube is [0, 1]^3 with its own corner numbering; ours is [-1, 1]^3
in meshio's (VTK's) order. The two are related by an affine map X_ours = A X_skfem + b
found from the corner correspondence its meshio converter defines, so at corresponding
points det DF_skfem = det(A) det J_ours, with |det A| = 8.
"""

from __future__ import annotations

import itertools
import warnings

import meshio
import numpy as np
import pytest
import skfem
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull
from skfem.io.meshio import INV_HEX_MAPPING, from_meshio, to_meshio
from skfem.quadrature import get_quadrature
from skfem.refdom import RefHex

from meshaudit.metrics.solid import hex_bernstein, hex_jacobian
from meshaudit.metrics.solid.hex_reference import REFERENCE
from meshaudit.metrics.solid.hexahedron import FLAGS, METRICS, measure

CUBE = (REFERENCE["hexahedron"].nodes + 1.0) / 2.0  # unit cube, meshio order
NODES = {name: cell.nodes for name, cell in REFERENCE.items()}
N_NODES = {name: len(cell.nodes) for name, cell in REFERENCE.items()}


def one(coords: np.ndarray, cell_type: str = "hexahedron"):
    """Metrics and flags of one element, as plain floats and a set of raised flags."""
    m, f = measure(np.asarray(coords, dtype=float)[None], cell_type)
    return {k: float(v[0]) for k, v in m.items()}, {k for k, v in f.items() if v[0]}


def straight(corners: np.ndarray, cell_type: str) -> np.ndarray:
    """Nodes of a straight-sided element of ``cell_type`` through ``corners`` (8, 3):
    every node where the trilinear map through the corners puts it."""
    ref = REFERENCE[cell_type]
    return REFERENCE["hexahedron"].shape_functions(ref.nodes) @ corners


def perturbed(cell_type: str, n: int, amount: float, seed: int) -> np.ndarray:
    """n unit-cube elements with every node moved at random by up to ``amount``."""
    rng = np.random.default_rng(seed)
    base = straight(CUBE, cell_type)
    return base[None] + rng.uniform(-amount, amount, size=(n, *base.shape))


# -- node order ------------------------------------------------------------------------
def test_node_order_is_what_skfem_converts_to_meshio():
    """Source: scikit-fem's meshio converter (to_meshio) writes its MeshHex and MeshHex2
    cells in meshio's order; on its unit cube the nodes land at our reference positions."""
    mesh2 = to_meshio(skfem.MeshHex2())
    cell = mesh2.cells_dict["hexahedron27"][0]
    np.testing.assert_array_equal(mesh2.points[cell], (NODES["hexahedron27"] + 1.0) / 2.0)
    mesh1 = to_meshio(skfem.MeshHex())
    cell = mesh1.cells_dict["hexahedron"][0]
    np.testing.assert_array_equal(mesh1.points[cell], CUBE)


def test_node_order_agrees_with_meshios_gmsh_tables():
    """Source: meshio's own gmsh <-> meshio node reordering for hexahedron20/27
    (meshio/gmsh/common.py), applied to gmsh's node positions (gmsh's documented order,
    from memory: edges 0-1, 0-3, 0-4, 1-2, 1-5, 2-3, 2-6, 3-7, 4-5, 4-7, 5-6, 6-7; faces
    0123, 0154, 0374, 1265, 2376, 4567; centre)."""
    from meshio.gmsh.common import _gmsh_to_meshio_order

    c = NODES["hexahedron"]
    gmsh_edges = [(0, 1), (0, 3), (0, 4), (1, 2), (1, 5), (2, 3), (2, 6), (3, 7)]
    gmsh_edges += [(4, 5), (4, 7), (5, 6), (6, 7)]
    faces = [(0, 1, 2, 3), (0, 1, 5, 4), (0, 3, 7, 4), (1, 2, 6, 5), (2, 3, 7, 6), (4, 5, 6, 7)]
    gmsh = np.vstack(
        [c, [(c[a] + c[b]) / 2 for a, b in gmsh_edges], [c[list(f)].mean(0) for f in faces]]
    )
    gmsh = np.vstack([gmsh, np.zeros((1, 3))])
    order27 = _gmsh_to_meshio_order("hexahedron27", np.arange(27)[None])[0]
    np.testing.assert_array_equal(gmsh[order27], NODES["hexahedron27"])
    order20 = _gmsh_to_meshio_order("hexahedron20", np.arange(20)[None])[0]
    np.testing.assert_array_equal(gmsh[:20][order20], NODES["hexahedron20"])


def test_skfem_generated_meshes_are_positively_oriented():
    """Source: scikit-fem's tensor-product mesh generator, exported to meshio's order by its
    own converter (the order VTK draws): every element has det J > 0 and the box's det J
    (0.5 x 1 x 1 elements: 1/16 on [-1, 1]^3)."""
    mesh = skfem.MeshHex.init_tensor(np.linspace(0, 1, 3), np.linspace(0, 2, 3), [0.0, 1.0])
    for m, name in ((mesh, "hexahedron"), (skfem.MeshHex2.from_mesh(mesh), "hexahedron27")):
        out = to_meshio(m)
        coords = out.points[out.cells_dict[name]]
        metrics, flags = measure(coords, name)
        np.testing.assert_allclose(metrics["det_j_min"], 0.5 * 1 * 1 / 8, rtol=1e-14)
        np.testing.assert_allclose(metrics["det_j_lower_bound"], 1 / 16, rtol=1e-12)
        assert not flags["inverted"].any()
        assert not flags["reversed"].any()


def test_faces_are_outward_and_corner_triples_right_handed():
    """Closed form: on the reference cube each face's right-hand normal points away from
    the centre, and each corner's three edges have det +8 (edges of length 2)."""
    ref = REFERENCE["hexahedron"]
    c = ref.nodes
    for face in ref.faces:
        a, b, _, d = c[face]
        assert np.dot(np.cross(b - a, d - a), c[face].mean(0)) > 0
    for corner, (a, b, d) in enumerate(ref.corner_triples):
        assert np.linalg.det(np.array([c[a], c[b], c[d]]) - c[corner]) == pytest.approx(8.0)


# -- scikit-fem: det J at its quadrature points ----------------------------------------
def _skfem_to_ours() -> tuple[np.ndarray, np.ndarray]:
    """(A, b) with X_ours = A X_skfem + b, from scikit-fem's corner correspondence: its
    local node i (at RefHex.p[:, i]) is meshio node INV_HEX_MAPPING[i]."""
    ours = NODES["hexahedron"][INV_HEX_MAPPING[:8]]
    theirs = np.column_stack([RefHex.p.T, np.ones(8)])
    sol, *_ = np.linalg.lstsq(theirs, ours, rcond=None)
    np.testing.assert_allclose(theirs @ sol, ours, atol=1e-14)
    return sol[:3].T, sol[3]


def _skfem_mesh(coords: np.ndarray, cell_type: str):
    n, k, _ = coords.shape
    cells = np.arange(n * k).reshape(n, k)
    return from_meshio(meshio.Mesh(coords.reshape(-1, 3), [(cell_type, cells)]))


@pytest.mark.parametrize(
    ("cell_type", "amount", "seed"),
    [("hexahedron", 0.15, 1), ("hexahedron", 0.3, 2), ("hexahedron27", 0.1, 3)],
)
def test_det_j_matches_skfem_at_its_quadrature_points(cell_type, amount, seed):
    """Source: scikit-fem MeshHex / MeshHex2 (from meshio) with their isoparametric
    mappings (ElementHex1 / ElementHex2): det DF at its Gauss points = det(A) det J_ours
    at the corresponding points (|det A| = 8); its Gauss rule is ours, so the extremes
    and the volume (the sum of det DF w, whose weights sum to 1) agree as well."""
    coords = perturbed(cell_type, 40, amount, seed)
    mesh = _skfem_mesh(coords, cell_type)
    order = 3 if cell_type == "hexahedron" else 5
    X, W = get_quadrature(RefHex, order)
    theirs = mesh.mapping().detDF(X)  # (n, q)
    A, b = _skfem_to_ours()
    points = (A @ X).T + b
    ref = REFERENCE[cell_type]
    ours = np.linalg.det(np.einsum("qak,nkb->nqab", ref.shape_derivatives(points), coords))
    np.testing.assert_allclose(theirs, np.linalg.det(A) * ours, rtol=1e-12, atol=1e-13)
    # the same points as the kernel's Gauss rule
    np.testing.assert_allclose(
        np.array(sorted(map(tuple, points.round(12)))),
        np.array(sorted(map(tuple, ref.gauss_points.round(12)))),
        atol=1e-12,
    )
    metrics, _ = measure(coords, cell_type)
    scaled = theirs / np.linalg.det(A)
    np.testing.assert_allclose(metrics["det_j_min"], scaled.min(axis=1), rtol=1e-11, atol=1e-14)
    np.testing.assert_allclose(metrics["det_j_max"], scaled.max(axis=1), rtol=1e-11, atol=1e-14)
    np.testing.assert_allclose(
        metrics["volume"], (theirs * W).sum(axis=1) * np.sign(np.linalg.det(A)), rtol=1e-11
    )


def test_hex20_det_j_matches_skfem_serendipity_basis():
    """Source: scikit-fem ElementHexS2's shape-function gradients (its 20-node serendipity
    element): J = sum_i x_i grad phi_i at its Gauss points, its node i matched to ours by
    position under the affine map; det J_skfem = det(A) det J_ours."""
    element = skfem.ElementHexS2()
    A, b = _skfem_to_ours()
    dof_ours = element.doflocs @ A.T + b
    match = [
        int(np.flatnonzero(np.all(np.isclose(NODES["hexahedron20"], p), axis=1))[0])
        for p in dof_ours
    ]
    assert sorted(match) == list(range(20))
    coords = perturbed("hexahedron20", 30, 0.12, 4)
    X, _ = get_quadrature(RefHex, 5)
    grads = np.array([element.lbasis(X, i)[1] for i in range(20)])  # (20, 3, q)
    jac = np.einsum("nid,iaq->nqda", coords[:, match], grads)
    theirs = np.linalg.det(jac)
    ref = REFERENCE["hexahedron20"]
    points = (A @ X).T + b
    ours = np.linalg.det(np.einsum("qak,nkb->nqab", ref.shape_derivatives(points), coords))
    np.testing.assert_allclose(theirs, np.linalg.det(A) * ours, rtol=1e-11, atol=1e-13)
    metrics, _ = measure(coords, "hexahedron20")
    scaled = theirs / np.linalg.det(A)
    np.testing.assert_allclose(metrics["det_j_min"], scaled.min(axis=1), rtol=1e-11)
    np.testing.assert_allclose(metrics["det_j_max"], scaled.max(axis=1), rtol=1e-11)


# -- closed forms ----------------------------------------------------------------------
def test_unit_cube():
    """Closed form: the unit cube on [-1, 1]^3 has det J = 1/8 everywhere; it is the ideal
    shape (scaled Jacobian, condition, aspect 1; skew, taper, warp 0; 90 degree angles)."""
    m, f = one(CUBE)
    assert f == set()
    for name in ("det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound"):
        assert m[name] == pytest.approx(0.125, rel=1e-15)
    assert m["volume"] == pytest.approx(1.0, rel=1e-15)
    for name in ("scaled_jacobian", "condition", "aspect_ratio", "jacobian_ratio", "edge_ratio"):
        assert m[name] == pytest.approx(1.0, rel=1e-15)
    for name in ("skew", "taper", "warp"):
        assert m[name] == pytest.approx(0.0, abs=1e-12)
    for name in ("min_angle", "max_angle", "min_dihedral", "max_dihedral"):
        assert m[name] == pytest.approx(90.0, rel=1e-14)
    assert np.isnan(m["area"]) and np.isnan(m["midside_offset_along"])


@pytest.mark.parametrize("dims", [(1.0, 2.0, 3.0), (5.0, 1.0, 1.0), (0.1, 0.1, 2.0)])
def test_box(dims):
    """Closed form: an a x b x c box has det J = abc/8, aspect ratio = edge ratio =
    max/min, scaled Jacobian 1, condition sqrt(a^2+b^2+c^2) sqrt(a^2b^2+b^2c^2+c^2a^2)/(3abc)."""
    a, b, c = dims
    m, f = one(CUBE * dims)
    assert f == set()
    assert m["det_j_min"] == pytest.approx(a * b * c / 8, rel=1e-14)
    assert m["volume"] == pytest.approx(a * b * c, rel=1e-14)
    assert m["aspect_ratio"] == pytest.approx(max(dims) / min(dims), rel=1e-14)
    assert m["edge_ratio"] == pytest.approx(max(dims) / min(dims), rel=1e-14)
    assert m["scaled_jacobian"] == pytest.approx(1.0, rel=1e-14)
    kappa = np.sqrt(a * a + b * b + c * c) * np.sqrt(a * a * b * b + b * b * c * c + c * c * a * a)
    assert m["condition"] == pytest.approx(kappa / (3 * a * b * c), rel=1e-13)
    assert m["skew"] == pytest.approx(0.0, abs=1e-12)


@pytest.mark.parametrize("theta", [80.0, 60.0, 45.0, 20.0])
def test_sheared_parallelepiped(theta):
    """Closed form: the parallelepiped on unit edges x, (cos t, sin t, 0), z has skew
    90 - t, scaled Jacobian sin t, face and dihedral angles t and 180 - t, taper 0,
    det J sin(t)/8 everywhere (jacobian ratio 1), condition sqrt(3) sqrt(2 + sin^2 t)/(3 sin t)."""
    t = np.radians(theta)
    shear = np.array([[1, 0, 0], [np.cos(t), np.sin(t), 0], [0, 0, 1]])
    m, f = one(CUBE @ shear)
    assert f == set()
    assert m["skew"] == pytest.approx(90.0 - theta, rel=1e-12)
    assert m["scaled_jacobian"] == pytest.approx(np.sin(t), rel=1e-13)
    assert m["min_angle"] == pytest.approx(theta, rel=1e-12)
    assert m["max_angle"] == pytest.approx(180.0 - theta, rel=1e-12)
    assert m["min_dihedral"] == pytest.approx(theta, rel=1e-12)
    assert m["max_dihedral"] == pytest.approx(180.0 - theta, rel=1e-12)
    assert m["taper"] == pytest.approx(0.0, abs=1e-12)
    assert m["det_j_lower_bound"] == pytest.approx(np.sin(t) / 8, rel=1e-12)
    assert m["jacobian_ratio"] == pytest.approx(1.0, rel=1e-12)
    expected = np.sqrt(3.0) * np.sqrt(2.0 + np.sin(t) ** 2) / (3.0 * np.sin(t))
    assert m["condition"] == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("a", "c", "h"), [(1.0, 0.5, 1.0), (2.0, 1.5, 0.3), (1.0, 0.1, 2.0)])
def test_frustum_taper(a, c, h):
    """Closed form: a frustum of a square pyramid (base a, top c, height h) has taper
    |a - c| / (a + c) (the quadrilateral trapezoid's value), skew 0, warp 0, dihedral angle
    atan(2h / (a - c)) at the base, volume h (a^2 + ac + c^2) / 3, and det J from
    c^2 h / 8 at the top corners to a^2 h / 8 at the base corners."""
    corners = CUBE.copy()
    corners[:4, :2] = (corners[:4, :2] - 0.5) * a
    corners[4:, :2] = (corners[4:, :2] - 0.5) * c
    corners[:, 2] *= h
    m, f = one(corners)
    assert f == set()
    assert m["taper"] == pytest.approx(abs(a - c) / (a + c), rel=1e-12)
    assert m["skew"] == pytest.approx(0.0, abs=1e-12)
    assert m["warp"] == pytest.approx(0.0, abs=1e-12)
    assert m["volume"] == pytest.approx(h * (a * a + a * c + c * c) / 3, rel=1e-12)
    assert m["det_j_corner_min"] == pytest.approx(c * c * h / 8, rel=1e-12)
    assert m["det_j_lower_bound"] == pytest.approx(c * c * h / 8, rel=1e-12)
    assert m["min_dihedral"] == pytest.approx(np.degrees(np.arctan2(2 * h, a - c)), rel=1e-12)


@pytest.mark.parametrize("h", [0.05, 0.124, 0.3, 1.0])
def test_lifted_corner_warp(h):
    """Closed form: a unit cube with one top corner lifted by h: the top face reads
    arccos(1 / (1 + h^2)) (the quad warp of a square with a lifted corner); the side faces
    through that corner stay flat."""
    corners = CUBE.copy()
    corners[6, 2] += h
    m, f = one(corners)
    assert f == set()
    assert m["warp"] == pytest.approx(np.degrees(np.arccos(1 / (1 + h * h))), rel=1e-11)


def test_flattened_hex_is_degenerate():
    """Closed form: a hex squashed flat (all corners in one plane) has zero volume and det J
    zero everywhere: degenerate, and no other flag."""
    m, f = one(CUBE * [1.0, 1.0, 0.0])
    assert f == {"degenerate"}
    assert m["volume"] == 0.0 and m["scaled_jacobian"] == 0.0
    m, f = one(CUBE * [1.0, 1.0, 1e-12])
    assert f == {"degenerate"}
    m, f = one(CUBE * [1.0, 1.0, 1e-6])  # thin but a solid: not degenerate
    assert f == set()


def test_collapsed_edge_is_degenerate():
    """Closed form: two corners at one place (a hex collapsed to a wedge) is degenerate."""
    corners = CUBE.copy()
    corners[5] = corners[4]
    assert one(corners)[1] == {"degenerate"}
    corners = CUBE.copy()
    corners[6] = corners[0]  # a body diagonal collapsed
    assert "degenerate" in one(corners)[1]


def test_inside_out_hex_is_inverted_and_reversed():
    """Closed form: the unit cube with its two faces' corners swapped (mirrored order) has
    det J = -1/8 everywhere: inverted and reversed, volume -1, scaled Jacobian -1, while the
    shape (angles, aspect, dihedral angles) is still a cube's."""
    m, f = one(CUBE[[4, 5, 6, 7, 0, 1, 2, 3]])
    assert f == {"inverted", "reversed"}
    assert m["det_j_max"] == pytest.approx(-0.125)
    assert m["det_j_lower_bound"] == pytest.approx(-0.125)
    assert m["volume"] == pytest.approx(-1.0)
    assert m["scaled_jacobian"] == pytest.approx(-1.0)
    assert m["condition"] == np.inf and m["jacobian_ratio"] == np.inf
    assert m["min_dihedral"] == pytest.approx(90.0) and m["max_angle"] == pytest.approx(90.0)


def test_reentrant_corner_is_nonconvex():
    """Closed form: a unit cube whose corner (1, 1, 1) is pushed inside, to (0.4, 0.4, 0.4),
    has that corner's edge triple det[a, b, c] = -0.6^3 * ... < 0 while the other corners
    stay positive: nonconvex and inverted, corner det J min = det of the edges / 8."""
    corners = CUBE.copy()
    corners[6] = [0.4, 0.4, 0.4]
    m, f = one(corners)
    assert f == {"inverted", "nonconvex"}
    # corner 6's edges go to 2 = (1,1,0), 5 = (1,0,1), 7 = (0,1,1)
    p = corners[6]
    a, b, c = (corners[k] - p for k in REFERENCE["hexahedron"].corner_triples[6])
    assert m["det_j_corner_min"] == pytest.approx(np.linalg.det([a, b, c]) / 8, rel=1e-13)
    assert m["det_j_corner_min"] < 0


def test_twisted_hex_is_self_intersecting():
    """Closed form: a cube whose top face is turned by 180 degrees about the vertical axis
    has side faces that cross themselves (bow-ties through the axis)."""
    corners = CUBE.copy()
    corners[4:] = CUBE[[6, 7, 4, 5]]
    assert "self_intersecting" in one(corners)[1]
    corners = CUBE.copy()
    corners[[6, 7], 2] = -1.0  # two top corners pushed below the base: the side faces cross
    assert "self_intersecting" in one(corners)[1]


# -- the certified lower bound ---------------------------------------------------------
#: A trilinear hex (coordinates in quarters) whose det J is positive at all 8 corners and
#: all 8 Gauss points but negative inside (found by a random search, then rounded).
PLANTED = (
    np.array(
        [
            [2, 2, 0],
            [1, 0, 1],
            [8, 4, -3],
            [0, 5, 1],
            [-3, -1, -1],
            [2, -2, 8],
            [4, 6, 3],
            [2, 1, 5],
        ]
    )
    / 4.0
)

XI, ETA, ZETA = sp.symbols("xi eta zeta")
VARS = (XI, ETA, ZETA)


def _exact_det(coords, cell_type: str = "hexahedron") -> sp.Poly:
    """det J as an exact polynomial (sympy) from shape functions built by
    :func:`_sympy_shape_functions`, the node coordinates taken as exact rationals."""
    shapes = _sympy_shape_functions(cell_type)
    x = [sum(sp.nsimplify(c[d]) * n for c, n in zip(coords, shapes)) for d in range(3)]
    jac = sp.Matrix(3, 3, lambda i, j: sp.diff(x[i], VARS[j]))
    return sp.Poly(sp.expand(jac.det()), *VARS)


def _monomials(cell_type: str) -> list[sp.Expr]:
    """Spanning monomials: trilinear; serendipity (superlinear degree <= 2: at most one
    variable squared); triquadratic (every power up to 2)."""
    powers = list(itertools.product(range(3), repeat=3))
    if cell_type == "hexahedron":
        powers = [p for p in powers if max(p) <= 1]
    elif cell_type == "hexahedron20":
        powers = [p for p in powers if sum(q == 2 for q in p) <= 1]
    return [XI**a * ETA**b * ZETA**c for a, b, c in powers]


_SHAPE_CACHE: dict[str, list[sp.Expr]] = {}


def _sympy_shape_functions(cell_type: str) -> list[sp.Expr]:
    """Shape functions from their interpolation conditions: N_i(node_j) = delta_ij in the
    span of the element's monomials (sympy, exact)."""
    if cell_type not in _SHAPE_CACHE:
        mons = _monomials(cell_type)
        nodes = [[sp.Integer(int(v)) for v in node] for node in NODES[cell_type]]
        vander = sp.Matrix([[m.subs(dict(zip(VARS, node))) for m in mons] for node in nodes])
        coef = vander.inv()  # column i: coefficients of N_i
        _SHAPE_CACHE[cell_type] = [
            sp.expand(sum(coef[j, i] * mons[j] for j in range(len(mons))))
            for i in range(len(nodes))
        ]
    return _SHAPE_CACHE[cell_type]


def test_serendipity_monomials_are_twenty():
    """Source: the 20-node serendipity space: the 8 trilinear monomials and the 12 of the
    form (square) x (linear in one other variable) or squares alone."""
    assert len(_monomials("hexahedron20")) == 20
    assert len(_monomials("hexahedron27")) == 27


@pytest.mark.parametrize("cell_type", ["hexahedron", "hexahedron20", "hexahedron27"])
def test_shape_functions_match_sympy(cell_type):
    """Source: sympy: shape functions solved from N_i(node_j) = delta_ij; ours (the
    reference table's functions and derivatives) at random points."""
    shapes = _sympy_shape_functions(cell_type)
    rng = np.random.default_rng(11)
    points = rng.uniform(-1, 1, size=(7, 3))
    f = sp.lambdify(VARS, shapes, "numpy")
    g = sp.lambdify(VARS, [[sp.diff(s, v) for s in shapes] for v in VARS], "numpy")
    ref = REFERENCE[cell_type]
    for p, values, grads in zip(points, ref.shape_functions(points), ref.shape_derivatives(points)):
        np.testing.assert_allclose(values, np.array(f(*p), dtype=float), atol=1e-14)
        np.testing.assert_allclose(grads, np.array(g(*p), dtype=float), atol=1e-13)


@pytest.mark.parametrize(
    ("cell_type", "degree"), [("hexahedron", 2), ("hexahedron20", 5), ("hexahedron27", 5)]
)
def test_det_j_degree_is_the_bernstein_spaces(cell_type, degree):
    """Source: sympy: the exact det J of an element with random integer nodes has degree
    ``degree`` in each of xi, eta, zeta (and no more for any element: the bound follows from
    the derivatives' degrees), the degree of the tensor Bernstein space the kernel uses."""
    rng = np.random.default_rng(3)
    coords = straight(CUBE * 4, cell_type).round() + rng.integers(
        -1, 2, size=(N_NODES[cell_type], 3)
    )
    poly = _exact_det(coords, cell_type)
    assert [poly.degree(v) for v in VARS] == [degree] * 3
    assert hex_jacobian.MAPS[cell_type].space.degree == degree


def test_planted_hex_negative_inside_only():
    """Source: sympy, exact: the planted hex's det J is positive at its 8 corners and its 8
    Gauss points (+-1/sqrt(3), exactly) but negative inside; its exact minimum on the edge
    eta = zeta = 1 (a quadratic in xi, minimised exactly) is the element's minimum (no
    value of a 41^3 grid is lower). The kernel flags it inverted, its certified bound lies
    below that minimum and within 25 per cent of it."""
    poly = _exact_det(PLANTED)
    corners = [poly.eval(dict(zip(VARS, c))) for c in NODES["hexahedron"].astype(int).tolist()]
    assert min(corners) > 0
    g = 1 / sp.sqrt(3)
    gauss = [
        sp.nsimplify(poly.as_expr().subs(dict(zip(VARS, s))))
        for s in itertools.product((-g, g), repeat=3)
    ]
    assert all(sp.simplify(v) > 0 for v in gauss)
    on_edge = sp.Poly(poly.as_expr().subs({ETA: 1, ZETA: 1}), XI)
    (xi_min,) = sp.solve(on_edge.diff(XI), XI)
    assert -1 < xi_min < 1 and on_edge.LC() > 0
    exact_min = on_edge.eval(xi_min)
    assert exact_min < 0
    t = np.linspace(-1, 1, 41)
    grid = sp.lambdify(VARS, poly.as_expr(), "numpy")(*np.meshgrid(t, t, t, indexing="ij"))
    assert grid.min() >= float(exact_min) - 1e-12
    m, f = one(PLANTED)
    assert "inverted" in f
    assert m["det_j_min"] > 0 and m["det_j_corner_min"] > 0
    assert m["det_j_lower_bound"] <= float(exact_min)
    assert m["det_j_lower_bound"] >= 1.25 * float(exact_min)


@pytest.mark.parametrize(
    ("cell_type", "amount"),
    [("hexahedron", 0.4), ("hexahedron20", 0.15), ("hexahedron27", 0.15)],
)
def test_lower_bound_below_every_value(cell_type, amount):
    """Source: det J sampled on a 21^3 grid of the reference cube (the shape derivatives
    are checked against sympy above): the certified bound never exceeds a sampled value;
    every element with a negative sample is flagged inverted, those negative only
    between the nodes and Gauss points too; and the refinement decides the others: no
    element whose samples all exceed 1e-3 is flagged."""
    coords = perturbed(cell_type, 300, amount, 21)
    ref = REFERENCE[cell_type]
    t = np.linspace(-1, 1, 21)
    points = np.stack(np.meshgrid(t, t, t, indexing="ij"), -1).reshape(-1, 3)
    d = ref.shape_derivatives(points)
    sampled = np.linalg.det(np.einsum("qak,nkb->nqab", d, coords)).min(axis=1)
    m, f = measure(coords, cell_type)
    assert (m["det_j_lower_bound"] <= sampled + 1e-12).all()
    assert f["inverted"][sampled < 0].all()
    assert 0 < (sampled < 0).sum() < len(coords)  # the sample holds both kinds
    assert not (f["inverted"] & (sampled > 1e-3)).any()
    if cell_type == "hexahedron27":
        inside = (sampled < 0) & (m["det_j_min"] > 0) & (m["det_j_corner_min"] > 0)
        assert inside.sum() >= 5


def test_refinement_is_bounded_on_a_zero_plane():
    """Closed form: the cube with its top turned by 180 degrees pinches to a point at mid
    height (det J = 0 over the whole plane zeta = 0, positive elsewhere): the refinement
    stops within its depth and piece limits and the bound is 0 (round-off allowed)."""
    corners = CUBE.copy()
    corners[4:] = CUBE[[6, 7, 4, 5]]
    part = hex_jacobian.jacobian_part("hexahedron", corners[None])
    assert part.lower[0] <= 1e-15
    assert part.lower[0] >= -1e-12
    assert hex_bernstein.MAX_DEPTH <= 6


# -- volumes ---------------------------------------------------------------------------
def test_volume_of_convex_hexes_matches_convex_hull():
    """Source: scipy.spatial.ConvexHull: a convex hex with planar faces (random affine
    images of frusta of square pyramids) encloses the hull of its corners."""
    rng = np.random.default_rng(8)
    coords = []
    for _ in range(50):
        a, c, h = rng.uniform(0.5, 2.0, size=3)
        corners = CUBE.copy()
        corners[:4, :2] = (corners[:4, :2] - 0.5) * a
        corners[4:, :2] = (corners[4:, :2] - 0.5) * c
        corners[:, 2] *= h
        affine = rng.normal(size=(3, 3))
        if np.linalg.det(affine) < 0:
            affine[:, 0] *= -1
        coords.append(corners @ affine.T + rng.normal(size=3))
    coords = np.array(coords)
    m, f = measure(coords, "hexahedron")
    hull = np.array([ConvexHull(c).volume for c in coords])
    np.testing.assert_allclose(m["volume"], hull, rtol=1e-10)
    assert not any(v.any() for v in f.values())


@pytest.mark.parametrize("cell_type", ["hexahedron", "hexahedron20", "hexahedron27"])
def test_volume_by_the_divergence_theorem(cell_type):
    """Source: divergence theorem: V = (1/3) sum over the faces of the integral of
    x . (x_u x x_v) du dv over each face patch (outward parametrisation), by a Gauss rule
    exact for its degree; warped and curved elements included."""
    coords = perturbed(cell_type, 30, 0.15, 5)
    ref = REFERENCE[cell_type]
    g, w = np.polynomial.legendre.leggauss(4)
    uu, vv = np.meshgrid(g, g, indexing="ij")
    uu, vv, ww = uu.ravel(), vv.ravel(), np.outer(w, w).ravel()
    total = np.zeros(len(coords))
    # faces as (fixed axis, value, u axis, v axis) with u x v outward
    for axis, value in itertools.product(range(3), (-1.0, 1.0)):
        u_axis, v_axis = (axis + 1) % 3, (axis + 2) % 3
        if value < 0:
            u_axis, v_axis = v_axis, u_axis
        points = np.zeros((len(uu), 3))
        points[:, axis], points[:, u_axis], points[:, v_axis] = value, uu, vv
        x = np.einsum("qk,nkd->nqd", ref.shape_functions(points), coords)
        d = np.einsum("qak,nkd->nqad", ref.shape_derivatives(points), coords)
        flux = np.einsum("nqd,nqd->nq", x, np.cross(d[:, :, u_axis], d[:, :, v_axis]))
        total += flux @ ww
    m, _ = measure(coords, cell_type)
    np.testing.assert_allclose(m["volume"], total / 3, rtol=1e-11)


# -- invariance ------------------------------------------------------------------------
def _rotations() -> list[np.ndarray]:
    """The 24 rotations of the cube (signed permutation matrices of determinant +1)."""
    out = []
    for perm in itertools.permutations(range(3)):
        for signs in itertools.product((1, -1), repeat=3):
            r = np.zeros((3, 3))
            r[range(3), perm] = signs
            if np.linalg.det(r) > 0:
                out.append(r)
    return out


ROTATIONS = _rotations()


def renumbering(cell_type: str, rotation: np.ndarray) -> np.ndarray:
    """Node permutation s: new node j = old node s[j], the same element mapped from the
    reference cube turned by ``rotation`` (orientation kept)."""
    nodes = NODES[cell_type]
    turned = nodes @ rotation.T
    return np.array([int(np.flatnonzero(np.all(np.isclose(nodes, p), axis=1))[0]) for p in turned])


SHAPE_METRICS = (
    "scaled_jacobian",
    "condition",
    "aspect_ratio",
    "skew",
    "taper",
    "warp",
    "edge_ratio",
    "min_angle",
    "max_angle",
    "min_dihedral",
    "max_dihedral",
    "jacobian_ratio",
    "midside_offset_along",
    "midside_offset_across",
)
SIZE_METRICS = ("volume", "det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound")


def _same(a: dict, b: dict, scale: float = 1.0):
    for name in SHAPE_METRICS:
        np.testing.assert_allclose(a[name], b[name], rtol=1e-8, atol=1e-8, err_msg=name)
    for name in SIZE_METRICS:
        np.testing.assert_allclose(
            a[name] * scale**3, b[name], rtol=1e-8, atol=1e-10 * scale**3, err_msg=name
        )


@settings(max_examples=25, deadline=None)
@given(
    cell_type=st.sampled_from(["hexahedron", "hexahedron20", "hexahedron27"]),
    seed=st.integers(0, 10_000),
    amount=st.sampled_from([0.05, 0.2, 0.35]),
    k=st.integers(0, 23),
    scale=st.sampled_from([1e-3, 0.5, 1.0, 7.0, 1e4]),
)
def test_invariance(cell_type, seed, amount, k, scale):
    """Source: rigid motions, uniform scaling and renumberings by a rotation of the
    reference cube (the 24 that keep orientation) change no shape metric and no flag;
    volumes and det J scale by the cube of the factor. A mirror renumbering reverses."""
    coords = perturbed(cell_type, 8, amount, seed)
    m0, f0 = measure(coords, cell_type)
    rng = np.random.default_rng(seed)
    q, _ = np.linalg.qr(rng.normal(size=(3, 3)))
    if np.linalg.det(q) < 0:
        q[:, 0] *= -1
    moved = (coords @ q.T + rng.normal(size=3) * 10) * scale
    m1, f1 = measure(moved, cell_type)
    _same(m0, m1, scale)
    perm = renumbering(cell_type, ROTATIONS[k])
    m2, f2 = measure(coords[:, perm], cell_type)
    _same(m0, m2)
    for name in FLAGS:
        np.testing.assert_array_equal(f0[name], f1[name], err_msg=name)
        np.testing.assert_array_equal(f0[name], f2[name], err_msg=name)
    mirror = renumbering(cell_type, -np.eye(3))  # point reflection: orientation reversed
    m3, f3 = measure(coords[:, mirror], cell_type)
    clean = ~f0["inverted"] & ~f0["degenerate"]
    assert f3["reversed"][clean].all()
    np.testing.assert_allclose(m3["volume"], -m0["volume"], rtol=1e-12, atol=1e-14)


# -- contract --------------------------------------------------------------------------
@pytest.mark.parametrize("cell_type", ["hexahedron", "hexahedron20", "hexahedron27"])
def test_contract(cell_type):
    """The kernel's contract (SOLIDS): every metric and flag an (n,) array of float64 /
    bool, no warnings on degenerate input, no -0.0, NaN only where not defined (area; the
    midside offsets of the linear hexahedron, and of an element collapsed to a point: no
    chord to measure against)."""
    k = N_NODES[cell_type]
    base = straight(CUBE, cell_type)
    bad = np.array([base, base * 0.0, base * [1, 1, 0], base[::-1] if k == 8 else base, -base])
    coords = np.concatenate([perturbed(cell_type, 5, 0.3, 1), bad])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        m, f = measure(coords, cell_type)
        empty_m, empty_f = measure(np.zeros((0, k, 3)), cell_type)
    assert set(m) == set(METRICS) and set(f) == set(FLAGS)
    for name, v in m.items():
        assert v.shape == (len(coords),) and v.dtype == np.float64
        assert not np.any((v == 0) & np.signbit(v)), name
        if name == "area" or (k == 8 and name.startswith("midside")):
            assert np.isnan(v).all()
        elif name.startswith("midside"):
            np.testing.assert_array_equal(np.isnan(v), np.arange(len(v)) == 6)  # the point
        else:
            assert not np.isnan(v).any(), name
        assert empty_m[name].shape == (0,)
    for name, v in f.items():
        assert v.shape == (len(coords),) and v.dtype == bool
        assert empty_f[name].shape == (0,)
    with pytest.raises(ValueError):
        measure(coords[:, :4], cell_type)


# -- quadratic hexahedra ---------------------------------------------------------------
@pytest.mark.parametrize("cell_type", ["hexahedron20", "hexahedron27"])
def test_straight_sided_quadratic_is_its_trilinear_twin(cell_type):
    """Closed form: with every node where the trilinear map puts it, the quadratic map is
    the trilinear one: the same volume and det J (at the 3 x 3 x 3 Gauss points, by the
    trilinear shape functions), the same corner shape metrics, midside offsets 0."""
    corners = perturbed("hexahedron", 20, 0.2, 9)
    weights = REFERENCE["hexahedron"].shape_functions(NODES[cell_type])
    coords = np.einsum("qk,nkd->nqd", weights, corners)
    mq, fq = measure(coords, cell_type)
    ml, fl = measure(corners, "hexahedron")
    gauss = REFERENCE[cell_type].gauss_points
    d = REFERENCE["hexahedron"].shape_derivatives(gauss)
    det = np.linalg.det(np.einsum("qak,nkb->nqab", d, corners))
    np.testing.assert_allclose(mq["det_j_min"], det.min(axis=1), rtol=1e-11, atol=1e-14)
    np.testing.assert_allclose(mq["volume"], ml["volume"], rtol=1e-12)
    for name in SHAPE_METRICS[:-3]:
        np.testing.assert_allclose(mq[name], ml[name], rtol=1e-12, atol=1e-12, err_msg=name)
    np.testing.assert_allclose(mq["midside_offset_along"], 0.0, atol=1e-12)
    np.testing.assert_allclose(mq["midside_offset_across"], 0.0, atol=1e-12)
    for name in FLAGS:
        np.testing.assert_array_equal(fq[name], fl[name])


@pytest.mark.parametrize("cell_type", ["hexahedron20", "hexahedron27"])
def test_midside_offsets(cell_type):
    """Closed form: the unit-cube element with the midside node of edge 0-1 moved by d
    along the edge and h across it reads offset along d, across h (fractions of the unit
    chord)."""
    coords = straight(CUBE, cell_type)
    coords[8] += [0.1, 0.0, 0.0]  # towards corner 1
    m, _ = one(coords, cell_type)
    assert m["midside_offset_along"] == pytest.approx(0.1)
    assert m["midside_offset_across"] == pytest.approx(0.0, abs=1e-15)
    coords[8] += [0.0, 0.03, 0.04]
    m, _ = one(coords, cell_type)
    assert m["midside_offset_across"] == pytest.approx(0.05)


@pytest.mark.parametrize("cell_type", ["hexahedron20", "hexahedron27"])
@pytest.mark.parametrize("position", [0.5, 0.3, 0.25, 0.2, 0.1])
def test_quarter_point_rule(cell_type, position):
    """Closed form (the quarter-point rule: Henshell and Shaw 1975, Barsoum 1976, from
    memory): on the unit cube, the midside node of edge 0-1 at distance p from corner 0
    gives x_xi = 2p - 1/2 there, so det J at corner 0 is (2p - 1/2) / 4: zero at the
    quarter point, negative (inverted) nearer the corner."""
    coords = straight(CUBE, cell_type)
    coords[8, 0] = position
    m, f = one(coords, cell_type)
    corner = (2 * position - 0.5) / 4
    assert m["det_j_corner_min"] == pytest.approx(min(corner, 0.125), abs=1e-15)
    assert m["det_j_lower_bound"] <= corner + 1e-15
    assert ("inverted" in f) == (corner < 0)
    assert "reversed" not in f
