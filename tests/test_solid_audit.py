"""Volume elements audited end to end: ``meshaudit check`` (and the API) on solid meshes.

Outside references, named beside each check:

- scikit-fem: its tetrahedral and hexahedral meshes (``MeshTet.init_tensor``,
  ``MeshHex.init_tensor``), written with its own meshio converter; its mapping's det J
  (``detDF``: the same unit reference tetrahedron as ours, so equal, sign included; its
  reference cube is [0, 1]^3, so its det J is 8 times ours) and its element volumes
  (a ``Functional`` of 1 integrated by its own quadrature);
- closed forms: volumes of boxes, prisms, pyramids and tetrahedra, det J of an affine map
  (common practice), det J at a corner of a tetra10 with a midside node at a fraction s of
  its edge, 4 s - 1 (the quarter point s = 1/4: Henshell and Shaw 1975, Barsoum 1976);
- the files themselves: their element tags and labels read from their own text (gmsh,
  Abaqus, Nastran), VTK's cell index convention (common practice).
"""

from __future__ import annotations

import contextlib
import io
import json
import shutil
import xml.etree.ElementTree as ET
from pathlib import Path

import meshio
import numpy as np
import pytest
from skfem import Basis, ElementHex1, ElementTetP1, Functional, MeshHex, MeshTet
from skfem.io.meshio import to_meshio

import meshaudit
from meshaudit.cells import CELL_TYPES
from meshaudit.metrics import LIMITED_METRICS

SAMPLES = Path(__file__).resolve().parents[1] / "samples"
SOLID_FAMILIES = sorted({c.family for c in CELL_TYPES.values() if c.dimension == 3})
#: The block of the bracket lug: 60 x 40 x 10 (closed-form volume 24000).
BLOCK = (np.linspace(0.0, 60.0, 7), np.linspace(0.0, 40.0, 5), np.linspace(0.0, 10.0, 3))
#: Checks of the surface elements' edges: nothing to look at in a mesh of solids alone.
SURFACE_KINDS = ("crack_edges", "non_manifold_edges")
#: Checks that look at the solids too (their nodes, corner sets and faces).
SOLID_CHECKED = (
    "coincident_nodes",
    "hanging_nodes",
    "duplicate_elements",
    "crack_faces",
    "non_manifold_faces",
    "non_conforming_faces",
    "inside_out_solids",
)


@Functional
def _one(w):
    return 1.0 + 0.0 * w.x[0]


def validity_only(directory: Path) -> Path:
    """A profile with every limit of the solid families switched off (an empty table
    switches a limit off), so a test of validity does not depend on the built-in shape
    limits of the solids."""
    lines = ['name = "solid validity only"', 'extends = "standard"']
    for family in SOLID_FAMILIES:
        lines.append(f"[{family}]")
        lines += [f"{metric} = {{}}" for metric in LIMITED_METRICS]
    path = directory / "validity.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


def _no_limits() -> meshaudit.Profile:
    return meshaudit.Profile("no limits", "validity flags only", {})


def _jittered(mesh, fraction: float, seed: int):
    """``mesh`` with its interior nodes moved at random by up to ``fraction`` of the
    spacing (10 mm x 10 mm x 5 mm); boundary nodes stay, so the block keeps its volume."""
    p = mesh.p.copy()
    inside = np.setdiff1d(np.arange(p.shape[1]), mesh.boundary_nodes())
    step = np.array([10.0, 10.0, 5.0])[:, None]
    rng = np.random.default_rng(seed)
    p[:, inside] += fraction * step * rng.uniform(-1.0, 1.0, (3, inside.size))
    return type(mesh)(p, mesh.t)


def _skfem_tetra_signs(mesh) -> np.ndarray:
    """scikit-fem's det J of each tetrahedron (constant): its mapping at the centroid."""
    return mesh.mapping().detDF(np.array([[0.25], [0.25], [0.25]]))[:, 0]


def _oriented(mesh):
    """scikit-fem's tetrahedra with nodes 1 and 2 swapped where its own mapping has a
    negative det J (scikit-fem does not orient its tetrahedra; VTK's order must)."""
    t = mesh.t.copy()
    flip = _skfem_tetra_signs(mesh) < 0.0
    t[[1, 2]] = np.where(flip, t[[2, 1]], t[[1, 2]])
    return MeshTet(mesh.p, t)


