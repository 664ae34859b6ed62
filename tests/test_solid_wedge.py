"""The wedge (6-node prism) kernel against outside references.

Outside references, named beside each check: meshio's own reading of a gmsh file and of a
VTU file (node order), scikit-fem (MeshWedge1 with ElementWedge1: det J of its
isoparametric mapping at our Gauss points and corners; its reference wedge is ours with
the prism coordinate on [0, 1], so its det J is twice ours; its wedge quadrature is not
used: in the installed version its weights sum to 1/4, not the reference volume 1/2),
sympy (shape functions from their interpolation conditions, the exact det J polynomial,
its degrees, its exact minimum, exact integrals), closed forms (right prisms, the ideal
prism, a lifted face corner), the divergence theorem and scipy's ConvexHull (volumes), and
invariance under rigid motion, scaling and renumbering (hypothesis).
"""

from __future__ import annotations

import re

import meshio
import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull
from skfem import ElementWedge1, MeshWedge1
from skfem.mapping import MappingIsoparametric
from solid_checks import (
    MOTIONS,
    assert_any_scale,
    assert_invariant,
    assert_quiet_on_degenerate,
    divergence_volume,
)

from meshaudit.metrics.solid.wedge import IDEAL, WEDGE, measure
from meshaudit.metrics.solid.wedge_pyramid_common import det_j_at

R, S, T = sp.symbols("r s t")

#: Reference prism nodes as gmsh documents its prism (from memory): the triangle
#: (0,0), (1,0), (0,1) at w = -1, then the same at w = +1.
GMSH_PRISM = """$MeshFormat
2.2 0 8
$EndMeshFormat
$Nodes
6
1 0 0 -1
2 1 0 -1
3 0 1 -1
4 0 0 1
5 1 0 1
6 0 1 1
$EndNodes
$Elements
1
1 6 2 0 1 1 2 3 4 5 6
$EndElements
"""

#: Corners, Gauss points and a lower bound reading negative while every corner and
#: Gauss point is positive (found by a random search, kept as exact decimals).
HIDDEN_FOLD = np.array(
    [
        [0.5, -0.7, -0.4],
        [0.5, 0.6, 0.3],
        [-0.4, 1.7, -0.3],
        [-0.8, 0.7, 1.5],
        [0.6, -0.8, 0.2],
        [0.8, 1.2, 1.2],
    ]
)


def distorted(seed: int, amount: float = 0.15) -> np.ndarray:
    """The ideal wedge with every node moved by up to ``amount`` of its edge."""
    return IDEAL + np.random.default_rng(seed).uniform(-amount, amount, (6, 3))


# -- sympy ------------------------------------------------------------------------------------
def sympy_shape_functions() -> list[sp.Expr]:
    """Shape functions of the space {1, r, s, t, r t, s t} from N_i(node j) = delta_ij."""
    basis = [sp.Integer(1), R, S, T, R * T, S * T]
    nodes = [(0, 0, -1), (1, 0, -1), (0, 1, -1), (0, 0, 1), (1, 0, 1), (0, 1, 1)]
    vander = sp.Matrix([[b.subs({R: r, S: s, T: t}) for b in basis] for r, s, t in nodes])
    coeffs = vander.inv()  # column i: the coefficients of N_i
    return [sp.expand(sum(coeffs[k, i] * basis[k] for k in range(6))) for i in range(6)]


def sympy_det_j(x: np.ndarray) -> sp.Expr:
    """Exact det J polynomial of the element (coordinates as exact rationals of the floats)."""
    funcs = sympy_shape_functions()
    xs = [[sp.Rational(float(v)) for v in row] for row in x]
    mapped = [sum(f * xs[i][d] for i, f in enumerate(funcs)) for d in range(3)]
    jac = sp.Matrix([[sp.diff(mapped[d], v) for v in (R, S, T)] for d in range(3)])
    return sp.expand(jac.det())


def sympy_minimum(det: sp.Expr) -> sp.Expr:
    """Exact minimum of det J over the prism: det J has degree 1 in (r, s) (checked by the
    caller), so for each t its minimum over the triangle is at a triangle corner (an affine
    function on a triangle); on each edge r, s = corner, the exact minimum of the
    polynomial in t on [-1, 1] (ends and real critical points)."""
    candidates = []
    for r, s in ((0, 0), (1, 0), (0, 1)):
        along = sp.expand(det.subs({R: r, S: s}))
        points = [sp.Integer(-1), sp.Integer(1)]
        points += [p for p in sp.solve(sp.diff(along, T), T) if p.is_real and -1 < p < 1]
        candidates += [along.subs(T, p) for p in points]
    return sp.Min(*candidates)


