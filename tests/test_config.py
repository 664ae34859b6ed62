"""Configuration discovery, command-line precedence and ``meshaudit init``.

Reference facts: a 6 x 1 rectangle has aspect ratio 6 (Robinson 1987, principal axes), past
the standard warn limit 5 and within its fail limit 10; a unit square is ideal (aspect
ratio 1, scaled Jacobian 1) and passes every built-in profile (common practice).
"""

from __future__ import annotations

import json
import os

import pytest
from pipeline_meshes import grid, strip, write

from meshaudit.cli.config import (
    Tolerances,
    discover,
    find_config,
    load_settings,
)
from meshaudit.cli.init import STARTER, write_starter
from meshaudit.errors import ProfileError
from meshaudit.judge.profiles import BUILTIN

PYPROJECT_OTHER_TOOL = '[project]\nname = "bracket"\n[tool.other]\nx = 1\n'


def test_discovery_walks_up_from_the_mesh_and_skips_pyprojects_without_our_table(tmp_path):
    (tmp_path / "meshaudit.toml").write_text("top = 3\n")
    deep = tmp_path / "parts" / "bracket"
    deep.mkdir(parents=True)
    (tmp_path / "parts" / "pyproject.toml").write_text(PYPROJECT_OTHER_TOOL)
    assert find_config(deep) == (tmp_path / "meshaudit.toml").resolve()
    # a [tool.meshaudit] table makes the nearer pyproject the configuration
    (tmp_path / "parts" / "pyproject.toml").write_text("[tool.meshaudit]\ntop = 4\n")
    found = find_config(deep)
    assert found.name == "pyproject.toml"
    assert load_settings(found).top == 4
    # in one directory meshaudit.toml wins over pyproject.toml
    (tmp_path / "parts" / "meshaudit.toml").write_text("top = 5\n")
    assert load_settings(find_config(deep)).top == 5


def test_discovery_falls_back_to_the_working_directory(tmp_path):
    mesh_dir = tmp_path / "a"
    work = tmp_path / "b"
    mesh_dir.mkdir()
    work.mkdir()
    (work / "meshaudit.toml").write_text('fail_on = "warn"\n')
    mesh = mesh_dir / "plate.vtu"
    if find_config(tmp_path) is not None:  # a configuration above the test directory
        pytest.skip("a meshaudit configuration exists above the temporary directory")
    assert discover(mesh, work) == (work / "meshaudit.toml").resolve()


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("colour = 1\n", "unknown key 'colour'"),
        ('fail_on = "never"\n', "fail_on"),
        ("top = -1\n", "top"),
        ('profile = "standard"\n[limits]\nextends = "strict"\n', "not both"),
        ("[limits.quad]\nskew = { warn = 50, fail = 40 }\n", "warn 50.0 is above fail"),
        ("[compare]\nmedian_score_drop = -1\n", "compare.median_score_drop"),
        ("[compare]\nnew_failing = 0.5\n", "whole number"),
        ("[regions]\nfillet = 3\n", "[regions.fillet] must be a table"),
        ("top = [\n", "not valid TOML"),
    ],
)
def test_malformed_configuration_is_one_clear_error(tmp_path, text, message):
    path = tmp_path / "meshaudit.toml"
    path.write_text(text)
    with pytest.raises(ProfileError) as err:  # ConfigError is a ProfileError
        load_settings(path)
    assert message in str(err.value)


def test_command_line_overrides_the_file(tmp_path, run_cli):
    write(strip([6.0]), tmp_path / "plate.vtu")
    (tmp_path / "meshaudit.toml").write_text('fail_on = "warn"\n')
    assert run_cli("check", "plate.vtu", "--quiet", cwd=tmp_path).returncode == 1
    assert run_cli("check", "plate.vtu", "--fail-on", "fail", cwd=tmp_path).returncode == 0
    assert run_cli("check", "plate.vtu", "--no-config", cwd=tmp_path).returncode == 0


def test_file_limits_apply_and_profile_option_replaces_them(tmp_path, run_cli):
    write(strip([6.0]), tmp_path / "mesh" / "plate.vtu")
    (tmp_path / "pyproject.toml").write_text(
        "[tool.meshaudit.limits.quad]\naspect_ratio = { warn = 4, fail = 5.5 }\n"
    )
    res = run_cli("check", "mesh/plate.vtu", "--json", "r.json", cwd=tmp_path)
    assert res.returncode == 1, res.stdout + res.stderr
    breach = json.loads((tmp_path / "r.json").read_text())["elements"][0]["breaches"]
    assert breach["aspect_ratio"] == {"value": pytest.approx(6.0), "level": "fail", "limit": 5.5}
    res = run_cli("check", "mesh/plate.vtu", "--profile", "standard", cwd=tmp_path)
    assert res.returncode == 0


def test_explicit_config_file_and_report_paths_relative_to_it(tmp_path, run_cli):
    write(grid(2, 2), tmp_path / "meshes" / "plate.msh")
    conf = tmp_path / "ci" / "pyproject.toml"
    conf.parent.mkdir()
    conf.write_text('[tool.meshaudit]\njson = "reports/{stem}-quality.json"\n')
    res = run_cli("check", "meshes/plate.msh", "--config", conf, "--quiet", cwd=tmp_path)
    assert res.returncode == 0, res.stderr
    data = json.loads((tmp_path / "ci" / "reports" / "plate-quality.json").read_text())
    assert data["verdict"] == "pass"
    assert data["counts"] == {"ok": 4, "warn": 0, "fail": 0}