def _write(mesh: meshio.Mesh, path: Path, **options) -> Path:
    with contextlib.redirect_stderr(io.StringIO()), contextlib.redirect_stdout(io.StringIO()):
        meshio.write(path, mesh, **options)
    return path


def _json(path: Path) -> dict:
    return json.loads(path.read_text())


# -- scikit-fem's tetrahedra --------------------------------------------------------------
def test_skfem_tetrahedra_det_j_and_orientation_are_its_mapping_s() -> None:
    # scikit-fem's mapping: det J of each tetrahedron, sign included (same reference
    # tetrahedron). Its tensor mesh mixes both orientations; exactly the negative ones
    # are flagged reversed (and inverted), whatever the profile.
    mesh = MeshTet.init_tensor(*BLOCK)
    sign = _skfem_tetra_signs(mesh)
    assert (sign < 0).any() and (sign > 0).any()  # the test can tell them apart
    report = meshaudit.audit(to_meshio(mesh), profile=_no_limits())
    np.testing.assert_allclose(report.metrics["det_j_min"], sign, rtol=1e-12)
    np.testing.assert_array_equal(report.flag("reversed"), sign < 0)
    np.testing.assert_array_equal(report.flag("inverted"), sign < 0)
    assert report.verdict_counts()["fail"] == int((sign < 0).sum())
    np.testing.assert_allclose(report.metrics["volume"], sign / 6.0, rtol=1e-12)


def test_skfem_tetra_mesh_passes_check_with_volumes_of_its_own_quadrature(
    tmp_path: Path, run_cli
) -> None:
    mesh = _oriented(_jittered(MeshTet.init_tensor(*BLOCK), 0.1, seed=4))
    assert (_skfem_tetra_signs(mesh) > 0).all()
    path = _write(to_meshio(mesh), tmp_path / "lug_tetra.vtu")
    js, xml = tmp_path / "r.json", tmp_path / "r.xml"
    profile = validity_only(tmp_path)
    res = run_cli("check", path, "--profile", profile, "--json", js, "--junit", xml, "--all")
    assert res.returncode == 0, res.stdout[-3000:] + res.stderr
    doc = _json(js)
    summary = doc["summary"]
    assert summary["geometry"] == "solid" and summary["orientation"] == "none"
    assert summary["elements_by_type"] == {"tetra": mesh.t.shape[1]}
    assert summary["elements_by_family"] == {"tetra": mesh.t.shape[1]}
    # scikit-fem's element volumes by its own quadrature, in file order (VTK cell index)
    volumes = np.array([e["metrics"]["volume"] for e in doc["elements"]])
    assert [e["id"] for e in doc["elements"]] == list(range(mesh.t.shape[1]))
    skfem_volumes = _one.elemental(Basis(mesh, ElementTetP1()))
    np.testing.assert_allclose(volumes, skfem_volumes, rtol=1e-10)
    assert volumes.sum() == pytest.approx(60.0 * 40.0 * 10.0, rel=1e-12)  # closed form
    # a solid-only mesh: no free edges, no non-manifold edges (every tetrahedron edge is
    # shared by several), no finding at all; the checks of surface edges are skipped in
    # JUnit, those that look at the solids ran and passed
    assert doc["findings"] == []
    assert "solid (volume elements only" in res.stdout
    root = ET.parse(xml).getroot()
    for kind in SURFACE_KINDS:
        case = root.find(f".//testcase[@name='no {kind.replace('_', ' ')}']")
        assert case is not None and case.find("skipped") is not None, kind
    for kind in SOLID_CHECKED:
        case = root.find(f".//testcase[@name='no {kind.replace('_', ' ')}']")
        assert case is not None and case.find("skipped") is None, kind
        assert case.find("failure") is None, kind
    orphan = root.find(".//testcase[@name='no orphan nodes']")
    assert orphan.find("skipped") is None and orphan.find("failure") is None