def test_shape_functions_from_interpolation_conditions():
    # sympy: N_i solved from N_i(node j) = delta_ij on {1, r, s, t, rt, st}
    funcs = sympy_shape_functions()
    points = np.random.default_rng(0).uniform(0.0, 0.5, (7, 3)) * [1, 1, 4] - [0, 0, 1]
    ours = WEDGE.shape_functions(points)
    ders = WEDGE.shape_derivatives(points)
    for i, f in enumerate(funcs):
        value = sp.lambdify((R, S, T), f)
        grad = [sp.lambdify((R, S, T), sp.diff(f, v)) for v in (R, S, T)]
        for m, (r, s, t) in enumerate(points):
            assert ours[m, i] == pytest.approx(float(value(r, s, t)), abs=1e-14)
            for d in range(3):
                assert ders[m, i, d] == pytest.approx(float(grad[d](r, s, t)), abs=1e-14)
    np.testing.assert_allclose(
        WEDGE.nodes, [[0, 0, -1], [1, 0, -1], [0, 1, -1], [0, 0, 1], [1, 0, 1], [0, 1, 1]]
    )


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_det_j_degrees_and_exact_minimum(seed):
    # sympy: det J is a polynomial of degree 1 in (r, s) and 2 in t, of total degree 2
    # (no r t^2, s t^2 terms); our lower bound is its exact minimum over the element
    x = distorted(seed, 0.3)
    det = sympy_det_j(x)
    poly = sp.Poly(det, R, S, T)
    assert sp.Poly(det, R, S).total_degree() == 1
    assert sp.Poly(det, T).degree() == 2
    assert poly.total_degree() == 2
    assert poly.coeff_monomial(R * T**2) == 0 and poly.coeff_monomial(S * T**2) == 0
    metrics, _ = measure(x[None])
    assert metrics["det_j_lower_bound"][0] == pytest.approx(float(sympy_minimum(det)), rel=1e-12)


def test_hidden_fold_found_between_the_samples():
    # sympy: the exact minimum is negative, while det J at every corner and Gauss point is
    # positive: only the whole-element check sees the fold
    det = sympy_det_j(HIDDEN_FOLD)
    exact = float(sympy_minimum(det))
    f = sp.lambdify((R, S, T), det)
    corners = [f(*p) for p in WEDGE.nodes]
    gauss = [f(*p) for p in WEDGE.gauss_points]
    assert exact < -0.05 and min(corners) > 0.1 and min(gauss) > 0.2
    metrics, flags = measure(HIDDEN_FOLD[None])
    assert metrics["det_j_lower_bound"][0] == pytest.approx(exact, rel=1e-12)
    assert metrics["det_j_corner_min"][0] == pytest.approx(min(corners), rel=1e-12)
    assert metrics["det_j_min"][0] == pytest.approx(min(gauss), rel=1e-12)
    assert flags["inverted"][0] and not flags["reversed"][0]


def test_dense_sampling_never_below_the_bound():
    # sympy-free cross-check: det J (scikit-fem-independent evaluation through the shape
    # derivatives) on a 21 x 21 x 21 grid of the prism stays at or above the bound and
    # reaches it within the grid's resolution
    x = np.stack([distorted(seed, 0.35) for seed in range(20)] + [HIDDEN_FOLD])
    ticks = np.linspace(0.0, 1.0, 21)
    grid = np.array([[r, s, t] for r in ticks for s in ticks if r + s <= 1 for t in 2 * ticks - 1])
    sampled = det_j_at(x, WEDGE, grid).min(axis=1)
    bound = measure(x)[0]["det_j_lower_bound"]
    assert np.all(sampled >= bound - 1e-12)
    assert np.all(sampled - bound <= 0.02 * np.abs(sampled).max())


def test_gauss_rule_exact_for_det_j_space():
    # sympy: exact integrals over the prism of r^a s^b t^c, a + b <= 2, c <= 3 (the rule
    # is exact there, so for det J, degree 1 in (r, s) and 2 in t)
    assert WEDGE.gauss_weights.sum() == pytest.approx(1.0)
    for a in range(3):
        for b in range(3 - a):
            for c in range(4):
                exact = sp.integrate(R**a * S**b * T**c, (S, 0, 1 - R), (R, 0, 1), (T, -1, 1))
                r, s, t = WEDGE.gauss_points.T
                rule = np.sum(WEDGE.gauss_weights * r**a * s**b * t**c)
                assert rule == pytest.approx(float(exact), abs=1e-15)


