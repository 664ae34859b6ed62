"""What the coincident-node search looks at, and what it deliberately leaves out.

The search clusters the nodes of free sides (free-edge ends and the midside nodes on
free edges) and every other node that may lie within the tolerance of one of them (see
README, Mesh-level findings). The claim checked here, by construction:

- found: unmerged nodes that cut a part (a crack, even one node split in an otherwise
  whole grid: the elements around it split into two fans, each ending on free edges);
  the midside nodes of a crack between quadratic elements; a stiffener standing on a
  shell skin on nodes of its own, its free bottom edge on interior skin nodes (a free
  node against an interior one);
- not found (a different defect, reported otherwise or not at all): two nodes at one
  place where neither is near a node of a free side, i.e. each has a closed fan of
  elements around it: a closed box surface laid down twice on nodes of its own (no free
  edge at all), and an interior node dragged onto another interior node of the same
  piece (its elements fold: the element metrics and the overlap check report that).
"""

from __future__ import annotations

import meshio
import numpy as np
from finding_meshes import NX, NY, grid_points, grid_quads, node, with_crack

from meshaudit import audit


def kinds(report) -> dict:
    return {f.kind: f for f in report.findings}


def test_a_crack_is_found_place_by_place():
    mesh, original, copy = with_crack(2, 4)
    finding = kinds(audit(mesh))["coincident_nodes"]
    assert finding.count == original.size
    assert sorted(map(tuple, finding.pairs.tolist())) == sorted(
        zip(original.tolist(), copy.tolist(), strict=True)
    )


def test_one_node_split_inside_a_whole_grid_is_found():
    # node (3, 2) of the grid: the two elements above it use a copy of their own
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    split = node(3, 2)
    copy = len(pts)
    above = [2 * NX + 2, 2 * NX + 3]
    for e in above:
        quads[e][quads[e] == split] = copy
    mesh = meshio.Mesh(np.vstack([pts, pts[split]]), [("quad", quads)])
    finding = kinds(audit(mesh))["coincident_nodes"]
    assert finding.count == 1
    assert finding.pairs.tolist() == [[split, copy]]


def test_a_crack_between_quadratic_elements_counts_its_midside_nodes():
    # two quad8 side by side, the shared side's corners and midside node duplicated:
    # 3 places (2 corners, 1 midside node exactly at one place)
    left = [[0, 0], [1, 0], [1, 1], [0, 1], [0.5, 0], [1, 0.5], [0.5, 1], [0, 0.5]]
    right = [[1, 0], [2, 0], [2, 1], [1, 1], [1.5, 0], [2, 0.5], [1.5, 1], [1, 0.5]]
    pts = np.array(left + right, dtype=float)
    cells = [("quad8", np.array([np.arange(8), np.arange(8, 16)]))]
    finding = kinds(audit(meshio.Mesh(pts, cells)))["coincident_nodes"]
    assert finding.count == 3
    assert sorted(map(tuple, finding.pairs.tolist())) == [(1, 8), (2, 11), (5, 15)]


def test_a_stiffener_on_skin_nodes_of_its_own_is_found():
    # a curved skin (NX x NY quads) and a stiffener of 3 quads standing on grid line
    # j = 2 from i = 1 to 4, its bottom nodes copies of the skin's interior nodes
    pts = grid_points(NX, NY)
    skin = np.column_stack([pts, 0.05 * pts[:, 0] ** 2])
    bottom = [node(i, 2) for i in range(1, 5)]
    base = skin[bottom]
    top = base + np.array([0.0, 0.0, 1.0])
    points = np.vstack([skin, base, top])
    b0, t0 = len(skin), len(skin) + len(bottom)
    fin = np.array([[b0 + k, b0 + k + 1, t0 + k + 1, t0 + k] for k in range(3)])
    mesh = meshio.Mesh(points, [("quad", np.vstack([grid_quads(NX, NY), fin]))])
    finding = kinds(audit(mesh))["coincident_nodes"]
    assert finding.count == len(bottom)
    assert sorted(map(tuple, finding.pairs.tolist())) == [(s, b0 + k) for k, s in enumerate(bottom)]


def box_surface() -> tuple[np.ndarray, np.ndarray]:
    """The closed surface of the unit cube: 8 nodes, 6 quads wound outward."""
    pts = np.array([[x, y, z] for z in (0, 1) for y in (0, 1) for x in (0, 1)], dtype=float)
    quads = np.array(
        [[0, 2, 3, 1], [4, 5, 7, 6], [0, 1, 5, 4], [2, 6, 7, 3], [0, 4, 6, 2], [1, 3, 7, 5]]
    )
    return pts, quads


def test_a_closed_surface_laid_twice_is_deliberately_not_a_coincident_finding():
    pts, quads = box_surface()
    mesh = meshio.Mesh(np.vstack([pts, pts]), [("quad", np.vstack([quads, quads + 8]))])
    found = kinds(audit(mesh))
    assert "coincident_nodes" not in found  # no free edge: no node is looked at
    # the control: the same two boxes with one face taken off the second are found
    # at the four corners of its opening
    opened = meshio.Mesh(np.vstack([pts, pts]), [("quad", np.vstack([quads, quads[1:] + 8]))])
    assert kinds(audit(opened))["coincident_nodes"].count == 4


def test_an_interior_node_dragged_onto_another_is_deliberately_left_to_other_checks():
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    pts = pts.astype(float)
    pts[node(2, 2)] = pts[node(4, 2)]  # two interior nodes, two closed fans, one place
    report = audit(meshio.Mesh(pts, [("quad", quads)]))
    found = kinds(report)
    assert "coincident_nodes" not in found
    assert "overlapping_elements" in found  # the fold it makes is reported
    assert report.verdict_counts()["fail"] > 0


def test_the_same_places_are_found_nodes_taken_in_tiny_blocks(monkeypatch):
    # the search goes through the nodes (and the edges for the tolerance) in blocks:
    # with blocks of 3 every boundary is crossed and the findings are those above
    from meshaudit.mesh_checks import nodes

    monkeypatch.setattr(nodes, "BLOCK", 3)
    test_a_crack_is_found_place_by_place()
    test_one_node_split_inside_a_whole_grid_is_found()
    test_a_crack_between_quadratic_elements_counts_its_midside_nodes()
    test_a_stiffener_on_skin_nodes_of_its_own_is_found()
