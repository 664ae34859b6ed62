"""Per-region limits: gmsh physical groups and Abaqus element sets select a profile.

Reference facts (see pipeline_meshes): a 6 x 1 rectangle has aspect ratio 6 (Robinson
1987, ratio of the principal axes). The built-in limits put 6 past the standard warn
limit (5) but within its fail limit (10), and past the strict fail limit (5).
"""

from __future__ import annotations

import json

import meshio
import numpy as np
from pipeline_meshes import TWO_GROUPS_MSH, strip, write

import meshaudit
from meshaudit.judge.profiles import BUILTIN, Limit, with_limit
from meshaudit.mesh.reading import load
from meshaudit.mesh.regions import element_sets

ABAQUS_INP = """\
*HEADING
bracket plate strip
*NODE
1, 0.0, 0.0
2, 6.0, 0.0
3, 6.0, 1.0
4, 0.0, 1.0
5, 7.0, 0.0
6, 13.0, 0.0
7, 13.0, 1.0
8, 7.0, 1.0
*ELEMENT, TYPE=CPS4
11, 1, 2, 3, 4
12, 5, 6, 7, 8
*ELSET, ELSET=fillet
12
"""


def test_gmsh_physical_groups_become_named_element_sets(tmp_path):
    path = tmp_path / "groups.msh"
    path.write_text(TWO_GROUPS_MSH)
    mesh = load(path)
    # "edge" is a curve group (dimension 1) sharing tag 2 with the surface group "fillet":
    # only surface groups can hold audited elements.
    # Each group is also selected by its number, bare or qualified by the array.
    assert set(mesh.cell_sets) == {
        "web",
        "fillet",
        "1",
        "2",
        "gmsh:physical=1",
        "gmsh:physical=2",
    }
    assert "edge" not in mesh.cell_sets
    assert mesh.cell_sets["web"].tolist() == [0] == mesh.cell_sets["1"].tolist()
    assert mesh.cell_sets["fillet"].tolist() == [1] == mesh.cell_sets["gmsh:physical=2"].tolist()


def test_region_elements_are_judged_under_the_region_profile(tmp_path):
    path = tmp_path / "groups.msh"
    path.write_text(TWO_GROUPS_MSH)
    plain = meshaudit.audit(path)
    assert plain.verdict_names.tolist() == ["warn", "warn"]
    report = meshaudit.audit(path, regions={"fillet": "strict"})
    assert report.verdict_names.tolist() == ["warn", "fail"]
    assert report.region_codes.tolist() == [0, 1]
    # the breach names the limit of the profile the element was judged under
    assert report.breached(1)["aspect_ratio"] == (
        6.0,
        "fail",
        BUILTIN["strict"].limit("quad", "aspect_ratio").fail,
    )
    assert report.breached(0)["aspect_ratio"][1:] == ("warn", 5.0)
    assert report.region_summary()["fillet"]["counts"] == {"ok": 0, "warn": 0, "fail": 1}


def test_abaqus_element_sets_select_regions(tmp_path):
    path = tmp_path / "strip.inp"
    path.write_text(ABAQUS_INP)
    report = meshaudit.audit(path, regions={"fillet": "strict"})
    # set member 12 is the second element of the file
    assert report.verdict_names.tolist() == ["warn", "fail"]


def test_custom_region_profile_and_overlapping_regions_last_listed_wins():
    mesh = strip([6.0, 6.0, 6.0])
    mesh.cell_sets = {"a": [np.array([0, 1])], "b": [np.array([1, 2])]}
    # condition number of a 6 x 1 rectangle: (36 + 1) / (2 * 6) = 3.08 (Knupp 2001), within
    # the lenient limits
    loose = with_limit(BUILTIN["lenient"], "quad", "aspect_ratio", Limit(7.0, 9.0))
    report = meshaudit.audit(mesh, regions={"a": "strict", "b": loose})
    # element 0 only in a (strict: 6 > 5 fails); 1 and 2 in b, listed last (6 < 7: ok)
    assert report.verdict_names.tolist() == ["fail", "ok", "ok"]