# -- scikit-fem's hexahedra ---------------------------------------------------------------
def test_skfem_hex_mesh_det_j_and_volumes(tmp_path: Path, run_cli) -> None:
    mesh = _jittered(MeshHex.init_tensor(*BLOCK), 0.1, seed=9)
    path = _write(to_meshio(mesh), tmp_path / "lug_hex.vtu")
    js = tmp_path / "r.json"
    profile = validity_only(tmp_path)
    res = run_cli("check", path, "--profile", profile, "--json", js, "--all")
    assert res.returncode == 0, res.stdout[-3000:] + res.stderr
    doc = _json(js)
    assert doc["summary"]["elements_by_type"] == {"hexahedron": mesh.t.shape[1]}
    metrics = {k: np.array([e["metrics"][k] for e in doc["elements"]]) for k in ("volume",)}
    skfem_volumes = _one.elemental(Basis(mesh, ElementHex1()))
    np.testing.assert_allclose(metrics["volume"], skfem_volumes, rtol=1e-10)
    assert metrics["volume"].sum() == pytest.approx(24000.0, rel=1e-12)  # closed form
    # det J at the 2 x 2 x 2 Gauss points: scikit-fem's on its reference cube [0, 1]^3
    # (8 times ours); the Gauss points are one symmetric set of physical points whichever
    # way its reference cube is laid on the element
    g = (1.0 + np.array([-1.0, 1.0]) / np.sqrt(3.0)) / 2.0
    points = np.array(np.meshgrid(g, g, g, indexing="ij")).reshape(3, -1)
    det = np.abs(mesh.mapping().detDF(points)) / 8.0
    report = meshaudit.audit(path, profile=_no_limits())
    np.testing.assert_allclose(report.metrics["det_j_min"], det.min(axis=1), rtol=1e-10)
    np.testing.assert_allclose(report.metrics["det_j_max"], det.max(axis=1), rtol=1e-10)
    assert not report.flag("inverted").any()


# -- one inverted tetrahedron -------------------------------------------------------------
def test_one_inverted_tet_fails_named_by_its_vtk_cell_index(tmp_path: Path, run_cli) -> None:
    # VTK's convention (common practice): a cell's id is its position among all cells of
    # the file from 0, lines included. Two line cells come first, so tetrahedron k is
    # cell 2 + k; tetrahedron 5 is listed mirrored (nodes 1 and 2 swapped: det J < 0).
    mesh = _oriented(MeshTet.init_tensor(*BLOCK))
    t = mesh.t.T.copy()
    t[5, [1, 2]] = t[5, [2, 1]]
    lines = np.array([[0, 1], [1, 2]])
    path = _write(meshio.Mesh(mesh.p.T, [("line", lines), ("tetra", t)]), tmp_path / "one.vtu")
    js, xml = tmp_path / "r.json", tmp_path / "r.xml"
    res = run_cli("check", path, "--json", js, "--junit", xml)
    assert res.returncode == 1, res.stdout[-3000:] + res.stderr
    doc = _json(js)
    failing = [e for e in doc["elements"] if e["verdict"] == "fail"]
    assert [e["id"] for e in failing] == [7]
    assert failing[0]["type"] == "tetra" and failing[0]["index"] == 5
    assert set(failing[0]["flags"]) >= {"inverted", "reversed"}
    assert failing[0]["metrics"]["volume"] < 0.0
    assert "not audited: 2 line" in res.stdout.strip().splitlines()[-1]
    case = ET.parse(xml).getroot().find(".//testcase[@name='no inverted elements']")
    assert case.find("failure") is not None and "ids: 7" in case.find("failure").text


