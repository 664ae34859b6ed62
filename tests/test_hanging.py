"""Hanging nodes (non-conforming interfaces) and the free-edge loop classes around them.

Meshes come from tests/hanging_meshes.py: where the hanging nodes sit, which elements
hold them and which use them is known by construction. Loop lengths are checked
against closed-form values of the analytic shapes (the 0.3 x 0.3 plate: perimeter 1.2,
area 0.09; an interface of length l is walked on both sides, 2 l) and against shapely
(exterior length and area of the union of the element polygons).
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from pathlib import Path

import meshio
import numpy as np
import pytest
import shapely

from meshaudit import InputError, audit
from meshaudit.mesh_checks import hanging
from tests.finding_meshes import NX, NY, grid_points, grid_quads, polygons, with_crack
from tests.hanging_meshes import (
    SIZE,
    bent,
    embedded_patch,
    quad8_beside_fine,
    refined_plate,
    stiffened_plate,
)
from tests.test_findings import found


def loops_by_kind(report) -> dict[str, list[dict]]:
    out: dict[str, list[dict]] = {}
    for lp in report.free_edges.loops():
        out.setdefault(lp["kind"], []).append(lp)
    return out


def same_points(got: np.ndarray, expected: np.ndarray) -> bool:
    """Same set of points (order free), to round-off."""
    if got.shape != expected.shape:
        return False
    key = np.lexsort(np.round(got, 9).T[::-1])
    ref = np.lexsort(np.round(expected, 9).T[::-1])
    return np.allclose(got[key], expected[ref], atol=1e-12)


def union_of(mesh: meshio.Mesh):
    cells = [c for block in mesh.cells for c in block.data[:, :4]]
    return shapely.unary_union(polygons(mesh.points, cells))


# -- the plate of the problem statement ----------------------------------------------------


def test_one_coarse_quad_beside_two_fine_quads():
    # By construction: coarse quad 1 on the left, fine quads 2..5 on the right; the fine
    # node at (0.15, 0.15) sits at the middle of the coarse quad's right edge.
    planted = refined_plate(ratio=2, rows=1)
    report = audit(planted.mesh)
    f = found(report)
    assert list(f) == ["hanging_nodes"]  # the elements themselves are fine rectangles
    hang = f["hanging_nodes"]
    assert hang.severity == "fail" and not report.passed
    assert hang.count == 1 and hang.counts == "nodes"
    assert same_points(hang.node_xyz, np.array([[HALF, HALF, 0.0] for HALF in [SIZE / 2]]))
    assert sorted(hang.element_ids.tolist()) == planted.involved == [0, 1, 3]
    assert hang.pairs[:, 1].tolist() == planted.hosts == [0]
    # drawn: the coarse edge and the two fine edges on it (total 2 x 0.3)
    drawn = np.linalg.norm(hang.edge_xyz[:, 1] - hang.edge_xyz[:, 0], axis=1).sum()
    assert drawn == pytest.approx(2 * SIZE)


def test_plate_perimeter_is_the_part_boundary_and_the_interface_is_its_own_loop():
    mesh = refined_plate(ratio=2, rows=1).mesh
    report = audit(mesh)
    loops = loops_by_kind(report)
    assert sorted(loops) == ["interface", "outer"]
    union = union_of(mesh)  # shapely: one square, perimeter 1.2, area 0.09
    (outer,) = loops["outer"]
    assert outer["length"] == pytest.approx(4 * SIZE) == pytest.approx(union.exterior.length)
    assert outer["area"] == pytest.approx(SIZE**2) == pytest.approx(union.area)
    (interface,) = loops["interface"]
    assert interface["length"] == pytest.approx(2 * SIZE)  # both sides of x = 0.15
    assert interface["edges"] == 3  # one coarse edge, two fine ones


@pytest.mark.parametrize(
    ("left", "right"),
    [("quad", "quad"), ("triangle", "triangle"), ("quad", "triangle"), ("triangle", "quad")],
)
@pytest.mark.parametrize(("ratio", "rows"), [(2, 1), (2, 3), (3, 1), (3, 2), (4, 2)])
def test_planted_hanging_nodes_in_quad_triangle_and_mixed_plates(left, right, ratio, rows):
    # By construction: (ratio - 1) hanging nodes on each of the ``rows`` coarse edges.
    planted = refined_plate(ratio, rows, left, right)
    report = audit(planted.mesh)
    hang = found(report)["hanging_nodes"]
    assert hang.count == (ratio - 1) * rows
    assert same_points(hang.node_xyz, planted.hanging_xyz)
    assert sorted(hang.element_ids.tolist()) == planted.involved
    assert sorted(set(hang.pairs[:, 1].tolist())) == planted.hosts
    loops = loops_by_kind(report)
    assert sorted(loops) == ["interface", "outer"]
    assert loops["outer"][0]["length"] == pytest.approx(4 * SIZE)
    assert loops["interface"][0]["length"] == pytest.approx(2 * SIZE)
    assert loops["interface"][0]["edges"] == rows + ratio * rows


def test_three_to_one_interface_names_two_nodes_per_coarse_edge():
    # By construction: fine nodes at y = 0.1 and 0.2 inside the single coarse edge.
    planted = refined_plate(ratio=3, rows=1)
    hang = found(audit(planted.mesh))["hanging_nodes"]
    assert hang.count == 2
    expected = np.array([[SIZE / 2, 0.1, 0.0], [SIZE / 2, 0.2, 0.0]])
    assert same_points(hang.node_xyz, expected)
    assert hang.pairs[:, 1].tolist() == [0, 0]


def test_shell_with_a_non_conforming_interface():
    # The 2:1 plate rolled onto a cylinder and turned in space: the hanging nodes are 3-D
    # points still on their hosts (x = 0.15 is a straight generator of the cylinder).
    planted = bent(refined_plate(ratio=2, rows=2))
    report = audit(planted.mesh)
    assert report.summary.frame == "shell"
    hang = found(report)["hanging_nodes"]
    assert hang.count == 2
    assert same_points(hang.node_xyz, planted.hanging_xyz)
    assert sorted(hang.element_ids.tolist()) == planted.involved
    loops = loops_by_kind(report)
    assert sorted(loops) == ["boundary", "interface"]
    # arc length is x: the boundary keeps its flat length 1.2, the interface 2 x 0.3
    assert loops["boundary"][0]["length"] == pytest.approx(4 * SIZE, rel=1e-2)
    assert loops["interface"][0]["length"] == pytest.approx(2 * SIZE)


def test_embedded_fine_patch_makes_a_closed_interface_inside_the_part():
    planted = embedded_patch()
    report = audit(planted.mesh)
    hang = found(report)["hanging_nodes"]
    assert hang.count == 4
    assert same_points(hang.node_xyz, planted.hanging_xyz)
    assert sorted(set(hang.pairs[:, 1].tolist())) == planted.hosts
    assert sorted(hang.element_ids.tolist()) == planted.involved
    loops = loops_by_kind(report)
    assert sorted(loops) == ["interface", "outer"]  # not a hole: the patch fills it
    assert loops["outer"][0]["length"] == pytest.approx(4 * SIZE)
    assert loops["interface"][0]["length"] == pytest.approx(2 * 0.4)  # centre's perimeter


# -- clean meshes stay clean -------------------------------------------------------------


def test_clean_meshes_have_no_hanging_nodes():
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    with_hole = np.delete(quads, 1 * NX + 2, axis=0)
    right = (np.arange(len(quads)) % NX) >= NX // 2
    tris = np.vstack([quads[right][:, [0, 1, 2]], quads[right][:, [0, 2, 3]]])
    pts3 = np.column_stack([pts, 0.2 * pts[:, 0] * pts[:, 1]])
    for mesh in (
        meshio.Mesh(pts, [("quad", quads)]),
        meshio.Mesh(pts, [("quad", with_hole)]),
        meshio.Mesh(pts, [("quad", quads[~right]), ("triangle", tris)]),
        meshio.Mesh(pts3, [("quad", quads)]),
    ):
        report = audit(mesh)
        assert report.findings == []
        assert "interface" not in loops_by_kind(report)


def test_an_intended_crack_is_a_crack_not_an_interface():
    mesh, _, _ = with_crack(2, 4)
    report = audit(mesh)
    assert "hanging_nodes" not in found(report)
    assert sorted(loops_by_kind(report)) == ["crack", "outer"]


def test_override_to_info_passes_the_mesh(tmp_path):
    path = tmp_path / "tied.toml"
    path.write_text('[findings]\nhanging_nodes = "info"\n', encoding="utf-8")
    mesh = refined_plate(ratio=2, rows=1).mesh
    report = audit(mesh, profile=path)
    assert report.passed
    assert [(f.kind, f.severity) for f in report.findings] == [("hanging_nodes", "info")]
    off = tmp_path / "off.toml"
    off.write_text('[findings]\nhanging_nodes = "off"\n', encoding="utf-8")
    report = audit(mesh, profile=off)
    assert report.passed and report.findings == []
    # without the check the interface is not known: the old single loop of 1.8
    assert [lp["kind"] for lp in report.free_edges.loops()] == ["outer"]


# -- quadratic elements -------------------------------------------------------------------


@pytest.mark.parametrize("bulge", [0.0, 0.02, -0.03])
def test_fine_corner_on_a_coarse_quad8_midside_node(bulge):
    # By construction: the fine quads' shared corner is the coarse quad8's midside node 5;
    # with a bulge it is off the chord (by the bulge) but on the curved side.
    planted = quad8_beside_fine(bulge=bulge)
    report = audit(planted.mesh)
    hang = found(report)["hanging_nodes"]
    assert hang.count == 1
    assert same_points(hang.node_xyz, np.array([[SIZE / 2 + bulge, SIZE / 2, 0.0]]))
    assert sorted(hang.element_ids.tolist()) == planted.involved == [0, 1, 2]
    loops = loops_by_kind(report)
    assert sorted(loops) == ["interface", "outer"]


def test_fine_corner_at_the_midside_place_but_not_merged():
    # A node of its own exactly at node 5's place: unmerged (coincident_nodes) and hanging.
    planted = quad8_beside_fine(split=True)
    f = found(audit(planted.mesh))
    assert f["hanging_nodes"].count == 1
    assert same_points(f["hanging_nodes"].node_xyz, np.array([[SIZE / 2, SIZE / 2, 0.0]]))
    assert f["coincident_nodes"].count == 1


def test_quad8_on_both_sides_reports_only_the_corner_not_the_fine_midside_nodes():
    # Fine quad8 midside nodes sit at the coarse side's quarter points: on the coarse
    # edge, but midside nodes, so only the fine corner (node 5) is counted.
    planted = quad8_beside_fine(fine="quad8")
    hang = found(audit(planted.mesh))["hanging_nodes"]
    assert hang.count == 1
    assert sorted(hang.element_ids.tolist()) == [0, 1, 2]


@pytest.mark.parametrize(("bulge", "along"), [(0.0, 0.0), (0.015, 0.0), (0.015, 0.02)])
def test_three_to_one_on_a_curved_quad8_side(bulge, along):
    # The two fine corners at t = 1/3 and 2/3 of the curve (shape functions): off the
    # chord by 8/9 of the bulge, on the curve; with the midside node moved along the
    # side too, the curve's parameter is no longer the chord's.
    planted = quad8_beside_fine(bulge=bulge, ratio=3, along=along)
    hang = found(audit(planted.mesh))["hanging_nodes"]
    assert hang.count == 2
    assert same_points(hang.node_xyz, planted.hanging_xyz)


def test_a_clean_quad8_mesh_has_no_hanging_nodes():
    # A 2 x 2 quad8 grid: the midside nodes of its boundary edges lie inside those free
    # edges, but they are the edges' own midside nodes.
    pts, quads = grid_points(2, 2), grid_quads(2, 2)
    mids = len(pts) + np.arange(16).reshape(4, 4)
    sides = 0.5 * (pts[quads] + pts[np.roll(quads, -1, axis=1)])
    mesh = meshio.Mesh(
        np.vstack([pts, sides.reshape(-1, 2)]), [("quad8", np.hstack([quads, mids]))]
    )
    report = audit(mesh)
    assert "hanging_nodes" not in found(report)
    assert [lp["kind"] for lp in report.free_edges.loops()] == ["outer"]


# -- shell T-joints -----------------------------------------------------------------------


def test_conforming_stiffener_is_a_t_joint_not_hanging_nodes():
    report = audit(stiffened_plate("conforming").mesh)
    f = found(report)
    assert "hanging_nodes" not in f
    assert f["non_manifold_edges"].count == 6  # one per plate edge on the line


@pytest.mark.parametrize("kind", ["finer", "own"])
def test_finer_stiffener_on_plate_nodes_hangs_inside_shared_plate_edges(kind):
    # "own": the stiffener's whole-x nodes are copies of the plate's (unmerged, coincident
    # nodes); its half-x nodes hang on the plate's shared edges all the same.
    planted = stiffened_plate(kind)
    report = audit(planted.mesh)
    f = found(report)
    assert ("coincident_nodes" in f) == (kind == "own")
    hang = f["hanging_nodes"]
    assert hang.count == 6
    assert same_points(hang.node_xyz, planted.hanging_xyz)
    assert sorted(set(hang.pairs[:, 1].tolist())) == planted.hosts
    assert sorted(hang.element_ids.tolist()) == planted.involved
    interface = loops_by_kind(report)["interface"]
    assert sum(lp["length"] for lp in interface) == pytest.approx(6.0)  # one side only


def test_offset_stiffener_has_plate_nodes_inside_its_bottom_edges():
    planted = stiffened_plate("offset")
    hang = found(audit(planted.mesh))["hanging_nodes"]
    assert hang.count == 5
    assert same_points(hang.node_xyz, planted.hanging_xyz)
    assert sorted(set(hang.pairs[:, 1].tolist())) == planted.hosts
    assert sorted(hang.element_ids.tolist()) == planted.involved


# -- cracks next to interfaces ----------------------------------------------------------------


def test_crack_from_the_boundary_to_the_interface():
    # refined 2:1 plate with two coarse rows; the left end (0, 0.15) of the edge between
    # the two coarse quads is duplicated for the upper one: a cut from the boundary to the
    # interface node (0.15, 0.15), which stays shared.
    planted = refined_plate(ratio=2, rows=2)
    mesh = planted.mesh
    pts = np.vstack([mesh.points, mesh.points[2]])
    coarse = mesh.cells[0].data.copy()
    coarse[1][coarse[1] == 2] = len(pts) - 1
    mesh = meshio.Mesh(pts, [("quad", coarse), ("quad", mesh.cells[1].data)])
    report = audit(mesh)
    f = found(report)
    assert f["coincident_nodes"].count == 1
    assert f["crack_edges"].count == 2
    assert f["hanging_nodes"].count == 2
    assert same_points(f["hanging_nodes"].node_xyz, planted.hanging_xyz)
    loops = loops_by_kind(report)
    assert sorted(loops) == ["interface", "outer"]
    (outer,) = loops["outer"]
    assert outer["crack_edges"] == 2
    assert outer["length"] == pytest.approx(4 * SIZE + 2 * SIZE / 2)  # boundary + both lips
    assert loops["interface"][0]["length"] == pytest.approx(2 * SIZE)


def test_interface_whose_shared_nodes_are_not_merged_either():
    # Every coarse node on x = 0.15 duplicated for the fine side: unmerged there (a cut)
    # and hanging in between.
    planted = refined_plate(ratio=2, rows=2)
    mesh = planted.mesh
    shared = np.array([1, 3, 5])
    copies = len(mesh.points) + np.arange(3)
    fine = mesh.cells[1].data.copy()
    for o, c in zip(shared, copies):
        fine[fine == o] = c
    pts = np.vstack([mesh.points, mesh.points[shared]])
    report = audit(meshio.Mesh(pts, [("quad", mesh.cells[0].data), ("quad", fine)]))
    f = found(report)
    assert f["coincident_nodes"].count == 3
    assert f["hanging_nodes"].count == 2
    assert "crack_edges" not in f  # no two free edges join the same two places
    loops = loops_by_kind(report)
    assert "interface" in loops
    assert sum(lp["length"] for lp in loops["interface"]) == pytest.approx(2 * SIZE)
    assert sum(lp["length"] for lp in loops["outer"]) == pytest.approx(4 * SIZE)


# -- pathological input: bounded work ----------------------------------------------------


@pytest.fixture
def pair_counter(monkeypatch):
    """Counts the node/edge pairs the hanging-node check tests."""
    tested: list[int] = []
    batches = hanging._batches

    def counting(*args):
        for nodes_, segments in batches(*args):
            tested.append(nodes_.size)
            yield nodes_, segments

    monkeypatch.setattr(hanging, "_batches", counting)
    return tested


def no_overlap_check(tmp_path):
    # the overlap check is not what these tests are about (and is slow on such piles)
    path = tmp_path / "no_overlap.toml"
    path.write_text('[findings]\noverlapping_elements = "off"\n', encoding="utf-8")
    return path


def column(n: int) -> meshio.Mesh:
    """A unit quad beside a column of n fine quads of 1 x 1/n: n - 1 hanging nodes piled
    on one coarse edge (by construction)."""
    right = [[2.0, k / n] for k in range(n + 1)]
    inner = [[1.0, k / n] for k in range(1, n)]
    pts = np.array([[0, 0], [1, 0], [1, 1], [0, 1], *right, *inner], dtype=float)
    left = [1, *range(5 + n, 4 + 2 * n), 2]
    quads = [[0, 1, 2, 3]] + [[left[k], 4 + k, 5 + k, left[k + 1]] for k in range(n)]
    return meshio.Mesh(pts, [("quad", np.array(quads))])


def test_thousands_of_hanging_nodes_on_one_edge(pair_counter, tmp_path):
    n = 3000
    report = audit(column(n), profile=no_overlap_check(tmp_path))
    hang = found(report)["hanging_nodes"]
    assert hang.count == n - 1
    assert hang.pairs[:, 1].tolist() == [0] * (n - 1)
    loops = loops_by_kind(report)
    assert loops["outer"][0]["length"] == pytest.approx(6.0)  # the 2 x 1 rectangle
    assert loops["interface"][0]["length"] == pytest.approx(2.0)
    assert loops["interface"][0]["edges"] == n + 1
    # bounded: a few pairs per node, not nodes x edges (3000 x 6000)
    assert sum(pair_counter) <= 16 * (2 * n + 4 * n)


def sticks(n: int, width: float = 1e-3) -> meshio.Mesh:
    """n separate thin quads of length 2 crossing at the origin at angles k pi / n: every
    free edge and node in a few cells of a grid sized by the edges. No node lies on
    another stick's edge (the corners sit 2 pi / n apart on the unit circle, more than
    the width), so no hanging node (by construction)."""
    th = np.arange(n) * np.pi / n
    d = np.stack([np.cos(th), np.sin(th)], axis=1)
    across = np.stack([-np.sin(th), np.cos(th)], axis=1) * width / 2
    corners = np.stack([-d - across, d - across, d + across, -d + across], axis=1)
    return meshio.Mesh(corners.reshape(-1, 2), [("quad", np.arange(4 * n).reshape(-1, 4))])


def test_edges_crowding_one_cell_are_bucketed_again(pair_counter, tmp_path):
    n = 1500
    report = audit(sticks(n), profile=no_overlap_check(tmp_path))
    assert "hanging_nodes" not in found(report)
    # 4n nodes and 4n free edges; every pair would be 3.6e7, one coarse grid about 1.1e7
    assert sum(pair_counter) <= 2_000_000


def test_stacked_copies_with_nodes_of_their_own_are_one_place(pair_counter, tmp_path):
    # 400 unit squares on distinct nodes at the same place: unmerged nodes and cracks,
    # tested once per place (coincident nodes are one place), no hanging node.
    n = 400
    square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
    mesh = meshio.Mesh(np.tile(square, (n, 1)), [("quad", np.arange(4 * n).reshape(-1, 4))])
    f = found(audit(mesh, profile=no_overlap_check(tmp_path)))
    assert "hanging_nodes" not in f
    assert f["crack_edges"].count == 4 * n
    assert sum(pair_counter) <= 64 * n


def test_a_pile_no_finer_grid_separates_is_refused_with_a_clear_message(monkeypatch, tmp_path):
    # The guard itself, with the refinement switched off and a small limit: the check
    # stops with one clear line (exit status 2 on the command line), not hours of pairs.
    monkeypatch.setattr(hanging, "MAX_REFINE", 0)
    monkeypatch.setattr(hanging, "CROWDED_PAIRS", 10_000)
    with pytest.raises(InputError, match=r'hanging-node check: .* set hanging_nodes = "off"'):
        audit(sticks(300), profile=no_overlap_check(tmp_path))


# -- reports ----------------------------------------------------------------------------------


def write_plate(tmp_path) -> Path:
    mesh = refined_plate(ratio=2, rows=1).mesh
    path = tmp_path / "bracket_refined.vtu"
    points = np.column_stack([mesh.points, np.zeros(len(mesh.points))])
    meshio.write(path, meshio.Mesh(points, mesh.cells))
    return path


def test_cli_reports_hanging_nodes_in_terminal_json_and_junit(tmp_path, run_cli):
    path = write_plate(tmp_path)
    out_json, out_xml = tmp_path / "r.json", tmp_path / "r.xml"
    res = run_cli("check", path, "--json", out_json, "--junit", out_xml)
    assert res.returncode == 1, res.stderr
    assert "hanging_nodes" in res.stdout
    loops_row = next(ln for ln in res.stdout.splitlines() if "free-edge loops" in ln)
    assert "outer 9 edges (length 1.2)" in loops_row  # 3 coarse + 6 fine boundary edges
    assert "non-conforming interface 3 edges (length 0.6)" in loops_row
    doc = json.loads(out_json.read_text())
    (finding,) = doc["findings"]
    assert finding["kind"] == "hanging_nodes" and finding["counts"] == "nodes"
    assert finding["count"] == 1 and sorted(finding["element_ids"]) == [0, 1, 3]
    loops = {lp["kind"]: lp for lp in doc["free_edge_loops"]}
    assert loops["outer"]["length"] == pytest.approx(1.2)
    assert loops["interface"]["length"] == pytest.approx(0.6)
    suite = ET.parse(out_xml).getroot().find("testsuite")
    cases = {c.get("name"): c for c in suite.findall("testcase")}
    assert cases["no hanging nodes"].find("failure") is not None
    assert int(suite.get("failures")) == 1


def test_cli_passes_when_the_profile_marks_the_interface_intended(tmp_path, run_cli):
    path = write_plate(tmp_path)
    profile = tmp_path / "tied.toml"
    profile.write_text('[findings]\nhanging_nodes = "info"\n', encoding="utf-8")
    out_xml = tmp_path / "r.xml"
    res = run_cli("check", path, "--profile", profile, "--junit", out_xml)
    assert res.returncode == 0, res.stderr
    assert "hanging_nodes" in res.stdout  # still listed, as info
    case = next(
        c
        for c in ET.parse(out_xml).getroot().iter("testcase")
        if c.get("name") == "no hanging nodes"
    )
    assert case.find("failure") is None


def test_plot_draws_the_interface_and_crosses_the_hanging_node(tmp_path):
    from meshaudit import audit_mesh
    from meshaudit.outputs import plot

    audited = audit_mesh(write_plate(tmp_path))
    fig = plot.draw(audited.report, audited.elements)
    main = fig.axes[0]
    lines = next(c for c in main.collections if c.get_gid() == "findings")
    # the coarse edge and the two fine edges on it, all on x = 0.15 (by construction)
    segments = np.array(lines.get_segments())
    assert segments.shape == (3, 2, 2)
    np.testing.assert_allclose(segments[:, :, 0], SIZE / 2)
    (cross,) = [ln for ln in main.lines if ln.get_gid() == "finding-nodes"]
    np.testing.assert_allclose(cross.get_xydata(), [[SIZE / 2, SIZE / 2]])


# -- tolerance -----------------------------------------------------------------------------


@pytest.mark.parametrize("h", [1.0, 1e-3, 250.0])
def test_tolerance_is_relative_to_the_local_edge(h, tmp_path):
    # The stated rule: within 1e-6 x min(host length, shortest edge at the node). Here the
    # host is 0.3 h long and the shortest edge at the node 0.075 h (the fine quads are
    # 0.075 h x 0.15 h): tolerance 0.075e-6 h. The node is moved off the host, away from it.
    planted = refined_plate(ratio=2, rows=1)
    node = planted.extra["hanging"][0]
    tol = 1e-6 * 0.075 * h

    def moved(d: float) -> meshio.Mesh:
        pts = planted.mesh.points * h
        pts[node, 0] += d
        return meshio.Mesh(pts, planted.mesh.cells)

    assert found(audit(moved(0.4 * tol)))["hanging_nodes"].count == 1
    assert "hanging_nodes" not in found(audit(moved(3.0 * tol)))  # a gap, not an interface
    loose = tmp_path / "loose.toml"
    loose.write_text("[findings]\ncoincident_tolerance = 1e-5\n", encoding="utf-8")
    assert found(audit(moved(3.0 * tol), profile=loose))["hanging_nodes"].count == 1
