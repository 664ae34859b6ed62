"""Mesh-level findings on meshes with planted defects, and clean meshes that stay clean.

Where each expected id comes from is said beside it: by construction (the test planted
the defect there), shapely (areas of element polygons and their union), or counting
facts of the trade (Euler characteristic V - E + F = 1 - holes for a connected planar
region; an nx x ny grid has 2(nx + ny) boundary edges: common practice).
"""

from __future__ import annotations

import itertools

import meshio
import numpy as np
import pytest
import shapely

from meshaudit import audit
from tests.finding_meshes import (
    NX,
    NY,
    element_id,
    grid_points,
    grid_quads,
    node,
    polygons,
    quad_grid,
    with_crack,
)


def found(report) -> dict:
    return {f.kind: f for f in report.findings}


def ids(values) -> list[int]:
    return sorted(int(v) for v in values)


# -- clean meshes -------------------------------------------------------------------------


def test_clean_grid_has_no_findings_and_one_outer_loop():
    report = audit(quad_grid(NX, NY))
    assert report.findings == []
    assert report.passed
    loops = report.free_edges.loops()
    # Counting fact: 2(nx + ny) boundary edges, perimeter 2(nx + ny), area nx * ny.
    assert [(lp["kind"], lp["edges"]) for lp in loops] == [("outer", 2 * (NX + NY))]
    assert loops[0]["length"] == pytest.approx(2 * (NX + NY))
    assert loops[0]["area"] == pytest.approx(NX * NY)


def test_clean_grid_with_a_hole_reports_boundary_loops_not_cracks():
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    removed = 1 * NX + 2  # element (2, 1): by construction the hole
    kept = np.delete(quads, removed, axis=0)
    report = audit(meshio.Mesh(pts, [("quad", kept)]))
    assert report.findings == []
    # Reference: shapely's union of the elements has one exterior and one interior ring.
    union = shapely.unary_union(polygons(pts, kept))
    assert len(union.interiors) == 1
    # Euler: V - E + F = 35 - 58 + 23 = 0 = 1 - holes -> one hole, two boundary loops.
    loops = {lp["kind"]: lp for lp in report.free_edges.loops()}
    assert sorted(loops) == ["hole", "outer"]
    assert loops["outer"]["length"] == pytest.approx(union.exterior.length)
    assert loops["hole"]["length"] == pytest.approx(union.interiors[0].length)
    assert loops["outer"]["area"] + loops["hole"]["area"] == pytest.approx(union.area)
    assert all(lp["crack_edges"] == 0 for lp in loops.values())


def test_clean_mixed_mesh_of_quads_and_triangles_stays_clean():
    # By construction: the right half of the grid split into counter-clockwise triangles.
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    right = (np.arange(len(quads)) % NX) >= NX // 2
    tris = np.vstack([quads[right][:, [0, 1, 2]], quads[right][:, [0, 2, 3]]])
    report = audit(meshio.Mesh(pts, [("quad", quads[~right]), ("triangle", tris)]))
    assert report.findings == []
    assert [lp["kind"] for lp in report.free_edges.loops()] == ["outer"]


def test_clean_curved_shell_stays_clean():
    # A consistently wound grid lifted to z = 0.2 x y is a shell (no plane holds it).
    pts = grid_points(NX, NY)
    pts3 = np.column_stack([pts, 0.2 * pts[:, 0] * pts[:, 1]])
    report = audit(meshio.Mesh(pts3, [("quad", grid_quads(NX, NY))]))
    assert report.summary.frame == "shell"
    assert report.findings == []
    assert [lp["kind"] for lp in report.free_edges.loops()] == ["boundary"]


# -- unmerged nodes and cracks -------------------------------------------------------


