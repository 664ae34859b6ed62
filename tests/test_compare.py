"""``meshaudit compare OLD NEW``: the regression gate between two mesh revisions.

Reference facts: a grid of unit squares is ideal, composite score 1 for every element
(the square is the ideal quad, common practice); a quad listed clockwise is inverted, an
invalid element, score 0 and verdict fail. Moving a node of a unit-square grid by 0.3 along
x turns its four squares into non-rectangular quads (scaled Jacobian below 1, Knupp 2001).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from pipeline_meshes import grid, write

import meshaudit
from meshaudit import compare
from meshaudit.results.compare import Tolerances, match_elements

#: Node 5 of a 3 x 2 grid of unit squares (4 nodes per row) is the interior node (1, 1).
INNER = 5


def _inverted(mesh):
    cells = np.asarray(mesh.cells[0].data).copy()
    cells[2] = cells[2][::-1]
    return type(mesh)(mesh.points, [("quad", cells)])


def test_identical_meshes_do_not_regress():
    rep = meshaudit.audit(grid(3, 2))
    cmp = compare(rep, rep)
    assert not cmp.regressed
    assert cmp.shared == 6
    assert len(cmp.worse) == 0 and len(cmp.better) == 0
    assert cmp.verdict_changes == {}


def test_an_inverted_element_is_a_regression_and_named():
    old = meshaudit.audit(grid(3, 2))
    new = meshaudit.audit(_inverted(grid(3, 2)))
    cmp = compare(old, new)
    assert cmp.regressed
    failed = {c.name for c in cmp.checks if not c.passed}
    assert failed == {"failing_elements", "worst_score"}  # 1 of 6 leaves the median at 1
    assert cmp.worse[:, 0].tolist() == [2.0]  # element id 2 (in memory: position from 0)
    assert cmp.worse[0, 1:].tolist() == [1.0, 0.0]
    assert cmp.verdict_changes == {"ok->fail": 1}
    # the reverse direction is an improvement, never a regression
    back = compare(new, old)
    assert not back.regressed
    assert back.better[:, 0].tolist() == [2.0]


def test_tolerances_decide():
    old = meshaudit.audit(grid(3, 2))
    moved = meshaudit.audit(grid(3, 2, shift=(INNER, 0.3, 0.0)))
    drop = 1.0 - float(np.median(moved.score))
    assert drop > 0  # the four squares around the node are no longer squares
    assert compare(old, moved, Tolerances(median_score_drop=0.0, worst_score_drop=1)).regressed
    loose = Tolerances(median_score_drop=drop + 1e-9, worst_score_drop=1.0)
    assert not compare(old, moved, loose).regressed
    # one more failing element allowed
    bad = meshaudit.audit(_inverted(grid(3, 2)))
    assert not compare(old, bad, Tolerances(new_failing=1, worst_score_drop=1.0)).regressed


def test_matching_uses_ids_and_skips_repeated_ones():
    a = meshaudit.audit(grid(2, 1))
    b = meshaudit.audit(grid(3, 1))
    ro, rn = match_elements(a, b)
    assert a.ids[ro].tolist() == b.ids[rn].tolist() == [0, 1]
    b.ids[:] = [0, 0, 1]
    ro, rn = match_elements(a, b)
    assert a.ids[ro].tolist() == [1]


def test_cli_exit_status_json_and_tolerance_from_config(tmp_path, run_cli):
    old = write(grid(3, 2), tmp_path / "rev1" / "plate.msh")
    new = write(_inverted(grid(3, 2)), tmp_path / "rev2" / "plate.msh")
    res = run_cli("compare", old, new, "--json", tmp_path / "cmp.json")
    assert res.returncode == 1, res.stderr
    assert "REGRESSED" in res.stdout
    data = json.loads((tmp_path / "cmp.json").read_text())
    assert data["schema"] == "meshaudit.compare/1"
    assert data["verdict"] == "regressed"
    assert data["old"]["counts"]["fail"] == 0 and data["new"]["counts"]["fail"] == 1
    assert data["worse"] == [{"id": 3, "old_score": pytest.approx(1.0), "new_score": 0.0}]
    assert data["statistics"]["new"]["score"]["min"] == 0.0
    assert run_cli("compare", new, old).returncode == 0
    assert run_cli("compare", old, tmp_path / "none.msh").returncode == 2
    # tolerances come from the configuration found from NEW
    (tmp_path / "rev2" / "meshaudit.toml").write_text(
        "[compare]\nnew_failing = 1\nworst_score_drop = 1.0\n"
    )
    res = run_cli("compare", old, new, "--quiet", "--json", tmp_path / "cmp2.json")
    assert res.returncode == 0, res.stdout
    assert res.stdout.startswith("OK")
    tolerances = json.loads((tmp_path / "cmp2.json").read_text())["tolerances"]
    assert tolerances["new_failing"] == 1
    assert tolerances["source"].endswith("rev2/meshaudit.toml")
    assert "no published source" in data["tolerances"]["source"]


def _cracked(nx: int = 8, ny: int = 2):
    """The grid with the nodes of its middle row, x = 1 .. nx - 1, duplicated and the
    upper elements moved onto the copies: nx - 1 places with two unmerged nodes each by
    construction (the finding counts places), a cut inside the part (it reaches neither side)."""
    mesh = grid(nx, ny)
    pts = np.asarray(mesh.points)
    quads = np.asarray(mesh.cells[0].data).copy()
    row = ny // 2
    cut = np.array([row * (nx + 1) + i for i in range(1, nx)])
    copies = np.arange(len(pts), len(pts) + cut.size)
    upper = quads[row * nx : (row + 1) * nx]  # elements just above the cut
    for node, copy in zip(cut, copies):
        upper[upper == node] = copy
    quads[row * nx : (row + 1) * nx] = upper
    return type(mesh)(np.vstack([pts, pts[cut]]), [("quad", quads)])


def test_a_cracked_revision_regresses_on_its_findings(tmp_path, run_cli):
    old = write(grid(8, 2), tmp_path / "rev1" / "plate.msh")
    new = write(_cracked(), tmp_path / "rev2" / "plate.msh")
    assert run_cli("check", new, "--quiet").returncode == 1  # check fails the crack
    res = run_cli("compare", old, new, "--json", tmp_path / "cmp.json")
    assert res.returncode == 1, res.stdout
    data = json.loads((tmp_path / "cmp.json").read_text())
    check = next(c for c in data["checks"] if c["name"] == "mesh_findings")
    assert not check["passed"]
    assert data["findings"]["coincident_nodes"] == {"old": 0, "new": 7}  # 7 by construction
    assert "coincident_nodes 0->7" in check["meaning"]
    # every element score is unchanged: only the findings tell
    assert all(c["passed"] for c in data["checks"] if c["name"] != "mesh_findings")
    assert run_cli("compare", new, old).returncode == 0  # merging the crack is no regression


def test_unrelated_meshes_of_the_same_size_compare_distributions_only(tmp_path, run_cli):
    # 4 x 3 and 3 x 4 unit-square grids: 12 elements each, numbered alike, but element k
    # has other nodes in the two (their rows have different lengths)
    a = write(grid(4, 3), tmp_path / "a" / "plate.msh")
    b = write(grid(3, 4, shift=(5, 0.3, 0.0)), tmp_path / "b" / "plate.msh")
    res = run_cli("compare", a, b, "--json", tmp_path / "cmp.json")
    data = json.loads((tmp_path / "cmp.json").read_text())
    assert data["correspondence"] == "distributions"
    assert data["shared_elements"] == 0 and data["worse"] == [] and data["verdict_changes"] == {}
    assert any("do not correspond" in note for note in data["notes"])
    assert "do not correspond" in res.stdout


def test_moved_nodes_and_reversed_order_still_correspond():
    from meshaudit import audit_mesh

    old = audit_mesh(grid(3, 2))
    moved = audit_mesh(grid(3, 2, shift=(INNER, 0.3, 0.0)))
    cmp = compare(old.report, moved.report, None, old.elements, moved.elements)
    assert cmp.correspondence == "elements" and cmp.shared == 6
    assert len(cmp.worse) == 4  # the four squares around the moved node
    flipped = audit_mesh(_inverted(grid(3, 2)))
    cmp = compare(old.report, flipped.report, None, old.elements, flipped.elements)
    assert cmp.correspondence == "elements" and cmp.shared == 6  # same nodes, other order
    assert cmp.verdict_changes == {"ok->fail": 1}


STEEL = "E=210000,nu=0.3,rho=7.85e-9,t=2"


def test_compare_with_a_material_shows_the_time_step_and_bending_error(tmp_path, run_cli):
    # common practice: the stable time step scales with the element size (dt ~ L / c), so
    # NEW, the same grid at half the size, has half the step; the bending error has no
    # unit: the unit square's nu^2/(1 - nu^2) + 1/(2 (1 + nu)) in both (the bilinear
    # square's closed form, integrated with sympy in test_stiffness_reference.py)
    small = grid(3, 2)
    small.points = np.asarray(small.points) * 0.5
    old = write(grid(3, 2), tmp_path / "rev1" / "plate.msh")
    new = write(small, tmp_path / "rev2" / "plate.msh")
    res = run_cli("compare", old, new, "--material", STEEL, "--json", tmp_path / "cmp.json")
    assert res.returncode == 0, res.stderr  # same shapes: no regression
    assert "time step OLD: smallest" in res.stdout and "time step NEW: smallest" in res.stdout
    data = json.loads((tmp_path / "cmp.json").read_text())
    steps = {rev: data["statistics"][rev]["stable_time_step"] for rev in ("old", "new")}
    assert steps["old"]["count"] == steps["new"]["count"] == 6
    assert steps["new"]["min"] == pytest.approx(steps["old"]["min"] / 2, rel=1e-9)
    assert data["time_step"]["new"]["median"] == pytest.approx(
        data["time_step"]["old"]["median"] / 2, rel=1e-9
    )
    nu = 0.3
    square = nu**2 / (1 - nu**2) + 1 / (2 * (1 + nu))
    for rev in ("old", "new"):
        assert data["statistics"][rev]["bending_error"]["max"] == pytest.approx(square)
    # the configuration's [materials] does the same without --material
    (tmp_path / "rev2" / "meshaudit.toml").write_text(
        "[materials.default]\nE = 210000.0\nnu = 0.3\nrho = 7.85e-9\n"
    )
    res = run_cli("compare", old, new, "--json", tmp_path / "cmp2.json")
    assert res.returncode == 0, res.stderr
    configured = json.loads((tmp_path / "cmp2.json").read_text())
    assert configured["time_step"]["new"]["median"] == pytest.approx(
        data["time_step"]["new"]["median"], rel=1e-12
    )  # the thickness scales stiffness and mass alike
    # without any material: no time step, the metrics not measured
    res = run_cli("compare", old, new, "--no-config", "--json", tmp_path / "cmp3.json")
    plain = json.loads((tmp_path / "cmp3.json").read_text())
    assert "time_step" not in plain and "time step" not in res.stdout
    assert plain["statistics"]["new"]["stable_time_step"]["count"] == 0
    # a bad material is bad input: exit 2, one line
    bad = run_cli("compare", old, new, "--material", "E=1,nu=0.7,rho=1")
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1 and "nu" in bad.stderr
