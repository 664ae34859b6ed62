"""``meshaudit --help`` (and each command's ``--help``) starts without numpy, rich,
matplotlib or meshio, as the README's Performance section says; and the command line
stays a layer over the library: no module outside ``meshaudit.cli`` imports it, and none
outside it and ``meshaudit.outputs`` imports an output (the core returns plain data)."""

from __future__ import annotations

import ast
import subprocess
import sys

import pytest
from conftest import REPO

HEAVY = ("numpy", "rich", "matplotlib", "meshio")


@pytest.mark.parametrize("command", ["", "check", "explain", "profiles", "compare", "init"])
def test_help_loads_no_heavy_library(command):
    argv = [command, "--help"] if command else ["--help"]
    code = (
        "import sys\n"
        "from meshaudit.cli import main\n"
        "try:\n"
        f"    main({argv!r})\n"
        "except SystemExit:\n"
        "    pass\n"
        f"print(sorted({{m.split('.')[0] for m in sys.modules}} & set({HEAVY!r})))\n"
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO)
    assert res.returncode == 0, res.stderr
    assert "usage: meshaudit" in res.stdout
    assert res.stdout.strip().splitlines()[-1] == "[]"


@pytest.mark.parametrize(
    ("layer", "allowed"), [("cli", ("cli", "__main__.py")), ("outputs", ("cli", "outputs"))]
)
def test_the_core_imports_neither_outputs_nor_the_command_line(layer, allowed):
    package = REPO / "meshaudit"
    offenders = []
    for path in package.rglob("*.py"):
        rel = path.relative_to(package).parts
        if rel[0] in allowed:
            continue
        level_up = len(rel) - 1  # relative imports climbing to the package root
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom):
                name = node.module or ""
                if node.level and node.level == level_up + 1:
                    name = "meshaudit." + name
                if name == f"meshaudit.{layer}" or name.startswith(f"meshaudit.{layer}."):
                    offenders.append(str(path.relative_to(REPO)))
                if node.level == level_up + 1 and node.module is None:
                    if any(a.name == layer for a in node.names):
                        offenders.append(str(path.relative_to(REPO)))
    assert offenders == []
