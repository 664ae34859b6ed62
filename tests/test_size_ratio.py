"""size_ratio: the size jump between neighbours (characteristic length sqrt(area) of a
surface element, cbrt(|volume|) of a solid; the largest ratio to an element sharing an
edge, solids a face).

References: areas from shapely (general-purpose geometry library); a rectangle w x h has
area w h and a box a x b x c volume a b c (common practice), so the size ratio of two
rectangles of one height is sqrt(w1 / w2) (closed form). The built-in limits (standard
warn 2, fail 4; strict warn 1.5, fail 2.5; lenient warn 3, fail 6) are common practice
(gradual grading), no single source.
"""

from __future__ import annotations

import io
import json
import math

import meshio
import numpy as np
import pytest
from shapely.geometry import Polygon

import meshaudit
from meshaudit.outputs import annotate, csv_report, html_report, json_report, junit_report, terminal
from meshaudit.outputs.console import PlainConsole


def strip(widths: list[float], height: float = 1.0) -> meshio.Mesh:
    """Rectangles of the given widths side by side, one height, sharing their edges."""
    xs = np.concatenate([[0.0], np.cumsum(widths)])
    pts = np.array([(x, y) for y in (0.0, height) for x in xs])
    n = len(xs)
    quads = np.array([[i, i + 1, n + i + 1, n + i] for i in range(len(widths))])
    return meshio.Mesh(pts, [("quad", quads)])


def grid(nx: int, ny: int, cell: str = "quad") -> meshio.Mesh:
    xs, ys = np.meshgrid(np.arange(nx + 1.0), np.arange(ny + 1.0))
    pts = np.c_[xs.ravel(), ys.ravel()]
    quads = []
    for j in range(ny):
        for i in range(nx):
            a = j * (nx + 1) + i
            quads.append([a, a + 1, a + nx + 2, a + nx + 1])
    quads = np.array(quads)
    if cell == "quad":
        return meshio.Mesh(pts, [("quad", quads)])
    tris = np.concatenate([quads[:, [0, 1, 2]], quads[:, [0, 2, 3]]])
    return meshio.Mesh(pts, [("triangle", tris)])


def test_graded_strip_reads_the_square_root_of_the_area_ratio():
    widths = [1.0, 2.0, 2.0, 8.0, 4.0, 3.0]
    mesh = strip(widths)
    report = meshaudit.audit(mesh)
    # areas by shapely, then the closed form: the largest sqrt(area ratio) to a neighbour
    areas = [Polygon(mesh.points[q]).area for q in mesh.cells[0].data]
    assert np.allclose(areas, widths)  # shapely: a w x 1 rectangle has area w
    h = np.sqrt(areas)
    expected = []
    for k in range(len(h)):
        nbrs = [j for j in (k - 1, k + 1) if 0 <= j < len(h)]
        expected.append(max(max(h[k], h[j]) / min(h[k], h[j]) for j in nbrs))
    # closed form by hand: sqrt2, sqrt2, 2, 2, sqrt2, sqrt(4/3)
    assert expected == pytest.approx([math.sqrt(2), math.sqrt(2), 2, 2, math.sqrt(2), 2 / 3**0.5])
    assert report.metrics["size_ratio"] == pytest.approx(expected, rel=1e-12)


def test_a_jump_past_the_fail_limit_fails_both_sides():
    # widths 1 and 25 (aspect ratio 25 aside): sqrt(25) = 5 > the standard fail limit 4
    report = meshaudit.audit(strip([1.0, 1.0, 20.0], height=5.0))
    assert report.metrics["size_ratio"] == pytest.approx([1.0, math.sqrt(20), math.sqrt(20)])
    assert report.breached(1)["size_ratio"][1] == "fail"
    assert report.breached(2)["size_ratio"][1] == "fail"
    assert "size_ratio" not in report.breached(0)
    assert report.flag("size_ratio").tolist() == [False, True, True]
    assert not report.passed


def refinement_step() -> meshio.Mesh:
    """A conforming 2:1 refinement boundary: a 2 x 2 square beside the 2 x 2 square
    [2, 4] x [0, 2] cut into four right isosceles triangles about its centre (3, 1), each
    of area 1 (legs sqrt2, hypotenuse 2): the square shares its right edge with one."""
    pts = np.array([[0, 0], [2, 0], [2, 2], [0, 2], [4, 0], [4, 2], [3, 1]], float)
    quads = np.array([[0, 1, 2, 3]])
    tris = np.array([[1, 6, 2], [1, 4, 6], [6, 5, 2], [4, 5, 6]])
    return meshio.Mesh(pts, [("quad", quads), ("triangle", tris)])