def test_bad_configuration_exits_2_with_one_line(tmp_path, run_cli):
    write(grid(1, 1), tmp_path / "plate.vtu")
    (tmp_path / "meshaudit.toml").write_text("[limits]\nextends = 'coarse'\n")
    res = run_cli("check", "plate.vtu", cwd=tmp_path)
    assert res.returncode == 2
    assert res.stdout == ""
    assert len(res.stderr.strip().splitlines()) == 1
    assert "extends unknown profile 'coarse'" in res.stderr


def test_init_writes_a_valid_commented_starter_and_never_overwrites(tmp_path, run_cli):
    res = run_cli("init", cwd=tmp_path)
    assert res.returncode == 0, res.stderr
    path = tmp_path / "meshaudit.toml"
    assert path.read_text() == STARTER
    settings = load_settings(path)
    assert settings.fail_on == "fail" and settings.top == 10
    assert settings.tolerances == Tolerances()  # the file shows the true defaults
    path.write_text("top = 1\n")
    res = run_cli("init", cwd=tmp_path)
    assert res.returncode == 2
    assert "already exists" in res.stderr
    assert path.read_text() == "top = 1\n"
    other = write_starter(tmp_path / "other.toml")
    assert other.read_text() == STARTER
    assert sorted(os.listdir(tmp_path)) == ["meshaudit.toml", "other.toml"]


def test_starter_material_example_loads_when_uncommented(tmp_path, run_cli):
    # the starter's [materials] example is commented out (no material unless a user adds
    # one); with its lines uncommented it is a valid configuration whose materials are the
    # ones the comments state: steel for the default, aluminium in plane strain for "web"
    plain = tmp_path / "plain" / "meshaudit.toml"
    plain.parent.mkdir()
    assert load_settings(write_starter(plain)).materials == {}
    block = STARTER[STARTER.index("# [materials.default]") :]
    assert block.strip(), "the starter shows a [materials] example"
    lines = STARTER[: STARTER.index("# [materials.default]")].splitlines()
    lines += [line[2:] if line.startswith("# ") else line for line in block.splitlines()]
    path = tmp_path / "meshaudit.toml"
    path.write_text("\n".join(lines) + "\n")
    materials = load_settings(path).materials
    assert set(materials) == {"default", "web"}
    assert (materials["default"].E, materials["default"].nu) == (210000.0, 0.3)
    assert (materials["default"].rho, materials["default"].t) == (7.85e-9, 2.0)
    assert materials["web"].plane == "strain" and materials["web"].t == 1.0
    # and an audit with it measures the time step (the default entry covers the grid)
    write(grid(2, 1), tmp_path / "plate.vtu")
    json_path = tmp_path / "r.json"
    res = run_cli("check", "plate.vtu", "--json", json_path, cwd=tmp_path)
    assert res.returncode == 0, res.stderr
    data = json.loads(json_path.read_text())
    assert data["materials"]["default"]["E"] == 210000.0
    assert data["time_step"]["median"] > 0


def test_profiles_lists_builtins_files_and_the_configured_limits(tmp_path, run_cli):
    res = run_cli("profiles")
    assert res.returncode == 0
    for name in ("standard", "strict", "lenient"):
        assert f"{name}: " in res.stdout
    assert res.stdout.count("aspect_ratio") == 9  # quad, triangle, hexahedron in each built-in
    (tmp_path / "meshaudit.toml").write_text(
        "[limits.quad]\n"
        'skew = { warn = 12, fail = 24, source = "bracket plate project rule" }\n'
        "[regions.fillet]\n"
        'extends = "strict"\n'
    )
    res = run_cli("profiles", "--configured", cwd=tmp_path)
    assert res.returncode == 0, res.stderr
    assert "bracket plate project rule" in res.stdout
    assert "region 'fillet'" in res.stdout
    res = run_cli("profiles", "coarse", cwd=tmp_path)
    assert res.returncode == 2
    assert "unknown profile 'coarse'" in res.stderr


def test_profile_file_relative_to_the_config_and_regions_inherit_the_file_limits(tmp_path):
    (tmp_path / "limits").mkdir()
    (tmp_path / "limits" / "plate.toml").write_text(
        'name = "plate"\n[quad]\naspect_ratio = { warn = 4, fail = 5.5 }\n'
    )
    (tmp_path / "meshaudit.toml").write_text(
        'profile = "limits/plate.toml"\n[regions.web.quad]\nskew = { warn = 5, fail = 9 }\n'
    )
    settings = load_settings(tmp_path / "meshaudit.toml")
    assert settings.profile.name == "plate"
    web = settings.regions["web"]
    assert web.limit("quad", "aspect_ratio").fail == 5.5  # from the file's profile
    assert web.limit("quad", "skew").fail == 9  # the region's own override
    standard_skew = BUILTIN["standard"].limit("quad", "skew")
    assert settings.profile.limit("quad", "skew") == standard_skew  # untouched
