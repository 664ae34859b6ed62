"""The pyramid (5-node) kernel against outside references.

Outside references, named beside each check: meshio's own reading of a gmsh file and of a
VTU file (node order), sympy (Bedrosian's rational shape functions from their
interpolation conditions, the exact det J, its form in collapsed coordinates, exact
integrals), closed forms (the regular square pyramid with all edges equal, right pyramids,
Knupp's corner metrics worked by hand for a tall and a flat pyramid), the divergence
theorem and scipy's ConvexHull (volumes), and invariance under rigid motion, scaling and
renumbering (hypothesis). scikit-fem has no pyramid element (checked in the installed
version: no pyramid mesh, element or reference domain).
"""

from __future__ import annotations

import re

import meshio
import numpy as np
import pytest
import skfem
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull
from solid_checks import (
    MOTIONS,
    assert_any_scale,
    assert_invariant,
    assert_quiet_on_degenerate,
    divergence_volume,
)

from meshaudit.metrics.solid.pyramid import IDEAL, PYRAMID, measure
from meshaudit.metrics.solid.wedge_pyramid_common import det_j_at

XI, ETA, ZETA, U, V = sp.symbols("xi eta zeta u v")

#: gmsh's reference pyramid (from memory): the square base at z = 0, the apex at z = 1.
GMSH_PYRAMID = """$MeshFormat
2.2 0 8
$EndMeshFormat
$Nodes
5
1 -1 -1 0
2 1 -1 0
3 1 1 0
4 -1 1 0
5 0 0 1
$EndNodes
$Elements
1
1 7 2 0 1 1 2 3 4 5
$EndElements
"""


def distorted(seed: int, amount: float = 0.15) -> np.ndarray:
    """The ideal pyramid with every node moved by up to ``amount`` of its edge."""
    return IDEAL + np.random.default_rng(seed).uniform(-amount, amount, (5, 3))


def tet6(a, b, c, d) -> float:
    """Six times the signed volume of the tetrahedron (a, b, c, d)."""
    return float(np.dot(b - a, np.cross(c - a, d - a)))


# -- sympy ------------------------------------------------------------------------------------
def sympy_shape_functions() -> list[sp.Expr]:
    """Shape functions of the rational space {1, xi, eta, zeta, xi eta / (1 - zeta)} from
    N_i(node j) = delta_ij (the last term taken as 0 at the apex, its limit on the axis)."""
    basis = [sp.Integer(1), XI, ETA, ZETA, XI * ETA / (1 - ZETA)]
    nodes = [(-1, -1, 0), (1, -1, 0), (1, 1, 0), (-1, 1, 0)]
    rows = [[b.subs({XI: x, ETA: y, ZETA: z}) for b in basis] for x, y, z in nodes]
    rows.append([1, 0, 0, 1, 0])  # the apex (0, 0, 1)
    coeffs = sp.Matrix(rows).inv()
    return [sp.simplify(sum(coeffs[k, i] * basis[k] for k in range(5))) for i in range(5)]


def sympy_det_j(x: np.ndarray) -> sp.Expr:
    """Exact det J of the rational map (coordinates as exact rationals of the floats)."""
    funcs = sympy_shape_functions()
    xs = [[sp.Rational(float(v)) for v in row] for row in x]
    mapped = [sum(f * xs[i][d] for i, f in enumerate(funcs)) for d in range(3)]
    jac = sp.Matrix([[sp.diff(mapped[d], w) for w in (XI, ETA, ZETA)] for d in range(3)])
    return sp.together(jac.det())