def test_two_to_one_refinement_step_reads_two():
    mesh = refinement_step()
    areas = [Polygon(mesh.points[c]).area for block in mesh.cells for c in block.data]
    assert areas == pytest.approx([4.0, 1.0, 1.0, 1.0, 1.0])  # shapely
    report = meshaudit.audit(mesh)
    # square and the triangle on its edge: sqrt(4 / 1) = 2; the other triangles see only
    # triangles of their own size
    assert report.metrics["size_ratio"] == pytest.approx([2.0, 2.0, 1.0, 1.0, 1.0])
    # standard warns past 2: a 2:1 step is at the limit and passes
    assert report.verdict_names.tolist() == ["ok"] * 5
    strict = meshaudit.audit(mesh, profile="strict")  # warn past 1.5, fail past 2.5
    assert strict.verdict_names.tolist() == ["warn", "warn", "ok", "ok", "ok"]
    assert strict.breached(0) == {"size_ratio": (2.0, "warn", 1.5)}


@pytest.mark.parametrize("cell", ["quad", "triangle"])
def test_uniform_grid_reads_one(cell):
    report = meshaudit.audit(grid(5, 4, cell))
    assert np.all(report.metrics["size_ratio"] == 1.0)
    if cell == "quad":  # unit squares: every limited metric at its ideal, score 1
        assert report.score == pytest.approx(np.ones(20))
    assert not report.flag("size_ratio").any()


def test_an_element_alone_reads_one():
    report = meshaudit.audit(strip([3.0]))
    assert report.metrics["size_ratio"].tolist() == [1.0]


def test_score_moves_with_the_size_ratio():
    # the same square judged beside a square of its size and beside one of area 9: the
    # second scores lower (t = (3 - 1)/(4 - 1) of the standard fail limit 4 adds to T)
    even = meshaudit.audit(strip([1.0, 1.0]))
    jump = meshaudit.audit(strip([1.0, 9.0], height=1.0))
    assert even.score[0] == pytest.approx(1.0)
    # meshaudit's score (2 - v + 2^-T)/3: v = 1 (warn past 2), T = 2/3 for the unit square
    assert jump.score[0] == pytest.approx((2 - 1 + 2 ** (-2 / 3)) / 3)


def test_collapsed_neighbour_does_not_fail_the_others():
    # a zero-area quad (all four corners on one line) beside a unit square: the collapsed
    # element fails on its own; its size does not count against the square
    pts = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0], [2, 1]], float)
    pts = np.vstack([pts, [[1, 0.5]]])
    quads = np.array([[0, 1, 2, 3], [1, 4, 5, 2]])
    good = meshaudit.audit(meshio.Mesh(pts, [("quad", quads)]))
    assert good.metrics["size_ratio"].tolist() == [1.0, 1.0]
    flat = pts.copy()
    flat[[4, 5], 0] = 1.0  # the second quad collapses onto the edge x = 1
    report = meshaudit.audit(meshio.Mesh(flat, [("quad", quads)]))
    assert report.flag("degenerate").tolist() == [False, True]
    assert report.metrics["size_ratio"][0] == 1.0


def _cube_tets(origin, size=1.0):
    """A cube cut into six tetrahedra around its main diagonal (Kuhn's subdivision), each
    of volume size^3 / 6 (common practice)."""
    o = np.asarray(origin, float)
    corners = np.array([[(i >> 0) & 1, (i >> 1) & 1, (i >> 2) & 1] for i in range(8)], float)
    pts = o + size * corners
    paths = [(1, 2), (1, 4), (2, 1), (2, 4), (4, 1), (4, 2)]
    tets = []
    for a, b in paths:
        tets.append([0, a, a | b, 7])
    return pts, np.array(tets)


def test_solids_compare_across_shared_faces():
    # two cubes of Kuhn tetrahedra side by side share a face: every tetra has volume 1/6,
    # so every ratio is 1 (their faces match up, none is left without its neighbour)
    p1, t1 = _cube_tets((0, 0, 0))
    p2, t2 = _cube_tets((1, 0, 0))
    pts, inverse = np.unique(np.vstack([p1, p2]), axis=0, return_inverse=True)
    inverse = inverse.ravel()
    tets = np.vstack([inverse[t1], inverse[t2 + 8]])
    tets = tets.copy()
    vol = np.einsum(
        "ij,ij->i",
        np.cross(pts[tets[:, 1]] - pts[tets[:, 0]], pts[tets[:, 2]] - pts[tets[:, 0]]),
        pts[tets[:, 3]] - pts[tets[:, 0]],
    )
    tets[vol < 0] = tets[vol < 0][:, [0, 2, 1, 3]]  # positive orientation
    report = meshaudit.audit(meshio.Mesh(pts, [("tetra", tets)]))
    assert np.abs(report.metrics["volume"]) == pytest.approx(np.full(12, 1 / 6))
    assert report.metrics["size_ratio"] == pytest.approx(np.ones(12))
    # a column of two boxes 1 x 1 x 1 and 1 x 1 x 8 sharing the unit face: cbrt(8 / 1) = 2
    base = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    pts = np.vstack([np.c_[base, np.full(4, z)] for z in (0.0, 1.0, 9.0)])
    hexes = np.array([[0, 1, 2, 3, 4, 5, 6, 7], [4, 5, 6, 7, 8, 9, 10, 11]])
    report = meshaudit.audit(meshio.Mesh(pts, [("hexahedron", hexes)]))
    assert report.metrics["volume"] == pytest.approx([1.0, 8.0])
    assert report.metrics["size_ratio"] == pytest.approx([2.0, 2.0])


