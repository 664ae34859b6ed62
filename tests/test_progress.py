"""Progress reporting: a callback from the core, a bar on an interactive stderr only.

Checks use facts from outside the project: the element count meshio reports for the mesh
the callback describes, and what the operating system says is or is not a terminal (a
pseudo-terminal from the ``pty`` module versus the pipes of ``subprocess``).
"""

from __future__ import annotations

import io
import itertools
import os
import pty
import subprocess
import sys

import meshio

from benchmarks.meshgen import distorted_plate
from meshaudit import api
from meshaudit.cli.progress import wanted
from meshaudit.engine import run as engine
from tests.conftest import REPO


def test_audit_reports_progress_up_to_the_element_count():
    mesh = distorted_plate(3 * engine.CHUNK_SIZE // 2)  # two chunks
    calls = []
    api.audit(mesh, progress=lambda stage, done, total: calls.append((stage, done, total)))
    n = sum(len(c.data) for c in mesh.cells)  # meshio's count
    measure = [(d, t) for s, d, t in calls if s == "measure"]
    assert calls[0][0] == "read"
    assert measure[0] == (0, n) and measure[-1] == (n, n)
    assert len(measure) == 3  # start, then once per chunk
    assert all(b >= a for (a, _), (b, _) in itertools.pairwise(measure))


def test_bar_only_for_a_terminal_and_not_quiet():
    master, slave = pty.openpty()
    try:
        with open(slave, "w", closefd=False) as tty:
            assert wanted(False, tty)
            assert not wanted(True, tty)
    finally:
        os.close(master)
        os.close(slave)
    assert not wanted(False, io.StringIO())


def _plate_file(tmp_path):
    path = tmp_path / "plate.msh"
    meshio.write(path, distorted_plate(2000), file_format="gmsh", binary=True)
    return path


def test_pipeline_gets_no_progress_output(tmp_path, run_cli):
    done = run_cli("check", _plate_file(tmp_path), "--top", "0")
    assert done.returncode == 1  # the plate has planted bad elements
    assert done.stderr == ""


def test_terminal_gets_a_progress_bar(tmp_path):
    path = _plate_file(tmp_path)
    env = dict(os.environ, PYTHONPATH=str(REPO), TERM="xterm", COLUMNS="100")
    env.pop("NO_COLOR", None)
    master, slave = pty.openpty()
    try:
        proc = subprocess.Popen(
            [sys.executable, "-m", "meshaudit", "check", str(path), "--top", "0"],
            stdout=subprocess.PIPE,
            stderr=slave,
            env=env,
        )
        os.close(slave)
        chunks = []
        while True:
            try:
                data = os.read(master, 65536)
            except OSError:  # the child closed the terminal
                break
            if not data:
                break
            chunks.append(data)
        proc.communicate(timeout=120)
    finally:
        os.close(master)
    seen = b"".join(chunks).decode(errors="replace")
    assert proc.returncode == 1
    assert "reading the mesh" in seen or "measuring elements" in seen
    assert "Traceback" not in seen and "error" not in seen
