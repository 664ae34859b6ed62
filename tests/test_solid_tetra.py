"""The tetrahedron kernels (tetra, tetra10) against outside references.

Each check names its reference: scikit-fem (det J at its quadrature points), sympy
(shape functions, symbolic det J, exact minima), scipy.spatial.ConvexHull (volumes),
closed forms of analytic shapes, the published definitions of the metrics (worked out
independently here with numpy.linalg), and meshio's / scikit-fem's node-order sources.
"""

from __future__ import annotations

import itertools
import warnings

import meshio
import numpy as np
import pytest
import skfem
import sympy
import tet_exact
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull
from skfem.io.meshio import from_meshio
from skfem.refdom import RefTet

from meshaudit.metrics.solid import tet_bernstein as tb
from meshaudit.metrics.solid import tet_reference as ref
from meshaudit.metrics.solid.tetra import REFERENCES, det_j_bounds, det_j_coefficients, measure

REGULAR = np.array(
    [
        [0.0, 0.0, 0.0],
        [1.0, 0.0, 0.0],
        [0.5, np.sqrt(3.0) / 2.0, 0.0],
        [0.5, np.sqrt(3.0) / 6.0, np.sqrt(2.0 / 3.0)],
    ]
)
UNIT = ref.CORNERS.copy()
#: The 12 even permutations of the corners (orientation kept), the 12 odd ones.
EVEN = [p for p in itertools.permutations(range(4)) if np.linalg.det(np.eye(4)[list(p)]) > 0]
ODD = [p for p in itertools.permutations(range(4)) if np.linalg.det(np.eye(4)[list(p)]) < 0]
SHAPE_METRICS = (
    "scaled_jacobian",
    "condition",
    "mean_ratio",
    "radius_ratio",
    "edge_ratio",
    "min_dihedral",
    "max_dihedral",
    "min_angle",
    "max_angle",
)


def one(corners: np.ndarray, cell_type: str = "tetra"):
    """Metrics and flags of a single element, as Python scalars."""
    metrics, flags = measure(np.asarray(corners, dtype=float)[None], cell_type)
    return {k: float(v[0]) for k, v in metrics.items()}, {k: bool(v[0]) for k, v in flags.items()}


def random_tets(rng: np.random.Generator, n: int, jitter: float = 0.2) -> np.ndarray:
    """Valid (positively oriented) tetrahedra: the regular one moved, scaled, jittered."""
    corners = REGULAR[None] + jitter * rng.normal(size=(n, 4, 3))
    corners = corners * rng.uniform(0.1, 10.0, size=(n, 1, 1)) + rng.normal(size=(n, 1, 3))
    det = np.linalg.det(corners[:, 1:] - corners[:, :1])
    corners[det < 0] = corners[det < 0][:, [0, 2, 1, 3]]
    return corners


def to_tetra10(corners: np.ndarray) -> np.ndarray:
    """Straight-sided tetra10 elements: midside nodes at the edge midpoints."""
    a, b = corners[:, ref.EDGES[:, 0]], corners[:, ref.EDGES[:, 1]]
    return np.concatenate([corners, 0.5 * (a + b)], axis=1)


def rotation(rng: np.random.Generator) -> np.ndarray:
    q, r = np.linalg.qr(rng.normal(size=(3, 3)))
    q = q * np.sign(np.diag(r))
    return q if np.linalg.det(q) > 0 else -q


# --- node order and orientation --------------------------------------------------------


def test_tetra10_edge_order_matches_meshio_and_skfem_sources():
    """meshio's gmsh reader swaps tetra10 nodes 8 and 9 (gmsh lists the edges 2-3 before
    1-3, VTK 1-3 before 2-3), and scikit-fem's ElementTetP2 places its edge nodes at the
    midpoints of (0,1), (1,2), (0,2), (0,3), (1,3), (2,3) and maps meshio's rows onto
    them unchanged (skfem.io.meshio has no tetra10 permutation): our edge order."""
    from meshio.gmsh import common as gmsh_common

    swap = gmsh_common._gmsh_to_meshio_order("tetra10", np.arange(10)[None])[0]
    assert swap.tolist() == [0, 1, 2, 3, 4, 5, 6, 7, 9, 8]
    assert np.array_equal(skfem.ElementTetP2.doflocs, ref.TETRA10_NODES)
    assert np.array_equal(skfem.ElementTetP2.doflocs[:4], RefTet.p.T)
    edges = [sorted(e) for e in ref.EDGES.tolist()]
    assert edges == [sorted(e) for e in RefTet.edges]


def test_tetra10_read_from_gmsh_file_has_midside_nodes_on_vtk_edges(tmp_path):
    """A gmsh 2.2 file in gmsh's tetra10 order (edges 0-1, 1-2, 2-0, 3-0, 3-2, 3-1 for
    nodes 5 to 10: gmsh's documented order, from memory), read by meshio: every midside
    node lies at the midpoint of the edge our order names (offsets 0)."""
    corners = REGULAR * 2.0 + 1.0
    gmsh_edges = [(0, 1), (1, 2), (2, 0), (3, 0), (3, 2), (3, 1)]
    mids = [0.5 * (corners[a] + corners[b]) for a, b in gmsh_edges]
    nodes = np.vstack([corners, mids])
    lines = ["$MeshFormat", "2.2 0 8", "$EndMeshFormat", "$Nodes", "10"]
    lines += [f"{i + 1} " + " ".join(repr(float(v)) for v in xyz) for i, xyz in enumerate(nodes)]
    lines += ["$EndNodes", "$Elements", "1", "1 11 2 0 1 " + " ".join(map(str, range(1, 11)))]
    lines += ["$EndElements"]
    path = tmp_path / "one.msh"
    path.write_text("\n".join(lines) + "\n")
    mesh = meshio.read(path)
    coords = mesh.points[mesh.cells_dict["tetra10"]]
    metrics, flags = measure(coords, "tetra10")
    assert metrics["midside_offset_along"][0] == pytest.approx(0.0, abs=1e-12)
    assert metrics["midside_offset_across"][0] == pytest.approx(0.0, abs=1e-12)
    assert not flags["inverted"][0]