def test_every_report_carries_it(tmp_path):
    audited = meshaudit.audit_mesh(strip([1.0, 1.0, 20.0], height=5.0))
    report = audited.report
    # annotated mesh, read back by meshio (the outside reader)
    annotate.render(tmp_path / "a.vtu", audited.raw, report)
    back = meshio.read(tmp_path / "a.vtu")
    assert back.cell_data["size_ratio"][0] == pytest.approx([1.0, math.sqrt(20), math.sqrt(20)])
    # HTML: a histogram and the breach in the table; terminal: the distribution row
    page = html_report.render(report, audited.elements)
    assert '<figure data-metric="size_ratio">' in page and "size_ratio 4.472 / 4 (fail)" in page
    console = PlainConsole(width=160, record=True, file=io.StringIO())
    terminal.render(report, console)
    assert "size_ratio 4.472 > 4 (fail)" in console.export_text()
    doc = json.loads(json_report.render(report, every_element=True))
    assert doc["statistics"]["size_ratio"]["max"] == pytest.approx(math.sqrt(20))
    assert doc["elements"][1]["metrics"]["size_ratio"] == pytest.approx(math.sqrt(20))
    assert doc["profile"]["limits"]["quad"]["size_ratio"]["fail"] == 4.0
    header = csv_report.render(report).splitlines()[0].split(",")
    assert "size_ratio" in header
    xml = junit_report.render(report)
    assert "size_ratio" in xml


def test_three_elements_on_one_edge_compare_with_each_other():
    # a stiffener T-joint: two unit squares in the plane z = 0 and a 1 x 4 web standing on
    # their shared edge (x = 1): each reads its largest ratio to the others on that edge,
    # sqrt(4 / 1) = 2 (closed form)
    pts = np.array(
        [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [2, 0, 0], [2, 1, 0], [1, 0, 4], [1, 1, 4]],
        float,
    )
    quads = np.array([[0, 1, 2, 3], [1, 4, 5, 2], [1, 2, 7, 6]])
    report = meshaudit.audit(meshio.Mesh(pts, [("quad", quads)]))
    assert report.metrics["area"] == pytest.approx([1.0, 1.0, 4.0])
    assert report.metrics["size_ratio"] == pytest.approx([2.0, 2.0, 2.0])


def test_explain_names_the_neighbour_behind_the_jump():
    # the 2:1 refinement step under strict: the square warns against the triangle on its
    # edge (sqrt 4 = 2 here, sqrt 1 = 1 there), not against the triangles sharing a node
    audited = meshaudit.audit_mesh(refinement_step(), profile="strict")
    ex = meshaudit.explain(audited, 0)
    line = next(m for m in ex.metrics if m.name == "size_ratio")
    assert line.level == "warn"
    assert line.reason.endswith("against element 1 (sqrt area 2 here, 1 there)")
    ok = meshaudit.explain(audited, 3)  # a triangle among its equals: within the limits
    assert next(m for m in ok.metrics if m.name == "size_ratio").reason == ""


def test_a_triangle_face_is_no_neighbour_of_a_quadrilateral_on_three_of_its_nodes():
    # a pyramid over the unit square (apex 4 at height 1) and two tetrahedra: tetra A on
    # the pyramid's side triangle (0, 1, 4) shares that face; tetra B on (1, 2, 3), three
    # corners of the pyramid's square base, shares no face with it (a mesh that does not
    # conform there), though the three largest nodes of the base are its own
    from meshaudit.mesh.neighbours import face_groups
    from meshaudit.mesh.reading import load

    pts = np.array(
        [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0.5, 0.5, 1], [0.5, -1, 0.5], [1, 1, -1]],
        float,
    )
    tets = np.array([[0, 1, 4, 5], [1, 3, 2, 6]])
    mesh = meshio.Mesh(pts, [("pyramid", np.array([[0, 1, 2, 3, 4]])), ("tetra", tets)])
    sides = face_groups(load(mesh))
    shared = {}
    for g, e in zip(sides.group.tolist(), sides.element.tolist()):
        shared.setdefault(g, set()).add(e)
    pairs = {frozenset(s) for s in shared.values() if len(s) > 1}
    assert pairs == {frozenset({0, 1})}  # the pyramid and tetra A, not tetra B