# -- scikit-fem --------------------------------------------------------------------------------
def skfem_det_j(x: np.ndarray, points: np.ndarray) -> np.ndarray:
    """det J by scikit-fem's MappingIsoparametric at our reference points (m, 3).

    scikit-fem's wedge is ours with the prism coordinate z = (t + 1) / 2 on [0, 1], so its
    det J is twice ours; its node order is meshio's.
    """
    mapping = MappingIsoparametric(MeshWedge1(x.T.copy(), np.arange(6)[:, None]), ElementWedge1())
    X = points.T.copy()
    X[2] = (X[2] + 1.0) / 2.0
    jac = np.array([[mapping.J(i, j, X)[0] for j in range(3)] for i in range(3)])
    return np.linalg.det(np.moveaxis(jac, -1, 0)) / 2.0


@pytest.mark.parametrize("seed", range(5))
def test_det_j_at_gauss_points_and_corners_match_skfem(seed):
    # scikit-fem: det J of its isoparametric wedge map at our 6 Gauss points and 6 corners
    x = distorted(seed, 0.25)
    metrics, _ = measure(x[None])
    at_gauss = skfem_det_j(x, WEDGE.gauss_points)
    at_corners = skfem_det_j(x, WEDGE.nodes)
    assert metrics["det_j_min"][0] == pytest.approx(at_gauss.min(), rel=1e-12)
    assert metrics["det_j_max"][0] == pytest.approx(at_gauss.max(), rel=1e-12)
    assert metrics["det_j_corner_min"][0] == pytest.approx(at_corners.min(), rel=1e-12)
    # the corner det J is the corner triple's determinant scaled by 1/2
    triples = WEDGE.corner_triples
    edges = [x[triples[:, m]] - x[triples[:, 0]] for m in (1, 2, 3)]
    dets = np.einsum("ci,ci->c", edges[0], np.cross(edges[1], edges[2]))
    np.testing.assert_allclose(dets / 2.0, at_corners[triples[:, 0]], rtol=1e-12)
    # the volume: the Gauss sum of scikit-fem's det J with our (exact) rule
    assert metrics["volume"][0] == pytest.approx(at_gauss @ WEDGE.gauss_weights, rel=1e-12)


# -- node order -------------------------------------------------------------------------------
def test_gmsh_prism_read_by_meshio_is_positive(tmp_path):
    # meshio reads gmsh's prism order unchanged; gmsh's reference prism (from memory) maps
    # to itself with det J = 1; scikit-fem agrees on meshio's array as its converter would
    # pass it (its from_meshio reorders hexahedra only; in the installed version it then
    # stops on wedges, having no boundary cell type for them, so the mesh is built here)
    path = tmp_path / "prism.msh"
    path.write_text(GMSH_PRISM)
    mesh = meshio.read(path)
    x = mesh.points[mesh.cells_dict["wedge"]]
    metrics, flags = measure(x)
    assert metrics["det_j_lower_bound"][0] == pytest.approx(1.0)
    assert metrics["volume"][0] == pytest.approx(1.0)
    assert not flags["reversed"][0] and not flags["inverted"][0]
    skfem_mesh = MeshWedge1(mesh.points.T.copy(), mesh.cells_dict["wedge"].T.copy())
    mapping = MappingIsoparametric(skfem_mesh, ElementWedge1())
    assert np.all(mapping.detDF(np.array([[0.2], [0.3], [0.5]])) > 0.0)
    # triangle (0, 1, 2)'s right-hand normal points towards triangle (3, 4, 5)
    normal = np.cross(x[0, 1] - x[0, 0], x[0, 2] - x[0, 0])
    assert np.dot(normal, x[0, 3:].mean(axis=0) - x[0, :3].mean(axis=0)) > 0.0


