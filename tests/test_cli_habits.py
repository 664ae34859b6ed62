"""Command-line habits: short options, ``init`` into a directory, ``--color-by`` only with
a picture, a hint to use ``--format`` when the extension names another format.

References: the exit-status contract (0 pass, 1 fail, 2 bad input, one line on stderr) and
the TOML grammar (Python's tomllib parses the starter file); the finding kinds and their
default severities are the table of meshaudit.judge.finding_kinds, which the starter must
list in full.
"""

from __future__ import annotations

import json
import re

import tomllib
from conftest import SAMPLES

from meshaudit.cli.init import STARTER
from meshaudit.judge.finding_kinds import KINDS

PLATE = SAMPLES / "bracket_plate.msh"


def test_short_options_mean_the_long_ones(run_cli, tmp_path):
    short = run_cli("check", "-q", "-p", "strict", "-n", "2", "-j", tmp_path / "s.json", PLATE)
    long = run_cli(
        "check",
        "--quiet",
        "--profile",
        "strict",
        "--top",
        "2",
        "--json",
        tmp_path / "l.json",
        PLATE,
    )
    assert short.returncode == long.returncode == 0
    assert short.stdout == long.stdout and len(short.stdout.splitlines()) == 1  # quiet
    a = json.loads((tmp_path / "s.json").read_text())
    b = json.loads((tmp_path / "l.json").read_text())
    assert a["profile"]["name"] == b["profile"]["name"] == "strict"
    assert a["counts"] == b["counts"]


def test_init_into_a_new_directory_and_never_over_a_file(run_cli, tmp_path):
    target = tmp_path / "project" / "meshes"
    res = run_cli("init", f"{target}/")
    assert res.returncode == 0, res.stderr
    written = target / "meshaudit.toml"
    assert written.read_text() == STARTER
    written.write_text("# mine\n")
    again = run_cli("init", f"{target}/")
    assert again.returncode == 2 and again.stderr.count("\n") == 1
    assert "already exists" in again.stderr
    assert written.read_text() == "# mine\n"  # untouched
    forced = run_cli("init", "--force", f"{target}/")
    assert forced.returncode == 0 and written.read_text() == STARTER
    # a name without a trailing separator that does not exist is a file name
    res = run_cli("init", tmp_path / "custom.toml")
    assert res.returncode == 0 and (tmp_path / "custom.toml").read_text() == STARTER


def test_starter_shows_every_section_and_every_finding_kind():
    data = tomllib.loads(STARTER)  # valid TOML
    assert set(data) == {"fail_on", "top", "limits", "compare"}
    for section in ("[limits]", "[limits.quad]", "[limits.triangle]", "[limits.findings]"):
        assert section in STARTER
    assert "[regions.fillet]" in STARTER and "[compare]" in STARTER
    for kind in KINDS:  # commented, with its default severity
        assert re.search(rf'^# {kind.name}\s+= "{kind.severity}"$', STARTER, re.M), kind.name
    # uncommenting the findings section gives a file that sets each kind to its default
    uncommented = "\n".join(
        line[2:] if line.startswith("# ") and "=" in line and "tolerance" not in line else line
        for line in STARTER.split("[limits.findings]")[1].split("# Stricter")[0].splitlines()
    )
    findings = tomllib.loads(uncommented)
    assert findings.pop("overlap_fraction") == 1e-3
    assert findings == {k.name: k.severity for k in KINDS}


def test_color_by_without_a_picture_is_an_error(run_cli, tmp_path):
    res = run_cli("check", PLATE, "--color-by", "skew", "--json", tmp_path / "r.json")
    assert res.returncode == 2
    assert res.stderr.count("\n") == 1 and "--plot" in res.stderr
    assert not (tmp_path / "r.json").exists()  # refused before anything is written
    ok = run_cli("check", "-q", PLATE, "--color-by", "skew", "--html", tmp_path / "r.html")
    assert ok.returncode == 0, ok.stderr


def test_wrong_extension_gets_a_format_hint(run_cli, tmp_path):
    wrong = tmp_path / "plate.vtu"
    wrong.write_bytes(PLATE.read_bytes())  # a gmsh file named .vtu
    res = run_cli("check", wrong)
    assert res.returncode == 2 and res.stderr.count("\n") == 1
    assert "try --format gmsh" in res.stderr
    fixed = run_cli("check", "-q", wrong, "--format", "gmsh")
    assert fixed.returncode == 0, fixed.stderr
