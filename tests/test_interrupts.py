"""Stopping and standard output: no temporary file survives a signal, no traceback, and a
standard output that cannot take the terminal text does not change the verdict.

Facts used (outside meshaudit): a process stopped by signal N conventionally exits with
status 128 + N (the shell's rule; 130 for SIGINT, 143 for SIGTERM); opening a FIFO for
writing blocks until a reader opens it (POSIX open(2)); /dev/full fails every write with
ENOSPC and a pipe whose read end is closed fails every write with EPIPE (Linux). The
meshes are grids of unit squares (ideal: pass) and the same with one square numbered
clockwise (negative det J, inverted: fails), common practice.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import meshio
import numpy as np
import pytest
from conftest import REPO

#: Prefix meshaudit gives its temporary report files (hidden files).
HIDDEN = "."


def grid(path: Path, n: int, clockwise: int | None = None) -> Path:
    """An n x n grid of unit squares, counter-clockwise (one clockwise if asked)."""
    xs, ys = np.meshgrid(np.arange(n + 1.0), np.arange(n + 1.0), indexing="ij")
    points = np.column_stack([xs.ravel(), ys.ravel(), np.zeros(xs.size)])
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    first = (i * (n + 1) + j).ravel()
    quads = np.column_stack([first, first + n + 1, first + n + 2, first + 1])
    if clockwise is not None:
        quads[clockwise] = quads[clockwise][::-1]
    meshio.write(path, meshio.Mesh(points, [("quad", quads)]))
    return path


def _env(**extra: str) -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env.setdefault("COLUMNS", "120")
    env.update(extra)
    return env


def _hidden(*dirs: Path) -> list[Path]:
    return [p for d in dirs for p in d.iterdir() if p.name.startswith(HIDDEN)]


def _start(args: list, **kwargs) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "meshaudit", *map(str, args)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        **kwargs,
    )


def _wait_for_temporaries(proc: subprocess.Popen, dirs: list[Path], limit: float) -> list:
    """Poll until each of ``dirs`` holds a hidden (temporary) file, or the process ends.
    Not a timed assertion: ``limit`` only stops a broken run from hanging the suite."""
    end = time.monotonic() + limit
    while time.monotonic() < end and proc.poll() is None:
        if all(_hidden(d) for d in dirs):
            return _hidden(*dirs)
        time.sleep(0.001)
    return []


STOPPING = [signal.SIGTERM, signal.SIGINT, signal.SIGHUP]


@pytest.mark.parametrize("sig", STOPPING, ids=[s.name for s in STOPPING])
def test_signal_while_a_fifo_waits_for_its_reader(sig, tmp_path: Path) -> None:
    """Every report is rendered, the JSON waits for the FIFO's reader: the temporary files
    exist (beside the CSV, and in TMPDIR for the FIFO). The signal removes them all."""
    if signal.getsignal(sig) == signal.SIG_IGN:
        pytest.skip(f"{sig.name} is ignored by this test run, so the child ignores it too")
    mesh = grid(tmp_path / "plate.vtu", 20)
    out, scratch = tmp_path / "out", tmp_path / "scratch"
    out.mkdir()
    scratch.mkdir()
    fifo = out / "report.pipe"
    os.mkfifo(fifo)
    proc = _start(
        ["check", mesh, "--no-config", "--json", fifo, "--csv", out / "r.csv"],
        env=_env(TMPDIR=str(scratch)),
    )
    seen = _wait_for_temporaries(proc, [out, scratch], limit=120)
    proc.send_signal(sig)
    stdout, stderr = proc.communicate(timeout=120)
    assert seen, f"no temporary file while waiting for the reader ({stderr!r})"
    assert proc.returncode == 128 + sig, (proc.returncode, stderr)
    assert _hidden(out, scratch) == []
    assert not (out / "r.csv").exists()
    assert os.path.exists(fifo) and not os.path.isfile(fifo)  # still the FIFO
    assert "Traceback" not in stderr + stdout
    assert stderr.splitlines() == [f"meshaudit: interrupted by {sig.name}"]


def test_sigterm_while_rendering_a_large_report(tmp_path: Path) -> None:
    """SIGTERM sent the moment a temporary report file appears (rendering under way):
    nothing hidden stays behind, nothing is replaced, status 143, no traceback."""
    mesh = grid(tmp_path / "plate.vtu", 300)  # 90,000 elements, every one listed
    out = tmp_path / "out"
    out.mkdir()
    (out / "r.json").write_text('{"from": "an earlier run"}\n')
    args = ["check", mesh, "--no-config", "--all", "--json", out / "r.json"]
    args += ["--csv", out / "r.csv", "--junit", out / "r.xml"]
    proc = _start(args, env=_env())
    seen = _wait_for_temporaries(proc, [out], limit=300)
    if seen:
        proc.send_signal(signal.SIGTERM)
    stdout, stderr = proc.communicate(timeout=300)
    assert seen, "the run ended before a temporary file was seen"
    assert proc.returncode == 143, (proc.returncode, stderr)
    assert _hidden(out) == []
    assert sorted(p.name for p in out.iterdir()) == ["r.json"]
    assert (out / "r.json").read_text() == '{"from": "an earlier run"}\n'
    assert "Traceback" not in stderr + stdout
    assert stderr.splitlines() == ["meshaudit: interrupted by SIGTERM"]


# -- standard output that cannot take the terminal text --------------------------------------
@pytest.mark.parametrize("clockwise", [None, 5], ids=["passing", "failing"])
def test_full_standard_output_keeps_the_verdict(clockwise, tmp_path: Path) -> None:
    """The reports are complete and valid, so the exit status is the verdict; one warning
    line says the terminal report was dropped."""
    if not os.path.exists("/dev/full"):
        pytest.skip("no /dev/full on this system")
    mesh = grid(tmp_path / "plate.vtu", 4, clockwise)
    args = ["check", str(mesh), "--no-config", "--json", str(tmp_path / "r.json")]
    with open("/dev/full", "w") as full:
        done = subprocess.run(
            [sys.executable, "-m", "meshaudit", *args],
            stdout=full,
            stderr=subprocess.PIPE,
            text=True,
            env=_env(),
            timeout=300,
        )
    expected = 0 if clockwise is None else 1
    assert done.returncode == expected, done.stderr
    doc = json.loads((tmp_path / "r.json").read_text())
    assert doc["verdict"] == ("pass" if clockwise is None else "fail")
    lines = done.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("meshaudit: warning: standard output")
    assert "Traceback" not in done.stderr


CLOSED_PIPE = [  # (command, element numbered clockwise or None, exit status expected)
    ("check", None, 0),
    ("check", 5, 1),
    ("explain", None, 0),
    ("explain", 5, 1),
    ("profiles", None, 0),
    ("compare", None, 0),
]


@pytest.mark.parametrize(("command", "clockwise", "expected"), CLOSED_PIPE)
def test_closed_pipe_on_standard_output_is_quiet(
    command: str, clockwise: int | None, expected: int, tmp_path: Path
) -> None:
    """``| head -1`` that has already gone: the reader closed the pipe. No traceback, no
    message (the reader chose to stop), the verdict's exit status, the reports written."""
    mesh = grid(tmp_path / "plate.vtu", 4, clockwise)
    report = tmp_path / "r.json"
    args = {
        "check": ["check", mesh, "--no-config", "--json", report],
        "profiles": ["profiles"],
        "explain": ["explain", mesh, "5", "--no-config", "--json", report],
        "compare": ["compare", mesh, mesh, "--no-config", "--json", report],
    }[command]
    read_end, write_end = os.pipe()
    os.close(read_end)
    try:
        done = subprocess.run(
            [sys.executable, "-m", "meshaudit", *map(str, args)],
            stdout=write_end,
            stderr=subprocess.PIPE,
            text=True,
            env=_env(),
            timeout=300,
        )
    finally:
        os.close(write_end)
    assert done.returncode == expected, done.stderr
    assert done.stderr == ""
    if command != "profiles":
        assert json.loads(report.read_text())
