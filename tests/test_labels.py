"""Element and node numbers as the file numbers them, in every report.

The references are the hand-numbered files of tests/label_files.py (gmsh 2.2 and 4.1,
ASCII and binary) and the hand-written Abaqus, Nastran and VTU files below: the numbers
written into each file are what the reports must show. For files without labels the
reference is the format's own counting convention, stated beside each check.
"""

from __future__ import annotations

import csv
import json
import re
import xml.etree.ElementTree as ET

import meshio
import numpy as np
import pytest
from label_files import (
    AUDITED_TAGS,
    COINCIDENT_PAIRS,
    NODE_TAGS,
    REVERSED_TAG,
    cut_mesh,
    gmsh22_ascii,
    gmsh41_ascii,
    gmsh41_binary,
    nastran_card,
    reversed_nodes,
    write_gmsh,
)

import meshaudit
from meshaudit import audit_mesh, explain
from meshaudit.mesh.labels import for_memory
from meshaudit.mesh.labels.common import FileLabels, LabelBlock, LabelsUnavailable, check_alignment

GMSH_VARIANTS = ["22a", "22b", "41a", "41b"]
#: Cells sharing a node with the reversed cell (2, 0) of the web corner: (1, 0), (1, 1)
#: and (2, 1), by the grid's construction (tests/label_files.py).
REVERSED_NEIGHBOURS = [395, 398, 399]


# -- gmsh -----------------------------------------------------------------------------
@pytest.mark.parametrize("variant", GMSH_VARIANTS)
def test_gmsh_tags_are_the_ids_through_the_api(tmp_path, variant):
    report = meshaudit.audit(write_gmsh(tmp_path, variant))
    assert report.ids.tolist() == AUDITED_TAGS
    assert report.ids[report.flag("reversed")].tolist() == [REVERSED_TAG]
    assert report.index[report.flag("reversed")].tolist() == [2]  # read order, from 0
    assert report.summary.element_numbers == "gmsh element tags"
    assert report.summary.node_numbers == "gmsh node tags"
    assert report.notes == []


@pytest.mark.parametrize("writer", [gmsh22_ascii, gmsh41_ascii])
def test_gmsh_ascii_with_crlf_line_ends(tmp_path, writer):
    path = tmp_path / "crlf.msh"
    path.write_bytes(writer().replace("\n", "\r\n").encode())
    report = meshaudit.audit(path)
    assert report.ids.tolist() == AUDITED_TAGS and report.notes == []


@pytest.mark.parametrize("variant", GMSH_VARIANTS)
def test_reversed_quad_carries_its_tag_in_every_report(tmp_path, run_cli, variant):
    path = write_gmsh(tmp_path, variant)
    out = {k: tmp_path / f"r.{k}" for k in ("json", "csv", "xml")}
    done = run_cli("check", path, "--json", out["json"], "--csv", out["csv"], "--junit", out["xml"])
    assert done.returncode == 1, done.stderr
    doc = json.loads(out["json"].read_text())
    assert doc["summary"]["numbering"] == {
        "elements": "gmsh element tags",
        "nodes": "gmsh node tags",
    }
    (rec,) = [r for r in doc["elements"] if "reversed" in r["flags"]]
    assert (rec["id"], rec["index"], rec["verdict"]) == (REVERSED_TAG, 2, "fail")
    rows = list(csv.DictReader(out["csv"].open()))
    assert [int(r["id"]) for r in rows] == AUDITED_TAGS
    (row,) = [r for r in rows if "reversed" in r["flags"]]
    assert (row["id"], row["index"]) == (str(REVERSED_TAG), "2")
    root = ET.parse(out["xml"]).getroot()
    case = root.find(".//testcase[@name='no inverted elements']")
    assert re.search(rf"ids: {REVERSED_TAG}\b", case.find("failure").get("message"))
    # terminal: the worst-elements table lists the tag, the summary names the numbering
    worst = [ln for ln in done.stdout.splitlines() if "reversed" in ln and "│" in ln]
    assert worst and worst[0].split("│")[1].strip() == str(REVERSED_TAG)
    assert "gmsh element tags" in done.stdout and "gmsh node tags" in done.stdout


