"""Mesh-level findings of solids: the face table and what is found on it.

Each defect is planted in a small structured block of hexahedra and in the same cubes
cut into six tetrahedra each (tests/solid_meshes.py), and found with the right element
and node numbers; clean meshes stay clean. Outside references: closed forms (areas and
volumes of boxes, face counts of structured blocks), shapely for face areas, and the
common practice that a positively oriented solid's faces point outward (so two
consistently oriented neighbours run around their common face in opposite directions).
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
import shapely
from solid_meshes import (
    KUHN,
    centres,
    cracked,
    grid,
    hex_beside_tets,
    hex_block,
    mesh,
    refined_beside_coarse,
    tet_block,
)

import meshaudit
from meshaudit.cells import CELL_TYPES
from meshaudit.mesh.faces import face_table, vector_areas
from meshaudit.mesh.reading import load

SAMPLES = Path(__file__).resolve().parent.parent / "samples"
KINDS = ("hexahedron", "tetra")
#: cells per cube: one hexahedron, or six tetrahedra
PER_CUBE = {"hexahedron": 1, "tetra": 6}


def block(kind: str, shape=(3, 3, 3), size=(1.0, 1.0, 1.0)) -> tuple[np.ndarray, np.ndarray]:
    return hex_block(shape, size) if kind == "hexahedron" else tet_block(shape, size)


def found(report) -> dict:
    return {f.kind: f for f in report.findings}


# -- the orientation rule every check relies on ------------------------------------------
@pytest.mark.parametrize("name", [n for n, c in CELL_TYPES.items() if c.dimension == 3])
def test_faces_of_every_solid_type_point_outward(name: str) -> None:
    # common practice: each face of a positively oriented reference element, wound as
    # listed, has its right-hand normal pointing away from the element's centre; the
    # faces' area vectors add up to zero (a closed surface) and their flux of x / 3 is
    # the element's volume (divergence theorem)
    cell = CELL_TYPES[name]
    corners = cell.reference_nodes[: cell.n_corners]
    centre = corners.mean(axis=0)
    rows = np.full((len(cell.faces), 4), -1)
    for i, f in enumerate(cell.faces):
        rows[i, : len(f)] = f
    area, middle = vector_areas(corners, rows)
    assert (np.einsum("ij,ij->i", area, middle - centre) > 0).all()
    np.testing.assert_allclose(area.sum(axis=0), 0.0, atol=1e-12)
    assert np.einsum("ij,ij->", middle, area) / 3.0 == pytest.approx(cell.reference_measure)


# -- the face table ------------------------------------------------------------------------
@pytest.mark.parametrize("kind", KINDS)
def test_face_table_counts_of_a_structured_block(kind: str) -> None:
    n = 3
    points, cells = block(kind, (n, n, n))
    table = face_table(load(mesh(points, (kind, cells))))
    if kind == "hexahedron":  # closed form: 3 n^2 (n + 1) faces, 6 n^2 on the boundary
        assert table.n_faces == 3 * n * n * (n + 1)
        assert int((table.uses == 1).sum()) == 6 * n * n
    else:  # 24 face uses per cube, two triangles per boundary square
        assert int((table.uses == 1).sum()) == 12 * n * n
        assert table.n_faces == 12 * n * n + (24 * n**3 - 12 * n * n) // 2
    assert set(table.uses.tolist()) == {1, 2}


def test_face_areas_against_shapely() -> None:
    # the bottom nodes of a block moved about in z = 0: each bottom face's area is the
    # area of its polygon (shapely); the block's skin closes on it
    points, hexes = hex_block((4, 3, 2), (1.0, 1.0, 1.0))
    rng = np.random.default_rng(7)
    bottom = points[:, 2] == 0.0
    inner = bottom & (points[:, 0] > 0) & (points[:, 0] < 4) & (points[:, 1] > 0)
    inner &= points[:, 1] < 3
    points[inner, :2] += rng.uniform(-0.3, 0.3, (int(inner.sum()), 2))
    table = face_table(load(mesh(points, ("hexahedron", hexes))))
    free = table.boundary()
    on_bottom = free[(points[table.corners[free], 2] == 0.0).all(axis=1)]
    assert on_bottom.size == 12
    area, _ = vector_areas(points, table.corners[on_bottom])
    expected = [shapely.Polygon(points[c, :2]).area for c in table.corners[on_bottom]]
    np.testing.assert_allclose(np.linalg.norm(area, axis=1), expected, rtol=1e-12)
    assert (area[:, 2] < 0).all()  # outward: down
    np.testing.assert_allclose(sum(expected), 12.0, rtol=1e-12)  # the 4 x 3 bottom


# -- clean meshes stay clean ---------------------------------------------------------------
@pytest.mark.parametrize("kind", KINDS)
def test_plain_block_is_clean_with_the_skin_of_a_box(kind: str) -> None:
    # closed form: a box a x b x c has area 2 (ab + bc + ca) and volume abc
    points, cells = block(kind, (3, 2, 1), (0.5, 1.5, 2.0))
    report = meshaudit.audit(mesh(points, (kind, cells)))
    assert report.findings == []  # (the stretched tetrahedra may fail their shape limits)
    surfaces = report.boundary_surfaces
    a, b, c = 1.5, 3.0, 2.0
    assert surfaces.kind.tolist() == ["skin"]
    assert surfaces.area[0] == pytest.approx(2 * (a * b + b * c + c * a), rel=1e-12)
    assert surfaces.volume[0] == pytest.approx(a * b * c, rel=1e-12)


@pytest.mark.parametrize("kind", KINDS)
def test_two_materials_sharing_faces_are_one_clean_part(kind: str) -> None:
    points, cells = block(kind)
    half = centres(points, cells)[:, 0] < 1.0
    report = meshaudit.audit(mesh(points, (kind, cells[half]), (kind, cells[~half])))
    assert report.passed and report.findings == []
    assert report.boundary_surfaces.kind.tolist() == ["skin"]
    assert report.boundary_surfaces.area[0] == pytest.approx(54.0)  # 6 x 3^2


@pytest.mark.parametrize("kind", KINDS)
def test_internal_void_is_information_not_a_crack(kind: str) -> None:
    s = 0.7
    points, cells = block(kind, (3, 3, 3), (s, s, s))
    cube = np.arange(len(cells)) // PER_CUBE[kind]
    kept = cells[cube != 13]  # the middle cube removed
    report = meshaudit.audit(mesh(points, (kind, kept)))
    assert report.passed  # information only
    (void,) = report.findings
    assert void.kind == "internal_voids" and void.severity == "info" and void.count == 1
    surfaces = report.boundary_surfaces
    assert surfaces.kind.tolist() == ["skin", "void"]
    # closed forms: the skin of the 3s cube, the void's six faces of s x s, its volume s^3
    assert surfaces.area[0] == pytest.approx(54 * s * s)
    assert surfaces.area[1] == pytest.approx(6 * s * s)
    assert -surfaces.volume[1] == pytest.approx(s**3)
    assert surfaces.volume[0] == pytest.approx(27 * s**3)  # the skin encloses the box
    # the solids around it: those of the six cubes beside the middle one, each with a
    # face (two triangles of two tetrahedra) on the void
    kept_cube = cube[cube != 13]
    around = kept_cube[void.element_index]
    assert set(around.tolist()) == {4, 10, 12, 14, 16, 22}
    assert void.element_index.size == 6 * (1 if kind == "hexahedron" else 2)


# -- defects ---------------------------------------------------------------------------------
def _plane_faces_touching(cells: np.ndarray, kind: str, points: np.ndarray, inner) -> float:
    """Independent count: the faces lying in the plane x = 1 with a corner among ``inner``
    (each seen once from the cells on its left), from the corner sets of the cells."""
    if kind == "hexahedron":
        subsets = [c for c in itertools.combinations(range(8), 4)]
    else:
        subsets = list(itertools.combinations(range(4), 3))
    count = 0
    left = centres(points, cells)[:, 0] < 1.0
    for cell in cells[left]:
        for sub in subsets:
            nodes = cell[list(sub)]
            if np.all(points[nodes, 0] == 1.0) and np.isin(nodes, inner).any():
                count += 1
    return count


@pytest.mark.parametrize("kind", KINDS)
def test_unmerged_crack_found_with_its_nodes_and_faces(kind: str, tmp_path: Path) -> None:
    points, cells = block(kind)
    _, index = grid((3, 3, 3))
    points, cells, inner, copies = cracked(points, cells, centres(points, cells), index, 3)
    report = meshaudit.audit(mesh(points, (kind, cells)))
    assert not report.passed
    got = found(report)
    assert set(got) == {"coincident_nodes", "crack_faces"}
    assert got["coincident_nodes"].count == 4
    assert sorted(map(tuple, got["coincident_nodes"].pairs.tolist())) == sorted(
        zip(inner.tolist(), copies.tolist())
    )
    crack = got["crack_faces"]
    faces = _plane_faces_touching(cells, kind, points, np.concatenate([inner, copies]))
    assert crack.count == 2 * faces and crack.severity == "fail"
    # the cells with a face in the plane on an unmerged node, on both sides
    beside = (points[cells][:, :, 0] == 1.0).any(axis=1)
    assert set(crack.element_index.tolist()) <= set(np.flatnonzero(beside).tolist())
    if kind == "hexahedron":
        assert crack.element_index.tolist() == np.flatnonzero(beside).tolist()
    surfaces = report.boundary_surfaces
    assert surfaces.kind.tolist() == ["skin", "crack"]
    assert surfaces.area[0] == pytest.approx(54.0)  # the skin is still the 3 x 3 x 3 box
    assert surfaces.faces[1] == crack.count
    # an intended crack is kept by the profile for intended cracks
    kept = meshaudit.audit(
        mesh(points, (kind, cells)), profile=SAMPLES / "crack_faces_intended.toml"
    )
    assert kept.passed and {f.severity for f in kept.findings} == {"info"}


@pytest.mark.parametrize("kind", KINDS)
def test_non_manifold_face_names_its_three_solids(kind: str) -> None:
    points, cells = block(kind)
    first = 13 * PER_CUBE[kind]
    table = face_table(load(mesh(points, (kind, cells))))
    use = np.flatnonzero((table.element == first) & (table.uses[table.face] == 2))[0]
    face = table.corners[use][table.corners[use] >= 0]
    users = sorted(table.element[table.face == table.face[use]].tolist())
    # a new solid standing on that interior face, its other corners new nodes nearby
    lift = 0.25 * (points[face].mean(axis=0) - points[cells[first]].mean(axis=0))
    new = np.arange(len(points), len(points) + (4 if kind == "hexahedron" else 1))
    if kind == "hexahedron":
        extra_points = points[face] + lift
        cell = np.concatenate([face[::-1], new[::-1]])
    else:
        extra_points = points[face].mean(axis=0, keepdims=True) + lift
        cell = np.concatenate([face[::-1], new])
    points = np.vstack([points, extra_points])
    cells = np.vstack([cells, cell])
    report = meshaudit.audit(mesh(points, (kind, cells)))
    nm = found(report)["non_manifold_faces"]
    assert nm.count == 1 and nm.severity == "fail"
    assert sorted(nm.element_index.tolist()) == [*users, len(cells) - 1]


@pytest.mark.parametrize("kind", KINDS)
def test_duplicate_solid_in_another_node_order(kind: str) -> None:
    points, cells = block(kind)
    again = cells[5][[1, 2, 3, 0, 5, 6, 7, 4]] if kind == "hexahedron" else cells[5][[1, 2, 0, 3]]
    report = meshaudit.audit(mesh(points, (kind, np.vstack([cells, again]))))
    got = found(report)
    assert set(got) == {"duplicate_elements"}  # not also a non-manifold face or inside out
    assert got["duplicate_elements"].pairs.tolist() == [[5, len(cells)]]


@pytest.mark.parametrize("kind", KINDS)
def test_orphan_node_beside_solids(kind: str) -> None:
    points, cells = block(kind)
    points = np.vstack([points, [[9.0, 9.0, 9.0]]])
    report = meshaudit.audit(mesh(points, (kind, cells)))
    (orphan,) = report.findings
    assert orphan.kind == "orphan_nodes" and orphan.node_ids.tolist() == [len(points) - 1]


@pytest.mark.parametrize("kind", KINDS)
def test_mirrored_solid_is_inside_out_and_inverted(kind: str) -> None:
    # common practice: neighbours use their common face in opposite directions; the
    # mirrored cell uses each of its faces the same way as its neighbour, and its det J
    # is negative: the message says it is inverted
    points, cells = block(kind)
    which = 13 * PER_CUBE[kind]
    cells = cells.copy()
    cells[which] = cells[which][[4, 5, 6, 7, 0, 1, 2, 3] if kind == "hexahedron" else [1, 0, 2, 3]]
    report = meshaudit.audit(mesh(points, (kind, cells)))
    out = found(report)["inside_out_solids"]
    assert out.count == 1 and out.element_index.tolist() == [which]
    assert "1 of them inverted (negative det J" in out.message
    assert report.flag("inverted")[which]


def test_solid_folded_over_its_neighbour_is_inside_out_with_positive_det_j() -> None:
    # a unit cube and a positively oriented half cube on the same side of the cube's face
    # x = 1 (x from 0.5 to 1), sharing that face's nodes: both use the face as their
    # outward face towards +x, the same way round, though neither det J is negative
    from solid_meshes import CUBE

    points = np.vstack([CUBE.astype(float), CUBE[[0, 3, 4, 7]] + [0.5, 0.0, 0.0]])
    half = np.array([8, 1, 2, 9, 10, 5, 6, 11])  # corners 0, 3, 4, 7 moved to x = 0.5
    report = meshaudit.audit(mesh(points, ("hexahedron", np.stack([np.arange(8), half]))))
    assert not report.flag("inverted").any()
    out = found(report)["inside_out_solids"]
    assert out.count == 1 and out.element_index.tolist() == [1]
    assert "positive det J, so they fold over a neighbour" in out.message
    assert "inverted" not in out.message


def test_hanging_nodes_of_a_refined_block_beside_a_coarse_hex() -> None:
    points, hexes = refined_beside_coarse()
    report = meshaudit.audit(mesh(points, ("hexahedron", hexes)))
    got = found(report)
    assert set(got) == {"hanging_nodes", "non_conforming_faces"}
    hang = got["hanging_nodes"]
    # the five fine nodes on the coarse face x = 1 other than its corners: four at the
    # middles of its edges, one at its centre
    expected = {(1.0, 0.5, 0.0), (1.0, 0.5, 1.0), (1.0, 0.0, 0.5), (1.0, 1.0, 0.5)}
    expected.add((1.0, 0.5, 0.5))
    assert {tuple(points[n]) for n in hang.node_ids} == expected
    assert "1 inside a face, 4 on an edge" in hang.message
    assert set(hang.pairs[:, 1].tolist()) == {0}  # all on the coarse cell's faces
    faces = got["non_conforming_faces"]
    # the coarse face and the four fine faces on it; the fine cells at x 1..1.5 are 1..4
    assert faces.count == 5 and faces.element_index.tolist() == [0, 1, 2, 3, 4]
    surfaces = report.boundary_surfaces
    assert surfaces.kind.tolist() == ["skin", "interface"]
    # closed forms: the 2 x 1 x 1 box's skin, and both sides of the unit interface
    assert surfaces.area[0] == pytest.approx(10.0) and surfaces.volume[0] == pytest.approx(2.0)
    assert surfaces.area[1] == pytest.approx(2.0)


def test_hex_face_against_two_tet_faces_is_non_conforming() -> None:
    points, hexes, tets = hex_beside_tets()
    report = meshaudit.audit(mesh(points, ("hexahedron", hexes), ("tetra", tets)))
    got = found(report)
    assert set(got) == {"non_conforming_faces"}  # no node hangs: the diagonal does
    faces = got["non_conforming_faces"]
    at_x1 = [
        1 + i
        for i, t in enumerate(tets)
        if sum(points[n, 0] == 1.0 for n in t) == 3  # a tetrahedron with a face on x = 1
    ]
    assert faces.count == 3 and faces.element_index.tolist() == [0, *at_x1]
    assert len(at_x1) == 2
    assert report.boundary_surfaces.area[0] == pytest.approx(10.0)


def test_shell_skin_on_solid_faces_and_an_unmerged_shell() -> None:
    points, hexes = hex_block()
    bottom = hexes[points[hexes[:, 0], 2] == 0.0][:, [0, 3, 2, 1]]  # facing -z: outward
    report = meshaudit.audit(mesh(points, ("quad", bottom), ("hexahedron", hexes)))
    (skin,) = report.findings
    assert skin.kind == "shells_on_solid_faces" and skin.severity == "info"
    assert skin.count == 9 and skin.element_index.tolist() == list(range(9))
    # the first shell on nodes of its own at the solid's corners: not merged, a failure
    extra = np.arange(len(points), len(points) + 4)
    points = np.vstack([points, points[bottom[0]]])
    shells = bottom.copy()
    shells[0] = extra
    report = meshaudit.audit(mesh(points, ("quad", shells), ("hexahedron", hexes)))
    got = found(report)
    assert not report.passed
    same = got["coincident_nodes"]
    assert sorted(map(tuple, same.pairs.tolist())) == sorted(zip(bottom[0].tolist(), extra))
    assert "4 of these places join a shell node and a solid node" in same.message
    assert got["shells_on_solid_faces"].count == 8


# -- every report shows the new kinds --------------------------------------------------------
def test_solid_findings_in_json_junit_and_terminal(tmp_path: Path, run_cli) -> None:
    import json
    import xml.etree.ElementTree as ET

    import meshio

    points, cells = block("hexahedron")
    _, index = grid((3, 3, 3))
    points, cells, _, _ = cracked(points, cells, centres(points, cells), index, 3)
    path = tmp_path / "cracked.vtu"
    meshio.write(path, mesh(points, ("hexahedron", cells)))
    js, xml = tmp_path / "r.json", tmp_path / "r.xml"
    res = run_cli("check", path, "--json", js, "--junit", xml)
    assert res.returncode == 1, res.stdout[-2000:] + res.stderr
    doc = json.loads(js.read_text())
    assert {f["kind"] for f in doc["findings"]} == {"coincident_nodes", "crack_faces"}
    assert [s["kind"] for s in doc["solid_surfaces"]] == ["skin", "crack"]
    assert doc["solid_surfaces"][0]["area"] == pytest.approx(54.0)
    root = ET.parse(xml).getroot()
    case = root.find(".//testcase[@name='no crack faces']")
    assert case is not None and case.find("failure") is not None
    assert "crack_faces" in res.stdout and "solid surfaces" in res.stdout


def test_surface_only_mesh_lists_no_solid_kind_in_junit(tmp_path: Path, run_cli) -> None:
    import xml.etree.ElementTree as ET

    import meshio

    points = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
    path = tmp_path / "quad.vtu"
    meshio.write(path, meshio.Mesh(np.c_[points, np.zeros(4)], [("quad", [[0, 1, 2, 3]])]))
    xml = tmp_path / "r.xml"
    assert run_cli("check", path, "--junit", xml).returncode == 0
    names = {c.get("name") for c in ET.parse(xml).getroot().iter("testcase")}
    assert "no crack faces" not in names and "no crack edges" in names


def test_lug_sample_is_one_closed_skin() -> None:
    # closed forms: the 60 x 40 x 10 block plus the fillet (right triangle 20 x 20 in
    # section, 40 long): volume 24000 + 8000; area of the skin: the block's
    # 2 (60 x 40 + 40 x 10 + 10 x 60) less the 20 x 40 strip under the fillet, plus the
    # fillet's vertical face 20 x 40, its slanted face 20 sqrt(2) x 40 and two triangles
    report = meshaudit.audit(SAMPLES / "bracket_lug.vtu")
    assert report.passed and report.findings == []
    surfaces = report.boundary_surfaces
    assert surfaces.kind.tolist() == ["skin"]
    assert surfaces.volume[0] == pytest.approx(32000.0)
    area = 2 * (60 * 40 + 40 * 10 + 10 * 60) - 20 * 40 + 20 * 40 + 20 * np.sqrt(2) * 40 + 400
    assert surfaces.area[0] == pytest.approx(area)


def test_kuhn_tetrahedra_fill_the_cube() -> None:
    # the test meshes' own check: six positive tetrahedra of volume 1/6 each
    from solid_meshes import CUBE

    for t in KUHN:
        a, b, c, d = CUBE[t]
        assert np.linalg.det(np.stack([b - a, c - a, d - a])) == pytest.approx(1.0)


def test_collapsed_tetrahedron_leaves_a_void_not_a_non_manifold_face() -> None:
    # a tetrahedron with two corners on one node encloses nothing: the tetrahedron-shaped
    # hole it leaves is a closed void of its four faces (closed form: a corner
    # tetrahedron of the unit cube's Kuhn split has volume 1/6), its two remaining faces
    # (one triangle, both ways round) cancel
    points, tets = tet_block()
    which = 13 * 6
    hole = tets[which].copy()
    tets = tets.copy()
    tets[which, 1] = tets[which, 0]
    report = meshaudit.audit(mesh(points, ("tetra", tets)))
    got = found(report)
    assert "non_manifold_faces" not in got
    assert got["internal_voids"].count == 1
    surfaces = report.boundary_surfaces
    assert surfaces.kind.tolist() == ["skin", "void"]
    assert -surfaces.volume[1] == pytest.approx(1.0 / 6.0)
    a, b, c, d = points[hole]
    faces = [(a, b, c), (a, b, d), (a, c, d), (b, c, d)]
    area = sum(0.5 * np.linalg.norm(np.cross(q - p, r - p)) for p, q, r in faces)
    assert surfaces.area[1] == pytest.approx(area)
    assert report.flag("degenerate")[which]


def test_hanging_nodes_of_shells_and_solids_make_one_finding() -> None:
    # the refined block with a skin of shells on its bottom (one coarse quad, four fine):
    # the fine node at (1, 0.5, 0) hangs on the coarse shell's edge and on the coarse
    # solid's faces; one finding names the five hanging nodes once each
    points, hexes = refined_beside_coarse()
    bottom = hexes[points[hexes[:, 0], 2] == 0.0][:, [0, 3, 2, 1]]
    report = meshaudit.audit(mesh(points, ("quad", bottom), ("hexahedron", hexes)))
    got = found(report)
    assert [f.kind for f in report.findings].count("hanging_nodes") == 1
    hang = got["hanging_nodes"]
    assert hang.count == 5 == hang.node_ids.size
    assert got["shells_on_solid_faces"].count == 5
    assert got["non_conforming_faces"].count == 5


@pytest.mark.parametrize(
    ("kind", "quadratic"), [("tetra", "tetra10"), ("hexahedron", "hexahedron20")]
)
def test_quadratic_solids_faces_by_their_corners(kind: str, quadratic: str) -> None:
    # the same block with a node at the middle of every edge: faces keyed by their corners
    # meet as before; the skin is the 3 x 3 x 3 box (closed form); a void is found again
    from solid_meshes import with_midside_nodes

    points, cells = block(kind)
    midside = CELL_TYPES[quadratic].midside_edges
    full_points, full = with_midside_nodes(points, cells, midside)
    report = meshaudit.audit(mesh(full_points, (quadratic, full)))
    assert report.findings == []
    assert report.boundary_surfaces.area[0] == pytest.approx(54.0)
    cube = np.arange(len(cells)) // PER_CUBE[kind]
    report = meshaudit.audit(mesh(full_points, (quadratic, full[cube != 13])))
    got = found(report)
    assert got["internal_voids"].count == 1
    assert report.boundary_surfaces.area[1] == pytest.approx(6.0)
    # the midside nodes of the edges inside the removed cube (its tetrahedra's diagonals)
    # are left unused: orphans; the hexahedron's edges are all shared with its neighbours
    unused = np.setdiff1d(full[cube == 13], full[cube != 13])
    assert set(got) == ({"internal_voids", "orphan_nodes"} if unused.size else {"internal_voids"})
    if unused.size:
        assert got["orphan_nodes"].node_ids.tolist() == unused.tolist()


def test_every_solid_mirrored_keeps_its_skin_and_void() -> None:
    # every hexahedron of the block with a void listed mirrored: all faces point inward,
    # the element checks fail every one (negative det J), and the surfaces still read as
    # a skin (the largest enclosed volume) and a void, not the other way round
    points, hexes = hex_block()
    mirrored = np.delete(hexes, 13, axis=0)[:, [4, 5, 6, 7, 0, 1, 2, 3]]
    report = meshaudit.audit(mesh(points, ("hexahedron", mirrored)))
    assert report.flag("inverted").all()
    assert report.boundary_surfaces.kind.tolist() == ["skin", "void"]
    assert report.boundary_surfaces.volume[0] == pytest.approx(-27.0)
    assert {f.kind for f in report.findings} == {"internal_voids"}  # no neighbour disagrees


def test_hanging_nodes_on_a_strongly_warped_coarse_face() -> None:
    # The refined block beside the coarse hexahedron, the whole mesh bent by x += 0.4 y z:
    # the coarse face x = 1 becomes the bilinear surface x = 1 + 0.4 y z (one corner 0.4
    # out of the plane of the others, a side of 1), and the five fine nodes on it stay on
    # that surface (closed form: the map is bilinear in y, z on the face), four on its
    # straight edges and one at its centre, (1.1, 0.5, 0.5), 0.19 away from either
    # diagonal split of the face into two triangles.
    points, hexes = refined_beside_coarse()
    bent = points.copy()
    bent[:, 0] += 0.4 * points[:, 1] * points[:, 2]
    report = meshaudit.audit(mesh(bent, ("hexahedron", hexes)))
    hang = found(report)["hanging_nodes"]
    expected = {(1.0, 0.5, 0.0), (1.0, 0.5, 1.0), (1.0, 0.0, 0.5), (1.0, 1.0, 0.5)}
    expected.add((1.0, 0.5, 0.5))
    assert {tuple(points[n]) for n in hang.node_ids} == expected
    assert "1 inside a face, 4 on an edge" in hang.message
