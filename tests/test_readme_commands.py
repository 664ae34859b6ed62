"""Every ``meshaudit`` command the README shows runs and does what the README says.

The README is the reference here: each command is taken from its text (code blocks and
inline code), run in a scratch folder laid out as the README's examples assume (the
bundled samples, a ``parts/`` and a ``meshes/`` folder), and checked against what the
README says about it. A command added to the README without an entry here fails
``test_every_command_in_the_readme_is_checked``; a synopsis line (with placeholders such as
MESH or FILE) must name only options the command accepts.
"""

from __future__ import annotations

import functools
import json
import os
import re
import shutil
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

import pytest
from conftest import REPO, SAMPLES

README = (REPO / "README.md").read_text(encoding="utf-8")

#: Words that stand for something the user supplies, in synopsis lines.
PLACEHOLDERS = re.compile(r"\b(MESH|FILE|ID|OLD|NEW|DIR|NAME|METRIC|N|PATTERN|OUT|A|B)\b|\[|\.\.\.")


def _commands() -> list[str]:
    """Command lines starting with ``meshaudit`` in code blocks and inline code."""
    found: list[str] = []
    for block in re.findall(r"```[a-z]*\n(.*?)```", README, flags=re.S):
        for line in block.splitlines():
            line = line.strip().removeprefix("- ").removeprefix("exec ")
            line = line.split("&& ", 1)[-1] if line.startswith("pip install") else line
            line = line.removeprefix("entry: ")
            if line.startswith("meshaudit "):
                found.append(line.split("  #", 1)[0].strip())
    for span in re.findall(r"`([^`\n]+)`", README):
        if span.startswith("meshaudit ") and " " in span:
            found.append(span.strip())
    return list(dict.fromkeys(found))


#: Inline mentions of a command by name in the prose, not commands to run as they stand.
NAMES = {"meshaudit check", "meshaudit compare", "meshaudit explain", "meshaudit fix"}


def _concrete(cmd: str) -> bool:
    return not PLACEHOLDERS.search(cmd.removeprefix("meshaudit ")) and cmd not in NAMES


@dataclass
class Promise:
    """What the README says a command does."""

    status: int
    says: list[str] = field(default_factory=list)  # text in stdout
    writes: list[str] = field(default_factory=list)  # files made, relative to the folder
    check: object = None  # optional callable(folder, result)


def _defects_listed(folder: Path, res: subprocess.CompletedProcess) -> None:
    # "fails (exit status 1) and lists the bad elements": ids in the worst-elements table
    assert "Worst elements" in res.stdout
    assert re.search(r"\bfail\b", res.stdout)


def _every_source(folder: Path, res: subprocess.CompletedProcess) -> None:
    # "prints every limit with its source": a source column in each built-in's table, and
    # a row for every limit of each family
    from meshaudit.judge.profiles import BUILTIN

    assert res.stdout.count("source") >= len(BUILTIN)
    rows = {tuple(re.split(r"\s*│\s*", line)[1:3]) for line in res.stdout.splitlines()}
    for profile in BUILTIN.values():
        for family, limits in profile.limits.items():
            for metric in limits:
                assert (family, metric) in rows, f"{profile.name}: no row for {family} {metric}"


def _fixed_file_reads_the_same(folder: Path, res: subprocess.CompletedProcess) -> None:
    # "so they stay, the command says why (exit status 1) and names the outline nodes that
    # lie off the outline": the repaired file fails on the same three elements, and the
    # nodes named are the three plate corners samples/make_samples.py moved
    import meshaudit

    report = meshaudit.audit(folder / "bracket_plate_fixed.msh")
    assert sorted(report.ids[report.failing].tolist()) == [210, 227, 354]
    for element in ("210", "227", "354"):
        assert element in res.stdout
    text = re.sub(r"[\s│]+", " ", res.stdout)  # table cells wrap: read them as one line
    for node in ("33", "45", "92"):
        assert f"--restore-outline {node} puts it back" in text