@pytest.mark.parametrize("variant", GMSH_VARIANTS)
def test_explain_finds_the_element_by_its_tag_and_prints_node_tags(tmp_path, run_cli, variant):
    path = write_gmsh(tmp_path, variant)
    done = run_cli("explain", path, str(REVERSED_TAG), "--json", tmp_path / "e.json")
    assert done.returncode == 1, done.stderr  # the reversed quad fails
    doc = json.loads((tmp_path / "e.json").read_text())
    assert (doc["id"], doc["index"]) == (REVERSED_TAG, 2)
    assert [n["node"] for n in doc["nodes"]] == reversed_nodes(variant)
    assert [n["node"] for n in doc["det_j_nodes"]] == reversed_nodes(variant)
    assert sorted(doc["neighbours"]) == REVERSED_NEIGHBOURS
    assert doc["numbering"]["nodes"] == "gmsh node tags"
    for tag in reversed_nodes(variant):
        assert re.search(rf"│\s*{tag}\s*│", done.stdout)  # the nodes table
    assert "neighbours (share a node): 395, 398, 399" in done.stdout
    # position 3 of the audited elements is no tag of this file: not found
    missing = run_cli("explain", path, "3")
    assert missing.returncode == 2 and "no element with id 3" in missing.stderr


def test_plot_html_and_annotated_mesh_use_the_tags(tmp_path, run_cli):
    path = write_gmsh(tmp_path, "41b")
    svg, html, vtu = tmp_path / "p.svg", tmp_path / "r.html", tmp_path / "a.vtu"
    done = run_cli("check", path, "--plot", svg, "--html", html, "--annotate", vtu, "--quiet")
    assert done.returncode == 1, done.stderr
    labelled = {int(m) for m in re.findall(rb'id="fail-id-(\d+)"', svg.read_bytes())}
    assert labelled == {REVERSED_TAG}
    page = html.read_text()
    assert f">{REVERSED_TAG}<" in page and "<dd>gmsh element tags</dd>" in page
    back = meshio.read(vtu)
    quads = [np.asarray(d) for c, d in zip(back.cells, back.cell_data["element_id"])]
    audited = [ids for ids, c in zip(quads, back.cells) if c.type in ("quad", "triangle")]
    assert np.concatenate(audited).tolist() == AUDITED_TAGS
    # the element figure labels its nodes by their tags
    from meshaudit.outputs import explain_plot

    audited = audit_mesh(path)
    fig = explain_plot.draw(audited, explain(audited, REVERSED_TAG))
    texts = " ".join(t.get_text() for ax in fig.axes for t in ax.texts)
    for tag in reversed_nodes("41b"):
        assert f"node {tag}" in texts


@pytest.mark.parametrize("writer", [gmsh22_ascii, gmsh41_ascii, gmsh41_binary])
def test_coincident_nodes_are_reported_by_their_gmsh_tags(tmp_path, writer):
    tags, xy, elements = cut_mesh()
    text = writer(tags, xy, elements)
    path = tmp_path / "cut.msh"
    path.write_bytes(text if isinstance(text, bytes) else text.encode())
    report = meshaudit.audit(path)
    found = {f.kind: f for f in report.findings}
    pairs = found["coincident_nodes"]
    # three places of two nodes each: one (representative, other node) pair per place,
    # the representative the node read first (the original, before its copy)
    assert pairs.count == 3
    assert sorted(map(tuple, pairs.pairs.tolist())) == COINCIDENT_PAIRS
    assert sorted(pairs.node_ids.tolist()) == sorted(v for p in COINCIDENT_PAIRS for v in p)
    assert "324" in pairs.message and "501" in pairs.message
    # the cut runs along x = 20 between y = 0 and 20: two free edges on each side
    crack = found["crack_edges"]
    assert sorted(map(tuple, np.sort(crack.edges, axis=1).tolist())) == [
        (324, 342),
        (342, 376),
        (501, 502),
        (502, 503),
    ]
    assert sorted(crack.element_ids.tolist()) == [395, 396, 398, 399]
    # drawing arrays stay plain: coordinates of the nodes involved
    np.testing.assert_allclose(np.sort(pairs.node_xyz[:, 0]), [20.0] * 6)


def test_gmsh_format_4_0_falls_back_to_positions_with_a_note(tmp_path, run_cli):
    from meshio.gmsh.main import write

    read = meshio.read(write_gmsh(tmp_path, "41a"))
    path = tmp_path / "web_40.msh"
    write(str(path), meshio.Mesh(read.points, read.cells), fmt_version="4.0", binary=False)
    assert path.read_text().split("\n")[1].startswith("4.0")
    report = meshaudit.audit(path)
    # 10 lines first: the audited elements are cells 11..17 of the file, from 1
    assert report.ids.tolist() == list(range(11, 18))
    assert report.summary.element_numbers.startswith("position among all cells read, from 1")
    (note,) = report.notes
    assert "gmsh format 4.0" in note
    done = run_cli("check", path, "--json", tmp_path / "r.json", "--quiet")
    assert done.returncode == 1, done.stderr
    assert json.loads((tmp_path / "r.json").read_text())["notes"] == [note]