def test_reference_orientation_and_tables():
    """VTK's tetra: the right-hand normal of the base (0, 1, 2) points towards node 3
    (common practice); faces turn counter-clockwise seen from outside; every corner
    triple is right-handed; the Gauss weights sum to the reference volume 1/6."""
    c = ref.CORNERS
    assert np.cross(c[1] - c[0], c[2] - c[0]) @ (c[3] - c[0]) > 0
    for face in ref.FACES:
        normal = np.cross(c[face[1]] - c[face[0]], c[face[2]] - c[face[0]])
        (opposite,) = set(range(4)) - set(face.tolist())
        assert normal @ (c[face].mean(axis=0) - c[opposite]) > 0
    for corner, triple in enumerate(ref.CORNER_TRIPLES):
        assert np.linalg.det(c[triple] - c[corner]) > 0
    for name, table in REFERENCES.items():
        assert table.gauss_weights.sum() == pytest.approx(1.0 / 6.0), name
        assert table.shape_derivatives(table.gauss_points).shape == (
            len(table.gauss_points),
            3,
            len(table.nodes),
        )
    assert not one(UNIT)[1]["inverted"]


# --- linear tetra: outside references --------------------------------------------------


def test_det_j_matches_skfem_affine_mapping():
    """scikit-fem's MappingAffine (MeshTet1, same unit reference tetrahedron): det J, and
    the volume as its quadrature sum, on random valid tetrahedra."""
    rng = np.random.default_rng(3)
    corners = random_tets(rng, 50)
    mesh = from_meshio(
        meshio.Mesh(corners.reshape(-1, 3), [("tetra", np.arange(200).reshape(50, 4))])
    )
    points, weights = skfem.quadrature.get_quadrature(RefTet, 2)
    det = mesh.mapping().detDF(points)
    metrics, flags = measure(corners, "tetra")
    for name in ("det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound"):
        np.testing.assert_allclose(metrics[name], det[:, 0], rtol=1e-12)
    np.testing.assert_allclose(metrics["volume"], det @ weights, rtol=1e-12)
    assert not flags["inverted"].any() and not flags["degenerate"].any()
    assert (metrics["jacobian_ratio"] == 1.0).all()


def test_volume_matches_convex_hull():
    """scipy.spatial.ConvexHull volume of the four corners = |volume|, both orientations."""
    rng = np.random.default_rng(4)
    corners = random_tets(rng, 40)
    corners[::2] = corners[::2][:, [1, 0, 2, 3]]  # half of them mirrored
    metrics, _ = measure(corners, "tetra")
    hull = np.array([ConvexHull(c).volume for c in corners])
    np.testing.assert_allclose(np.abs(metrics["volume"]), hull, rtol=1e-10)
    assert (metrics["volume"][::2] < 0).all() and (metrics["volume"][1::2] > 0).all()


def test_regular_tetrahedron_closed_forms():
    """Regular tetrahedron of edge a: dihedral arccos(1/3) = 70.53 deg, face angles 60,
    radius ratio, mean ratio, scaled Jacobian, condition and edge ratio 1, volume
    a^3 / (6 sqrt 2) (closed forms)."""
    for a in (1.0, 0.003, 250.0):
        m, f = one(REGULAR * a)
        dihedral = np.degrees(np.arccos(1.0 / 3.0))
        assert dihedral == pytest.approx(70.5287794, abs=1e-6)
        assert m["min_dihedral"] == pytest.approx(dihedral, abs=1e-9)
        assert m["max_dihedral"] == pytest.approx(dihedral, abs=1e-9)
        assert m["min_angle"] == pytest.approx(60.0, abs=1e-9)
        assert m["max_angle"] == pytest.approx(60.0, abs=1e-9)
        for name in ("radius_ratio", "mean_ratio", "scaled_jacobian", "condition", "edge_ratio"):
            assert m[name] == pytest.approx(1.0, abs=1e-12), name
        assert m["volume"] == pytest.approx(a**3 / (6.0 * np.sqrt(2.0)), rel=1e-12)
        assert m["det_j_min"] == pytest.approx(a**3 / np.sqrt(2.0), rel=1e-12)
        assert not any(f.values())