def test_interior_crack_from_unmerged_nodes():
    # By construction: nodes 2..4 of grid line 2 duplicated; the crack tips (nodes 1 and 5
    # of the line) are shared, so the cut is a closed slit inside the part.
    mesh, original, copy = with_crack(2, 4)
    report = audit(mesh)
    f = found(report)
    assert report.verdict_counts()["fail"] == 0  # every element is fine on its own
    assert not report.passed
    # one place per duplicated node, two nodes each: (representative, copy), the
    # representative the original (read first)
    assert f["coincident_nodes"].count == original.size
    assert f["coincident_nodes"].pairs.tolist() == np.column_stack([original, copy]).tolist()
    # Crack edges: 4 below the line (from node 1 to node 5) and 4 above it.
    crack = f["crack_edges"]
    assert crack.count == 8
    below = [element_id(i, 1) for i in range(1, 5)]
    above = [element_id(i, 2) for i in range(1, 5)]
    assert ids(crack.element_ids) == below + above
    # Euler: V - E + F = 38 - 62 + 24 = 0 -> one "hole": the slit; plus the outer loop.
    kinds = sorted(lp["kind"] for lp in report.free_edges.loops())
    assert kinds == ["crack", "outer"]
    slit = next(lp for lp in report.free_edges.loops() if lp["kind"] == "crack")
    assert slit["edges"] == 8 and slit["length"] == pytest.approx(8.0)
    outer = next(lp for lp in report.free_edges.loops() if lp["kind"] == "outer")
    assert outer["crack_edges"] == 0 and outer["edges"] == 2 * (NX + NY)


def test_crack_across_the_part_splits_it_in_two():
    # By construction: the whole grid line 2 duplicated -> two separate parts, each with
    # its own outer loop holding NX crack edges (Euler: two components, no holes).
    mesh, _, _ = with_crack(0, NX)
    report = audit(mesh)
    f = found(report)
    assert f["coincident_nodes"].count == NX + 1  # NX + 1 places, two nodes each
    assert f["crack_edges"].count == 2 * NX
    loops = report.free_edges.loops()
    assert [lp["kind"] for lp in loops] == ["outer", "outer"]
    assert [lp["crack_edges"] for lp in loops] == [NX, NX]


@pytest.mark.parametrize("h", [1.0, 1e-3, 250.0])
def test_coincidence_tolerance_is_relative_to_the_local_edge(h):
    # By construction: two squares of side h whose facing nodes are d apart. The stated
    # rule: coincident when d <= 1e-6 x the shorter adjacent edge (h here).
    def two_squares(d):
        pts = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float) * h
        right = pts + np.array([h + d, 0.0])
        return meshio.Mesh(np.vstack([pts, right]), [("quad", [[0, 1, 2, 3], [4, 5, 6, 7]])])

    near = found(audit(two_squares(0.4e-6 * h)))
    assert near["coincident_nodes"].pairs.tolist() == [[1, 4], [2, 7]]
    assert near["crack_edges"].count == 2
    far = audit(two_squares(3e-6 * h))
    assert far.findings == []  # a gap, not a crack: two outer loops
    assert [lp["kind"] for lp in far.free_edges.loops()] == ["outer", "outer"]


def test_a_collapsed_diagonal_is_not_an_unmerged_node():
    # By construction: corners 0 and 2 of the quad at one place (a diagonal collapsed),
    # and all four corners of a second quad at one place: degenerate elements, no crack.
    pts = np.array([[0, 0], [1, 0], [0, 0], [0, 1], [5, 5], [5, 5], [5, 5], [5, 5]], float)
    report = audit(meshio.Mesh(pts, [("quad", [[0, 1, 2, 3], [4, 5, 6, 7]])]))
    assert report.findings == []
    assert report.verdict_counts()["fail"] == 2


def test_a_collapsed_edge_is_not_an_unmerged_node():
    # By construction: node 4 sits on node 1, and the second quad's first edge joins the
    # two: a degenerate element (the element metrics report it), not a crack.
    pts = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [1, 0], [2, 1]], float)
    mesh = meshio.Mesh(pts, [("quad", [[0, 1, 2, 3], [1, 4, 5, 2]])])
    report = audit(mesh)
    assert "coincident_nodes" not in found(report)
    assert report.verdict_counts()["fail"] >= 1  # the collapsed quad fails on its own


# -- orphans, duplicates, overlaps ---------------------------------------------------