def test_labels_that_do_not_line_up_are_refused():
    # By construction: a block whose node labels are listed one node off.
    mesh = meshio.Mesh(np.zeros((4, 2)), [("quad", [[0, 1, 2, 3]])])
    nodes = np.array([10, 20, 30, 40])
    right = LabelBlock("quad", np.array([7]), lambda rows: np.array([[10, 20, 30, 40]])[rows])
    check_alignment(mesh, FileLabels([right], nodes))
    wrong = LabelBlock("quad", np.array([7]), lambda rows: np.array([[20, 30, 40, 50]])[rows])
    with pytest.raises(LabelsUnavailable):
        check_alignment(mesh, FileLabels([wrong], nodes))
    short = LabelBlock("quad", np.array([7, 8]), right.nodes_of)
    with pytest.raises(LabelsUnavailable):
        check_alignment(mesh, FileLabels([short], nodes))


def test_repeated_tags_are_noted(tmp_path):
    # By construction: two quads both tagged 394.
    text = gmsh22_ascii().replace("\n395 3 2 1 1", "\n394 3 2 1 1")
    path = tmp_path / "twice.msh"
    path.write_text(text)
    report = meshaudit.audit(path)
    assert report.ids.tolist()[:2] == [394, 394]
    assert any("repeat (394)" in note for note in report.notes)


# -- Abaqus ---------------------------------------------------------------------------
ABAQUS = """*HEADING
bracket plate web corner, labels chosen by hand
** nodes: labels from 1001 with gaps
*NODE
1001, 0.0, 0.0
1003, 10.0, 0.0
1004, 20.0, 0.0
1007, 0.0, 10.0
1010, 10.0, 10.0
1011, 20.0, 10.0
*ELEMENT, TYPE=T2D2, ELSET=EDGE
9001, 1001, 1003
9002, 1003, 1004
*ELEMENT, TYPE=CPS4, ELSET=WEB
5001, 1001, 1007, 1010, 1003
5002, 1003, 1004,
 1011, 1010
*END STEP
"""
# 5001 runs clockwise (reversed); 5002 is counter-clockwise, its record continued on a
# second line (Abaqus input format: a data line ending in a comma continues).


@pytest.mark.parametrize("newline", ["\n", "\r\n"])
def test_abaqus_labels_from_5001_and_explain(tmp_path, run_cli, newline):
    path = tmp_path / "web.inp"
    path.write_bytes(ABAQUS.replace("\n", newline).encode())
    report = meshaudit.audit(path)
    assert report.ids.tolist() == [5001, 5002]
    assert report.ids[report.flag("reversed")].tolist() == [5001]
    assert report.summary.node_numbers == "Abaqus node labels"
    done = run_cli("explain", path, "5001", "--json", tmp_path / "e.json")
    assert done.returncode == 1, done.stderr
    doc = json.loads((tmp_path / "e.json").read_text())
    assert [n["node"] for n in doc["nodes"]] == [1001, 1007, 1010, 1003]
    assert doc["neighbours"] == [5002]
    for label in (1001, 1007, 1010, 1003):
        assert re.search(rf"│\s*{label}\s*│", done.stdout)


def test_abaqus_with_include_falls_back_with_a_note(tmp_path):
    # meshio appends the cells of a self-contained included file after the main file's;
    # the label pass reads one file only, so the numbers are positions, and a note says so.
    extra = "*NODE\n1, 30.0, 0.0\n2, 40.0, 0.0\n3, 40.0, 10.0\n4, 30.0, 10.0\n"
    extra += "*ELEMENT, TYPE=CPS4\n1, 1, 2, 3, 4\n"
    (tmp_path / "flange.inp").write_text(extra)
    path = tmp_path / "main.inp"
    path.write_text(ABAQUS.replace("*END STEP", "*INCLUDE, INPUT=flange.inp"))
    report = meshaudit.audit(path)
    # cells in order: 2 lines, 2 quads, the included quad; positions from 1
    assert report.ids.tolist() == [3, 4, 5]
    assert report.summary.element_numbers.startswith("position among all cells read, from 1")
    assert any("*INCLUDE" in note for note in report.notes)


# -- Nastran --------------------------------------------------------------------------
NASTRAN = "\n".join(
    [
        "$ bracket plate web corner, GRID ids chosen by hand",
        "BEGIN BULK",
        nastran_card("GRID", 101, "", "0.0", "0.0", "0.0"),
        nastran_card("GRID", 205, "", "10.0", "0.0", "0.0"),
        nastran_card("GRID", 307, "", "10.0", "10.0", "0.0"),
        nastran_card("GRID", 411, "", "0.0", "10.0", "0.0"),
        nastran_card("GRID", 999, "", "50.0", "50.0", "0.0"),  # used by no element
        nastran_card("CQUAD4", 71, 1, 101, 411, 307, 205),  # clockwise: reversed
        "ENDDATA",
        "",
    ]
)


