"""Several meshes in one ``meshaudit check``: one table, one exit status, per-file reports.

Reference facts (common practice): a grid of unit squares passes every built-in profile; a
quad listed clockwise has a negative det J everywhere, so it is inverted and fails.
"""

from __future__ import annotations

import json
import os

from pipeline_meshes import grid, strip, write

GOOD = grid(2, 1)
BAD = strip([1.0, 1.0], clockwise=frozenset({1}))


def _files(tmp_path):
    good = write(GOOD, tmp_path / "meshes" / "good.msh")
    bad = write(BAD, tmp_path / "meshes" / "bad.vtu")
    return good, bad


def test_exit_status_is_the_worst_of_all_meshes(tmp_path, run_cli):
    good, bad = _files(tmp_path)
    other_good = write(GOOD, tmp_path / "meshes" / "good2.vtu")
    assert run_cli("check", good, other_good).returncode == 0
    res = run_cli("check", good, bad)
    assert res.returncode == 1
    assert "2 meshes: 1 pass, 1 fail, 0 cannot be audited" in res.stdout
    res = run_cli("check", good, bad, tmp_path / "missing.msh")
    assert res.returncode == 2
    assert res.stderr.strip().splitlines() == [
        f"meshaudit: error: {tmp_path / 'missing.msh'}: no such file"
    ]
    assert "3 meshes: 1 pass, 1 fail, 1 cannot be audited" in res.stdout


def test_glob_patterns_are_expanded_for_shells_that_do_not(tmp_path, run_cli):
    _files(tmp_path)
    res = run_cli("check", "meshes/*.*", "--quiet", cwd=tmp_path)
    assert res.returncode == 1
    lines = res.stdout.splitlines()
    # a failing mesh says why: its failing elements and the finding that fails it
    why = "1 element fail; inconsistent_winding (fail, 1)"
    assert lines[:2] == [f"FAIL  meshes/bad.vtu ({why})", "PASS  meshes/good.msh"]
    res = run_cli("check", "meshes/*.inp", cwd=tmp_path)
    assert res.returncode == 2
    assert "meshes/*.inp: no file matches this pattern" in res.stderr


def test_reports_go_to_a_directory_or_a_stem_pattern(tmp_path, run_cli):
    good, bad = _files(tmp_path)
    res = run_cli("check", good, bad, "--json", "out/", "--junit", "junit/{stem}.xml", cwd=tmp_path)
    assert res.returncode == 1, res.stderr
    assert sorted(os.listdir(tmp_path / "out")) == ["bad.json", "good.json"]
    assert sorted(os.listdir(tmp_path / "junit")) == ["bad.xml", "good.xml"]
    bad_report = json.loads((tmp_path / "out" / "bad.json").read_text())
    assert bad_report["verdict"] == "fail"
    assert bad_report["counts"] == {"ok": 1, "warn": 0, "fail": 1}
    assert "inverted" in bad_report["elements"][0]["flags"]
    assert json.loads((tmp_path / "out" / "good.json").read_text())["verdict"] == "pass"


def test_one_report_file_for_several_meshes_is_refused(tmp_path, run_cli):
    good, bad = _files(tmp_path)
    res = run_cli("check", good, bad, "--json", "all.json", cwd=tmp_path)
    assert res.returncode == 2
    assert "{stem}" in res.stderr
    assert not (tmp_path / "all.json").exists()


def test_meshes_with_the_same_name_do_not_overwrite_each_others_reports(tmp_path, run_cli):
    a = write(GOOD, tmp_path / "a" / "plate.msh")
    b = write(BAD, tmp_path / "b" / "plate.msh")
    res = run_cli("check", a, b, "--json", "out/", cwd=tmp_path)
    assert res.returncode == 2
    assert "already there" in res.stderr
    # the first mesh's report is intact
    assert json.loads((tmp_path / "out" / "plate.json").read_text())["verdict"] == "pass"


def test_each_mesh_uses_its_own_configuration(tmp_path, run_cli):
    """Configuration is found per mesh: a stricter gate in one directory only."""
    warn_only = strip([6.0])  # aspect ratio 6: past the standard warn limit 5, below fail 10
    write(warn_only, tmp_path / "strict" / "plate.msh")
    write(warn_only, tmp_path / "relaxed" / "plate2.msh")
    (tmp_path / "strict" / "meshaudit.toml").write_text('fail_on = "warn"\n')
    res = run_cli("check", "strict/plate.msh", "relaxed/plate2.msh", "--quiet", cwd=tmp_path)
    assert res.returncode == 1
    assert res.stdout.splitlines()[:2] == [
        "FAIL  strict/plate.msh (1 element warn or fail)",
        "PASS  relaxed/plate2.msh",
    ]


def test_a_single_file_given_by_pattern_gets_the_full_report(tmp_path, run_cli):
    _files(tmp_path)
    res = run_cli("check", "meshes/*.msh", "--json", "single", cwd=tmp_path)
    assert res.returncode == 0  # one mesh: a plain name is the report file, as always
    assert json.loads((tmp_path / "single").read_text())["verdict"] == "pass"
    res = run_cli("check", "meshes/*.msh", "--json", "out/", cwd=tmp_path)
    assert res.returncode == 0, res.stderr
    assert "Metric distribution" in res.stdout
    assert (tmp_path / "out" / "good.json").is_file()


def test_report_directory_from_the_configuration_file(tmp_path, run_cli):
    _files(tmp_path)
    (tmp_path / "meshaudit.toml").write_text(
        'junit = "ci-reports/"\ncsv = "ci-reports/{stem}.csv"\n'
    )
    res = run_cli("check", "meshes/good.msh", "meshes/bad.vtu", "--quiet", cwd=tmp_path)
    assert res.returncode == 1, res.stderr
    names = sorted(os.listdir(tmp_path / "ci-reports"))
    assert names == ["bad.csv", "bad.xml", "good.csv", "good.xml"]
    # one CSV row per element plus the header: the bad strip has two elements
    assert len((tmp_path / "ci-reports" / "bad.csv").read_text().splitlines()) == 3