def test_unit_right_tetrahedron_closed_forms():
    """The unit right tetrahedron: volume 1/6, det J 1, dihedral angles 90 (three) and
    arccos(1/sqrt 3) = 54.74 (three), face angles 45 to 90, edge ratio sqrt 2, radius
    ratio (1 + sqrt 3) / 2, mean ratio 12 (1/2)^(2/3) / 9, condition sqrt(3/2), scaled
    Jacobian 1/sqrt 2 (the corners at (1,0,0) etc.: sqrt 2 / (1 x sqrt 2 x sqrt 2))."""
    m, _ = one(UNIT)
    assert m["volume"] == pytest.approx(1.0 / 6.0, rel=1e-15)
    assert m["det_j_min"] == 1.0
    assert m["max_dihedral"] == pytest.approx(90.0, abs=1e-12)
    assert m["min_dihedral"] == pytest.approx(np.degrees(np.arccos(1 / np.sqrt(3))), abs=1e-12)
    assert (m["min_angle"], m["max_angle"]) == pytest.approx((45.0, 90.0), abs=1e-12)
    assert m["edge_ratio"] == pytest.approx(np.sqrt(2.0), rel=1e-15)
    assert m["radius_ratio"] == pytest.approx((1 + np.sqrt(3)) / 2, rel=1e-14)
    assert m["mean_ratio"] == pytest.approx(12 * 0.5 ** (2 / 3) / 9, rel=1e-14)
    assert m["condition"] == pytest.approx(np.sqrt(1.5), rel=1e-14)
    assert m["scaled_jacobian"] == pytest.approx(1 / np.sqrt(2), rel=1e-14)


def sliver(h: float) -> np.ndarray:
    """The corners of a unit square's two diagonals, lifted apart by h: volume 2h/3."""
    return np.array([[-1.0, 0, 0], [1.0, 0, 0], [0, 1.0, h], [0, -1.0, h]])


def test_flattened_sliver():
    """A sliver (closed form): volume 2h/3 -> 0, min dihedral -> 0 and max -> 180, mean
    ratio -> 0, radius ratio -> infinity, while its face angles stay those of the square's
    halves (45 to 90) and its edge ratio 2 / sqrt(2 + h^2): only the volume-based metrics see it."""
    previous = None
    for h in (1e-1, 1e-2, 1e-3, 1e-4):
        m, f = one(sliver(h))
        assert m["volume"] == pytest.approx(2 * h / 3, rel=1e-9)
        assert m["min_angle"] > 44.0 and m["max_angle"] < 91.0
        assert m["edge_ratio"] == pytest.approx(2 / np.sqrt(2 + h * h), rel=1e-12)
        if previous is not None:
            assert m["min_dihedral"] < previous["min_dihedral"]
            assert m["max_dihedral"] > previous["max_dihedral"]
            assert 0 < m["mean_ratio"] < previous["mean_ratio"]
            assert m["radius_ratio"] > previous["radius_ratio"]
        assert not f["degenerate"] and not f["inverted"]
        previous = m
    assert previous["min_dihedral"] < 0.02 and previous["max_dihedral"] > 179.98
    assert previous["mean_ratio"] < 0.01
    m, f = one(sliver(1e-12))
    assert f["degenerate"] and not f["inverted"]
    m, f = one(sliver(0.0))
    assert f["degenerate"] and m["volume"] == 0.0 and m["radius_ratio"] == np.inf
    assert m["min_dihedral"] == 0.0 and m["max_dihedral"] == 180.0
    assert m["condition"] == np.inf and m["mean_ratio"] == 0.0


def test_inside_out_tetrahedron():
    """Swapping two nodes mirrors the element (an odd permutation): inverted and reversed,
    volume and det J negated, condition infinite, scaled Jacobian and mean ratio negated;
    shape metrics that do not depend on orientation unchanged."""
    rng = np.random.default_rng(5)
    corners = random_tets(rng, 30)
    good, gf = measure(corners, "tetra")
    for perm in ODD:
        bad, bf = measure(corners[:, list(perm)], "tetra")
        assert bf["inverted"].all() and bf["reversed"].all() and not bf["degenerate"].any()
        np.testing.assert_allclose(bad["volume"], -good["volume"], rtol=1e-12)
        np.testing.assert_allclose(bad["det_j_lower_bound"], -good["det_j_min"], rtol=1e-12)
        assert (bad["condition"] == np.inf).all() and (bad["jacobian_ratio"] == np.inf).all()
        np.testing.assert_allclose(bad["scaled_jacobian"], -good["scaled_jacobian"], rtol=1e-12)
        np.testing.assert_allclose(bad["mean_ratio"], -good["mean_ratio"], rtol=1e-12)
        for name in ("radius_ratio", "edge_ratio", "min_dihedral", "max_dihedral", "min_angle"):
            np.testing.assert_allclose(bad[name], good[name], rtol=1e-10)
    assert not gf["inverted"].any()


# --- the published definitions, worked out independently ------------------------------

#: Knupp's ideal corner matrix: the edges of the regular tetrahedron leaving corner 0.
W = (REGULAR[1:] - REGULAR[0]).T