def test_shape_functions_from_interpolation_conditions():
    # sympy: N_i solved from N_i(node j) = delta_ij on the rational space; equal to ours
    # (and their derivatives) at interior points
    funcs = sympy_shape_functions()
    rng = np.random.default_rng(0)
    zeta = rng.uniform(0.0, 0.9, 6)
    points = np.column_stack([rng.uniform(-1, 1, (6, 2)) * (1 - zeta)[:, None], zeta])
    ours, ders = PYRAMID.shape_functions(points), PYRAMID.shape_derivatives(points)
    for i, f in enumerate(funcs):
        value = sp.lambdify((XI, ETA, ZETA), f)
        grads = [sp.lambdify((XI, ETA, ZETA), sp.diff(f, w)) for w in (XI, ETA, ZETA)]
        for m, p in enumerate(points):
            assert ours[m, i] == pytest.approx(float(value(*p)), abs=1e-14)
            for d in range(3):
                assert ders[m, i, d] == pytest.approx(float(grads[d](*p)), abs=1e-14)
    # the apex: N = (0, 0, 0, 0, 1), the limit along the axis
    np.testing.assert_allclose(
        PYRAMID.shape_functions(np.array([[0.0, 0.0, 1.0]])), [[0, 0, 0, 0, 1]]
    )


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_det_j_is_bilinear_in_collapsed_coordinates(seed):
    # sympy: det J(xi, eta, zeta) = D(u, v) with u = xi / (1 - zeta), v = eta / (1 - zeta):
    # free of zeta, of degree 1 in u and 1 in v; its corner values are the four base-corner
    # tetrahedra (the two diagonal splits) / 4, so its exact minimum is our lower bound
    x = distorted(seed, 0.3)
    det = sympy_det_j(x)
    collapsed = sp.simplify(det.subs({XI: U * (1 - ZETA), ETA: V * (1 - ZETA)}))
    assert ZETA not in collapsed.free_symbols
    poly = sp.Poly(sp.expand(collapsed), U, V)
    assert poly.degree(U) == 1 and poly.degree(V) == 1
    corners = [collapsed.subs({U: u, V: v}) for u, v in ((-1, -1), (1, -1), (1, 1), (-1, 1))]
    for i, value in enumerate(corners):
        tet = tet6(x[i], x[(i + 1) % 4], x[(i - 1) % 4], x[4])
        assert float(value) == pytest.approx(tet / 4.0, rel=1e-12)
    metrics, _ = measure(x[None])
    # a bilinear function on a square takes its minimum at a corner
    assert metrics["det_j_lower_bound"][0] == pytest.approx(float(min(corners)), rel=1e-12)
    assert metrics["det_j_corner_min"][0] == pytest.approx(float(min(corners)), rel=1e-12)
    # det J at the Gauss points from the symbolic map
    f = sp.lambdify((XI, ETA, ZETA), det)
    gauss = [f(*p) for p in PYRAMID.gauss_points]
    assert metrics["det_j_min"][0] == pytest.approx(min(gauss), rel=1e-12)
    assert metrics["det_j_max"][0] == pytest.approx(max(gauss), rel=1e-12)


@pytest.mark.parametrize("seed", [0, 1])
def test_volume_is_the_exact_integral_of_det_j(seed):
    # sympy: the exact integral of det J over the reference pyramid |xi|, |eta| <= 1 - zeta
    x = distorted(seed, 0.3)
    det = sympy_det_j(x)
    exact = sp.integrate(
        det, (XI, -(1 - ZETA), 1 - ZETA), (ETA, -(1 - ZETA), 1 - ZETA), (ZETA, 0, 1)
    )
    assert measure(x[None])[0]["volume"][0] == pytest.approx(float(exact), rel=1e-12)


def test_gauss_rule_weights():
    # sympy: the weights sum to the reference volume (base 4, height 1: 4/3); the points
    # lie inside the pyramid
    assert PYRAMID.gauss_weights.sum() == pytest.approx(4.0 / 3.0)
    xi, eta, zeta = PYRAMID.gauss_points.T
    assert np.all((0 < zeta) & (zeta < 1) & (np.abs(xi) < 1 - zeta) & (np.abs(eta) < 1 - zeta))


def test_dense_sampling_never_below_the_bound():
    # sampling det J through the shape derivatives on a grid of the pyramid (base corners
    # included, apex excluded): never below the bound, and it reaches it at a base corner
    x = np.stack([distorted(seed, 0.4) for seed in range(20)])
    ticks = np.linspace(-1.0, 1.0, 15)
    grid = np.array(
        [
            [a * (1 - c), b * (1 - c), c]
            for a in ticks
            for b in ticks
            for c in np.linspace(0, 0.95, 12)
        ]
    )
    sampled = det_j_at(x, PYRAMID, grid).min(axis=1)
    bound = measure(x)[0]["det_j_lower_bound"]
    np.testing.assert_allclose(sampled, bound, rtol=1e-12, atol=1e-14)


# -- node order -------------------------------------------------------------------------------
def test_gmsh_pyramid_read_by_meshio_is_positive(tmp_path):
    # meshio reads gmsh's pyramid unchanged; gmsh's reference pyramid (from memory) maps to
    # ours with det J = 1; its base's right-hand normal points towards the apex
    path = tmp_path / "pyramid.msh"
    path.write_text(GMSH_PYRAMID)
    mesh = meshio.read(path)
    x = mesh.points[mesh.cells_dict["pyramid"]]
    metrics, flags = measure(x)
    assert metrics["det_j_lower_bound"][0] == pytest.approx(1.0)
    assert metrics["det_j_max"][0] == pytest.approx(1.0)
    assert metrics["volume"][0] == pytest.approx(4.0 / 3.0)
    assert not flags["reversed"][0] and not flags["inverted"][0]
    base = x[0, :4]
    normal = np.cross(base[2] - base[0], base[3] - base[1])
    assert np.dot(normal, x[0, 4] - base.mean(axis=0)) > 0.0


