"""Regions from the file: material and group numbers a mesh carries become regions that
per-region limits select (by name or number) and that every report breaks down.

Each mesh is written by meshio (the outside reference for each format's way of carrying
groups: VTK cell data, medit element references, gmsh physical groups with names, Abaqus
element sets). Reference facts: a 6 x 1 rectangle has aspect ratio 6 (Robinson 1987), past
the standard warn limit (5) and the strict fail limit (5); a 1 x 1 square has 1.
"""

from __future__ import annotations

import csv
import io
import json
import xml.etree.ElementTree as ET

import meshio
import numpy as np
import pytest

import meshaudit
from meshaudit.outputs import csv_report, html_report, json_report, junit_report, terminal
from meshaudit.outputs.console import PlainConsole

# a 1 x 1 square (region 1) and a 6 x 1 rectangle (region 7), apart
POINTS = np.array(
    [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [2, 0, 0], [8, 0, 0], [8, 1, 0], [2, 1, 0]],
    float,
)
QUADS = np.array([[0, 1, 2, 3], [4, 5, 6, 7]])
NUMBERS = np.array([1, 7])


def _written(tmp_path, ext, **kwargs):
    path = tmp_path / f"plate{ext}"
    extra = {"file_format": "gmsh22", "binary": False} if ext == ".msh" else {}
    meshio.write(path, meshio.Mesh(POINTS, [("quad", QUADS)], **kwargs), **extra)
    return path