def test_vtk_file_holds_the_mirrored_order(tmp_path):
    # meshio writes VTK's own wedge order to a VTU file (nodes 1 and 2, 4 and 5 swapped:
    # VTK's triangle (0, 1, 2) faces away from (3, 4, 5), vtkWedge's documentation, from
    # memory) and swaps them back when reading: our kernel sees meshio's order
    mesh = meshio.Mesh(IDEAL, [("wedge", np.arange(6)[None])])
    path = tmp_path / "w.vtu"
    meshio.write(path, mesh, binary=False)
    text = path.read_text()
    raw = re.search(r'Name="connectivity"[^>]*>(.*?)</DataArray', text, re.S).group(1)
    vtk_order = [int(v) for v in raw.split()]
    assert vtk_order == [0, 2, 1, 3, 5, 4]
    back = meshio.read(path)
    np.testing.assert_array_equal(back.cells_dict["wedge"], [[0, 1, 2, 3, 4, 5]])
    _, flags = measure(back.points[back.cells_dict["wedge"]])
    assert not flags["reversed"][0]
    metrics, flags = measure(IDEAL[vtk_order][None])  # VTK's order read as meshio's
    assert flags["reversed"][0] and flags["inverted"][0]
    assert metrics["volume"][0] == pytest.approx(-np.sqrt(3.0) / 4.0)


# -- closed forms --------------------------------------------------------------------------
@pytest.mark.parametrize("h", [0.1, 1.0, 7.5])
def test_right_prism_of_unit_triangle(h):
    # closed form: the triangle (0,0), (1,0), (0,1) times height h has volume h / 2 and
    # det J = (area 1/2) x (h / 2 per unit t) x 2 = h / 2 everywhere
    x = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, h], [1, 0, h], [0, 1, h]], float)
    metrics, flags = measure(x[None])
    for name in ("volume", "det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound"):
        assert metrics[name][0] == pytest.approx(h / 2.0, rel=1e-14)
    assert metrics["jacobian_ratio"][0] == pytest.approx(1.0)
    assert metrics["warp"][0] == 0.0
    # Knupp's scaled Jacobian of a right prism: (2/sqrt 3) sin(smallest triangle angle)
    assert metrics["scaled_jacobian"][0] == pytest.approx(np.sin(np.pi / 4) * 2 / np.sqrt(3))
    assert metrics["min_angle"][0] == pytest.approx(45.0)
    assert metrics["max_angle"][0] == pytest.approx(90.0)
    assert metrics["edge_ratio"][0] == pytest.approx(max(np.sqrt(2.0), h) / min(1.0, h))
    assert np.isnan(metrics["area"][0])
    assert not any(flag[0] for flag in flags.values())


def test_ideal_prism_reads_one():
    # closed form: the right prism over an equilateral triangle with all edges equal is
    # Knupp's ideal: scaled Jacobian 1, condition 1; face angles 60 and 90, no warp
    metrics, _ = measure(3.0 * IDEAL[None])
    assert metrics["scaled_jacobian"][0] == pytest.approx(1.0)
    assert metrics["condition"][0] == pytest.approx(1.0)
    assert metrics["edge_ratio"][0] == pytest.approx(1.0)
    assert (metrics["min_angle"][0], metrics["max_angle"][0]) == pytest.approx((60.0, 90.0))
    assert metrics["volume"][0] == pytest.approx(27.0 * np.sqrt(3.0) / 4.0)


def test_stretched_prism_condition():
    # closed form: the ideal stretched by w along its axis: each corner's T = diag(1,1,w)
    # in a rotated frame, |T||T^-1|/3 = sqrt((2 + w^2)(2 + 1/w^2)) / 3
    w = 3.0
    x = IDEAL * [1.0, 1.0, w]
    metrics, _ = measure(x[None])
    assert metrics["condition"][0] == pytest.approx(np.sqrt((2 + w**2) * (2 + 1 / w**2)) / 3)
    assert metrics["scaled_jacobian"][0] == pytest.approx(1.0)  # still right-angled


@pytest.mark.parametrize("h", [0.1, 0.3, 0.5])
def test_lifted_face_corner_warp(h):
    # common practice (the quad warp): a unit square face with one corner lifted by h
    # reads arccos(1 / (1 + h^2)); here node 4 of a right prism over the unit right
    # triangle leaves the face y = 0 by h (the hypotenuse face it also moves folds less)
    x = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1], [1, -h, 1], [0, 1, 1]], float)
    metrics, _ = measure(x[None])
    assert metrics["warp"][0] == pytest.approx(np.degrees(np.arccos(1.0 / (1.0 + h * h))))