def test_metrics_match_their_definitions_at_every_corner():
    """Knupp's corner matrices A_c (columns: the edges to the corner triple) and T_c =
    A_c W^-1 at all four corners, with numpy.linalg: scaled Jacobian = sqrt 2 min_c
    det A_c / prod |a_i| (regular tet's corner value 1/sqrt 2 scaled to 1), condition =
    max_c |T_c|_F |T_c^-1|_F / 3, mean ratio (Liu and Joe 1994) = 3 det(T)^(2/3) / |T|_F^2;
    radius ratio from the circumcentre solved as the point equidistant from the corners and
    the inradius 3V / (total face area); dihedral angles from the two opposite corners
    projected off each edge."""
    rng = np.random.default_rng(6)
    corners = random_tets(rng, 30, jitter=0.35)
    metrics, _ = measure(corners, "tetra")
    for e, x in enumerate(corners):
        sj, cond = [], []
        for c, triple in enumerate(ref.CORNER_TRIPLES):
            a = (x[triple] - x[c]).T
            sj.append(np.linalg.det(a) / np.prod(np.linalg.norm(a, axis=0)))
            t = a @ np.linalg.inv(W)
            cond.append(np.linalg.norm(t) * np.linalg.norm(np.linalg.inv(t)) / 3)
        assert metrics["scaled_jacobian"][e] == pytest.approx(np.sqrt(2) * min(sj), rel=1e-10)
        assert metrics["condition"][e] == pytest.approx(max(cond), rel=1e-10)
        t = (x[1:] - x[0]).T @ np.linalg.inv(W)
        mean = 3 * np.linalg.det(t) ** (2 / 3) / np.linalg.norm(t) ** 2
        assert metrics["mean_ratio"][e] == pytest.approx(mean, rel=1e-10)
        centre = np.linalg.solve(2 * (x[1:] - x[0]), (x[1:] ** 2).sum(1) - (x[0] ** 2).sum())
        big_r = np.linalg.norm(centre - x[0])
        faces = x[ref.FACES]
        area = 0.5 * np.linalg.norm(
            np.cross(faces[:, 1] - faces[:, 0], faces[:, 2] - faces[:, 0]), axis=1
        )
        volume = abs(np.linalg.det(x[1:] - x[0])) / 6
        assert metrics["radius_ratio"][e] == pytest.approx(
            big_r / (9 * volume / area.sum()), rel=1e-9
        )
        dihedral = []
        for p, q in ref.EDGES:
            r, s = sorted(set(range(4)) - {p, q})
            axis = (x[q] - x[p]) / np.linalg.norm(x[q] - x[p])
            u = x[r] - x[p] - (x[r] - x[p]) @ axis * axis
            v = x[s] - x[p] - (x[s] - x[p]) @ axis * axis
            dihedral.append(np.degrees(np.arccos(u @ v / np.linalg.norm(u) / np.linalg.norm(v))))
        assert metrics["min_dihedral"][e] == pytest.approx(min(dihedral), abs=1e-8)
        assert metrics["max_dihedral"][e] == pytest.approx(max(dihedral), abs=1e-8)


def test_shape_metrics_bounds_on_random_tetrahedra():
    """Facts of the trade: the regular tetrahedron is the best shape for scaled Jacobian,
    mean ratio, radius ratio and condition (each within [0, 1] or >= 1); dihedral angles
    lie in (0, 180) and the smallest is at most arccos(1/3); the face angles of a face
    sum to 180 so the smallest is at most 60 and the largest at least 60."""
    rng = np.random.default_rng(7)
    m, _ = measure(random_tets(rng, 2000, jitter=0.5), "tetra")
    assert (m["scaled_jacobian"] <= 1.0).all() and (m["scaled_jacobian"] > 0).all()
    assert ((m["mean_ratio"] > 0) & (m["mean_ratio"] <= 1 + 1e-12)).all()
    assert (m["radius_ratio"] >= 1 - 1e-12).all() and (m["condition"] >= 1 - 1e-12).all()
    assert (m["min_dihedral"] <= np.degrees(np.arccos(1 / 3)) + 1e-9).all()
    assert (m["min_angle"] <= 60 + 1e-9).all() and (m["max_angle"] >= 60 - 1e-9).all()


# --- invariance (hypothesis) -----------------------------------------------------------


@settings(max_examples=60, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    scale=st.floats(1e-3, 1e3),
    perm=st.sampled_from(EVEN),
    quadratic=st.booleans(),
)
def test_invariance_rigid_motion_scaling_even_renumbering(seed, scale, perm, quadratic):
    """Turning, moving and scaling an element by s changes det J and volume by s^3 and no
    dimensionless metric or flag; an even renumbering of the corners (orientation kept)
    changes nothing (for tetra10 the midside nodes follow their edges). Common practice."""
    rng = np.random.default_rng(seed)
    corners = random_tets(rng, 4, jitter=0.3)
    cell = "tetra10" if quadratic else "tetra"
    coords = to_tetra10(corners) if quadratic else corners
    if quadratic:
        coords[:, 4:] += 0.03 * rng.normal(size=(4, 6, 3))
    base, base_flags = measure(coords, cell)
    moved = scale * coords @ rotation(rng).T + rng.normal(size=3) * 100
    m, f = measure(moved, cell)
    for name in (*SHAPE_METRICS, "jacobian_ratio"):
        np.testing.assert_allclose(m[name], base[name], rtol=1e-7, atol=1e-9, err_msg=name)
    for name in ("volume", "det_j_min", "det_j_max", "det_j_corner_min"):
        np.testing.assert_allclose(m[name], base[name] * scale**3, rtol=1e-6, err_msg=name)
    for name, flag in base_flags.items():
        assert np.array_equal(f[name], flag), name
    # even renumbering: the corners, and the midside nodes of the renumbered edges
    order = list(perm)
    renumbered = coords[:, order]
    if quadratic:
        mid = {frozenset(e): 4 + i for i, e in enumerate(ref.EDGES.tolist())}
        extra = [mid[frozenset((order[a], order[b]))] for a, b in ref.EDGES]
        renumbered = np.concatenate([renumbered, coords[:, extra]], axis=1)
    r, rf = measure(renumbered, cell)
    for name in (*SHAPE_METRICS, "volume", "det_j_lower_bound", "midside_offset_across"):
        np.testing.assert_allclose(r[name], base[name], rtol=1e-9, atol=1e-12, err_msg=name)
    for name, flag in base_flags.items():
        assert np.array_equal(rf[name], flag), name