CASES = {
    "vtu mat_id": (".vtu", {"cell_data": {"mat_id": [NUMBERS]}}, "mat_id=7", "7"),
    "vtk MaterialIds": (".vtk", {"cell_data": {"MaterialIds": [NUMBERS]}}, "MaterialIds=7", "7"),
    "medit ref": (".mesh", {"cell_data": {"medit:ref": [NUMBERS]}}, "medit:ref=7", "7"),
    "gmsh physical": (
        ".msh",
        {
            "cell_data": {"gmsh:physical": [NUMBERS], "gmsh:geometrical": [NUMBERS]},
            "field_data": {"web": np.array([1, 2]), "fillet": np.array([7, 2])},
        },
        "fillet",
        "fillet",
    ),
    "abaqus sets": (
        ".inp",
        {"cell_sets": {"web": [np.array([0])], "fillet": [np.array([1])]}},
        "fillet",
        "fillet",
    ),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_region_of_the_file_takes_its_limits_and_is_broken_down(case, tmp_path):
    ext, kwargs, label, selector = CASES[case]
    path = _written(tmp_path, ext, **kwargs)
    plain = meshaudit.audit(path)
    assert plain.verdict_names.tolist() == ["ok", "warn"]  # aspect ratio 6 > 5 warns
    report = meshaudit.audit(path, regions={selector: "strict"})
    assert report.verdict_names.tolist() == ["ok", "fail"]  # 6 > strict fail limit 5
    assert report.breached(1)["aspect_ratio"] == (6.0, "fail", 5.0)
    breakdown = {e["region"]: e for e in report.region_breakdown()}
    assert breakdown[label]["elements"] == 1
    assert breakdown[label]["counts"] == {"ok": 0, "warn": 0, "fail": 1}
    assert breakdown[label]["profiles"] == ["strict"]
    assert len(breakdown) == 2
    # JSON
    doc = json.loads(json_report.render(report, every_element=True))
    assert {e["region"]: e["counts"]["fail"] for e in doc["region_breakdown"]}[label] == 1
    assert [e["file_region"] for e in doc["elements"]][1] == label
    # CSV: a region column, the file's region of each element
    rows = list(csv.DictReader(io.StringIO(csv_report.render(report))))
    assert rows[1]["file_region"] == label and rows[0]["file_region"] not in ("", label)
    # JUnit: one property per region
    suite = ET.fromstring(junit_report.render(report)).find("testsuite")
    props = {p.get("name"): p.get("value") for p in suite.iter("property")}
    assert props[f"region {label}"].startswith("1 elements: 1 fail, 0 warn, 0 ok")
    # HTML: a regions table naming it
    audited = meshaudit.audit_mesh(path, regions={selector: "strict"})
    page = html_report.render(audited.report, audited.elements)
    assert 'id="regions"' in page and f"<td>{label}</td>" in page
    # terminal at 80 columns
    console = PlainConsole(width=80, record=True, file=io.StringIO())
    terminal.render(report, console)
    assert f"{label}: 1 elements, 1 fail, 0 warn (strict)" in console.export_text()


def test_numbered_regions_are_selected_by_bare_or_qualified_number(tmp_path):
    path = _written(tmp_path, ".vtu", cell_data={"mat_id": [NUMBERS]})
    for selector in ("7", "mat_id=7"):
        report = meshaudit.audit(path, regions={selector: "strict"})
        assert report.verdict_names.tolist() == ["ok", "fail"]
    report = meshaudit.audit(path, regions={"1": "strict", "mat_id=9": "strict"})
    assert report.region_summary()["mat_id=9"]["elements"] == 0  # not in this mesh
    assert report.verdict_names.tolist() == ["ok", "warn"]


def test_float_region_arrays_and_unrelated_cell_data_are_handled(tmp_path):
    # whole numbers stored as floats still name regions; a float field (a result) does not
    path = _written(
        tmp_path,
        ".vtu",
        cell_data={"material": [NUMBERS.astype(float)], "stress": [np.array([0.5, 1.5])]},
    )
    report = meshaudit.audit(path)
    assert [e["region"] for e in report.region_breakdown()] == ["material=1", "material=7"]
    path = _written(tmp_path, ".vtu", cell_data={"stress": [np.array([0.5, 1.5])]})
    assert meshaudit.audit(path).region_breakdown() == []


def test_config_regions_select_numbers_from_the_command_line(tmp_path, run_cli):
    path = _written(tmp_path, ".vtu", cell_data={"mat_id": [NUMBERS]})
    (tmp_path / "meshaudit.toml").write_text('[regions.7]\nextends = "strict"\n')
    result = run_cli("check", str(path), "--json", str(tmp_path / "r.json"))
    assert result.returncode == 1  # the rectangle in region 7 fails under strict
    doc = json.loads((tmp_path / "r.json").read_text())
    assert doc["counts"] == {"ok": 1, "warn": 0, "fail": 1}


def test_many_regions_are_summarised_and_per_element_numbers_are_no_regions(tmp_path):
    # a strip of 30 unit squares, one material each: the terminal lists at most
    # SHOWN_REGIONS of them and says how many more there are
    n = 30
    xs = np.arange(n + 1.0)
    pts = np.array([(x, y, 0.0) for y in (0.0, 1.0) for x in xs])
    quads = np.array([[i, i + 1, n + 2 + i, n + 1 + i] for i in range(n)])
    materials = np.arange(n)
    mesh = meshio.Mesh(pts, [("quad", quads)], cell_data={"mat_id": [materials]})
    report = meshaudit.audit(mesh)
    assert len(report.region_breakdown()) == n
    console = PlainConsole(width=80, record=True, file=io.StringIO())
    terminal.render(report, console)
    text = console.export_text()
    assert f"and {n - terminal.SHOWN_REGIONS} more regions" in text
    # an integer array with a distinct number per element beyond MAX_NUMBERS is ids, not
    # groups: no regions from it
    from meshaudit.mesh.regions import MAX_NUMBERS

    m = MAX_NUMBERS + 5
    xs = np.arange(m + 1.0)
    pts = np.array([(x, y, 0.0) for y in (0.0, 1.0) for x in xs])
    quads = np.array([[i, i + 1, m + 2 + i, m + 1 + i] for i in range(m)])
    mesh = meshio.Mesh(pts, [("quad", quads)], cell_data={"region": [np.arange(m)]})
    assert meshaudit.audit(mesh).region_breakdown() == []
