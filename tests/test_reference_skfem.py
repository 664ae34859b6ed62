"""Jacobian determinants checked against scikit-fem (outside reference).

scikit-fem maps each element from its own reference cell and evaluates det DF at any
reference point through ``mesh.mapping().detDF(X)``. Its reference square is [0, 1]^2,
ours is [-1, 1]^2 (four times the area), so at corresponding points
det J_skfem = 4 * det J_meshaudit. Its reference triangle is (0, 0), (1, 0), (0, 1), the
same as ours, so triangle determinants agree one for one.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest
import skfem
from skfem.quadrature import get_quadrature
from skfem.refdom import RefQuad

import meshaudit
from meshaudit.metrics import quad

#: Reference-square area ratio: [-1, 1]^2 has area 4, scikit-fem's [0, 1]^2 has area 1.
SKFEM_TO_OURS = 0.25


def _perturbed(mesh, fraction: float, seed: int):
    """``mesh`` with every interior node moved by up to ``fraction`` of the element size."""
    rng = np.random.default_rng(seed)
    p = mesh.p.copy()
    interior = mesh.interior_nodes()
    h = 1.0 / np.sqrt(mesh.t.shape[1])  # element size on the unit square
    p[:, interior] += rng.uniform(-fraction * h, fraction * h, size=(2, interior.size))
    return type(mesh)(p, mesh.t)


def _gauss_2x2_on_unit_square() -> tuple[np.ndarray, np.ndarray]:
    """scikit-fem's rule exact for cubics on its square: points (2, 4) and weights (4,).

    The test below checks that it is the 2x2 Gauss rule."""
    return get_quadrature(RefQuad, 3)


def test_skfem_quadrature_is_the_2x2_gauss_rule():
    """Source: scikit-fem ``get_quadrature``; Gauss-Legendre points +-1/sqrt(3) on [-1, 1],
    mapped to [0, 1] by t = (1 + s) / 2, weights 1 -> 1/4 (common practice)."""
    x, w = _gauss_2x2_on_unit_square()
    g = (1.0 + np.array([-1.0, 1.0]) / np.sqrt(3.0)) / 2.0
    expected = np.array([[a, b] for a in g for b in g])
    assert x.shape == (2, 4)
    got = np.array(sorted(map(tuple, x.T)))
    np.testing.assert_allclose(got, expected, rtol=0, atol=1e-15)
    np.testing.assert_allclose(w, 0.25, rtol=0, atol=1e-15)


# The last case moves nodes far enough to invert, fold and cross some elements; det J is
# still a well-defined (signed) function there and must agree.
@pytest.mark.parametrize(("refine", "fraction", "seed"), [(3, 0.25, 1), (4, 0.35, 7), (4, 0.6, 5)])
def test_quad_gauss_point_det_j_matches_skfem(refine: int, fraction: float, seed: int):
    """Source: scikit-fem MappingIsoparametric.detDF at its 2x2 Gauss points on a
    distorted bilinear quad mesh. det J_skfem / 4 = det J_meshaudit at each point."""
    mesh = _perturbed(skfem.MeshQuad().refined(refine), fraction, seed)
    x, _ = _gauss_2x2_on_unit_square()
    skfem_det = mesh.mapping().detDF(x) * SKFEM_TO_OURS  # (n_elements, 4)
    assert np.ptp(skfem_det) > 0.1 * np.abs(skfem_det).max()  # the mesh really is distorted
    assert (skfem_det < 0).any() == (fraction > 0.5)  # only the last case inverts

    coords = mesh.p.T[mesh.t.T]  # (n, 4, 2), same node order as our reference square
    # Point by point: scikit-fem's (s, t) in [0, 1]^2 is our (2s - 1, 2t - 1).
    ours_pointwise = quad.jacobian_determinant(coords, 2.0 * x.T - 1.0)
    np.testing.assert_allclose(ours_pointwise, skfem_det, rtol=1e-12, atol=1e-15)
    # As sets per element (the two codes order the points differently).
    np.testing.assert_allclose(
        np.sort(quad.gauss_jacobians(coords), axis=1),
        np.sort(skfem_det, axis=1),
        rtol=1e-12,
        atol=1e-15,
    )

    report = meshaudit.audit(meshio.Mesh(mesh.p.T, [("quad", mesh.t.T)]))
    np.testing.assert_allclose(report.metrics["det_j_min"], skfem_det.min(axis=1), rtol=1e-12)
    np.testing.assert_allclose(report.metrics["det_j_max"], skfem_det.max(axis=1), rtol=1e-12)


def test_quad_corner_det_j_matches_skfem():
    """Source: scikit-fem detDF at the reference-square corners (0,0),(1,0),(1,1),(0,1);
    det J is linear in each reference coordinate, so the corner minimum bounds the
    Gauss-point minimum from below."""
    mesh = _perturbed(skfem.MeshQuad().refined(3), 0.3, 3)
    corners = np.array([[0.0, 1.0, 1.0, 0.0], [0.0, 0.0, 1.0, 1.0]])
    skfem_corner = mesh.mapping().detDF(corners) * SKFEM_TO_OURS
    report = meshaudit.audit(meshio.Mesh(mesh.p.T, [("quad", mesh.t.T)]))
    np.testing.assert_allclose(
        report.metrics["det_j_corner_min"], skfem_corner.min(axis=1), rtol=1e-12
    )
    assert np.all(report.metrics["det_j_corner_min"] <= report.metrics["det_j_min"])


def test_clockwise_quad_mesh_gives_negative_det_j_like_skfem():
    """Source: scikit-fem's tensor-product quad mesh numbers its nodes clockwise in the
    x-y plane; its detDF is negative there, and so must ours be (planar mesh, +z)."""
    mesh = skfem.MeshQuad.init_tensor(np.linspace(0.0, 2.0, 4), np.array([0.0, 0.5, 1.5]))
    x, _ = _gauss_2x2_on_unit_square()
    skfem_det = mesh.mapping().detDF(x) * SKFEM_TO_OURS
    assert np.all(skfem_det < 0.0)
    report = meshaudit.audit(meshio.Mesh(mesh.p.T, [("quad", mesh.t.T)]))
    np.testing.assert_allclose(report.metrics["det_j_min"], skfem_det.min(axis=1), rtol=1e-12)
    np.testing.assert_allclose(report.metrics["det_j_max"], skfem_det.max(axis=1), rtol=1e-12)
    assert report.flag("inverted").all()
    assert report.flag("reversed").all()


def test_triangle_det_j_matches_skfem():
    """Source: scikit-fem MappingAffine.detDF for ElementTriP1 on a perturbed triangle
    mesh; its reference triangle (0,0),(1,0),(0,1) is ours, so the values agree exactly
    (signed: scikit-fem's refined triangles come in both windings)."""
    mesh = _perturbed(skfem.MeshTri().refined(4), 0.3, 11)
    basis = skfem.Basis(mesh, skfem.ElementTriP1())
    x = basis.X  # the basis' own quadrature points on the reference triangle
    skfem_det = mesh.mapping().detDF(x)  # (n, n_qp), constant per element
    np.testing.assert_allclose(skfem_det, np.broadcast_to(skfem_det[:, :1], skfem_det.shape))
    assert (skfem_det < 0).any() and (skfem_det > 0).any()

    report = meshaudit.audit(meshio.Mesh(mesh.p.T, [("triangle", mesh.t.T)]))
    for name in ("det_j_min", "det_j_max", "det_j_corner_min"):
        np.testing.assert_allclose(report.metrics[name], skfem_det[:, 0], rtol=1e-12)
    # Area = |det J| / 2 (reference triangle has area 1/2).
    np.testing.assert_allclose(report.metrics["area"], np.abs(skfem_det[:, 0]) / 2, rtol=1e-12)
    np.testing.assert_array_equal(report.flag("inverted"), skfem_det[:, 0] < 0)