# --- contract: shapes, dtypes, degenerate input ----------------------------------------


@pytest.mark.parametrize("cell_type", ["tetra", "tetra10"])
def test_contract_on_degenerate_input(cell_type):
    """Coincident corners, a flat element, a point, a line: no warning, no -0.0, each
    metric (n,) float64 and each flag (n,) bool, degenerate flagged, not inverted; NaN
    only for metrics that mean nothing for the cell type. (Contract of the kernels.)"""
    shapes = np.array(
        [
            UNIT,
            np.zeros((4, 3)),  # a point
            [[0, 0, 0], [1, 0, 0], [2, 0, 0], [3, 0, 0]],  # a line
            [[0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 0]],  # flat
            [[0, 0, 0], [0, 0, 0], [0, 1, 0], [0, 0, 1]],  # two corners at one place
            -UNIT,  # mirrored through the origin: inverted
        ],
        dtype=float,
    )
    coords = to_tetra10(shapes) if cell_type == "tetra10" else shapes
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        metrics, flags = measure(coords, cell_type)
    for name, values in metrics.items():
        assert values.shape == (6,) and values.dtype == np.float64, name
        assert not np.any((values == 0) & np.signbit(values)), f"-0.0 in {name}"
    for name, values in flags.items():
        assert values.shape == (6,) and values.dtype == bool, name
    assert flags["degenerate"].tolist() == [False, True, True, True, True, False]
    assert flags["inverted"].tolist() == [False] * 5 + [True]
    always_nan = {"area", "aspect_ratio", "skew", "taper", "warp"}
    if cell_type == "tetra":
        always_nan |= {"midside_offset_along", "midside_offset_across"}
    for name in always_nan:
        assert np.isnan(metrics[name]).all(), name
    defined = [n for n in metrics if n not in always_nan and "|" not in n]
    for name in defined:
        assert not np.isnan(metrics[name][[0, 3, 4, 5]]).any(), name
    assert (metrics["radius_ratio"][1:5] == np.inf).all()
    assert (metrics["edge_ratio"][[1, 4]] == np.inf).all()


def test_bad_arguments_refused():
    """Not a tetrahedron type, or the wrong node count: a ValueError, nothing measured."""
    with pytest.raises(ValueError):
        measure(np.zeros((1, 4, 3)), "hexahedron")
    with pytest.raises(ValueError):
        measure(np.zeros((1, 4, 3)), "tetra10")


# --- tetra10 ---------------------------------------------------------------------------


def curved_tetra10(rng: np.random.Generator, n: int, bend: float = 0.05) -> np.ndarray:
    """Valid-looking tetra10 elements: random tetrahedra, midside nodes moved a little."""
    coords = to_tetra10(random_tets(rng, n))
    size = np.linalg.norm(coords[:, 1] - coords[:, 0], axis=1)[:, None, None]
    coords[:, 4:] += bend * size * rng.normal(size=(n, 6, 3))
    return coords


def skfem_det_j(coords: np.ndarray, points: np.ndarray) -> np.ndarray:
    """det J (n, m) by scikit-fem's MappingIsoparametric (MeshTet2 read from meshio's
    tetra10 rows, ElementTetP2) at reference points (m, 3)."""
    n = len(coords)
    cells = np.arange(10 * n).reshape(n, 10)
    mesh = from_meshio(meshio.Mesh(coords.reshape(-1, 3), [("tetra10", cells)]))
    mapping = skfem.MappingIsoparametric(mesh, skfem.ElementTetP2())
    return mapping.detDF(np.ascontiguousarray(points.T))


def test_tetra10_det_j_matches_skfem_isoparametric_mapping():
    """scikit-fem's MappingIsoparametric (same unit reference tetrahedron, so no scale
    factor): det J at our 4 Gauss points (det_j_min, det_j_max, jacobian_ratio) and at
    the 10 nodes (det_j_corner_min), on random curved tetra10; the volume against its
    quadrature of degree 4 (exact for det J, of degree 3)."""
    rng = np.random.default_rng(8)
    coords = curved_tetra10(rng, 40, bend=0.08)
    metrics, flags = measure(coords, "tetra10")
    at_gauss = skfem_det_j(coords, ref.GAUSS_4)
    at_nodes = skfem_det_j(coords, ref.TETRA10_NODES)
    np.testing.assert_allclose(metrics["det_j_min"], at_gauss.min(axis=1), rtol=1e-10)
    np.testing.assert_allclose(metrics["det_j_max"], at_gauss.max(axis=1), rtol=1e-10)
    valid = at_gauss.min(axis=1) > 0
    np.testing.assert_allclose(
        metrics["jacobian_ratio"][valid],
        at_gauss.max(axis=1)[valid] / at_gauss.min(axis=1)[valid],
        rtol=1e-10,
    )
    np.testing.assert_allclose(metrics["det_j_corner_min"], at_nodes.min(axis=1), rtol=1e-9)
    points, weights = skfem.quadrature.get_quadrature(RefTet, 4)
    volume = skfem_det_j(coords, points.T) @ weights
    np.testing.assert_allclose(metrics["volume"], volume, rtol=1e-10)
    # det J is at least the lower bound wherever scikit-fem samples it
    dense = skfem_det_j(coords, skfem.quadrature.get_quadrature(RefTet, 8)[0].T)
    assert (dense.min(axis=1) >= metrics["det_j_lower_bound"] - 1e-12).all()
    assert flags["inverted"][dense.min(axis=1) < 0].all()


