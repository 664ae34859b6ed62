"""Report destinations: never replace what the user did not name as a report.

Facts used (outside meshaudit): POSIX file types (a character device such as /dev/null, a
FIFO made by mkfifo, a symbolic link) and identity (two names are one file when they have
the same device and inode, os.path.samefile); Linux names the process's standard output
/dev/stdout (a link to /proc/self/fd/1). The audited mesh is a unit square (ideal: passes)
and the same square numbered clockwise (negative det J: inverted, fails), common practice.
"""

from __future__ import annotations

import json
import os
import socket
import stat
import subprocess
import sys
import threading
from pathlib import Path

import numpy as np
import pytest
from conftest import REPO
from io_meshes import write_vtu

SQUARE = np.array([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.0], [0.0, 1.0, 0.0]])
SCHEMA = "meshaudit.report/1"


@pytest.fixture
def mesh(tmp_path: Path) -> Path:
    """One ideal unit square: the audit passes (exit status 0)."""
    return write_vtu(tmp_path / "plate.vtu", SQUARE, [("quad", [[0, 1, 2, 3]])])


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env.setdefault("COLUMNS", "120")
    return env


def _listing(directory: Path) -> dict[str, tuple[int, bytes | None]]:
    """Every entry of ``directory`` (links not followed): its type and, for regular files,
    its bytes."""
    out = {}
    for p in sorted(directory.iterdir()):
        mode = os.lstat(p).st_mode
        out[p.name] = (stat.S_IFMT(mode), p.read_bytes() if stat.S_ISREG(mode) else None)
    return out


def _refused(done, fragment: str) -> None:
    assert done.returncode == 2, (done.returncode, done.stdout, done.stderr)
    lines = done.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("meshaudit: error:"), done.stderr
    assert fragment in lines[0], lines[0]
    assert "Traceback" not in done.stderr


# -- character devices, FIFOs, links ---------------------------------------------------------
def test_character_device_is_written_through_not_replaced(
    mesh: Path, tmp_path: Path, run_cli
) -> None:
    """A character device (a private copy of /dev/null's device numbers, and a link to
    /dev/null itself) stays a device; the other reports are written as usual."""
    null = tmp_path / "null"
    try:
        os.mknod(null, stat.S_IFCHR | 0o666, os.makedev(1, 3))  # Linux: /dev/null is 1,3
    except (PermissionError, AttributeError, OSError):
        pytest.skip("cannot make a device node here (needs root)")
    link = tmp_path / "null-link"
    link.symlink_to("/dev/null")
    done = run_cli(
        "check", mesh, "--no-config", "--json", null, "--junit", link, "--csv", tmp_path / "r.csv"
    )
    assert done.returncode == 0, done.stderr
    assert stat.S_ISCHR(os.lstat(null).st_mode)
    assert os.path.islink(link) and os.readlink(link) == "/dev/null"
    assert stat.S_ISCHR(os.stat("/dev/null").st_mode)
    assert (tmp_path / "r.csv").read_text().startswith("index,id,type,verdict")
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_fifo_is_written_through_to_its_reader(mesh: Path, tmp_path: Path) -> None:
    """A FIFO (named pipe) keeps being a FIFO and its reader receives the whole report."""
    fifo = tmp_path / "report.pipe"
    os.mkfifo(fifo)
    received: list[bytes] = []

    def reader() -> None:
        with open(fifo, "rb") as fh:  # blocks until meshaudit opens the FIFO to write
            received.append(fh.read())

    thread = threading.Thread(target=reader, daemon=True)
    thread.start()
    done = subprocess.run(
        [sys.executable, "-m", "meshaudit", "check", str(mesh), "--no-config", "--json", str(fifo)],
        capture_output=True,
        text=True,
        env=_env(),
        timeout=300,
    )
    if done.returncode != 0:  # unblock the reader before failing
        with open(fifo, "wb"):
            pass
    thread.join(30)
    assert done.returncode == 0, done.stderr
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)
    doc = json.loads(received[0])
    assert doc["schema"] == SCHEMA
    assert doc["summary"]["elements"] == 1  # one quad in the file


