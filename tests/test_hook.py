"""End to end: a git repository with a configuration file and two revisions of a mesh; the
pre-commit hook of .pre-commit-hooks.yaml accepts the good revision and rejects the bad one.

pre-commit itself is not needed: the test installs a plain git pre-commit hook that runs
the hook's ``entry`` on the staged files matching its ``files`` pattern, which is what
pre-commit does for a ``language: python`` hook.

Reference facts: a grid of unit squares is ideal (aspect ratio 1); stretching it 6 times
along x gives 6 x 1 rectangles, aspect ratio 6 (Robinson 1987): within the built-in
standard fail limit (10) but past the project's own fail limit (5) set in the
configuration file.
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys

import pytest
from conftest import REPO
from pipeline_meshes import grid, write

CONFIG = """\
# bracket plate project: tighter aspect ratio than the built-in standard
[limits]
extends = "standard"
[limits.quad]
aspect_ratio = { warn = 3, fail = 5, source = "bracket plate project rule" }
"""


def _hook_definition() -> dict[str, str]:
    """The scalar fields of the single hook in .pre-commit-hooks.yaml."""
    text = (REPO / ".pre-commit-hooks.yaml").read_text()
    fields = dict(re.findall(r"^\s*-?\s*(\w+):\s*(.+?)\s*$", text, flags=re.M))
    assert fields["id"] == "meshaudit" and fields["language"] == "python"
    return fields


def _git(repo, *args, check=True):
    env = dict(os.environ)
    env.update(
        GIT_AUTHOR_NAME="Bracket Analyst",
        GIT_AUTHOR_EMAIL="analyst@bracket.invalid",
        GIT_COMMITTER_NAME="Bracket Analyst",
        GIT_COMMITTER_EMAIL="analyst@bracket.invalid",
        PYTHONPATH=str(REPO) + os.pathsep + env.get("PYTHONPATH", ""),
        COLUMNS="120",
    )
    return subprocess.run(
        ["git", *args], cwd=repo, env=env, capture_output=True, text=True, check=check
    )


def _install_hook(repo, fields: dict[str, str]) -> None:
    """A git pre-commit hook running the entry on the staged matching files."""
    entry = shlex.split(fields["entry"])
    assert entry[0] == "meshaudit"
    command = " ".join([shlex.quote(sys.executable), "-m", "meshaudit", *entry[1:]])
    script = (
        "#!/bin/sh\n"
        "files=$(git diff --cached --name-only --diff-filter=ACM | "
        f"grep -E {shlex.quote(fields['files'])})\n"
        '[ -z "$files" ] && exit 0\n'
        f"exec {command} $files\n"
    )
    hook = repo / ".git" / "hooks" / "pre-commit"
    hook.write_text(script)
    hook.chmod(0o755)


@pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")
def test_the_hook_accepts_the_good_revision_and_rejects_the_bad_one(tmp_path, run_cli):
    fields = _hook_definition()
    assert re.search(fields["files"], "parts/plate.msh")
    assert not re.search(fields["files"], "notes.txt")
    repo = tmp_path / "bracket"
    repo.mkdir()
    _git(repo, "init", "-q")
    _install_hook(repo, fields)
    (repo / "meshaudit.toml").write_text(CONFIG)
    good = grid(3, 2)
    write(good, repo / "parts" / "plate.msh")
    _git(repo, "add", ".")
    first = _git(repo, "commit", "-q", "-m", "bracket plate mesh", check=False)
    assert first.returncode == 0, first.stdout + first.stderr
    assert "PASS  parts/plate.msh" in first.stdout + first.stderr  # git shows hook output on stderr

    stretched = grid(3, 2)
    stretched.points[:, 0] *= 6.0
    write(stretched, repo / "parts" / "plate.msh")
    _git(repo, "add", "parts/plate.msh")
    second = _git(repo, "commit", "-q", "-m", "coarser plate mesh", check=False)
    assert second.returncode != 0
    assert "FAIL  parts/plate.msh" in second.stdout + second.stderr
    log = _git(repo, "log", "--oneline").stdout.splitlines()
    assert len(log) == 1  # the bad revision was not committed

    # the configuration file is what rejects it: the built-in limits alone would pass it
    plain = run_cli("check", "--no-config", "--quiet", "parts/plate.msh", cwd=repo)
    assert plain.returncode == 0, plain.stdout
    # and the regression gate between the committed and the staged revision fails too
    (tmp_path / "old.msh").write_text(_git(repo, "show", "HEAD:parts/plate.msh").stdout)
    cmp = run_cli("compare", tmp_path / "old.msh", "parts/plate.msh", "--quiet", cwd=repo)
    assert cmp.returncode == 1, cmp.stdout