def test_tetra10_shape_functions_from_interpolation_conditions():
    """sympy: the quadratic polynomials that are 1 at one tetra10 node and 0 at the others
    (meshio's node order) equal our shape functions and their derivatives."""
    shapes = tet_exact.shape_functions_from_interpolation()
    rng = np.random.default_rng(9)
    points = rng.dirichlet(np.ones(4), size=6)[:, 1:]
    ours = ref.tetra10_shape_functions(points)
    derivs = ref.tetra10_shape_derivatives(points)
    for k, shape in enumerate(shapes):
        f = sympy.lambdify(tet_exact.X, shape)
        grad = [sympy.lambdify(tet_exact.X, sympy.diff(shape, v)) for v in tet_exact.X]
        for m, p in enumerate(points):
            assert ours[m, k] == pytest.approx(float(f(*p)), abs=1e-14)
            for a in range(3):
                assert derivs[m, a, k] == pytest.approx(float(grad[a](*p)), abs=1e-13)


def test_tetra10_symbolic_det_j_degree_and_bernstein_form():
    """sympy: det J of a curved tetra10 is a polynomial of total degree 3; our Bernstein
    coefficients reproduce it at random points (the basis: 3!/a! L^a); the volume is its
    integral over the reference tetrahedron."""
    rng = np.random.default_rng(10)
    coords = np.round(curved_tetra10(rng, 3, bend=0.1), 3)
    coeffs = det_j_coefficients(coords)
    metrics, _ = measure(coords, "tetra10")
    x, y, z = tet_exact.X
    for e in range(3):
        p = tet_exact.symbolic_det_j(coords[e])
        assert sympy.Poly(p, *tet_exact.X).total_degree() == 3
        f = sympy.lambdify(tet_exact.X, p)
        points = rng.dirichlet(np.ones(4), size=8)
        values = tb.basis(points) @ coeffs[e]
        for point, value in zip(points, values):
            assert value == pytest.approx(float(f(*point[1:])), rel=1e-10, abs=1e-12)
        volume = sympy.integrate(p, (z, 0, 1 - x - y), (y, 0, 1 - x), (x, 0, 1))
        assert metrics["volume"][e] == pytest.approx(float(volume), rel=1e-12)


#: Planted curved tetra10 on the unit tetrahedron (midside nodes 4 to 9), det J positive
#: at the 4 Gauss points and 10 nodes but negative on a small part of the element.
FOLDED = [
    [[0.18, 0.07, -0.14], [0.5, 0.5, 0], [-0.03, 0.19, -0.23], [0, 0, 0.5], [0.65, 0.1, 0.35],
     [0, 0.5, 0.5]],
    [[0.5, 0, 0], [0.5, 0.5, 0], [-0.15, 0.44, -0.65], [0.12, -0.08, 0.56], [0.62, -0.55, 1.23],
     [0, 0.5, 0.5]],
    [[0.5, 0, 0], [0.5, 0.5, 0], [0, 0.6, 0.37], [0, 0, 0.5], [0.49, -0.51, 0.34],
     [0.39, 1.18, 0.18]],
]  # fmt: skip
#: Planted valid curved tetra10 whose first Bernstein bound is negative: only cutting
#: the element shows det J > 0.
VALID = [
    [[0.5, 0, 0], [0.5, 0.5, 0], [-0.33, 0.24, 0.36], [-0.14, -0.53, 0.35], [0.5, 0, 0.5],
     [0, 0.5, 0.5]],
    [[0.5, 0, 0], [0.28, 0.69, 0.17], [0.09, 0.83, -0.37], [0, 0, 0.5], [1, 0.19, 0.71],
     [-0.4, 0.65, 0.74]],
    [[0.57, -0.22, 0.13], [0.5, 0.5, 0], [0, 0.5, 0], [-0.3, -0.24, 0.21], [0.5, 0, 0.5],
     [0, 0.5, 0.5]],
]  # fmt: skip


def planted(mids: list) -> np.ndarray:
    return np.vstack([UNIT, np.array(mids, dtype=float)])


@pytest.mark.parametrize("mids", FOLDED)
def test_tetra10_fold_missed_by_gauss_points_and_nodes_is_inverted(mids):
    """A fold between the sampling points: scikit-fem reads det J > 0 at our Gauss points
    and the nodes; sympy's exact minimum is negative; the element is inverted, and the
    certified bound and the smallest value found bracket the exact minimum."""
    coords = planted(mids)
    assert skfem_det_j(coords[None], ref.GAUSS_4).min() > 0
    assert skfem_det_j(coords[None], ref.TETRA10_NODES).min() > 0
    exact, _ = tet_exact.exact_minimum(tet_exact.symbolic_det_j(coords))
    assert exact < 0
    metrics, flags = one(coords, "tetra10")
    assert flags["inverted"] and not flags["reversed"] and not flags["quarter_point"]
    assert metrics["det_j_min"] > 0 and metrics["det_j_corner_min"] > 0
    assert metrics["det_j_lower_bound"] <= exact + 1e-12
    found = det_j_bounds(coords[None])
    assert found.lower[0] <= exact <= found.upper[0] + 1e-12
    assert not found.undecided[0]


