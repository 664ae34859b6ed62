"""Cells meshaudit does not measure are never passed over in silence.

A file holding a skin of shell triangles under a cap of two five-sided polygon cells (the
bracket plate's boss, invented demo geometry): the triangles are audited, the polygons are
not (meshaudit measures triangles, quadrilaterals and the solids, not general polygons).
The verdict line (also with ``--quiet``), the JSON and the JUnit report must say so, and a
profile can make it a failure. The reference is the file itself: it holds 2 polygons and
4 line cells, whatever meshaudit makes of them.
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import meshio
import numpy as np
import pytest

import meshaudit

# A unit cube's corners and a ridge node; the surface triangles of its bottom face are the
# skin, two pentagons the cap.
POINTS = np.array(
    [
        [0, 0, 0],
        [1, 0, 0],
        [1, 1, 0],
        [0, 1, 0],
        [0, 0, 1],
        [1, 0, 1],
        [1, 1, 1],
        [0, 1, 1],
        [0.5, 1.5, 1],
    ],
    dtype=float,
)
SKIN = np.array([[0, 1, 2], [0, 2, 3]])
POLYGONS = np.array([[4, 5, 6, 8, 7], [0, 1, 5, 8, 4]])
LINES = np.array([[0, 1], [1, 2], [2, 3], [3, 0]])


def skin_and_polygons(tmp_path, with_polygons: bool = True):
    cells = [("triangle", SKIN), ("line", LINES)]
    if with_polygons:
        cells.append(("polygon", POLYGONS))
    path = tmp_path / "boss.vtu"
    meshio.write(path, meshio.Mesh(POINTS, cells))
    return path


def test_api_reports_unaudited_polygons(tmp_path):
    report = meshaudit.audit(skin_and_polygons(tmp_path))
    assert len(report) == 2  # the two skin triangles
    assert report.summary.skipped == {"line": 4, "polygon": 2}
    found = {f.kind: f for f in report.findings}
    assert found["unaudited_cells"].count == 2  # the polygons; lines have no shape to audit
    assert found["unaudited_cells"].severity == "warn"
    assert "2 polygon" in found["unaudited_cells"].message
    assert report.passed  # a warn finding fails only under --fail-on warn


def test_lines_alone_are_listed_but_not_a_finding(tmp_path):
    report = meshaudit.audit(skin_and_polygons(tmp_path, with_polygons=False))
    assert "unaudited_cells" not in {f.kind for f in report.findings}
    assert report.summary.skipped_text() == "4 line"


@pytest.mark.parametrize("quiet", [False, True])
def test_verdict_line_names_what_was_not_audited(tmp_path, run_cli, quiet):
    args = [skin_and_polygons(tmp_path)] + (["--quiet"] if quiet else [])
    res = run_cli("check", *args)
    assert res.returncode == 0, res.stderr
    last = res.stdout.strip().splitlines()[-1]
    assert last.startswith("PASS")
    assert "not audited: 4 line, 2 polygon" in last


def test_json_and_junit_say_what_was_not_audited(tmp_path, run_cli):
    js, xml = tmp_path / "r.json", tmp_path / "r.xml"
    res = run_cli("check", skin_and_polygons(tmp_path), "--json", js, "--junit", xml)
    assert res.returncode == 0, res.stderr
    doc = json.loads(js.read_text())
    assert doc["not_audited"] == {"line": 4, "polygon": 2}
    finding = next(f for f in doc["findings"] if f["kind"] == "unaudited_cells")
    assert finding["count"] == 2 and finding["severity"] == "warn"
    root = ET.parse(xml).getroot()
    prop = root.find(".//property[@name='cells not audited']")
    assert prop is not None and prop.get("value") == "4 line, 2 polygon"
    case = root.find(".//testcase[@name='no unaudited cells']")
    assert case is not None and case.find("failure") is None  # warn: passes the gate
    assert "2 polygon" in case.find("system-out").text


def test_profile_makes_unaudited_cells_a_failure(tmp_path, run_cli):
    prof = tmp_path / "every-element.toml"
    prof.write_text('extends = "standard"\n[findings]\nunaudited_cells = "fail"\n')
    xml = tmp_path / "r.xml"
    res = run_cli("check", skin_and_polygons(tmp_path), "--profile", prof, "--junit", xml)
    assert res.returncode == 1, res.stdout + res.stderr
    assert res.stdout.strip().splitlines()[-1].startswith("FAIL")
    case = ET.parse(xml).getroot().find(".//testcase[@name='no unaudited cells']")
    assert case.find("failure") is not None


def test_fail_on_warn_fails_on_unaudited_polygons(tmp_path, run_cli):
    res = run_cli("check", skin_and_polygons(tmp_path), "--fail-on", "warn", "--quiet")
    assert res.returncode == 1


def test_several_meshes_quiet_names_unaudited(tmp_path, run_cli):
    a = skin_and_polygons(tmp_path)
    other = tmp_path / "b"
    other.mkdir()
    b = skin_and_polygons(other, with_polygons=False)
    res = run_cli("check", a, b, "--quiet")
    lines = res.stdout.strip().splitlines()
    assert any("boss.vtu (not audited: 4 line, 2 polygon)" in ln for ln in lines)
