"""Names and paths from outside: odd file names never break a report, odd paths and cut
files give one clear line (exit status 2), never an internal error.

Facts used (outside meshaudit): Linux limits a file name to 255 bytes (NAME_MAX) and a path
to 4096 (PATH_MAX), and a chain of more than 40 symbolic links fails with ELOOP; XML 1.0
allows only tab, newline, carriage return and characters from U+0020 up in a document
(its Char production; Python's XML parser enforces it); rich markup writes ``[bold]`` for
a style; a terminal takes ESC (0x1B) as the start of a control sequence. The gmsh and
Abaqus files are written by meshio and cut by hand following the formats' text layouts
(gmsh sections run from ``$Name`` to ``$EndName``; an Abaqus data line is a comma-separated
record, keyword lines start with ``*``). The mesh is a unit square (ideal: passes).
"""

from __future__ import annotations

import json
import os
import re
import xml.dom.minidom
from pathlib import Path

import meshio
import numpy as np
import pytest
from io_meshes import write_format, write_vtu

SQUARE = np.array([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.0], [0.0, 1.0, 0.0]])


def _square(path: Path) -> Path:
    return write_vtu(path, SQUARE, [("quad", [[0, 1, 2, 3]])])


def _one_error(done, fragment: str) -> None:
    assert done.returncode == 2, (done.returncode, done.stdout, done.stderr)
    lines = done.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("meshaudit: error:"), done.stderr
    assert "internal error" not in lines[0] and "Traceback" not in done.stderr
    assert fragment in lines[0], lines[0]


# -- file names holding control characters, markup, bytes that are not UTF-8 ----------------
ODD_NAMES = {
    "control-01": b"a\x01b.msh",
    "escape-sequence": b"e\x1b[31mred.msh",
    "markup": b"[bold]x.msh",
    "not-utf8": b"u\xffv.msh",
}


@pytest.mark.parametrize("raw", ODD_NAMES.values(), ids=ODD_NAMES.keys())
def test_odd_file_names_in_every_report(raw: bytes, tmp_path: Path, run_cli) -> None:
    mesh = Path(os.fsdecode(bytes(tmp_path) + b"/" + raw))
    meshio.write(mesh, meshio.Mesh(SQUARE, [("quad", [[0, 1, 2, 3]])]), file_format="gmsh22")
    out = {k: tmp_path / f"r.{k}" for k in ("json", "xml", "html", "svg")}
    done = run_cli(
        "check", mesh, "--no-config", "--json", out["json"], "--junit", out["xml"],
        "--html", out["html"], "--plot", out["svg"],
    )  # fmt: skip
    assert done.returncode == 0, done.stderr
    for name in ("xml", "svg"):  # well-formed XML (the parser refuses forbidden characters)
        xml.dom.minidom.parse(str(out[name]))
    page = out["html"].read_text(encoding="utf-8")
    assert not re.search("[\x00-\x08\x0b\x0e-\x1f\x7f-\x9f]", page)
    json.loads(out["json"].read_text(encoding="utf-8"))
    # the terminal: no control character of the name, no markup taken as a style
    assert not re.search("[\x00-\x08\x0b-\x1f\x7f]", done.stdout)
    assert "\ufffd" not in done.stdout
    if raw == b"[bold]x.msh":  # in the summary's "file" row and in the verdict line
        assert done.stdout.count("[bold]x.msh") == 2, done.stdout
    if raw == b"a\x01b.msh":
        assert "a\\x01b.msh" in done.stdout  # written as a visible escape
    if raw == b"u\xffv.msh":
        assert "u\\xffv.msh" in done.stdout


def test_error_line_stays_one_line(tmp_path: Path, run_cli) -> None:
    """A missing file whose name holds a newline and an ESC: still exactly one line."""
    done = run_cli("check", tmp_path / "x\ny\x1bc.msh", "--no-config")  # ESC c: reset
    _one_error(done, "no such file")
    assert "\x1b" not in done.stderr


def test_region_name_with_markup_and_control_characters(tmp_path: Path, run_cli) -> None:
    """An element set's name comes from the file too (Abaqus *ELSET)."""
    mesh = meshio.Mesh(SQUARE, [("quad", [[0, 1, 2, 3]])])
    mesh.cell_sets = {"web[red]\x07": [np.array([0])]}
    path = tmp_path / "plate.inp"
    meshio.write(path, mesh)
    config = tmp_path / "meshaudit.toml"
    config.write_text('[regions."web[red]\\u0007"]\nextends = "strict"\n')
    done = run_cli("check", path, "--junit", tmp_path / "r.xml")
    assert done.returncode == 0, done.stderr
    xml.dom.minidom.parse(str(tmp_path / "r.xml"))
    assert "web[red]" in done.stdout and "\x07" not in done.stdout


# -- names and paths too long, link loops -----------------------------------------------------
def test_longest_legal_report_name(tmp_path: Path, run_cli) -> None:
    """A 250-byte name is legal (NAME_MAX 255): the report is written, no temporary left."""
    mesh = _square(tmp_path / "plate.vtu")
    out = tmp_path / "out"
    out.mkdir()
    name = "r" * 245 + ".json"  # 250 bytes
    done = run_cli("check", mesh, "--no-config", "--json", out / name)
    assert done.returncode == 0, done.stderr
    assert [p.name for p in out.iterdir()] == [name]
    assert json.loads((out / name).read_text())["verdict"] == "pass"