# -- every format that holds solids ---------------------------------------------------------
def _solid_mesh(quadratic: bool) -> tuple[np.ndarray, list[tuple[str, np.ndarray]], list]:
    """Two line cells, then one element per solid type, laid side by side, with their
    closed-form volumes: the unit right tetrahedron 1/6; a 2 x 1 x 1 box 2; a right
    prism over a right triangle of legs 1, height 2: 1; a pyramid on a 2 x 2 base, height
    1: 4/3. Quadratic: a tetra10 twice the unit one (8/6) and a 2 x 1 x 1 hexahedron20,
    straight-sided (midside nodes at their edges' midpoints)."""
    points: list[list[float]] = []

    def add(nodes) -> list[int]:
        start = len(points)
        points.extend(np.asarray(nodes, dtype=float).tolist())
        return list(range(start, start + len(nodes)))

    cells = [
        ("tetra", [[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], 1.0 / 6.0),
        ("hexahedron", (CELL_TYPES["hexahedron"].reference_nodes + 1.0) / 2.0 * [2, 1, 1], 2.0),
        ("wedge", [[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 2], [1, 0, 2], [0, 1, 2]], 1.0),
        ("pyramid", [[0, 0, 0], [2, 0, 0], [2, 2, 0], [0, 2, 0], [1, 1, 1]], 4.0 / 3.0),
    ]
    if quadratic:
        cells = [
            ("tetra10", 2.0 * CELL_TYPES["tetra10"].reference_nodes, 8.0 / 6.0),
            (
                "hexahedron20",
                (CELL_TYPES["hexahedron20"].reference_nodes + 1.0) / 2.0 * [2, 1, 1],
                2.0,
            ),
        ]
    blocks, volumes = [], []
    for k, (cell_type, nodes, volume) in enumerate(cells):
        nodes = np.asarray(nodes, dtype=float) + np.array([3.0 * k, 0.0, 0.0])
        blocks.append((cell_type, np.array([add(nodes)])))
        volumes.append(volume)
    line = [("line", np.array([[0, 1], [1, 2]]))]
    return np.array(points), line + blocks, volumes


#: name -> (file name, meshio format, options, gmsh 4.1 entity tags, holds quadratic solids)
SOLID_FORMATS = {
    "gmsh22-ascii": ("m22a.msh", "gmsh22", {"binary": False}, False, True),
    "gmsh22-binary": ("m22b.msh", "gmsh22", {"binary": True}, False, True),
    "gmsh41-ascii": ("m41a.msh", "gmsh", {"binary": False}, True, True),
    "gmsh41-binary": ("m41b.msh", "gmsh", {"binary": True}, True, True),
    "vtu": ("m.vtu", "vtu", {}, False, True),
    "vtk-ascii": ("m_a.vtk", "vtk", {"binary": False}, False, True),
    "vtk-binary": ("m_b.vtk", "vtk", {"binary": True}, False, True),
    "xdmf": ("m.xdmf", "xdmf", {}, False, False),  # meshio reads back no tetra10
    "abaqus": ("m.inp", "abaqus", {}, False, True),
    "nastran": ("m.bdf", "nastran", {}, False, True),
    "med": ("m.med", "med", {}, False, True),
    "medit": ("m.mesh", "medit", {}, False, False),
}


def _with_gmsh41_tags(points: np.ndarray, cells: list) -> meshio.Mesh:
    """The entity tags meshio's gmsh 4.1 writer needs: one entity per block."""
    dim_tags = np.zeros((len(points), 2), dtype=int)
    for k, (_, data) in enumerate(cells[1:], start=1):
        dim_tags[data.ravel()] = (3, k)
    dim_tags[cells[0][1].ravel()] = (1, 1)
    geometrical = [np.ones(len(cells[0][1]), int)] + [np.full(1, k) for k in range(1, len(cells))]
    return meshio.Mesh(
        points,
        cells,
        point_data={"gmsh:dim_tags": dim_tags},
        cell_data={
            "gmsh:physical": [np.full(len(c), k + 1) for k, (_, c) in enumerate(cells)],
            "gmsh:geometrical": geometrical,
        },
    )


def _numbers_in_text(path: Path, name: str) -> list[int] | None:
    """The element numbers the file itself gives its solids, from its text (gmsh 2.2
    ASCII: 'tag type ...' per line, types 4-7, 11, 17 the solids; Abaqus: the label
    opening each data line of an *ELEMENT section of a solid type, C3D...; Nastran: the
    second 8-column field of the CTETRA, CHEXA, CPENTA and CPYRA cards, the quadratic ones
    written with a trailing underscore by meshio), or None for a format whose numbers are
    positions."""
    text = path.read_text(errors="replace") if name in ("gmsh22-ascii", "abaqus", "nastran") else ""
    if name == "gmsh22-ascii":
        rows = text.split("$Elements\n")[1].split("$EndElements")[0].splitlines()[1:]
        return [int(r.split()[0]) for r in rows if r.split()[1] in ("4", "5", "6", "7", "11", "17")]
    if name == "abaqus":
        labels, keep = [], False
        for line in text.splitlines():
            if line.startswith("*"):
                keep = line.upper().startswith("*ELEMENT") and "TYPE=C3D" in line.upper()
            elif keep and line.strip():
                labels.append(int(line.split(",")[0]))
        return labels
    if name == "nastran":
        cards = ("CTETRA", "CHEXA", "CPENTA", "CPYRA")
        return [int(ln[8:16]) for ln in text.splitlines() if ln[:8].strip(" _") in cards]
    return None


@pytest.mark.parametrize("quadratic", [False, True], ids=["linear", "quadratic"])
@pytest.mark.parametrize("name", list(SOLID_FORMATS))
def test_every_format_that_holds_solids(tmp_path: Path, name: str, quadratic: bool) -> None:
    file_name, fmt, options, gmsh41, holds_quadratic = SOLID_FORMATS[name]
    if quadratic and not holds_quadratic:
        pytest.skip(f"{name}: meshio does not keep quadratic solids in this format")
    points, cells, volumes = _solid_mesh(quadratic)
    if name == "abaqus" and not quadratic:  # meshio's Abaqus writer has no pyramid
        cells, volumes = cells[:-1], volumes[:-1]
    mesh = _with_gmsh41_tags(points, cells) if gmsh41 else meshio.Mesh(points, cells)
    path = _write(mesh, tmp_path / file_name, file_format=fmt, **options)
    report = meshaudit.audit(path)
    types = [c for c, _ in cells[1:]]
    # a .med file groups its cells by type name, so compare by type
    by_type = dict(zip(report.types.tolist(), report.metrics["volume"].tolist()))
    assert sorted(by_type) == sorted(types)
    for cell_type, volume in zip(types, volumes):
        assert by_type[cell_type] == pytest.approx(volume, rel=1e-12), cell_type
    assert report.verdict_counts()["ok"] == len(types)
    assert not report.flag_counts()  # no element mirrored or folded by a node order
    if quadratic:  # straight-sided: every midside node at its edge's midpoint
        np.testing.assert_allclose(report.metrics["midside_offset_along"], 0.0, atol=1e-12)
    # per-element numbers as the file numbers them (see the README's table)
    if name in ("vtu", "vtk-ascii", "vtk-binary", "xdmf"):
        assert report.ids.tolist() == list(range(2, 2 + len(types)))
    elif name == "medit":
        assert report.ids.tolist() == list(range(3, 3 + len(types)))
    elif name.startswith("gmsh"):
        ascii_twin = tmp_path / "twin.msh"
        _write(meshio.Mesh(points, cells), ascii_twin, file_format="gmsh22", binary=False)
        assert report.ids.tolist() == _numbers_in_text(ascii_twin, "gmsh22-ascii")
        assert report.summary.element_numbers == "gmsh element tags"
    elif name in ("abaqus", "nastran"):
        assert report.ids.tolist() == _numbers_in_text(path, name)
    assert len(set(report.ids.tolist())) == len(types)


# -- the bracket lug samples, a mixed mesh -----------------------------------------------
def test_lug_sample_passes_with_closed_form_volumes() -> None:
    # Closed forms: the 10 x 10 x 5 hexahedra have volume 500 and det J = 10 x 10 x 5 / 8
    # everywhere (reference cube [-1, 1]^3); the fillet's wedges are right prisms over
    # triangles of legs 10 and 10, 10 long: 500.
    report = meshaudit.audit(SAMPLES / "bracket_lug.vtu")
    assert report.passed and report.verdict_counts() == {"ok": 64, "warn": 0, "fail": 0}
    assert report.summary.family_counts() == {"hexahedron": 48, "wedge": 16}
    np.testing.assert_allclose(report.metrics["volume"], 500.0, rtol=1e-12)
    hexes = report.types == "hexahedron"
    np.testing.assert_allclose(report.metrics["det_j_min"][hexes], 62.5, rtol=1e-12)
    assert report.metrics["volume"].sum() == pytest.approx(60 * 40 * 10 + 0.5 * 20 * 20 * 40)
    assert not report.findings


def test_lug_defects_without_shape_limits_fail_on_the_inverted_hexahedron_only() -> None:
    # The planted defects (samples/make_solid_samples.py): hexahedron 46 has a top corner
    # pulled below its own bottom face: det J there is det[a, b, c] / 8 of the corner's
    # three edges (10, 0, 0), (0, 10, 0) and (0, 0, -12)... negative; hexahedron 5 and
    # wedge 48 are valid, and fail only under limits on the solids' shape metrics.
    report = meshaudit.audit(SAMPLES / "bracket_lug_defects.vtu", profile=_no_limits())
    failing = report.ids[report.failing].tolist()
    assert failing == [46]
    i = report.position_of(46)
    assert report.flag("inverted")[i] and report.metrics["det_j_corner_min"][i] < 0.0
    for other in (5, 48):
        j = report.position_of(other)
        assert report.flags_of(j) == [] and report.verdict_names[j] == "ok"
    # corner (60, 0, 0) moved 15 along x: V = the integral of det J over [-1, 1]^3, with
    # det J = (5 + 15 dN/dxi) x 5 x 2.5 (half-sizes 5, 5, 2.5; N the moved corner's
    # shape function, whose xi-derivative integrates to 1): 500 + 15 x 5 x 2.5
    sheared = report.position_of(5)
    assert report.metrics["volume"][sheared] == pytest.approx(500.0 + 15.0 * 5.0 * 2.5)


def test_lug_defects_under_the_standard_limits_fail_on_all_three() -> None:
    # Closed forms of the planted shapes (samples/make_solid_samples.py): hexahedron 5's
    # face y = 0 has the corner (60, 0, 0) moved to (75, 0, 0) on a 5 high layer, so its
    # angle there is atan(5 / 15) = 18.43 deg, past the hexahedron's min_angle fail limit
    # (30 deg); wedge 48's top node dropped to 0.5 above the block over a 10 long edge
    # gives a face angle of atan(0.5 / 10) = 2.86 deg (fail limit 15 deg).
    report = meshaudit.audit(SAMPLES / "bracket_lug_defects.vtu")
    assert not report.passed
    assert sorted(report.ids[report.failing].tolist()) == [5, 46, 48]
    assert report.verdict_counts() == {"ok": 61, "warn": 0, "fail": 3}
    sheared, sliver = report.position_of(5), report.position_of(48)
    assert report.metrics["min_angle"][sheared] == pytest.approx(np.degrees(np.arctan(5 / 15)))
    assert report.metrics["min_angle"][sliver] == pytest.approx(np.degrees(np.arctan(0.5 / 10)))
    limits = meshaudit.BUILTIN_PROFILES["standard"].limits
    assert report.metrics["min_angle"][sheared] < limits["hexahedron"]["min_angle"].fail
    assert report.metrics["min_angle"][sliver] < limits["wedge"]["min_angle"].fail


def _lug_with_skin(skin_duplicate: bool = False) -> meshio.Mesh:
    """The lug sample plus a skin of shell triangles on its bottom face z = 0 (two per
    hexahedron face, sharing the solids' nodes), listed first."""
    lug = meshio.read(SAMPLES / "bracket_lug.vtu")
    hexes = lug.cells_dict["hexahedron"]
    bottom = hexes[lug.points[hexes[:, 0], 2] == 0.0][:, :4]  # faces 0 1 2 3 on z = 0
    skin = np.vstack([bottom[:, [0, 2, 1]], bottom[:, [0, 3, 2]]])  # facing -z: outward
    if skin_duplicate:
        skin = np.vstack([skin, skin[[3]]])
    cells = [("triangle", skin), ("hexahedron", hexes), ("wedge", lug.cells_dict["wedge"])]
    return meshio.Mesh(lug.points, cells)


def test_mixed_mesh_solids_and_a_shell_skin_are_both_audited(tmp_path: Path) -> None:
    mesh = _lug_with_skin()
    report = meshaudit.audit(mesh)
    assert report.summary.family_counts() == {"triangle": 48, "hexahedron": 48, "wedge": 16}
    assert report.passed, [f.message for f in report.findings]
    # the skin lies in z = 0 facing -z (outward of the block): beside solids it is no
    # 2-D model, so it is judged between neighbours, not against +z
    assert report.summary.frame == "planar" and report.summary.orientation == "relative"
    assert not report.flag("reversed").any()
    # the skin's own checks: one outer free-edge loop round the 60 x 40 face (perimeter
    # 200, closed form), no non-manifold edge although every inner edge of the hexahedra
    # is shared by four of them, no orphan node although the skin uses a third of them
    free = report.free_edges
    assert free.n_loops == 1 and free.loop_length[0] == pytest.approx(200.0)
    # the one finding: the 48 triangles lie on the hexahedra's bottom faces, on three of
    # each face's four corners (a skin sharing the solids' nodes: information)
    (on_faces,) = report.findings
    assert on_faces.kind == "shells_on_solid_faces" and on_faces.severity == "info"
    assert on_faces.count == 48 and sorted(on_faces.element_index.tolist()) == list(range(48))
    # the same skin alone gives the same loop; alone, it is a 2-D model in x-y, whose
    # triangles a 2-D solver sees clockwise: all reversed (and the solids' nodes orphans)
    skin = meshio.Mesh(mesh.points, [mesh.cells[0]])
    alone = meshaudit.audit(skin)
    assert alone.free_edges.n_loops == 1 and alone.free_edges.loop_length[0] == pytest.approx(200)
    assert {f.kind for f in alone.findings} == {"orphan_nodes", "inconsistent_winding"}
    assert alone.flag("reversed").all()


def test_mixed_mesh_shell_defect_found_solids_not_named(tmp_path: Path, run_cli) -> None:
    path = _write(_lug_with_skin(skin_duplicate=True), tmp_path / "lug_skin.vtu")
    js = tmp_path / "r.json"
    res = run_cli("check", path, "--json", js)
    assert res.returncode == 1, res.stdout[-3000:] + res.stderr
    doc = _json(js)
    (dup,) = [f for f in doc["findings"] if f["kind"] == "duplicate_elements"]
    assert dup["pairs"] == [[3, 48]]  # VTK cell index: the 49th triangle repeats the 4th
    # no finding names a solid (cells 49 and on), though every inner edge of the
    # hexahedra is shared by four of them
    named = {i for f in doc["findings"] for i in f["element_ids"]}
    assert named and max(named) <= 48
    assert "non_manifold_edges" not in {f["kind"] for f in doc["findings"]}


# -- a solid-only mesh -----------------------------------------------------------------------
def test_solid_only_mesh_orphans_and_nothing_surface(tmp_path: Path) -> None:
    lug = meshio.read(SAMPLES / "bracket_lug.vtu")
    points = np.vstack([lug.points, [[100.0, 100.0, 100.0]]])  # one node no cell uses
    report = meshaudit.audit(meshio.Mesh(points, lug.cells))
    assert report.summary.frame == "solid"
    assert "solid" in report.summary.geometry_text()
    found = {f.kind: f for f in report.findings}
    assert set(found) == {"orphan_nodes"}
    assert found["orphan_nodes"].node_ids.tolist() == [len(points) - 1]
    assert report.free_edges is None or report.free_edges.n_loops == 0


# -- limits a profile gives a solid family are applied ---------------------------------------
def test_user_limits_on_a_solid_family_are_judged(tmp_path: Path, run_cli) -> None:
    # Robinson's principal axes carried to three axes: a 30 x 10 x 5 box reads 6, a
    # 10 x 10 x 5 box 2 (closed form: longest over shortest half-axis).
    boxes = [(10.0, 10.0, 5.0), (30.0, 10.0, 5.0), (20.0, 10.0, 5.0)]
    ref = (CELL_TYPES["hexahedron"].reference_nodes + 1.0) / 2.0
    points = np.vstack([ref * size + [40.0 * k, 0.0, 0.0] for k, size in enumerate(boxes)])
    path = _write(
        meshio.Mesh(points, [("hexahedron", np.arange(24).reshape(3, 8))]), tmp_path / "b.vtu"
    )
    profile = tmp_path / "boxes.toml"
    profile.write_text(
        'extends = "standard"\n[hexahedron]\n'
        'aspect_ratio = { warn = 3, fail = 5, source = "bracket lug project rule" }\n'
    )
    xml, js = tmp_path / "r.xml", tmp_path / "r.json"
    res = run_cli("check", path, "--profile", profile, "--junit", xml, "--json", js)
    assert res.returncode == 1, res.stdout[-3000:] + res.stderr
    doc = _json(js)
    verdicts = {e["id"]: e["verdict"] for e in doc["elements"]}
    assert verdicts == {1: "fail", 2: "warn"}
    assert doc["elements"][1]["breaches"]["aspect_ratio"]["value"] == pytest.approx(4.0)
    root = ET.parse(xml).getroot()
    case = root.find(".//testcase[@name='hexahedron aspect_ratio <= 5 (fail limit)']")
    assert case.get("classname") == "meshaudit.hexahedron"
    assert "worst ids: 1" in case.find("failure").text


def test_quarter_point_tetra10_is_capped_at_warn(tmp_path: Path) -> None:
    # det J at corner 0 of a tetra10 whose midside node on edge 0-1 sits at a fraction s
    # of the edge is 4 s - 1 (closed form; s = 1/4 the quarter point, det J 0 there).
    # Under a profile limiting det_j_lower_bound (warn 0.5, fail 0.3) the quarter-point
    # element warns (its twin, the node back at the midpoint, reads 1), the element with
    # s = 0.3 (det J 0.2 at the corner, no quarter point) fails.
    ref = CELL_TYPES["tetra10"].reference_nodes
    elements = []
    for k, s in enumerate((0.25, 0.3, 0.5)):
        nodes = ref.copy()
        nodes[4] = [s, 0.0, 0.0]
        elements.append(nodes + np.array([3.0 * k, 0.0, 0.0]))
    points = np.vstack(elements)
    mesh = meshio.Mesh(points, [("tetra10", np.arange(30).reshape(3, 10))])
    limits = {"det_j_lower_bound": meshaudit.Limit(0.5, 0.3, source="test")}
    profile = meshaudit.Profile("tip", "det J bound", {"tetra": limits})
    report = meshaudit.audit(mesh, profile=profile)
    assert report.flag("quarter_point").tolist() == [True, False, False]
    assert report.verdict_names.tolist() == ["warn", "fail", "ok"]
    np.testing.assert_allclose(report.metrics["det_j_corner_min"][:2], [0.0, 0.2], atol=1e-12)


# -- outputs on solids ------------------------------------------------------------------------
def test_explain_a_solid_prints_det_j_at_gauss_points_and_nodes(tmp_path: Path, run_cli) -> None:
    sample = tmp_path / "lug.vtu"
    shutil.copy(SAMPLES / "bracket_lug.vtu", sample)
    js, png = tmp_path / "e.json", tmp_path / "e.png"
    res = run_cli("explain", sample, "0", "--json", js, "--plot", png)
    assert res.returncode == 0, res.stdout[-3000:] + res.stderr
    doc = _json(js)
    assert doc["type"] == "hexahedron" and doc["measured_in"] == "space"
    # a 10 x 10 x 5 box: det J = 10 x 10 x 5 / 8 at every Gauss point and node
    assert len(doc["gauss_points"]) == 8 and {"xi", "eta", "zeta"} <= set(doc["gauss_points"][0])
    assert all(g["det_j"] == pytest.approx(62.5) for g in doc["gauss_points"])
    assert all(n["det_j"] == pytest.approx(62.5) for n in doc["det_j_nodes"])
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "zeta" in res.stdout and "62.5" in res.stdout


def test_explain_the_inverted_hexahedron_names_its_negative_corner(run_cli) -> None:
    res = run_cli("explain", SAMPLES / "bracket_lug_defects.vtu", "46")
    assert res.returncode == 1, res.stdout[-3000:] + res.stderr
    assert "inverted: det J is negative at node" in " ".join(res.stdout.split())


def test_annotated_mesh_carries_the_solids_cell_data(tmp_path: Path, run_cli) -> None:
    out = tmp_path / "lug_annotated.vtu"
    res = run_cli("check", SAMPLES / "bracket_lug_defects.vtu", "--annotate", out)
    assert res.returncode == 1
    back = meshio.read(out)
    assert [c.type for c in back.cells] == ["hexahedron", "wedge"]
    volume = back.cell_data["volume"]
    np.testing.assert_allclose(volume[1][1:], 500.0)  # the wedges but the planted sliver
    assert back.cell_data["verdict"][0][46] == 2 and back.cell_data["flag_inverted"][0][46] == 1
    assert back.cell_data["element_id"][1].tolist() == list(range(48, 64))