def test_link_to_standard_output_writes_to_standard_output(mesh: Path, tmp_path: Path) -> None:
    """``--json LINK`` with LINK -> /dev/stdout: the report goes to standard output, the
    link stays, and the terminal text follows the report (a pipe, then a regular file
    the shell opened for standard output)."""
    link = tmp_path / "out.json"
    link.symlink_to("/dev/stdout")
    args = [sys.executable, "-m", "meshaudit", "check", str(mesh), "--no-config", "--quiet"]
    piped = subprocess.run(
        [*args, "--json", str(link)], capture_output=True, text=True, env=_env(), timeout=300
    )
    assert piped.returncode == 0, piped.stderr
    doc, end = json.JSONDecoder().raw_decode(piped.stdout)
    assert doc["schema"] == SCHEMA and doc["verdict"] == "pass"
    assert piped.stdout[end:].strip().startswith("PASS")
    assert os.path.islink(link) and os.readlink(link) == "/dev/stdout"

    captured = tmp_path / "captured.txt"
    with open(captured, "w") as out:
        to_file = subprocess.run(
            [*args, "--json", str(link)],
            stdout=out,
            stderr=subprocess.PIPE,
            text=True,
            env=_env(),
            timeout=300,
        )
    assert to_file.returncode == 0, to_file.stderr
    text = captured.read_text()
    doc, end = json.JSONDecoder().raw_decode(text)
    assert doc["verdict"] == "pass" and text[end:].strip().startswith("PASS")


def test_link_to_a_regular_file_keeps_the_link(mesh: Path, tmp_path: Path, run_cli) -> None:
    """The report replaces the link's target, atomically; the link itself stays a link."""
    (tmp_path / "store").mkdir()
    target = tmp_path / "store" / "latest.json"
    target.write_text('{"from": "an earlier run"}\n')
    link = tmp_path / "report.json"
    link.symlink_to(target)
    done = run_cli("check", mesh, "--no-config", "--json", link)
    assert done.returncode == 0, done.stderr
    assert os.path.islink(link) and Path(os.readlink(link)) == target
    assert json.loads(target.read_text())["schema"] == SCHEMA
    assert not [p for p in (tmp_path / "store").iterdir() if p.name != "latest.json"]


def test_socket_is_refused(mesh: Path, tmp_path: Path, run_cli) -> None:
    """A socket is neither a file nor a stream meshaudit opens: refused, left in place."""
    path = tmp_path / "s.sock"
    with socket.socket(socket.AF_UNIX) as sock:
        sock.bind(str(path))
        done = run_cli("check", mesh, "--no-config", "--json", path)
        _refused(done, "socket")
        assert stat.S_ISSOCK(os.lstat(path).st_mode)


# -- one file under two names ----------------------------------------------------------------
def _two_names(tmp: Path) -> list[tuple[str, list[str]]]:
    (tmp / "sub").mkdir()
    (tmp / "a.json").write_text("old a\n")
    os.link(tmp / "a.json", tmp / "hard.csv")
    (tmp / "soft.csv").symlink_to(tmp / "a.json")
    return [
        ("dot-dot, not yet there", ["--json", "o.json", "--csv", "./sub/../o.json"]),
        ("dot-dot, existing", ["--json", "a.json", "--csv", "sub/../a.json"]),
        ("hard link", ["--json", "a.json", "--csv", "hard.csv"]),
        ("symbolic link", ["--json", "a.json", "--csv", "soft.csv"]),
        ("absolute and relative", ["--json", "o.json", "--junit", str(tmp / "o.json")]),
    ]


def test_two_reports_on_one_file_are_refused(mesh: Path, tmp_path: Path, run_cli) -> None:
    work = tmp_path / "work"
    work.mkdir()
    for case, extra in _two_names(work):
        before = _listing(work)
        done = run_cli("check", mesh, "--no-config", *extra, cwd=work)
        _refused(done, "same file")
        assert _listing(work) == before, case


# -- inputs of the run -----------------------------------------------------------------------
PROFILE = 'name = "mine"\nextends = "standard"\n'