def test_vtu_file_keeps_the_order(tmp_path):
    # meshio writes and reads VTK pyramids without reordering (vtkPyramid: base normal
    # towards the apex, from memory, the same convention)
    mesh = meshio.Mesh(IDEAL, [("pyramid", np.arange(5)[None])])
    path = tmp_path / "p.vtu"
    meshio.write(path, mesh, binary=False)
    raw = re.search(r'Name="connectivity"[^>]*>(.*?)</DataArray', path.read_text(), re.S)
    assert [int(v) for v in raw.group(1).split()] == [0, 1, 2, 3, 4]
    back = meshio.read(path)
    _, flags = measure(back.points[back.cells_dict["pyramid"]])
    assert not flags["reversed"][0]


def test_skfem_has_no_pyramid():
    # scikit-fem (installed version): no pyramid to compare against
    names = [n.lower() for n in dir(skfem)]
    assert not any("pyramid" in n for n in names)


# -- closed forms --------------------------------------------------------------------------
@pytest.mark.parametrize("a", [1.0, 0.01, 250.0])
def test_regular_square_pyramid(a):
    # closed form: all eight edges a: volume sqrt(2)/6 a^3, face angles 60 and 90, Knupp's
    # ideal (scaled Jacobian 1, condition 1), det J = (a/2)^2 (a/sqrt 2) everywhere
    metrics, flags = measure(a * IDEAL[None])
    assert metrics["volume"][0] == pytest.approx(np.sqrt(2.0) / 6.0 * a**3)
    assert metrics["min_angle"][0] == pytest.approx(60.0)
    assert metrics["max_angle"][0] == pytest.approx(90.0)
    assert metrics["scaled_jacobian"][0] == pytest.approx(1.0)
    assert metrics["condition"][0] == pytest.approx(1.0)
    assert metrics["edge_ratio"][0] == pytest.approx(1.0)
    assert metrics["warp"][0] == 0.0
    for name in ("det_j_min", "det_j_max", "det_j_lower_bound"):
        assert metrics[name][0] == pytest.approx((a / 2) ** 2 * a / np.sqrt(2.0))
    assert np.isnan(metrics["area"][0])
    assert not any(flag[0] for flag in flags.values())


@pytest.mark.parametrize("height", [0.2, 0.5, 2.0, 5.0])
def test_right_pyramid_knupp_by_hand(height):
    # closed form from Knupp's definitions: unit square base, apex at height H over the
    # centre. Base triple: det H, edges 1, 1, sqrt(1/2 + H^2); apex triple: det H, edges
    # sqrt(1/2 + H^2) each; ideal value 1/sqrt 2. det J = H / 4 everywhere, volume H / 3
    x = IDEAL.copy()
    x[4, 2] = height
    metrics, _ = measure(x[None])
    side = np.sqrt(0.5 + height**2)
    base, apex = height / side, height / side**3
    assert metrics["scaled_jacobian"][0] == pytest.approx(np.sqrt(2.0) * min(base, apex))
    assert metrics["volume"][0] == pytest.approx(height / 3.0)
    assert metrics["det_j_lower_bound"][0] == pytest.approx(height / 4.0)
    assert metrics["jacobian_ratio"][0] == pytest.approx(1.0)
    assert metrics["condition"][0] > 1.0


def test_warped_base_and_its_fold():
    # common practice (the quad warp): a unit square base with one corner lifted by h
    # reads arccos(1 / (1 + h^2))
    h = 0.3
    x = IDEAL.copy()
    x[2, 2] = h
    metrics, _ = measure(x[None])
    assert metrics["warp"][0] == pytest.approx(np.degrees(np.arccos(1.0 / (1.0 + h * h))))