def test_link_loop_and_long_paths_are_one_clear_line(tmp_path: Path, run_cli) -> None:
    mesh = _square(tmp_path / "plate.vtu")
    (tmp_path / "loop-a").symlink_to(tmp_path / "loop-b")
    (tmp_path / "loop-b").symlink_to(tmp_path / "loop-a")
    long_name = tmp_path / ("m" * 300 + ".vtu")  # one component past NAME_MAX
    long_path = tmp_path / ("d/" * 2100 + "m.vtu")  # past PATH_MAX
    loop = "symbolic link loop"
    _one_error(run_cli("check", tmp_path / "loop-a", "--no-config"), loop)
    _one_error(run_cli("check", long_name, "--no-config"), "file name too long")
    _one_error(run_cli("check", long_path, "--no-config"), "file name too long")
    _one_error(run_cli("explain", long_name, "1", "--no-config"), "file name too long")
    _one_error(run_cli("compare", mesh, tmp_path / "loop-a", "--no-config"), loop)
    _one_error(run_cli("check", mesh, "--no-config", "--json", tmp_path / "loop-a"), loop)
    for dest in (tmp_path / ("r" * 300 + ".json"), tmp_path / ("d/" * 2100 + "r.json")):
        _one_error(run_cli("check", mesh, "--no-config", "--json", dest), "")
    _one_error(run_cli("check", mesh, "--profile", long_name.with_suffix(".toml")), "profile")
    _one_error(run_cli("check", mesh, "--config", tmp_path / "loop-a"), loop)


# -- files cut short ---------------------------------------------------------------------------
def _cut_abaqus(tmp_path: Path) -> dict[str, Path]:
    """meshio's Abaqus file of the analytic mixed mesh, cut inside its quad *ELEMENT
    section: its last quad record is '5,9,10,11,12' (label, four node labels)."""
    full = write_format(tmp_path, "abaqus")
    text = full.read_text()
    lines = text.splitlines(keepends=True)
    start = next(i for i, ln in enumerate(lines) if ln.upper().startswith("*ELEMENT, TYPE=CAX4"))
    last_quad = start + 3  # three quads
    record = lines[last_quad].rstrip("\n")
    assert record.count(",") == 4, record  # label and four nodes
    head = "".join(lines[:last_quad])
    cases = {
        # the last node label cut: '12' read as '1', a record that still looks whole
        "number-cut": head + record[:-1],
        "record-cut": head + record[: record.index(",") + 3],
        "complete-but-no-final-newline": text.rstrip("\n"),
    }
    out = {}
    for case, body in cases.items():
        out[case] = tmp_path / f"{case}.inp"
        out[case].write_text(body)
    return out


def test_abaqus_file_cut_short_is_refused(tmp_path: Path, run_cli) -> None:
    for case, path in _cut_abaqus(tmp_path).items():
        before = path.read_bytes()
        done = run_cli("check", path, "--no-config", "--json", tmp_path / "r.json")
        _one_error(done, "ends early")
        assert not (tmp_path / "r.json").exists(), case
        assert path.read_bytes() == before
    control = write_format(tmp_path, "abaqus")  # the same file, whole: audited
    assert run_cli("check", control, "--no-config").returncode in (0, 1)


GMSH = ["gmsh22-ascii", "gmsh22-binary", "gmsh41-ascii", "gmsh41-binary"]


@pytest.mark.parametrize("fmt", GMSH)
def test_gmsh_file_cut_inside_a_section_is_refused(fmt: str, tmp_path: Path, run_cli) -> None:
    """Cut at a line end inside $Nodes, inside $Elements, and just before $EndElements."""
    full = write_format(tmp_path, fmt)
    data = full.read_bytes()
    cuts = {}
    for section in (b"$Nodes", b"$Elements"):
        begin, end = data.index(section + b"\n"), data.index(b"$End" + section[1:])
        cuts[section.decode()] = data[: data.index(b"\n", (begin + end) // 2) + 1]
    cuts["before $EndElements"] = data[: data.index(b"$EndElements")]
    for case, body in cuts.items():
        path = tmp_path / f"cut{len(body)}.msh"
        path.write_bytes(body)
        done = run_cli("check", path, "--no-config")
        assert done.returncode == 2, (fmt, case, done.stdout)
        _one_error(done, "corrupt")
    assert run_cli("check", full, "--no-config").returncode in (0, 1)  # whole: audited


# -- no command --------------------------------------------------------------------------------
def test_no_command_is_an_error(run_cli) -> None:
    """argparse's convention: usage and one error line on stderr, exit status 2."""
    done = run_cli()
    assert done.returncode == 2
    assert done.stdout == ""
    assert done.stderr.startswith("usage: meshaudit")
    errors = [ln for ln in done.stderr.splitlines() if ln.startswith("meshaudit: error:")]
    assert len(errors) == 1 and "command" in errors[0]