def test_orphan_node_is_found_and_a_node_of_a_vertex_cell_is_not():
    pts = np.vstack([grid_points(NX, NY), [[2.5, 2.5], [9.0, 9.0]]])
    n = len(grid_points(NX, NY))
    mesh = meshio.Mesh(pts, [("quad", grid_quads(NX, NY)), ("vertex", [[n + 1]])])
    f = found(audit(mesh))
    assert f["orphan_nodes"].node_ids.tolist() == [n]  # by construction: the extra node
    assert f["orphan_nodes"].severity == "warn"
    assert list(f) == ["orphan_nodes"]


def test_duplicate_elements_in_any_order_or_rotation():
    quads = grid_quads(NX, NY)
    rotated = np.roll(quads[5], 2)  # same nodes, rotated: a copy of element id 5
    shuffled = quads[9][[2, 0, 3, 1]]  # same node set in another order: copy of id 9
    mesh = meshio.Mesh(grid_points(NX, NY), [("quad", np.vstack([quads, rotated, shuffled]))])
    f = found(audit(mesh))
    n = len(quads)
    dup = f["duplicate_elements"]
    assert dup.count == 2
    assert ids(dup.element_ids) == [n, n + 1]
    assert dup.pairs.tolist() == [[5, n], [9, n + 1]]
    # The copies are reported once, not again as overlaps, non-manifold edges or winding.
    assert list(f) == ["duplicate_elements"]


def test_loose_overlapping_element_pairs_match_shapely():
    # By construction: an extra unit quad with its own nodes, centred on grid node (3, 2):
    # it covers a quarter of each of the four elements around that node.
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    extra = np.array([[2.5, 1.5], [3.5, 1.5], [3.5, 2.5], [2.5, 2.5]])
    new = len(pts) + np.arange(4)
    all_quads = np.vstack([quads, new])
    all_pts = np.vstack([pts, extra])
    report = audit(meshio.Mesh(all_pts, [("quad", all_quads)]))
    f = found(report)
    got = sorted(map(tuple, f["overlapping_elements"].pairs.tolist()))
    assert got == reference_overlaps(all_pts, all_quads)
    assert got == [(element_id(i, j), len(quads)) for j in (1, 2) for i in (2, 3)]
    assert list(f) == ["overlapping_elements"]


def test_triangles_laid_on_a_quad_overlap_it_and_make_non_manifold_edges():
    # By construction: interior element (2, 1) covered again by two triangles on its own
    # corners: its four edges each get a third element; both triangles overlap it.
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    q = quads[1 * NX + 2]
    tris = np.array([q[[0, 1, 2]], q[[0, 2, 3]]])
    report = audit(meshio.Mesh(pts, [("quad", quads), ("triangle", tris)]))
    f = found(report)
    n = len(quads)
    assert f["non_manifold_edges"].count == 4
    assert sorted(map(sorted, f["non_manifold_edges"].edges.tolist())) == sorted(
        sorted((int(a), int(b))) for a, b in zip(q, np.roll(q, -1))
    )
    got = sorted(map(tuple, f["overlapping_elements"].pairs.tolist()))
    all_pts = pts
    assert got == reference_overlaps(all_pts, list(quads) + list(tris))
    assert got == [(element_id(2, 1), n), (element_id(2, 1), n + 1)]


def test_a_node_dragged_across_its_neighbours_overlaps_what_shapely_says():
    # By construction: interior node (3, 2) dragged to (4.4, 2.6): the elements around it
    # fold over their neighbours. shapely, over every pair, is the reference.
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    pts[node(3, 2)] = [4.4, 2.6]
    report = audit(meshio.Mesh(pts, [("quad", quads)]))
    got = sorted(map(tuple, found(report)["overlapping_elements"].pairs.tolist()))
    assert got == reference_overlaps(pts, quads)
    assert got  # the drag does make overlaps


@pytest.mark.parametrize("seed", range(6))
def test_random_node_drags_overlap_exactly_where_shapely_says(seed):
    # Two random nodes dragged up to 1.6 cells: shapely over every pair is the reference
    # for which elements overlap (the checks only look at candidate pairs).
    rng = np.random.default_rng(seed)
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    pts[rng.integers(0, len(pts), size=2)] += rng.uniform(-1.6, 1.6, size=(2, 2))
    finding = found(audit(meshio.Mesh(pts, [("quad", quads)]))).get("overlapping_elements")
    got = sorted(map(tuple, finding.pairs.tolist())) if finding else []
    assert got == reference_overlaps(pts, quads)


