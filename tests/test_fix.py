"""``meshaudit fix`` and ``meshaudit.fix``: topology repairs, node moves, what stays put.

Outside references: closed forms (a mirror of the reference element has det J = -1; a
uniform grid of squares is where every corner's mean ratio takes its least value, 1; the
symmetric 2 x 2 patch has its minimiser at the centre), shapely (signed area and
orientation of each repaired element, validity of its polygon), the planted-defects
sample's own table of defects (samples/make_samples.py), and facts of the trade marked
"common practice".
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest
import shapely
from conftest import SAMPLES
from repair_meshes import corner_volumes, grid, hex_block, outline, quad_mesh
from shapely.geometry import Polygon

import meshaudit
from meshaudit.cells.registry import CELL_TYPES
from meshaudit.repair import RepairOptions
from meshaudit.repair.cells import reversal

DEFECTS = SAMPLES / "bracket_plate_defects.msh"


def _polygons(points: np.ndarray, quads: np.ndarray) -> list[Polygon]:
    return [Polygon(points[q, :2]) for q in quads]


def _quads(result) -> np.ndarray:
    return next(c.data for c in result.mesh.cells if c.type == "quad")


@pytest.mark.parametrize("name", sorted(CELL_TYPES))
def test_reversal_mirrors_every_cell_type(name):
    # Closed form: nodes placed at their own reference coordinates map by the identity
    # (det J = 1); the mirrored node order is the identity composed with the exchange of
    # the first two reference axes, whose determinant is -1, at every Gauss point.
    cell = CELL_TYPES[name]
    ref = cell.reference_nodes
    perm = reversal(name)
    assert perm[0] == 0 and sorted(perm) == list(range(cell.n_nodes))
    gauss_id, _ = cell.jacobians(ref[None])
    gauss_rev, _ = cell.jacobians(ref[perm][None])
    np.testing.assert_allclose(gauss_id, 1.0, atol=1e-12)
    np.testing.assert_allclose(gauss_rev, -1.0, atol=1e-12)


def test_tangled_patch_becomes_valid_and_boundary_stays_to_the_bit():
    points, quads = grid(3, 3)
    points = points.astype(float)
    points[5] = [2.6, 2.4]  # interior node (1, 1) pulled past node (2, 2): four elements fold
    before = _polygons(points, quads)
    assert not all(p.is_valid and p.exterior.is_ccw for p in before)  # shapely: tangled
    result = meshaudit.fix(quad_mesh(points, quads))
    out = result.mesh.points
    # shapely: every repaired element is a valid polygon wound counter-clockwise with
    # positive signed area, and the four elements fill the 3 x 3 square exactly
    polys = _polygons(out, _quads(result))
    assert all(p.is_valid and p.exterior.is_ccw for p in polys)
    assert all(shapely.area(p) > 0 for p in polys)
    assert sum(p.area for p in polys) == pytest.approx(9.0)
    ring = outline(grid(3, 3)[0])
    assert np.array_equal(out[ring], points[ring])  # the outline, bit for bit
    assert result.passed and not result.done["reversed"].size  # folded, not reversed


def test_uniform_grid_is_a_fixed_point():
    # Closed form: on squares every corner's inverse mean ratio is 1, its least value,
    # so the sum over corners is at its minimum and no node moves.
    points, quads = grid(4, 4)
    points = points.astype(float)
    result = meshaudit.fix(quad_mesh(points, quads), options=RepairOptions(everywhere=True))
    assert result.moved_nodes == 0
    assert np.array_equal(result.mesh.points, points)


@pytest.mark.parametrize("offset", [(0.3, -0.2), (-0.45, 0.1), (0.2, 0.35)])
def test_node_pushed_off_the_centre_of_a_2x2_patch_returns(offset):
    # Symmetry (closed form): the 2 x 2 patch of unit squares with a fixed outline is
    # mapped onto itself by the square's eight symmetries, which all fix only the
    # centre; the objective is strictly convex near it, so its minimiser is (1, 1).
    points, quads = grid(2, 2)
    points = points.astype(float)
    points[4] += offset
    result = meshaudit.fix(quad_mesh(points, quads), options=RepairOptions(everywhere=True))
    np.testing.assert_allclose(result.mesh.points[4], [1.0, 1.0], atol=1e-6)
    ring = outline(grid(2, 2)[0])
    assert np.array_equal(result.mesh.points[ring], points[ring])


def test_reversed_mesh_becomes_counter_clockwise():
    points, quads = grid(3, 2)
    points = points.astype(float)
    backwards = quads[:, ::-1].copy()
    assert not any(p.exterior.is_ccw for p in _polygons(points, backwards))  # shapely
    result = meshaudit.fix(quad_mesh(points, backwards))
    polys = _polygons(result.mesh.points, _quads(result))
    # shapely: orient() with sign 1 leaves a counter-clockwise ring unchanged
    assert all(shapely.geometry.polygon.orient(p, 1.0).equals_exact(p, 0) for p in polys)
    assert all(p.exterior.is_ccw for p in polys)
    assert result.passed and len(result.done["reversed"]) == len(quads)
    assert np.array_equal(result.mesh.points, points)  # nothing moved


def test_one_reversed_element_keeps_its_first_node():
    points, quads = grid(2, 2)
    quads = quads.copy()
    quads[3] = quads[3, [0, 3, 2, 1]]
    result = meshaudit.fix(quad_mesh(points.astype(float), quads))
    assert result.done["reversed"].tolist() == [3]
    assert _quads(result)[3].tolist() == grid(2, 2)[1][3].tolist()


def _cracked() -> tuple[np.ndarray, np.ndarray]:
    """A 2 x 2 grid cut along x = 1: the right column uses copies of the three nodes on
    the cut (common practice: the unmerged nodes of two meshed parts)."""
    points, quads = grid(2, 2)
    points = points.astype(float)
    on_cut = np.flatnonzero(points[:, 0] == 1.0)
    copies = np.arange(len(points), len(points) + len(on_cut))
    points = np.vstack([points, points[on_cut]])
    quads = quads.copy()
    right = points[quads].mean(axis=1)[:, 0] > 1.0
    lookup = np.arange(len(points))
    lookup[on_cut] = copies
    quads[right] = lookup[quads[right]]
    return points, quads


def test_unmerged_crack_is_closed():
    points, quads = _cracked()
    before = meshaudit.audit(quad_mesh(points, quads))
    assert {f.kind for f in before.failing_findings} >= {"coincident_nodes", "crack_edges"}
    result = meshaudit.fix(quad_mesh(points, quads))
    assert len(result.done["merged"]) == 3  # the three nodes on the cut
    assert len(result.mesh.points) == 9  # the copies, used by nothing now, are dropped
    assert result.passed and not result.after.findings
    # shapely: the four elements now make one polygon, the 2 x 2 square
    union = shapely.union_all(_polygons(result.mesh.points, _quads(result)))
    assert union.geom_type == "Polygon" and union.area == pytest.approx(4.0)


def test_intended_crack_is_kept(tmp_path):
    points, quads = _cracked()
    profile = SAMPLES / "crack_faces_intended.toml"
    result = meshaudit.fix(quad_mesh(points, quads), profile=profile)
    assert result.done.get("merged") is None
    assert len(result.mesh.points) == len(points)
    assert np.array_equal(_quads(result), quads)
    crack = meshaudit.fix(SAMPLES / "bracket_crack_tip.vtu", profile=profile)
    assert crack.done.get("merged") is None
    assert len(crack.mesh.points) == len(meshio.read(SAMPLES / "bracket_crack_tip.vtu").points)


def test_duplicates_and_orphans_dropped_data_and_sets_follow():
    points, quads = grid(2, 1)
    points = np.vstack([points.astype(float), [[5.0, 5.0]]])  # node 6: an orphan
    quads = np.vstack([quads, quads[1, ::-1]])  # element 2 repeats element 1, reversed
    mesh = quad_mesh(
        points,
        quads,
        cell_data={"thickness": [np.array([1.0, 2.0, 3.0])]},
        point_data={"temperature": np.arange(7.0)},
    )
    mesh.cell_sets = {"web": [np.array([1, 2])]}
    mesh.point_sets = {"clamp": np.array([0, 3])}
    result = meshaudit.fix(mesh)
    out = result.mesh
    assert result.done["duplicates"].tolist() == [2]
    assert result.done["orphans"].tolist() == [6]
    assert out.cells[0].data.tolist() == quads[:2].tolist()
    assert out.cell_data["thickness"][0].tolist() == [1.0, 2.0]
    assert out.point_data["temperature"].tolist() == [0.0, 1.0, 2.0, 3.0, 4.0, 5.0]
    assert [np.asarray(s).tolist() for s in out.cell_sets["web"]] == [[1]]
    assert out.point_sets["clamp"].tolist() == [0, 3]
    # the input's numbers travel with the rows and nodes
    assert out.cell_data["element_id"][0].tolist() == [0, 1]
    assert out.point_data["node_id"].tolist() == [0, 1, 2, 3, 4, 5]


def test_orphan_in_a_named_node_set_is_kept():
    points, quads = grid(1, 1)
    points = np.vstack([points.astype(float), [[3.0, 3.0]]])
    mesh = quad_mesh(points, quads)
    mesh.point_sets = {"load_point": np.array([4])}
    result = meshaudit.fix(mesh)
    assert len(result.mesh.points) == 5 and not len(result.done["orphans"])


def test_region_interface_and_named_nodes_stay():
    points, quads = grid(4, 2)
    points = points.astype(float)
    rng = np.random.default_rng(7)
    inner = ~outline(points)
    points[inner] += rng.uniform(-0.25, 0.25, (inner.sum(), 2))
    left = points[quads].mean(axis=1)[:, 0] < 2.0
    blocks = [("quad", quads[left]), ("quad", quads[~left])]
    mesh = meshio.Mesh(points, blocks)
    mesh.point_sets = {"gauge": np.array([11])}  # an interior node at (1, 1)
    result = meshaudit.fix(mesh, options=RepairOptions(everywhere=True, keep=("gauge",)))
    out = result.mesh.points
    interface = np.flatnonzero(grid(4, 2)[0][:, 0] == 2.0)  # shared by both blocks
    assert np.array_equal(out[interface], points[interface])
    assert np.array_equal(out[11], points[11])
    assert result.moved_nodes > 0  # the other interior nodes did move
    with pytest.raises(meshaudit.InputError, match="no node set or region"):
        meshaudit.fix(mesh, options=RepairOptions(everywhere=True, keep=("nowhere",)))


def test_shell_nodes_move_on_their_surface():
    # A cylindrical flange of radius 10 (a shell); one interior node slid along the
    # surface. It moves back to its place in the grid on the quadric fitted to its
    # neighbours, so it stays on the cylinder (closed form: the cylinder's height over a
    # tangent plane, R - sqrt(R^2 - a^2) = a^2 / (2R) + a^4 / (8 R^3) + ..., so a quadric
    # is off it by under 1e-3 within a = 1.5 of the node, where a move in the tangent
    # plane alone would leave it by d^2 / (2 R) = 0.03 for this move d = 0.75), and the
    # free edges stay bit for bit.
    points, quads = grid(6, 4, size=1.0)
    theta = points[:, 0] / 10.0
    xyz = np.column_stack([10 * np.sin(theta), points[:, 1], 10 * np.cos(theta)])
    node = 2 * 7 + 3  # (3, 2): an interior node
    t = theta[node] + 0.06
    xyz[node] = [10 * np.sin(t), points[node, 1] + 0.45, 10 * np.cos(t)]
    result = meshaudit.fix(quad_mesh(xyz, quads), options=RepairOptions(everywhere=True))
    new = result.mesh.points[node]
    home = np.array([10 * np.sin(theta[node]), points[node, 1], 10 * np.cos(theta[node])])
    assert np.linalg.norm(new - home) < 0.05 * np.linalg.norm(xyz[node] - home)
    assert abs(np.hypot(new[0], new[2]) - 10.0) < 1e-3
    ring = outline(points)
    assert np.array_equal(result.mesh.points[ring], xyz[ring])


def test_inverted_hexahedra_are_untangled():
    # A 2 x 2 x 2 block of unit cubes: the one interior node pushed past a corner of the
    # block's middle makes hexahedra inverted; after the fix every corner's triple
    # product (closed form) is positive and the block's outer nodes did not move.
    points, hexes = hex_block(2)
    centre = 13
    points[centre] = [1.7, 1.8, 1.6]
    assert (corner_volumes(points, hexes) <= 0).any()
    result = meshaudit.fix(meshio.Mesh(points, [("hexahedron", hexes)]))
    out = result.mesh.points
    assert (corner_volumes(out, hexes) > 0).all()
    outer = np.ones(len(points), dtype=bool)
    outer[centre] = False
    assert np.array_equal(out[outer], points[outer])
    assert result.passed


def test_inverted_tetrahedra_are_untangled_not_reversed():
    # The 2 x 2 x 2 block cut into six tetrahedra per cube (along each cube's diagonal, a
    # conforming cut, common practice); the centre node pushed out through the top face
    # inverts six tetrahedra whose node order still agrees with their neighbours'. The
    # fix must move the node back (closed form: every tetrahedron's triple product
    # positive), not reverse them, and leave the block's outer nodes alone.
    points, hexes = hex_block(2)
    by_corner = hexes[:, [0, 1, 3, 2, 4, 5, 7, 6]]  # corner i + 2j + 4k
    cut = np.array(
        [[0, 1, 3, 7], [0, 1, 5, 7], [0, 2, 3, 7], [0, 2, 6, 7], [0, 4, 5, 7], [0, 4, 6, 7]]
    )
    tets = by_corner[:, cut].reshape(-1, 4)

    def volumes(p):
        a, b, c, d = (p[tets[:, k]] for k in range(4))
        return np.einsum("ij,ij->i", b - a, np.cross(c - a, d - a))

    left = volumes(points) < 0
    tets[left] = tets[left][:, [0, 2, 1, 3]]
    moved = points.copy()
    moved[13] = [1.0, 1.0, 2.6]
    assert (volumes(moved) < 0).sum() == 6
    result = meshaudit.fix(meshio.Mesh(moved, [("tetra", tets)]))
    assert not len(result.done["reversed"])
    assert (volumes(result.mesh.points) > 0).all()
    outer = np.arange(len(points)) != 13
    assert np.array_equal(result.mesh.points[outer], moved[outer])
    assert result.passed


def test_reversed_tetra_and_quadratic_solid_are_reversed():
    tet = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]])
    backwards = meshio.Mesh(tet, [("tetra", np.array([[0, 2, 1, 3]]))])
    result = meshaudit.fix(backwards)
    a, b, c, d = result.mesh.points[result.mesh.cells[0].data[0]]
    assert np.dot(b - a, np.cross(c - a, d - a)) > 0  # closed form: positive volume x 6
    assert result.passed
    ref = CELL_TYPES["hexahedron20"].reference_nodes
    mesh = meshio.Mesh(ref, [("hexahedron20", reversal("hexahedron20")[None])])
    result = meshaudit.fix(mesh)
    assert result.done["reversed"].tolist() == [0]
    gauss, _ = CELL_TYPES["hexahedron20"].jacobians(result.mesh.points[result.mesh.cells[0].data])
    np.testing.assert_allclose(gauss, 1.0, atol=1e-12)  # the identity map again


def test_planted_defects_sample():
    # samples/make_samples.py plants five defects: 293 reversed and 75 a bow-tie (node
    # order), 227, 210 and 354 made by moving a plate-outline corner (boundary nodes,
    # which the fix must not move): the first two are repaired, the others stay and say why.
    raw = meshio.read(DEFECTS)
    result = meshaudit.fix(DEFECTS)
    assert result.done["reversed"].tolist() == [293]
    assert result.done["bowties"].tolist() == [75]
    assert sorted(result.remaining) == [210, 227, 354]
    assert all("fixed" in why for why in result.remaining.values())
    assert result.acceptable and not result.after.failing_findings
    rows = result.after.position_of(75), result.after.position_of(293)
    quads = _quads(result)
    for row in rows:  # shapely: valid, counter-clockwise
        poly = Polygon(result.mesh.points[quads[row], :2])
        assert poly.is_valid and poly.exterior.is_ccw
    line_nodes = np.unique(np.concatenate([c.data.ravel() for c in raw.cells if c.type == "line"]))
    assert np.array_equal(result.mesh.points[line_nodes], raw.points[line_nodes])
    assert result.worst_move < 1.0


def test_cli_writes_the_repair_and_refuses_the_input(run_cli, tmp_path):
    points, quads = grid(3, 2)
    src = tmp_path / "web.vtu"
    meshio.write(src, quad_mesh(points.astype(float), quads[:, ::-1].copy()))
    data = src.read_bytes()
    same = run_cli("fix", src, "-o", src)
    assert same.returncode == 2 and "meshaudit: error" in same.stderr
    assert src.read_bytes() == data  # the input is never written
    out = tmp_path / "web_fixed.msh"
    res = run_cli("fix", src, "-o", out)
    assert res.returncode == 0, res.stdout + res.stderr
    assert "elements reversed" in res.stdout and "PASS" in res.stdout
    assert run_cli("check", out, "--quiet").returncode == 0
    assert not list(tmp_path.glob(".meshaudit-*"))  # no temporary file left
    fails = run_cli("fix", DEFECTS, "-o", tmp_path / "plate.vtu")
    assert fails.returncode == 1 and "Still failing" in fails.stdout
    for element in ("210", "227", "354"):
        assert element in fails.stdout
    bad = run_cli("fix", src, "-o", tmp_path / "web.unknown")
    assert bad.returncode == 2 and not (tmp_path / "web.unknown").exists()


def test_refused_result_is_not_written(run_cli, tmp_path, monkeypatch):
    from meshaudit.cli import main
    from meshaudit.repair import run as repair_run

    real = repair_run.repair

    def worse(*args, **kwargs):
        result = real(*args, **kwargs)
        result.worsened = np.array([1])
        return result

    monkeypatch.setattr(repair_run, "repair", worse)
    points, quads = grid(2, 2)
    src = tmp_path / "web.vtu"
    meshio.write(src, quad_mesh(points.astype(float), quads))
    out = tmp_path / "out.vtu"
    assert main(["fix", str(src), "-o", str(out), "--no-config"]) == 1
    assert not out.exists()


def test_tangled_quad8_patch_returns_to_its_grid_with_midside_nodes():
    # The 3 x 3 grid of quad8 with straight sides (midside nodes at the middle of each
    # side, common practice for a mesher's output); one interior corner pulled past its
    # neighbour with its sides kept straight. The fix moves the corner and its midside
    # nodes follow: the grid comes back (closed form: the unique minimiser, as for
    # linear quads), and the outline's corners and midside nodes stay to the bit.
    points, quads = grid(3, 3)
    points = points.astype(float)
    edges = np.sort(quads[:, [[0, 1], [1, 2], [2, 3], [3, 0]]].reshape(-1, 2), axis=1)
    unique, inverse = np.unique(edges, axis=0, return_inverse=True)
    mids = len(points) + inverse.reshape(-1, 4)
    quad8 = np.hstack([quads, mids])
    home = np.vstack([points, points[unique].mean(axis=1)])
    tangled = home.copy()
    tangled[5] = [2.6, 2.4]
    tangled[len(points) :] = tangled[unique].mean(axis=1)
    result = meshaudit.fix(meshio.Mesh(tangled, [("quad8", quad8)]))
    assert not result.before.passed and result.passed
    np.testing.assert_allclose(result.mesh.points, home, atol=1e-5)
    ring = outline(points)
    on_ring = np.flatnonzero(np.concatenate([ring, ring[unique].all(axis=1)]))
    assert np.array_equal(result.mesh.points[on_ring], tangled[on_ring])


def test_benchmark_of_fix_writes_its_rows():
    # Smoke test of benchmarks/bench_fix.py (speed is measured there, not tested here):
    # six rows, and no repair leaves more elements failing than it found.
    import os
    import subprocess
    import sys

    from conftest import REPO

    env = dict(os.environ, PYTHONPATH=str(REPO))
    res = subprocess.run(
        [sys.executable, "-m", "benchmarks.bench_fix", "1000"],
        capture_output=True,
        text=True,
        cwd=REPO,
        env=env,
        timeout=600,
    )
    assert res.returncode == 0, res.stderr
    rows = [line.split("|")[1:-1] for line in res.stdout.splitlines()[2:]]
    assert len(rows) == 6
    for row in rows:
        before, after = int(row[2].replace(",", "")), int(row[3].replace(",", ""))
        assert after <= before


def test_collapsed_element_is_explained():
    # A quad whose third node is its second (common practice: a collapsed element, a
    # topology error no node move can undo) stays failing, and the reason says so.
    points, quads = grid(3, 3)
    quads = quads.copy()
    quads[4, 2] = quads[4, 1]
    result = meshaudit.fix(quad_mesh(points.astype(float), quads))
    assert 4 in result.remaining and "collapsed" in result.remaining[4]


#: Corner triple products of a wedge (corner, edge to a, edge to b, edge to e), right-handed
#: for the reference wedge (triangle 0 1 2 counter-clockwise below triangle 3 4 5).
WEDGE_CORNERS = [(0, 1, 2, 3), (1, 2, 0, 4), (2, 0, 1, 5), (3, 5, 4, 0), (4, 3, 5, 1), (5, 4, 3, 2)]
#: The same for a pyramid's base corners (base 0 1 2 3 counter-clockwise below apex 4).
PYRAMID_CORNERS = [(0, 1, 3, 4), (1, 2, 0, 4), (2, 3, 1, 4), (3, 0, 2, 4)]


def _triples(points: np.ndarray, cells: np.ndarray, table) -> np.ndarray:
    x = points[cells]
    out = []
    for c, a, b, e in table:
        u, v, w = x[:, a] - x[:, c], x[:, b] - x[:, c], x[:, e] - x[:, c]
        out.append(np.einsum("ij,ij->i", np.cross(u, v), w))
    return np.stack(out, axis=1)


def test_inverted_wedges_are_untangled():
    # The 2 x 2 x 2 block of cubes, each cut into two wedges along a vertical diagonal
    # plane (common practice for prism meshes); the interior node pushed past the middle
    # inverts wedges. Closed form: every corner triple product of the reference wedge is
    # positive; after the fix they all are again, and the outer nodes did not move.
    points, hexes = hex_block(2)
    wedges = np.vstack([hexes[:, [0, 1, 2, 4, 5, 6]], hexes[:, [0, 2, 3, 4, 6, 7]]])
    ref = CELL_TYPES["wedge"].reference_nodes
    assert (_triples(ref, np.arange(6)[None], WEDGE_CORNERS) > 0).all()
    assert (_triples(points, wedges, WEDGE_CORNERS) > 0).all()
    moved = points.copy()
    moved[13] = [1.7, 1.8, 1.6]
    assert (_triples(moved, wedges, WEDGE_CORNERS) <= 0).any()
    result = meshaudit.fix(meshio.Mesh(moved, [("wedge", wedges)]))
    assert not len(result.done["reversed"])
    assert (_triples(result.mesh.points, wedges, WEDGE_CORNERS) > 0).all()
    outer = np.arange(len(points)) != 13
    assert np.array_equal(result.mesh.points[outer], moved[outer])
    assert result.passed


def test_inverted_pyramids_are_untangled_back_to_the_centre():
    # A cube [0, 2]^3 cut into six pyramids, one per face, with the apex at the centre
    # node (common practice for a pyramid transition); the centre pushed out through the
    # top face inverts the top pyramid. Closed form: the base corners' triple products are
    # positive for the reference pyramid, and by the cube's symmetry the shape objective's
    # minimiser is the centre (1, 1, 1).
    corners = np.array([[2 * (i & 1), 2 * (i >> 1 & 1), 2 * (i >> 2)] for i in range(8)], float)
    points = np.vstack([corners, [[1.0, 1.0, 1.0]]])
    faces = np.array(
        [[0, 1, 3, 2], [4, 5, 7, 6], [0, 1, 5, 4], [2, 3, 7, 6], [0, 2, 6, 4], [1, 3, 7, 5]]
    )
    pyramids = np.column_stack([faces, np.full(6, 8)])
    wrong = _triples(points, pyramids, PYRAMID_CORNERS)[:, 0] < 0
    pyramids[wrong, :4] = pyramids[wrong][:, [0, 3, 2, 1]]  # each base seen from the apex
    ref = CELL_TYPES["pyramid"].reference_nodes
    assert (_triples(ref, np.arange(5)[None], PYRAMID_CORNERS) > 0).all()
    assert (_triples(points, pyramids, PYRAMID_CORNERS) > 0).all()
    moved = points.copy()
    moved[8] = [1.2, 0.9, 2.5]
    assert (_triples(moved, pyramids, PYRAMID_CORNERS) <= 0).any()
    result = meshaudit.fix(meshio.Mesh(moved, [("pyramid", pyramids)]))
    out = result.mesh.points
    assert (_triples(out, pyramids, PYRAMID_CORNERS) > 0).all()
    np.testing.assert_allclose(out[8], [1.0, 1.0, 1.0], atol=1e-3)
    assert np.array_equal(out[:8], moved[:8])
    assert result.passed