def test_inside_out_flattened_and_reentrant():
    # closed forms: mirrored base order -> every corner tetrahedron negative (reversed);
    # apex below the base -> the same; apex far beyond one base edge but above the base
    # plane -> the convex hull of base and apex, every tetrahedron positive (valid, a poor
    # scaled Jacobian); apex in the base plane -> zero volume (degenerate, not inverted);
    # a re-entrant base -> the tetrahedron at the re-entrant corner negative (inverted),
    # while every Gauss point stays positive
    x = IDEAL.copy()
    mirrored = x[[0, 3, 2, 1, 4]]
    below = x.copy()
    below[4, 2] = -0.7
    leaning = x.copy()
    leaning[4] = [3.0, 0.5, 0.3]
    flat = x.copy()
    flat[4, 2] = 0.0
    reentrant = x.copy()
    reentrant[2, :2] = [0.45, 0.45]
    reentrant[4, :2] = [0.3, 0.3]
    metrics, flags = measure(np.stack([mirrored, below, leaning, flat, reentrant]))
    assert flags["reversed"].tolist() == [True, True, False, False, False]
    assert flags["inverted"].tolist() == [True, True, False, False, True]
    assert flags["degenerate"].tolist() == [False, False, False, True, False]
    assert metrics["volume"][0] == pytest.approx(-np.sqrt(2.0) / 6.0)
    assert metrics["volume"][2] == pytest.approx(0.3 / 3.0)  # base 1 x height 0.3 / 3
    assert 0.0 < metrics["scaled_jacobian"][2] < 0.3
    assert metrics["condition"][0] == np.inf and metrics["jacobian_ratio"][0] == np.inf
    assert metrics["det_j_min"][4] > 0.0 > metrics["det_j_lower_bound"][4]
    corner = tet6(reentrant[2], reentrant[3], reentrant[1], reentrant[4]) / 4.0
    assert metrics["det_j_lower_bound"][4] == pytest.approx(corner)


def test_degenerate_input_is_quiet_and_never_negative_zero():
    # contract: no warnings, no -0.0, NaN only for area
    assert_quiet_on_degenerate(measure, IDEAL)


# -- volumes: divergence theorem and convex hull -----------------------------------------------
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_volume_by_divergence_theorem(seed):
    # divergence theorem over the warped base and the four triangles
    x = distorted(seed, 0.3)
    volume = measure(x[None])[0]["volume"][0]
    assert volume == pytest.approx(float(divergence_volume(x, PYRAMID.faces)), rel=1e-12)
    # also: the mean of the two diagonal splits' volumes (tetrahedra)
    split02 = tet6(x[0], x[1], x[2], x[4]) + tet6(x[0], x[2], x[3], x[4])
    split13 = tet6(x[1], x[2], x[3], x[4]) + tet6(x[1], x[3], x[0], x[4])
    assert volume == pytest.approx((split02 + split13) / 12.0, rel=1e-12)


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.floats(-0.3, 0.3), min_size=8, max_size=8),
    st.lists(st.floats(-0.5, 0.5), min_size=2, max_size=2),
    st.floats(0.1, 4.0),
)
def test_convex_pyramid_volume_matches_convex_hull(moves, apex, height):
    # scipy ConvexHull: a convex planar base with the apex above it is a convex solid
    base = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]) + np.reshape(moves, (4, 2))
    edges = np.roll(base, -1, axis=0) - base
    turns = (
        edges[:, 0] * np.roll(edges, -1, axis=0)[:, 1]
        - edges[:, 1] * np.roll(edges, -1, axis=0)[:, 0]
    )
    if np.any(turns < 0.05):  # keep the base convex
        return
    x = np.vstack([np.column_stack([base, np.zeros(4)]), [apex[0] + 0.5, apex[1] + 0.5, height]])
    volume = measure(x[None])[0]["volume"][0]
    assert volume == pytest.approx(ConvexHull(x).volume, rel=1e-9)


# -- invariance (hypothesis) -------------------------------------------------------------------
#: Renumberings that keep the orientation: turn the base.
KEEPING = [[1, 2, 3, 0, 4], [2, 3, 0, 1, 4], [3, 0, 1, 2, 4]]


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 10**6), MOTIONS, st.sampled_from(KEEPING))
def test_invariance(seed, motion, order):
    # invariance: rigid motion and renumbering change nothing; scaling by c multiplies
    # lengths^3 by c^3 and keeps every ratio and angle
    assert_invariant(measure, distorted(seed, 0.2), order, motion)


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 10**6))
def test_mirror_renumbering_reverses(seed):
    # a renumbering that mirrors the base: volume and det J change sign
    x = distorted(seed, 0.2)
    metrics, _ = measure(x[None])
    mirrored, flags = measure(x[[0, 3, 2, 1, 4]][None])
    assert mirrored["volume"][0] == pytest.approx(-metrics["volume"][0], rel=1e-12)
    assert flags["reversed"][0] and flags["inverted"][0]


def test_unknown_cell_type_refused():
    with pytest.raises(ValueError):
        measure(IDEAL[None], "wedge")


def test_any_scale():
    # invariance under scaling over the whole float range (powers of ten)
    assert_any_scale(measure, distorted(4, 0.2))