def test_inside_out_and_flattened():
    # closed forms: mirrored node order (inside out) -> det J negative at every corner;
    # one top node pushed through the bottom -> inverted only; a flat element and one with
    # coincident nodes -> zero volume, degenerate, not inverted
    x = IDEAL.copy()
    inside_out = x[[3, 4, 5, 0, 1, 2]]
    pushed = x.copy()
    pushed[3, 2] = -0.5
    flat = x.copy()
    flat[3:, 2] = 0.0
    flat[3:, 0] += 2.0
    collapsed = x.copy()
    collapsed[5] = collapsed[2]
    metrics, flags = measure(np.stack([inside_out, pushed, flat, collapsed]))
    assert flags["reversed"].tolist() == [True, False, False, False]
    assert flags["inverted"].tolist() == [True, True, False, False]
    assert flags["degenerate"].tolist() == [False, False, True, True]
    assert metrics["volume"][0] == pytest.approx(-np.sqrt(3.0) / 4.0)
    assert metrics["volume"][2] == pytest.approx(0.0, abs=1e-15)
    assert metrics["condition"][0] == np.inf and metrics["jacobian_ratio"][0] == np.inf
    assert metrics["scaled_jacobian"][0] == pytest.approx(-1.0)
    assert metrics["edge_ratio"][3] == np.inf


def test_degenerate_input_is_quiet_and_never_negative_zero():
    # contract: no warnings, no -0.0, NaN only for area
    assert_quiet_on_degenerate(measure, IDEAL)


# -- volumes: divergence theorem and convex hull -----------------------------------------------
@pytest.mark.parametrize("seed", [0, 1])
def test_volume_by_divergence_theorem(seed):
    # divergence theorem: the exact flux of x over the warped faces / 3 is the volume
    x = distorted(seed, 0.3)
    assert measure(x[None])[0]["volume"][0] == pytest.approx(
        float(divergence_volume(x, WEDGE.faces)), rel=1e-12
    )


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.floats(-1.0, 1.0), min_size=6, max_size=6),
    st.floats(0.3, 2.0),
    st.lists(st.floats(-1.0, 1.0), min_size=2, max_size=2),
    st.floats(0.2, 3.0),
)
def test_convex_frustum_volume_matches_convex_hull(corners, k, shift, height):
    # scipy ConvexHull: a frustum (top = the bottom triangle scaled by k > 0 and moved up)
    # has planar trapezoid side faces and is convex: its hull volume is its volume
    tri = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]]) + 0.3 * np.reshape(corners, (3, 2))
    sides = tri[1:] - tri[0]
    if sides[0, 0] * sides[1, 1] - sides[0, 1] * sides[1, 0] < 0.2:
        return
    bottom = np.column_stack([tri, np.zeros(3)])
    top = k * bottom + [shift[0], shift[1], height]
    x = np.concatenate([bottom, top])
    volume = measure(x[None])[0]["volume"][0]
    assert volume == pytest.approx(ConvexHull(x).volume, rel=1e-9)


# -- invariance (hypothesis) -------------------------------------------------------------------
#: Renumberings that keep the orientation: turn the triangles, swap the ends.
KEEPING = [[1, 2, 0, 4, 5, 3], [2, 0, 1, 5, 3, 4], [3, 5, 4, 0, 2, 1], [4, 3, 5, 1, 0, 2]]


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 10**6), MOTIONS, st.sampled_from(KEEPING))
def test_invariance(seed, motion, order):
    # invariance: rigid motion and renumbering change nothing; scaling by c multiplies
    # lengths^3 by c^3 and keeps every ratio and angle
    assert_invariant(measure, distorted(seed, 0.2), order, motion)


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 10**6))
def test_mirror_renumbering_reverses(seed):
    # a renumbering that mirrors (swap nodes 1, 2 and 4, 5): volume and det J change sign
    x = distorted(seed, 0.2)
    metrics, _ = measure(x[None])
    mirrored, flags = measure(x[[0, 2, 1, 3, 5, 4]][None])
    assert mirrored["volume"][0] == pytest.approx(-metrics["volume"][0], rel=1e-12)
    assert flags["reversed"][0] and flags["inverted"][0]


def test_unknown_cell_type_refused():
    with pytest.raises(ValueError):
        measure(IDEAL[None], "pyramid")


def test_any_scale():
    # invariance under scaling over the whole float range (powers of ten)
    assert_any_scale(measure, distorted(4, 0.2))