def test_element_sets_of_a_mesh_in_memory_span_blocks():
    pts = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0], [2, 1]], float)
    mesh = meshio.Mesh(
        pts,
        [("quad", [[0, 1, 2, 3]]), ("line", [[0, 1]]), ("triangle", [[1, 4, 5]])],
        cell_data={"gmsh:physical": [np.array([7]), np.array([7]), np.array([7])]},
        field_data={"plate": np.array([7, 2]), "rim": np.array([7, 1])},
    )
    # audited blocks: meshio block 0 -> element 0, meshio block 2 -> element 1
    sets = element_sets(mesh, [(0, np.array([0])), (2, np.array([1]))])
    expected = {"plate": [0, 1], "7": [0, 1], "gmsh:physical=7": [0, 1]}
    assert {k: v.tolist() for k, v in sets.items()} == expected


def test_regions_from_the_configuration_file(tmp_path, run_cli):
    (tmp_path / "groups.msh").write_text(TWO_GROUPS_MSH)
    (tmp_path / "meshaudit.toml").write_text(
        "[regions.fillet]\n"
        'extends = "strict"\n'
        "[regions.web.quad]\n"
        "aspect_ratio = { warn = 6.5, fail = 8 }\n"
        "condition = { warn = 3.5, fail = 6 }\n"  # 6 x 1 rectangle reads 37/12 = 3.08
        "[regions.boss]\n"
        'extends = "lenient"\n'
    )
    res = run_cli("check", "groups.msh", "--json", "out.json", cwd=tmp_path)
    assert res.returncode == 1, res.stderr
    data = json.loads((tmp_path / "out.json").read_text())
    by_id = {e["id"]: e["verdict"] for e in data["elements"]}
    assert by_id == {2: "fail"}  # web: 6 < 6.5 is ok under its override
    assert data["regions"]["boss"]["elements"] == 0
    assert [e["region"] for e in data["elements"]] == ["fillet"]
    assert "boss: not in this mesh" in res.stdout
    # the web region starts from the standard limits, only two limits overridden
    web = data["regions"]["web"]["profile"]["limits"]["quad"]
    assert web["skew"]["fail"] == BUILTIN["standard"].limit("quad", "skew").fail
    assert web["aspect_ratio"]["warn"] == 6.5


def test_a_region_written_through_meshio_survives_a_round_trip(tmp_path):
    mesh = strip([6.0, 6.0])
    mesh.cell_data = {
        "gmsh:physical": [np.array([1, 2])],
        "gmsh:geometrical": [np.array([1, 1])],
    }
    mesh.field_data = {"web": np.array([1, 2]), "fillet": np.array([2, 2])}
    path = write(mesh, tmp_path / "strip.msh")
    report = meshaudit.audit(path, regions={"fillet": "strict"})
    assert report.verdict_names.tolist() == ["warn", "fail"]


def test_junit_cases_follow_the_region_limits(tmp_path, run_cli):
    import xml.etree.ElementTree as ET

    (tmp_path / "groups.msh").write_text(TWO_GROUPS_MSH)
    (tmp_path / "meshaudit.toml").write_text('[regions.fillet]\nextends = "strict"\n')
    res = run_cli("check", "groups.msh", "--junit", "out.xml", cwd=tmp_path)
    assert res.returncode == 1, res.stderr
    root = ET.parse(tmp_path / "out.xml").getroot()
    failed = {
        (c.get("classname"), c.get("name"))
        for c in root.iter("testcase")
        if c.find("failure") is not None
    }
    strict_fail = BUILTIN["strict"].limit("quad", "aspect_ratio").fail
    name = f"quad aspect_ratio <= {strict_fail:g} (fail limit)"
    assert ("meshaudit.region.fillet.quad", name) in failed
    # the element outside the region is judged under standard: no failing case there
    assert {cls for cls, _ in failed} == {"meshaudit.region.fillet.quad"}