def _restored_plate_passes(folder: Path, res: subprocess.CompletedProcess) -> None:
    # "The three plate corners go back exactly to (0, 0), (0, 60) and (120, 0) ... and
    # meshaudit check bracket_plate_fixed.msh passes"
    import meshio
    import numpy as np

    import meshaudit

    path = folder / "bracket_plate_fixed.msh"
    assert meshaudit.audit(path).passed
    points = meshio.read(path).points[:, :2]
    for corner in [(0.0, 0.0), (0.0, 60.0), (120.0, 0.0)]:
        assert np.min(np.linalg.norm(points - corner, axis=1)) == 0.0


def _junit_and_json_per_mesh(folder: Path, res: subprocess.CompletedProcess) -> None:
    reports = folder / "mesh-reports"
    for mesh in (folder / "meshes").rglob("*.msh"):
        assert (reports / f"{mesh.stem}.xml").is_file()
        assert json.loads((reports / f"{mesh.stem}.json").read_text())["schema"]


def _lug_defects_listed(folder: Path, res: subprocess.CompletedProcess) -> None:
    # "an inverted hexahedron, a sheared one and a sliver wedge (fails)"
    _defects_listed(folder, res)
    assert re.search(r"│ 46 │ hexahedron │ fail .*inverted", res.stdout)
    assert re.search(r"│ +5 │ hexahedron │ fail", res.stdout)
    assert re.search(r"│ 48 │ wedge +│ fail", res.stdout)


PROMISES: dict[str, Promise] = {
    "meshaudit check samples/bracket_plate.msh": Promise(0, ["PASS"]),
    "meshaudit check samples/bracket_lug.vtu": Promise(0, ["PASS", "48 hexahedron, 16 wedge"]),
    "meshaudit check samples/bracket_plate.msh --material E=210000,nu=0.3,rho=7.85e-9,t=2": (
        Promise(0, ["PASS", "time step", "stable_time_step", "bending_error"])
    ),
    "meshaudit check samples/bracket_lug_defects.vtu": Promise(
        1, ["FAIL", "3 of 64 elements fail"], check=_lug_defects_listed
    ),
    "meshaudit check samples/bracket_plate_defects.msh": Promise(
        1, ["FAIL"], check=_defects_listed
    ),
    "meshaudit check samples/bracket_crack_tip.vtu": Promise(
        1, ["FAIL", "coincident_nodes", "crack_edges", "quarter_point 8", "0 of 40 elements fail"]
    ),
    "meshaudit check samples/bracket_crack_tip.vtu --profile samples/crack_faces_intended.toml": (
        Promise(0, ["PASS", "quarter_point 8", "0 of 40 elements fail"])
    ),
    "meshaudit check samples/bracket_flange_shell.vtu": Promise(0, ["PASS", "flipped_normal 1"]),
    "meshaudit check parts/plate.msh parts/rib.vtu": Promise(0, ["2 meshes: 2 pass"]),
    "meshaudit check 'meshes/**/*.msh' --json reports/ --junit 'reports/{stem}.xml'": Promise(
        1, ["meshes"], ["reports/plate.json", "reports/plate.xml", "reports/defects.xml"]
    ),
    "meshaudit check 'meshes/**/*.msh' --junit mesh-reports/ --json mesh-reports/": Promise(
        1, ["meshes"], check=_junit_and_json_per_mesh
    ),
    "meshaudit compare /tmp/plate-old.msh parts/plate.msh --json compare.json": Promise(
        0, ["OK"], ["compare.json"]
    ),
    "meshaudit compare /tmp/plate-main.msh meshes/plate.msh --json mesh-compare.json": Promise(
        0, ["OK"], ["mesh-compare.json"]
    ),
    "meshaudit check --quiet": Promise(0, ["PASS"]),  # the hook, run on one staged mesh
    "meshaudit check --quiet $files": Promise(0, ["PASS"]),
    "meshaudit check part.dat --format gmsh": Promise(0, ["PASS"]),
    "meshaudit profiles": Promise(0, ["standard", "strict", "lenient"], check=_every_source),
    "meshaudit init": Promise(0, ["wrote"], ["meshaudit.toml"]),
    "meshaudit --help": Promise(0, ["check", "fix", "explain", "profiles", "compare", "init"]),
    "meshaudit fix samples/bracket_plate_defects.msh -o bracket_plate_fixed.msh": Promise(
        1,
        ["elements reversed", "bow-tie quads reordered", "Still failing", "3 of 374"],
        ["bracket_plate_fixed.msh"],
        check=_fixed_file_reads_the_same,
    ),
    "meshaudit fix samples/bracket_plate_defects.msh -o bracket_plate_fixed.msh "
    "--restore-outline 33,45,92": Promise(
        0,
        ["outline nodes restored", "33, 45, 92", "PASS", "0 of 374 elements fail"],
        ["bracket_plate_fixed.msh"],
        check=_restored_plate_passes,
    ),
    "meshaudit check samples/bracket_plate_defects.msh --plot fix-before.png": Promise(
        1, ["5 of 374 elements fail"], ["fix-before.png"]
    ),
    "meshaudit check bracket_plate_fixed.msh": Promise(0, ["PASS", "0 of 374 elements fail"]),
    "meshaudit check bracket_plate_fixed.msh --plot fix-after.png": Promise(
        0, ["PASS", "0 of 374 elements fail"], ["fix-after.png"]
    ),
}