def test_nastran_grid_ids_in_findings_and_explain(tmp_path):
    path = tmp_path / "web.bdf"
    path.write_text(NASTRAN)
    audited = audit_mesh(path)
    report = audited.report
    assert report.ids.tolist() == [71]
    assert report.summary.node_numbers == "Nastran GRID ids"
    orphans = next(f for f in report.findings if f.kind == "orphan_nodes")
    assert orphans.node_ids.tolist() == [999] and "999" in orphans.message
    ex = explain(audited, 71)
    assert ex.node_numbers.tolist() == [101, 411, 307, 205]
    assert "node 101" in ex.flag_reasons["inverted"]


# -- VTK and memory -------------------------------------------------------------------
def test_vtu_with_cells_meshio_skips_is_numbered_by_position_with_a_note(tmp_path):
    # By construction: a poly-vertex cell (VTK type 2, which meshio does not read) before
    # a quad; meshio skips it, so the quad's VTK cell index (1) cannot be known from what
    # meshio read: positions among the cells read, and a note.
    path = tmp_path / "skipped.vtu"
    path.write_text(
        '<?xml version="1.0"?><VTKFile type="UnstructuredGrid" version="0.1">'
        '<UnstructuredGrid><Piece NumberOfPoints="5" NumberOfCells="2"><Points>'
        '<DataArray type="Float64" NumberOfComponents="3" format="ascii">'
        "0 0 0 1 0 0 1 1 0 0 1 0 2 0 0</DataArray></Points><Cells>"
        '<DataArray type="Int64" Name="connectivity" format="ascii">0 4 0 1 2 3</DataArray>'
        '<DataArray type="Int64" Name="offsets" format="ascii">2 6</DataArray>'
        '<DataArray type="UInt8" Name="types" format="ascii">2 9</DataArray>'
        "</Cells></Piece></UnstructuredGrid></VTKFile>"
    )
    report = meshaudit.audit(path)
    assert report.ids.tolist() == [1]
    assert report.summary.element_numbers.startswith("position among all cells read, from 1")
    (note,) = report.notes
    assert "skipped cells it cannot handle" in note


def test_vtu_counts_vertex_and_line_cells_before_the_quads(tmp_path, run_cli):
    pts = np.array([[x, y] for y in (0.0, 1.0) for x in (0.0, 1.0, 2.0, 3.0)])
    quads = np.array([[0, 1, 5, 4], [1, 2, 6, 5], [2, 6, 7, 3]])  # the last is clockwise
    cells = [("vertex", [[0]]), ("line", [[0, 1], [1, 2]]), ("quad", quads)]
    path = tmp_path / "web.vtu"
    meshio.write(path, meshio.Mesh(pts, cells), binary=False)
    # Reference: the file's own cell type list (VTK codes 1 vertex, 3 line, 9 quad); a
    # cell's VTK id is its position in that list, from 0.
    text = path.read_text()
    types = re.search(r'Name="types"[^>]*>([^<]*)<', text).group(1).split()
    quad_ids = [k for k, t in enumerate(types) if t == "9"]
    report = meshaudit.audit(path)
    assert report.ids.tolist() == quad_ids == [3, 4, 5]
    assert report.ids[report.flag("reversed")].tolist() == [5]
    done = run_cli("explain", path, "5", "--json", tmp_path / "e.json")
    assert done.returncode == 1, done.stderr
    doc = json.loads((tmp_path / "e.json").read_text())
    assert [n["node"] for n in doc["nodes"]] == [2, 6, 7, 3]  # VTK point ids, from 0


def test_memory_mesh_numbers_cells_from_0_over_all_blocks():
    pts = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0], [2.0, 0.0]])
    mesh = meshio.Mesh(
        pts, [("line", [[0, 1]]), ("quad", [[0, 1, 2, 3]]), ("triangle", [[1, 4, 2]])]
    )
    report = meshaudit.audit(mesh)
    assert report.ids.tolist() == [1, 2]  # the line is cell 0
    assert report.summary.element_numbers.startswith("position among all cells of the mesh")
    # meshio's own label attributes are kept when a mesh carries them
    mesh.cells_id = [np.array([7]), np.array([70]), np.array([700])]
    mesh.points_id = np.array([11, 12, 13, 14, 15])
    numbering = for_memory(mesh)
    assert meshaudit.audit(mesh).ids.tolist() == [70, 700]
    assert numbering.node_numbers(np.array([0, 4])).tolist() == [11, 15]


def test_node_tags_start_at_321_with_gaps_in_every_text_variant(tmp_path):
    # The node numbers a report can show are exactly the file's tags.
    for variant in ("22a", "41a", "41b"):
        audited = audit_mesh(write_gmsh(tmp_path, variant))
        numbers = audited.elements.numbering.node_numbers(np.arange(len(NODE_TAGS)))
        assert numbers.tolist() == NODE_TAGS