@pytest.mark.parametrize("mids", VALID)
def test_tetra10_valid_curved_element_certified_by_cutting(mids):
    """sympy's exact minimum is positive, the smallest Bernstein coefficient is not: the
    cut pieces certify det J > 0 (not inverted) with a bound at most the exact minimum."""
    coords = planted(mids)
    assert det_j_coefficients(coords[None]).min() < 0
    exact, _ = tet_exact.exact_minimum(tet_exact.symbolic_det_j(coords))
    assert exact > 0
    metrics, flags = one(coords, "tetra10")
    assert not flags["inverted"]
    assert 0 < metrics["det_j_lower_bound"] <= exact + 1e-12


def test_tetra10_bounds_bracket_exact_minimum_on_random_elements():
    """sympy's exact minimum of det J lies between the certified lower bound and the
    smallest value found, on random curved elements, valid and folded."""
    rng = np.random.default_rng(12)
    coords = np.round(curved_tetra10(rng, 10, bend=0.1), 2)
    metrics, flags = measure(coords, "tetra10")
    first = det_j_coefficients(coords).min(axis=1)
    cut = ~flags["inverted"] & (first < 0)
    assert cut.any() and flags["inverted"].any() and (first > 0).any()  # every case met
    for e in range(len(coords)):
        exact, _ = tet_exact.exact_minimum(tet_exact.symbolic_det_j(coords[e]))
        assert metrics["det_j_lower_bound"][e] <= exact + 1e-9 * abs(exact) + 1e-12
        assert flags["inverted"][e] == (exact < 0), e


def test_tetra10_undecided_element_is_reported_inverted(monkeypatch):
    """With no cutting allowed, a valid element whose first bound is negative cannot be
    shown positive: reported inverted (when in doubt, report), its bound negative."""
    coords = planted(VALID[0])[None]
    monkeypatch.setattr(tb, "MAX_DEPTH", 0)
    found = det_j_bounds(coords)
    assert found.undecided[0] and found.lower[0] < 0
    _, flags = measure(coords, "tetra10")
    assert flags["inverted"][0]


def test_straight_sided_tetra10_reads_as_its_linear_twin():
    """Midside nodes at the edge midpoints: the map is affine (common practice), so det J
    everywhere, the volume and every shape metric equal the linear tetrahedron's, and
    the Jacobian ratio is 1."""
    rng = np.random.default_rng(13)
    corners = random_tets(rng, 50)
    lin, lin_flags = measure(corners, "tetra")
    quad, quad_flags = measure(to_tetra10(corners), "tetra10")
    for name in (*SHAPE_METRICS, "volume", "det_j_min", "det_j_max", "det_j_corner_min"):
        np.testing.assert_allclose(quad[name], lin[name], rtol=1e-10, err_msg=name)
    np.testing.assert_allclose(quad["det_j_lower_bound"], lin["det_j_min"], rtol=1e-10)
    np.testing.assert_allclose(quad["jacobian_ratio"], 1.0, rtol=1e-10)
    np.testing.assert_allclose(quad["midside_offset_along"], 0.0, atol=1e-12)
    for name, flag in lin_flags.items():
        assert np.array_equal(quad_flags[name], flag), name
    assert np.isnan(lin["midside_offset_along"]).all()


def test_tetra10_mirrored_is_reversed_and_inverted():
    """An odd renumbering (corners 1 and 2 swapped, midside nodes following their edges)
    mirrors the map: det J negative everywhere, reversed and inverted, volume negated."""
    rng = np.random.default_rng(14)
    coords = curved_tetra10(rng, 20, bend=0.03)
    swapped = coords[:, [0, 2, 1, 3, 6, 5, 4, 7, 9, 8]]
    good, _ = measure(coords, "tetra10")
    bad, flags = measure(swapped, "tetra10")
    assert flags["reversed"].all() and flags["inverted"].all()
    np.testing.assert_allclose(bad["volume"], -good["volume"], rtol=1e-10)
    assert (bad["det_j_max"] < 0).all()


def test_tetra10_midside_offsets():
    """A midside node moved d along its chord and h across reads d and h (fractions of
    the chord length): offsets as the 2-D quadratic elements define them."""
    coords = to_tetra10(REGULAR[None] * 3.0)
    chord = coords[0, 2] - coords[0, 1]  # edge 1-2, node 5
    normal = np.cross(chord, coords[0, 3] - coords[0, 1])
    normal /= np.linalg.norm(normal)
    coords[0, 5] += 0.07 * chord + 0.11 * 3.0 * normal
    metrics, _ = measure(coords, "tetra10")
    assert metrics["midside_offset_along"][0] == pytest.approx(0.07, rel=1e-12)
    assert metrics["midside_offset_across"][0] == pytest.approx(0.11, rel=1e-12)