def _folder(tmp: Path) -> Path:
    """A scratch project: the samples, parts/ and meshes/ as the README's examples use."""
    shutil.copytree(SAMPLES, tmp / "samples")
    (tmp / "parts").mkdir()
    shutil.copy(SAMPLES / "bracket_plate.msh", tmp / "parts" / "plate.msh")
    shutil.copy(SAMPLES / "bracket_flange_shell.vtu", tmp / "parts" / "rib.vtu")
    (tmp / "meshes" / "web").mkdir(parents=True)
    shutil.copy(SAMPLES / "bracket_plate.msh", tmp / "meshes" / "plate.msh")
    shutil.copy(SAMPLES / "bracket_plate_defects.msh", tmp / "meshes" / "web" / "defects.msh")
    shutil.copy(SAMPLES / "bracket_plate.msh", tmp / "part.dat")
    # the revisions the compare examples take from git: the same plate here
    shutil.copy(SAMPLES / "bracket_plate.msh", tmp / "plate-old.msh")
    shutil.copy(SAMPLES / "bracket_plate.msh", tmp / "plate-main.msh")
    # the repaired plate the README's fix example writes, for the commands that read it
    _write_fixed_plate(tmp / "bracket_plate_fixed.msh")
    return tmp


def _write_fixed_plate(path: Path) -> None:
    import meshio

    meshio.write(path, _fixed_plate(), "gmsh")


@functools.cache
def _fixed_plate():
    import meshaudit
    from meshaudit.repair import RepairOptions

    options = RepairOptions(restore=(33, 45, 92))
    return meshaudit.fix(SAMPLES / "bracket_plate_defects.msh", options=options).mesh


def _run(cmd: str, folder: Path) -> subprocess.CompletedProcess:
    cmd = cmd.replace("/tmp/", f"{folder}/")
    cmd = cmd.replace("$files", "meshes/plate.msh")
    if cmd == "meshaudit check --quiet":
        cmd += " meshes/plate.msh"
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env["COLUMNS"] = "200"
    # the shell expands nothing: quotes are kept as the README writes them
    argv = [sys.executable, "-m", "meshaudit", *_split(cmd.removeprefix("meshaudit"))]
    return subprocess.run(argv, cwd=folder, env=env, capture_output=True, text=True, timeout=300)


def _split(args: str) -> list[str]:
    import shlex

    return shlex.split(args)


def test_every_command_in_the_readme_is_checked():
    concrete = [c for c in _commands() if _concrete(c)]
    assert set(concrete) == set(PROMISES), (
        f"README commands without a promise here: {sorted(set(concrete) - set(PROMISES))}; "
        f"promises the README no longer shows: {sorted(set(PROMISES) - set(concrete))}"
    )


