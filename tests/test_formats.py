"""Reading every format the tool promises, through the API and the command line.

The mesh is written with meshio (the reference writer for each format) from analytic
shapes (see tests/io_meshes.py), so the expected areas, angles and Jacobians come from
plane geometry. Every format must give the same elements with the same metrics.
"""

from __future__ import annotations

import csv
import io
import shutil
from pathlib import Path

import meshio
import numpy as np
import pytest
from io_meshes import EXPECTED, EXPECTED_TYPES, FORMATS, N_LINES, write_format
from label_files import nastran_card

import meshaudit
from meshaudit.cli import main


@pytest.fixture(scope="module")
def written(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """The mixed mesh written once in every format."""
    directory = tmp_path_factory.mktemp("formats")
    return {name: write_format(directory, name) for name in FORMATS}


def _in_file_order(report: meshaudit.Report, metric: str) -> dict[str, list[float]]:
    """Values of ``metric`` per cell type, in read order within the type.

    Writers may reorder whole blocks (MED groups cells by type), never cells in a block.
    """
    types = report.types
    return {t: report.metrics[metric][types == t].tolist() for t in ("quad", "triangle")}


def _expected_by_type(metric: str) -> dict[str, list[float]]:
    values = np.asarray(EXPECTED[metric])
    types = np.asarray(EXPECTED_TYPES)
    return {t: values[types == t].tolist() for t in ("quad", "triangle")}


def test_writers_made_the_promised_variants(written: dict[str, Path]) -> None:
    """Guard the fixture: the gmsh files carry the version and encoding we claim.

    Source: the gmsh file header '$MeshFormat / version file-type data-size', where
    file-type 0 is ASCII and 1 binary (gmsh file format documentation, common practice).
    """
    for name, version, binary in (
        ("gmsh22-ascii", "2.2", 0),
        ("gmsh22-binary", "2.2", 1),
        ("gmsh41-ascii", "4.1", 0),
        ("gmsh41-binary", "4.1", 1),
    ):
        header = written[name].read_bytes()[:40].split(b"\n")
        assert header[0] == b"$MeshFormat"
        assert header[1].split()[:2] == [version.encode(), str(binary).encode()]
    assert b"binary" in written["vtk-binary"].read_bytes()[:200].lower()
    assert b"ASCII" in written["vtk-ascii"].read_bytes()[:200]


@pytest.mark.parametrize("name", list(FORMATS))
def test_every_format_gives_the_analytic_metrics(written: dict[str, Path], name: str) -> None:
    """Same elements, same metrics, line cells skipped and counted, in every format.

    Source: analytic shapes (unit square, 2x1 rectangle, 60° rhombus, equilateral and
    right isosceles triangles), see tests/io_meshes.py.
    """
    report = meshaudit.audit(written[name])
    assert report.summary.element_counts == {"quad": 3, "triangle": 2}
    assert report.summary.skipped == {"line": N_LINES}
    assert report.summary.frame == "planar"
    for metric in EXPECTED:
        got = _in_file_order(report, metric)
        want = _expected_by_type(metric)
        for cell_type in want:
            np.testing.assert_allclose(got[cell_type], want[cell_type], rtol=1e-9, atol=1e-9)
    # triangles: skew, taper and warp mean nothing and stay empty (NaN)
    tri = report.types == "triangle"
    for metric in ("skew", "taper", "warp"):
        assert np.isnan(report.metrics[metric][tri]).all()
        assert np.isfinite(report.metrics[metric][~tri]).all()
    # index is the 0-based read order
    np.testing.assert_array_equal(report.index, np.arange(5))


def _labels_in_bdf(path: Path) -> dict[str, list[int]]:
    """Element labels of CQUAD4 / CTRIA3 cards, read from the Nastran file's own text.

    Source: Nastran bulk data small-field cards, label in the second 8-column field.
    """
    labels: dict[str, list[int]] = {"quad": [], "triangle": []}
    for line in path.read_text().splitlines():
        card = line[:8].strip()
        if card in ("CQUAD4", "CTRIA3"):
            labels["quad" if card == "CQUAD4" else "triangle"].append(int(line[8:16]))
    return labels


def _element_tags_in_text(path: Path) -> list[int]:
    """Tags of the quads and triangles of an ASCII gmsh file, read from its text.

    Source: the gmsh file format: 2.2 lists 'tag type ...' per element line; 4.1 lists
    per entity block 'dim entity type count', then 'tag nodes...' lines. Types 2 and 3
    are the triangle and the quad.
    """
    lines = path.read_text().split("$Elements\n")[1].split("$EndElements")[0].splitlines()
    if path.read_text().split("\n")[1].startswith("2.2"):
        return [int(ln.split()[0]) for ln in lines[1:] if ln.split()[1] in ("2", "3")]
    tags, k = [], 1
    while k < len(lines):
        _, _, kind, count = map(int, lines[k].split())
        if kind in (2, 3):
            tags += [int(ln.split()[0]) for ln in lines[k + 1 : k + 1 + count]]
        k += 1 + count
    return tags


def _element_labels_in_inp(path: Path) -> list[int]:
    """Labels of the elements with 3 or 4 nodes of an Abaqus file, read from its text
    (Abaqus input format: under *ELEMENT, each data line is the label, then the nodes)."""
    labels, keep = [], False
    for line in path.read_text().splitlines():
        if line.startswith("*"):
            keep = line.upper().startswith("*ELEMENT")
        elif keep and len(line.split(",")) in (4, 5):
            labels.append(int(line.split(",")[0]))
    return labels


@pytest.mark.parametrize("variant", ["ascii", "binary"])
@pytest.mark.parametrize("version", ["22", "41"])
def test_gmsh_elements_are_numbered_by_their_tags(written, version, variant) -> None:
    """The two line cells come first in the file, so the tags of the quads and triangles
    differ from their positions among the audited elements (1..5).

    Source: the ASCII file's own $Elements text (meshio's writer numbers the binary file
    the same way: it writes the same blocks in the same order).
    """
    report = meshaudit.audit(written[f"gmsh{version}-{variant}"])
    assert report.ids.tolist() == _element_tags_in_text(written[f"gmsh{version}-ascii"])
    assert report.ids.tolist() != list(range(1, 6))  # the test can tell them apart
    assert report.summary.element_numbers == "gmsh element tags"
    assert report.summary.node_numbers == "gmsh node tags"
    assert report.notes == []


def test_abaqus_elements_are_numbered_by_their_labels(written) -> None:
    """Source: the labels written in the .inp file's *ELEMENT sections."""
    report = meshaudit.audit(written["abaqus"])
    assert report.ids.tolist() == _element_labels_in_inp(written["abaqus"])
    assert report.summary.element_numbers == "Abaqus element labels"


@pytest.mark.parametrize("name", ["vtu", "vtk-ascii", "vtk-binary", "xdmf"])
def test_vtk_family_numbers_cells_from_0_over_all_cells(written, name) -> None:
    """VTK's convention (common practice): a cell's id is its position among all cells
    of the file from 0, lines included. The file lists the 2 lines first (tests/io_meshes.py
    writes the blocks line, quad, triangle), so the 3 quads are 2..4, the triangles 5, 6."""
    report = meshaudit.audit(written[name])
    assert report.ids.tolist() == [2, 3, 4, 5, 6]
    assert report.summary.element_numbers.startswith("VTK cell index, from 0")
    assert report.summary.node_numbers == "VTK point index, from 0"


def test_medit_numbers_cells_by_position_from_1(written) -> None:
    """medit keeps no element numbers: position from 1 over all cells in file order. The
    file's text lists the Edges (2) before the Quadrilaterals and the Triangles."""
    text = written["medit"].read_text()
    assert text.index("Edges") < text.index("Quadrilaterals") < text.index("Triangles")
    report = meshaudit.audit(written["medit"])
    assert report.ids.tolist() == [3, 4, 5, 6, 7]
    assert report.summary.node_numbers == "vertex number in the file, from 1"


def test_med_numbers_cells_by_position_from_1(written) -> None:
    """A .med file stores its cells per cell type in HDF5 groups, read in the order of
    their names: QU4 (the 3 quads), SE2 (the 2 lines), TR3 (the 2 triangles); positions
    from 1 over all cells in that order."""
    import h5py

    with h5py.File(written["med"], "r") as f:
        (mesh,) = f["ENS_MAA"].values()
        groups = list(mesh["MAI"]) if "MAI" in mesh else list(next(iter(mesh.values()))["MAI"])
    assert groups == ["QU4", "SE2", "TR3"]
    report = meshaudit.audit(written["med"])
    assert report.ids.tolist() == [1, 2, 3, 6, 7]


def test_nastran_labels_are_the_element_ids(written: dict[str, Path]) -> None:
    """The Nastran file numbers the line cells too, so its labels differ from positions."""
    report = meshaudit.audit(written["nastran"])
    labels = _labels_in_bdf(written["nastran"])
    types = report.types
    assert report.ids[types == "quad"].tolist() == labels["quad"]
    assert report.ids[types == "triangle"].tolist() == labels["triangle"]
    assert report.ids.tolist() != list(range(1, 6))  # the test can tell them apart


HAND_WRITTEN_BDF = "\n".join(
    [
        "$ bracket plate corner, labels chosen by hand",
        "BEGIN BULK",
        nastran_card("GRID", 1, "", "0.0", "0.0", "0.0"),
        nastran_card("GRID", 2, "", "1.0", "0.0", "0.0"),
        nastran_card("GRID", 3, "", "1.0", "1.0", "0.0"),
        nastran_card("GRID", 4, "", "0.0", "1.0", "0.0"),
        nastran_card("GRID", 5, "", "2.0", "0.0", "0.0"),
        nastran_card("CQUAD4", 1001, 1, 1, 2, 3, 4),
        nastran_card("CTRIA3", 2002, 1, 2, 5, 3),
        "ENDDATA",
        "",
    ]
)


def test_hand_written_nastran_labels(tmp_path: Path, run_cli) -> None:
    """Labels 1001 (unit square) and 2002 (right triangle, legs 1) appear as ids.

    Source: the file itself; areas by the shoelace formula (1 and 1/2).
    """
    path = tmp_path / "corner.bdf"
    path.write_text(HAND_WRITTEN_BDF)
    report = meshaudit.audit(path)
    assert report.ids.tolist() == [1001, 2002]
    np.testing.assert_allclose(report.metrics["area"], [1.0, 0.5])
    out = tmp_path / "corner.csv"
    done = run_cli("check", path, "--csv", out, "--quiet")
    assert done.returncode == 0, done.stderr
    rows = list(csv.DictReader(out.open()))
    assert [r["id"] for r in rows] == ["1001", "2002"]
    assert [r["index"] for r in rows] == ["0", "1"]


def test_format_option_overrides_the_extension(
    written: dict[str, Path], tmp_path: Path, run_cli
) -> None:
    """A gmsh file saved as .dat reads with --format gmsh; without it, exit 2.

    '.dat' is taken by another meshio reader, so the extension alone misleads it.
    """
    disguised = tmp_path / "plate.dat"
    shutil.copyfile(written["gmsh22-ascii"], disguised)
    good = run_cli("check", disguised, "--format", "gmsh", "--quiet")
    assert good.returncode == 0, good.stderr
    assert good.stderr == ""
    assert "of 5 elements" in good.stdout
    bad = run_cli("check", disguised, "--quiet")
    assert bad.returncode == 2
    assert bad.stderr.startswith("meshaudit: error:")
    # API: an unknown extension with file_format works too
    vtk_as_txt = tmp_path / "plate.txt"
    shutil.copyfile(written["vtk-ascii"], vtk_as_txt)
    report = meshaudit.audit(vtk_as_txt, file_format="vtk")
    np.testing.assert_allclose(sorted(report.metrics["area"]), sorted(EXPECTED["area"]))


#: Formats also run as a separate process (``python -m meshaudit``); the rest run the same
#: command line in-process, which is quicker and still captures anything written to the
#: terminal (file descriptors included).
SUBPROCESS_FORMATS = ("gmsh22-ascii", "gmsh41-binary", "med", "nastran")


def _csv_table(path: Path) -> dict[str, list[list[str]]]:
    rows = list(csv.DictReader(io.StringIO(path.read_text())))
    keys = ("area", "min_angle", "scaled_jacobian")
    return {t: [[r[k] for k in keys] for r in rows if r["type"] == t] for t in ("quad", "triangle")}


def test_cli_reads_every_format_with_the_same_rows(
    written: dict[str, Path], run_cli, capfd: pytest.CaptureFixture[str]
) -> None:
    """The command line gives the same CSV rows (ids aside) for every format, and prints
    nothing on stderr (meshio's writer and reader chatter stays hidden).

    Rows are compared as per-type sequences, since MED reorders whole blocks.
    """
    tables = {}
    for name, path in written.items():
        out = path.with_suffix(path.suffix + ".csv")
        args = ["check", str(path), "--csv", str(out), "--quiet"]
        if name in SUBPROCESS_FORMATS:
            done = run_cli(*args)
            status, stdout, stderr = done.returncode, done.stdout, done.stderr
        else:
            capfd.readouterr()
            status = main(args)
            stdout, stderr = capfd.readouterr()
        assert status in (0, 1), (name, stderr)
        assert stderr == "", (name, stderr)
        assert len(stdout.splitlines()) == 1 and "of 5 elements" in stdout, (name, stdout)
        tables[name] = _csv_table(out)
    reference = tables["vtu"]
    for name, table in tables.items():
        assert table == reference, name
    areas = [float(row[0]) for row in reference["quad"] + reference["triangle"]]
    np.testing.assert_allclose(areas, EXPECTED["area"], rtol=1e-9)


def test_meshio_mesh_in_memory_matches_file() -> None:
    """The API takes a meshio.Mesh as well as a path."""
    from io_meshes import mixed_mesh

    report = meshaudit.audit(mixed_mesh())
    np.testing.assert_allclose(report.metrics["area"], EXPECTED["area"])
    assert report.summary.skipped == {"line": N_LINES}


def test_two_coordinate_points_are_planar() -> None:
    """Points with only x, y read as planar 2-D; source: analytic unit square, area 1."""
    mesh = meshio.Mesh(
        np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]), [("quad", [[0, 1, 2, 3]])]
    )
    report = meshaudit.audit(mesh)
    assert report.summary.frame == "planar"
    assert report.metrics["area"][0] == pytest.approx(1.0)