def test_tetra10_quarter_point():
    """Quarter-point rule (Henshell and Shaw 1975, Barsoum 1976, from memory): a midside
    node a quarter of the edge from a corner makes the edge tangent 4 x_m - 3 x_a - x_b
    vanish there, so det J = 0 at that corner: flagged quarter_point, not inverted, and
    measured again with the node at its midpoint (the linear twin's det J). Pulled past
    the quarter point the tangent reverses: det J < 0 at the corner, inverted."""
    coords = to_tetra10(UNIT[None])
    coords[0, 4] = [0.25, 0.0, 0.0]  # edge 0-1, a quarter from corner 0
    metrics, flags = one(coords[0], "tetra10")
    assert flags["quarter_point"] and not flags["inverted"]
    assert metrics["det_j_corner_min"] == pytest.approx(0.0, abs=1e-15)
    assert metrics["det_j_lower_bound"] == pytest.approx(0.0, abs=1e-15)
    assert metrics["midside_offset_along"] == pytest.approx(0.25)
    for name in ("det_j_min", "det_j_corner_min", "det_j_lower_bound", "jacobian_ratio"):
        assert metrics[f"{name}|without_quarter_points"] == pytest.approx(1.0), name
    assert metrics["midside_offset_along|without_quarter_points"] == 0.0
    coords[0, 4] = [0.2, 0.0, 0.0]  # tangent at corner 0: 0.8 - 1 = -0.2
    metrics, flags = one(coords[0], "tetra10")
    assert flags["inverted"] and not flags["quarter_point"]
    assert metrics["det_j_corner_min"] == pytest.approx(-0.2, rel=1e-12)
    coords[0, 4] = [0.3, 0.0, 0.0]  # short of it: valid, no flag
    metrics, flags = one(coords[0], "tetra10")
    assert not flags["inverted"] and not flags["quarter_point"]
    assert np.isnan(metrics["det_j_min|without_quarter_points"])


def test_cutting_into_eight_covers_the_element_and_keeps_det_j():
    """The 8 pieces (corners at the corners and edge midpoints) have volume 1/8 each and
    cover the tetrahedron once: a random point lies in exactly one (off the cut planes);
    the piece's coefficients (parent @ table) give sympy's det J at the point."""
    rng = np.random.default_rng(15)
    corners = tb.PIECE_CORNERS  # (8, 4, 4) barycentric in the parent
    volumes = [abs(np.linalg.det(c[1:, 1:] - c[0, 1:])) for c in corners]
    np.testing.assert_allclose(volumes, 1.0 / 8.0, rtol=1e-15)
    coords = planted(VALID[1])
    det = sympy.lambdify(tet_exact.X, tet_exact.symbolic_det_j(coords))
    coeffs = det_j_coefficients(coords[None])[0]
    pieces = (coeffs @ tb.CHILDREN).reshape(8, 20)
    for point in rng.dirichlet(np.ones(4), size=200):
        inside = []
        for k, c in enumerate(corners):
            local = np.linalg.solve(c.T, point)  # barycentric in piece k
            if (local > 1e-12).all():
                inside.append((k, local))
        assert len(inside) == 1
        k, local = inside[0]
        value = tb.basis(local[None]) @ pieces[k]
        assert value[0] == pytest.approx(det(*point[1:]), rel=1e-10, abs=1e-12)


@pytest.mark.parametrize("cell_type", ["tetra", "tetra10"])
def test_empty_chunk(cell_type):
    """No elements: every metric and flag an empty (0,) array (kernel contract)."""
    metrics, flags = measure(np.zeros((0, len(REFERENCES[cell_type].nodes), 3)), cell_type)
    assert all(v.shape == (0,) for v in metrics.values())
    assert all(v.shape == (0,) and v.dtype == bool for v in flags.values())


def test_solid_kernel_benchmark_runs():
    """benchmarks/solid_kernels.py runs (a smoke test, no timing asserted): its cube
    split yields positively oriented tetrahedra and every sample is measured."""
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    cmd = [sys.executable, "-m", "benchmarks.solid_kernels", "--family", "tetra"]
    done = subprocess.run(
        [*cmd, "--elements", "600", "--repeat", "1"],
        cwd=root,
        capture_output=True,
        text=True,
        check=True,
    )
    lines = done.stdout.splitlines()
    assert len(lines) == 4 and all("(600 elements)" in line for line in lines)


@pytest.mark.parametrize(
    "moves",
    [
        {4: [0.25, 0, 0], 6: [0, 0.25, 0], 7: [0, 0, 0.25]},  # every edge at corner 0
        {6: [0, 0.25, 0], 7: [0, 0, 0.25], 5: [0.75, 0.25, 0], 8: [0.75, 0, 0.25]},
    ],
    ids=["crack-tip corner", "crack-front edge 0-1"],
)
def test_tetra10_crack_front_quarter_points(moves):
    """Quarter-point nodes on the edges leaving a crack-tip corner, or leaving both ends
    of a crack-front edge (Barsoum 1976, from memory): the nodes stay on their straight
    edges, so the map covers the same tetrahedron once (volume 1/6, closed form) with det J
    vanishing at the tip corners; quarter_point, not inverted."""
    coords = to_tetra10(UNIT[None])[0]
    for node, place in moves.items():
        coords[node] = place
    metrics, flags = one(coords, "tetra10")
    assert flags["quarter_point"] and not flags["inverted"] and not flags["degenerate"]
    assert metrics["volume"] == pytest.approx(1.0 / 6.0, rel=1e-12)
    assert metrics["det_j_corner_min"] == pytest.approx(0.0, abs=1e-15)
    assert metrics["det_j_lower_bound"] == 0.0
    assert metrics["det_j_min"] > 0
    assert metrics["det_j_lower_bound|without_quarter_points"] == pytest.approx(1.0)