def test_the_configuration_file_in_use_is_never_a_report(
    mesh: Path, tmp_path: Path, run_cli
) -> None:
    """Found beside the mesh, or named with --config: either way it is an input."""
    config = tmp_path / "meshaudit.toml"
    config.write_text("top = 3\n")
    elsewhere = tmp_path / "other"
    elsewhere.mkdir()
    named = elsewhere / "meshaudit.toml"
    named.write_text("top = 3\n")
    for extra in (
        ["--json", config],
        ["--csv", tmp_path / "sub" / ".." / "meshaudit.toml"],
        ["--config", named, "--junit", named],
    ):
        (tmp_path / "sub").mkdir(exist_ok=True)
        done = run_cli("check", mesh, *extra)
        _refused(done, "configuration file in use")
    assert config.read_text() == "top = 3\n" and named.read_text() == "top = 3\n"


def test_the_profile_file_in_use_is_never_a_report(mesh: Path, tmp_path: Path, run_cli) -> None:
    """A profile named with --profile, or by the configuration file's ``profile`` key."""
    profile = tmp_path / "limits.toml"
    profile.write_text(PROFILE)
    done = run_cli("check", mesh, "--no-config", "--profile", profile, "--json", profile)
    _refused(done, "profile in use")
    (tmp_path / "meshaudit.toml").write_text('profile = "limits.toml"\n')
    link = tmp_path / "limits-link.json"
    link.symlink_to(profile)
    done = run_cli("check", mesh, "--csv", link)
    _refused(done, "profile in use")
    assert profile.read_text() == PROFILE


def test_the_mesh_is_never_a_report(mesh: Path, tmp_path: Path, run_cli) -> None:
    """The mesh under another name (hard link, dot-dot), or another mesh of the same run."""
    original = mesh.read_bytes()
    os.link(mesh, tmp_path / "same.vtu")
    (tmp_path / "sub").mkdir()
    for extra in (
        ["--annotate", tmp_path / "same.vtu"],
        ["--json", tmp_path / "sub" / ".." / "plate.vtu"],
    ):
        done = run_cli("check", mesh, "--no-config", *extra)
        _refused(done, "the mesh")
    assert mesh.read_bytes() == original


def test_a_mesh_of_the_run_is_never_another_mesh_s_report(tmp_path: Path, run_cli) -> None:
    """With several meshes, ``--json DIR/{stem}`` for "rib.vtu.vtu" (stem "rib.vtu") names
    the other input, rib.vtu: that mesh is refused, the other audited."""
    rib = write_vtu(tmp_path / "rib.vtu", SQUARE, [("quad", [[0, 1, 2, 3]])])
    twin = write_vtu(tmp_path / "rib.vtu.vtu", SQUARE, [("quad", [[0, 1, 2, 3]])])
    rib_bytes = rib.read_bytes()
    done = run_cli("check", rib, twin, "--no-config", "--json", tmp_path / "{stem}")
    assert done.returncode == 2, done.stderr
    lines = done.stderr.splitlines()
    assert len(lines) == 1 and "refusing to overwrite the input file" in lines[0], lines
    assert rib.read_bytes() == rib_bytes
    assert json.loads((tmp_path / "rib").read_text())["schema"] == SCHEMA


def test_explain_and_compare_protect_their_inputs(mesh: Path, tmp_path: Path, run_cli) -> None:
    profile = tmp_path / "limits.toml"
    profile.write_text(PROFILE)
    config = tmp_path / "meshaudit.toml"
    config.write_text("top = 3\n")
    other = write_vtu(tmp_path / "new.vtu", SQUARE, [("quad", [[0, 1, 2, 3]])])
    cases = [
        ("explain", mesh, "0", "--json", config),
        ("explain", mesh, "0", "--profile", profile, "--json", profile),
        ("compare", mesh, other, "--json", config),
        ("compare", mesh, other, "--json", tmp_path / "." / "new.vtu"),
    ]
    for args in cases:
        _refused(run_cli(*args), "refusing to overwrite the input file")
    assert config.read_text() == "top = 3\n" and profile.read_text() == PROFILE