@pytest.mark.parametrize("cmd", sorted(PROMISES))
def test_readme_command_does_what_the_readme_says(cmd, tmp_path):
    folder = _folder(tmp_path)
    promise = PROMISES[cmd]
    res = _run(cmd, folder)
    assert "Traceback" not in res.stderr
    assert res.returncode == promise.status, res.stdout[-2000:] + res.stderr
    for text in promise.says:
        assert text in res.stdout, f"{cmd}: README promises {text!r}"
    for rel in promise.writes:
        assert (folder / rel).is_file(), f"{cmd}: README promises it writes {rel}"
    if promise.check is not None:
        promise.check(folder, res)


def _options(cmd: str) -> list[str]:
    return re.findall(r"(?<![\w-])(--[a-z][a-z-]*)", cmd)


@pytest.mark.parametrize("cmd", [c for c in _commands() if not _concrete(c)])
def test_synopsis_names_only_options_the_command_takes(cmd, tmp_path):
    sub = cmd.split()[1]
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env["COLUMNS"] = "200"
    res = subprocess.run(
        [sys.executable, "-m", "meshaudit", sub, "--help"],
        capture_output=True,
        text=True,
        env=env,
        timeout=60,
    )
    assert res.returncode == 0, res.stderr
    for option in _options(cmd):
        assert option in res.stdout, f"{cmd}: {sub} --help does not list {option}"


# -- the README's Python blocks ---------------------------------------------------------


def _python_blocks() -> list[str]:
    return re.findall(r"```python\n(.*?)```", README, flags=re.S)


def _shown_value(comment: str) -> object:
    """The value a '# ...' comment shows (numpy reprs too), or a marker when the comment is
    prose or elides digits ('3.08...')."""
    import numpy as np

    text = comment.split(":", 1)[0] if re.match(r"^[\w.]+\(.*\):", comment) else comment
    names = {"array": lambda v, dtype=None: np.asarray(v).tolist(), "object": object}
    try:
        return eval(text, {"__builtins__": {}}, names)  # literals and array(...) only
    except Exception:
        return _PROSE


_PROSE = object()


def _same(got: object, shown: object) -> bool:
    import numpy as np

    if shown is Ellipsis:  # '...' stands for any value
        return True
    if isinstance(shown, str) and "..." in shown:  # elided text: the rest must match
        pattern = ".*".join(re.escape(part) for part in shown.split("..."))
        return isinstance(got, str) and re.fullmatch(pattern, got, flags=re.S) is not None
    if isinstance(got, np.ndarray):
        got = got.tolist()
    if isinstance(got, (tuple, list)) and isinstance(shown, (tuple, list)):
        return len(got) == len(shown) and all(_same(a, b) for a, b in zip(got, shown))
    if isinstance(got, dict) and isinstance(shown, dict):
        return got.keys() == shown.keys() and all(_same(got[k], shown[k]) for k in got)
    if isinstance(got, (float, np.floating)) and isinstance(shown, (int, float)):
        return bool(np.isclose(float(got), shown, rtol=1e-9, atol=1e-12))
    return got == shown


@pytest.mark.parametrize("block", range(len(_python_blocks())))
def test_readme_python_block_runs_and_shows_true_values(block, tmp_path, monkeypatch):
    """Each block runs as written (from a folder holding the samples); every line
    ``expression  # value`` shows the value the expression really has."""
    import ast

    shutil.copytree(SAMPLES, tmp_path / "samples")
    monkeypatch.chdir(tmp_path)
    source = _python_blocks()[block]
    lines = source.splitlines()
    ns: dict = {}
    for stmt in ast.parse(source).body:
        code = compile(ast.Module([stmt], []), f"README python block {block}", "exec")
        if not isinstance(stmt, ast.Expr):
            exec(code, ns)
            continue
        value = eval(compile(ast.Expression(stmt.value), "README", "eval"), ns)
        line = lines[stmt.end_lineno - 1]
        if "  # " not in line:
            continue
        shown = _shown_value(line.split("  # ", 1)[1].strip())
        if shown is _PROSE:
            continue
        assert _same(value, shown), f"README: {line.strip()} but it is {value!r}"
