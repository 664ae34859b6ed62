"""Findings in the profile, the verdict, the exit status and every report format.

Meshes are the planted ones of tests/finding_meshes.py (defect places by construction).
The gate rule checked here is the documented one: a finding of fail severity fails the
mesh even when every element is ok; warn findings fail it only under --fail-on warn.
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import meshio
import numpy as np
import pytest

from meshaudit import ProfileError, audit, load_profile
from tests.finding_meshes import NX, NY, grid_points, grid_quads, quad_grid, with_crack


def orphan_mesh() -> meshio.Mesh:
    pts = np.vstack([grid_points(NX, NY), [[2.5, 2.5]]])  # by construction: one orphan
    return meshio.Mesh(pts, [("quad", grid_quads(NX, NY))])


def write_profile(tmp_path, text: str):
    path = tmp_path / "profile.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_default_severity_of_orphans_is_warn_and_gates_only_on_warn():
    assert audit(orphan_mesh()).passed
    assert not audit(orphan_mesh(), fail_on="warn").passed


def test_profile_overrides_a_finding_severity(tmp_path):
    strict = write_profile(tmp_path, '[findings]\norphan_nodes = "fail"\n')
    report = audit(orphan_mesh(), profile=strict)
    assert [f.severity for f in report.findings] == ["fail"]
    assert not report.passed
    off = write_profile(tmp_path, '[findings]\norphan_nodes = "off"\n')
    assert audit(orphan_mesh(), profile=off).findings == []


def test_profile_sets_the_coincidence_tolerance(tmp_path):
    # Squares 5e-6 apart (edge 1): not coincident at the default 1e-6, coincident at 1e-5.
    pts = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    mesh = meshio.Mesh(
        np.vstack([pts, pts + np.array([1 + 5e-6, 0.0])]), [("quad", [[0, 1, 2, 3], [4, 5, 6, 7]])]
    )
    assert audit(mesh).findings == []
    loose = write_profile(tmp_path, "[findings]\ncoincident_tolerance = 1e-5\n")
    kinds = {f.kind for f in audit(mesh, profile=loose).findings}
    assert kinds == {"coincident_nodes", "crack_edges"}


@pytest.mark.parametrize(
    "text",
    [
        '[findings]\norphan_nodes = "loud"\n',
        '[findings]\nstray_nodes = "warn"\n',
        "[findings]\ncoincident_tolerance = -1\n",
        'findings = "all"\n',
    ],
)
def test_bad_findings_tables_are_profile_errors(tmp_path, text):
    with pytest.raises(ProfileError):
        load_profile(write_profile(tmp_path, text))


def test_builtin_profiles_carry_every_kind_with_a_valid_severity():
    for name in ("standard", "strict", "lenient"):
        severity = load_profile(name).findings.severity
        assert set(severity.values()) <= {"info", "warn", "fail"}
        assert "crack_edges" in severity and "orphan_nodes" in severity


def test_cli_fails_a_cracked_mesh_whose_elements_are_all_ok(tmp_path, run_cli):
    mesh, _, _ = with_crack(2, 4)
    path = tmp_path / "cracked_plate.vtu"
    meshio.write(
        path, meshio.Mesh(np.column_stack([mesh.points, np.zeros(len(mesh.points))]), mesh.cells)
    )
    out_json, out_xml = tmp_path / "r.json", tmp_path / "r.xml"
    res = run_cli("check", path, "--json", out_json, "--junit", out_xml)
    assert res.returncode == 1, res.stderr
    assert "Mesh-level findings" in res.stdout and "crack_edges" in res.stdout
    assert "0 of 24 elements fail" in res.stdout
    doc = json.loads(out_json.read_text())
    assert doc["verdict"] == "fail" and doc["counts"]["fail"] == 0
    kinds = {f["kind"]: f for f in doc["findings"]}
    assert set(kinds) == {"coincident_nodes", "crack_edges"}
    assert kinds["crack_edges"]["count"] == 8
    # elements (1..4, 1) and (1..4, 2) of the grid, by VTK cell index (row j * NX + i)
    assert sorted(kinds["crack_edges"]["element_ids"]) == [7, 8, 9, 10, 13, 14, 15, 16]
    assert {lp["kind"] for lp in doc["free_edge_loops"]} == {"outer", "crack"}
    suite = ET.parse(out_xml).getroot().find("testsuite")
    cases = {c.get("name"): c for c in suite.findall("testcase")}
    assert cases["no crack edges"].find("failure") is not None
    assert cases["no orphan nodes"].find("failure") is None
    assert cases["no opposite normals"].find("skipped") is not None  # planar mesh
    assert int(suite.get("failures")) == 2


def test_cli_passes_a_clean_mesh_and_says_so(tmp_path, run_cli):
    path = tmp_path / "plate.vtu"
    grid = quad_grid(NX, NY)
    meshio.write(
        path, meshio.Mesh(np.column_stack([grid.points, np.zeros(len(grid.points))]), grid.cells)
    )
    out_json = tmp_path / "r.json"
    res = run_cli("check", path, "--json", out_json)
    assert res.returncode == 0, res.stderr
    assert "Mesh-level findings" not in res.stdout
    assert "free-edge loops" in res.stdout
    doc = json.loads(out_json.read_text())
    assert doc["findings"] == []
    assert doc["profile"]["findings"]["severity"]["crack_edges"] == "fail"


def test_profiles_command_lists_finding_severities(tmp_path, run_cli):
    # The severities shown are the profile's: the override from the file, the rest default.
    path = write_profile(tmp_path, '[findings]\norphan_nodes = "info"\n')
    res = run_cli("profiles", path)
    assert res.returncode == 0, res.stderr
    rows = {ln.split("│")[1].strip(): ln for ln in res.stdout.splitlines() if ln.count("│") > 3}
    assert "info" in rows["orphan_nodes"] and "warn" in rows["orphan_nodes"]
    assert rows["crack_edges"].split("│")[2].strip() == "fail"