def reference_overlaps(pts, cells, fraction: float = 1e-3) -> list[tuple[int, int]]:
    """shapely, brute force over all pairs: (id, id) pairs (positions from 0) sharing more than
    ``fraction`` of the smaller element's area."""
    polys = polygons(np.asarray(pts), [np.asarray(c) for c in cells])
    out = []
    for a, b in itertools.combinations(range(len(polys)), 2):
        common = polys[a].intersection(polys[b]).area
        smaller = min(polys[a].area, polys[b].area)
        if smaller > 0 and common > fraction * smaller:
            out.append((a, b))
    return out


# -- orientation and non-manifold edges ------------------------------------------------


def test_one_element_wound_the_other_way_in_a_planar_mesh():
    quads = grid_quads(NX, NY)
    flipped = 1 * NX + 3  # by construction: element (3, 1), id 9
    quads[flipped] = quads[flipped][::-1]
    report = audit(meshio.Mesh(grid_points(NX, NY), [("quad", quads)]))
    f = found(report)
    assert ids(f["inconsistent_winding"].element_ids) == [element_id(3, 1)]
    assert list(f) == ["inconsistent_winding"]  # reversed in place: no overlap
    assert [lp["kind"] for lp in report.free_edges.loops()] == ["outer"]


def test_clockwise_elements_are_named_even_when_they_are_the_majority():
    # A 2-D solver reads x and y: clockwise about +z is inverted whatever the others do
    # (common practice). The finding names the same elements the flags call reversed.
    quads = grid_quads(NX, NY)[:, ::-1].copy()  # all clockwise ...
    keep_ccw = [0, 17]  # ... except these two, by construction
    quads[keep_ccw] = quads[keep_ccw][:, ::-1]
    report = audit(meshio.Mesh(grid_points(NX, NY), [("quad", quads)]))
    winding = found(report)["inconsistent_winding"]
    clockwise = [i for i in range(NX * NY) if i not in keep_ccw]
    assert ids(winding.element_ids) == clockwise
    assert ids(report.ids[report.flag("reversed")]) == clockwise
    assert winding.count == NX * NY - 2
    assert winding.message.startswith(f"{NX * NY - 2} of {NX * NY} elements are wound clockwise")


def test_shell_neighbours_with_opposite_normals():
    pts = grid_points(NX, NY)
    pts3 = np.column_stack([pts, 0.2 * pts[:, 0] * pts[:, 1]])
    quads = grid_quads(NX, NY)
    flipped = 1 * NX + 3  # by construction: interior element (3, 1)
    quads[flipped] = quads[flipped][::-1]
    report = audit(meshio.Mesh(pts3, [("quad", quads)]))
    f = found(report)
    clash = f["opposite_normals"]
    # The finding names the element to reverse, as the flag does; its seams are the
    # four edges to its neighbours (fact: an interior quad has four neighbours).
    assert ids(clash.element_ids) == [element_id(3, 1)]
    assert ids(report.ids[report.flag("flipped_normal")]) == [element_id(3, 1)]
    assert clash.count == 1
    assert len(clash.edges) == 4
    assert clash.message.startswith(f"1 of {NX * NY} elements face against the rest")
    assert clash.severity == "warn"


def test_fin_on_a_plate_makes_a_non_manifold_edge():
    # By construction: a triangle standing up on the edge between nodes (2, 2) and (3, 2).
    pts = np.column_stack([grid_points(NX, NY), np.zeros((NX + 1) * (NY + 1))])
    apex = len(pts)
    pts = np.vstack([pts, [[2.5, 2.0, 1.0]]])
    a, b = node(2, 2), node(3, 2)
    mesh = meshio.Mesh(pts, [("quad", grid_quads(NX, NY)), ("triangle", [[a, b, apex]])])
    report = audit(mesh)
    f = found(report)
    nm = f["non_manifold_edges"]
    assert nm.count == 1
    assert nm.edges.tolist() == [[a, b]]
    assert ids(nm.element_ids) == [element_id(2, 1), element_id(2, 2), NX * NY]
    assert nm.edge_xyz.tolist() == [[pts[a].tolist(), pts[b].tolist()]]
