"""Every class of input that cannot be audited: exit status 2, one line, nothing written.

The contract (issue 2): a user never sees a traceback; bad input gives exactly one line on
stderr starting with 'meshaudit: error:', exit status 2, no report file (not even a
temporary one) and an untouched input file. Bad files are hand-written in the formats'
documented text layouts (legacy VTK, gmsh 2.2) or cut from files meshio wrote.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from pathlib import Path
from subprocess import CompletedProcess

import meshio
import numpy as np
import pytest
from io_meshes import mixed_mesh, write_format, write_vtu

import meshaudit
from meshaudit import InputError, ProfileError
from meshaudit.cli import main

UNIT_SQUARE = np.array([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.0], [0.0, 1.0, 0.0]])


def legacy_vtk(points: str, cells: str, n_points: int = 4) -> str:
    """A legacy VTK ASCII unstructured grid holding one quad (VTK cell type 9)."""
    return (
        "# vtk DataFile Version 4.2\nbad input\nASCII\nDATASET UNSTRUCTURED_GRID\n"
        f"POINTS {n_points} double\n{points}\nCELLS 1 5\n{cells}\nCELL_TYPES 1\n9\n"
    )


GOOD_POINTS = "0 0 0\n1 0 0\n1 1 0\n0 1 0"


def gmsh22(nodes: str, elements: str, n_elements: int = 1) -> str:
    """A gmsh 2.2 ASCII file; element type 3 is the 4-node quad."""
    return (
        "$MeshFormat\n2.2 0 8\n$EndMeshFormat\n"
        f"$Nodes\n4\n{nodes}\n$EndNodes\n"
        f"$Elements\n{n_elements}\n{elements}\n$EndElements\n"
    )


GMSH_NODES = "1 0 0 0\n2 1 0 0\n3 1 1 0\n4 0 1 0"


# -- builders: each writes a bad input into a directory and returns its path ----------
def _missing(d: Path) -> Path:
    return d / "no_such_mesh.msh"


def _directory(d: Path) -> Path:
    (d / "a_folder.msh").mkdir()
    return d / "a_folder.msh"


def _unknown_extension(d: Path) -> Path:
    write_vtu(d / "plate.vtu", UNIT_SQUARE, [("quad", [[0, 1, 2, 3]])])
    return (d / "plate.vtu").rename(d / "plate.unknownext")


def _garbage(ext: str) -> Callable[[Path], Path]:
    def build(d: Path) -> Path:
        rng = np.random.default_rng(7)
        path = d / f"garbage{ext}"
        path.write_bytes(rng.integers(0, 256, 600, dtype=np.uint8).tobytes())
        return path

    return build


def _truncated(fmt: str) -> Callable[[Path], Path]:
    def build(d: Path) -> Path:
        full = write_format(d, fmt)
        data = full.read_bytes()
        full.write_bytes(data[: len(data) // 2])
        return full

    return build


def _text(name: str, text: str) -> Callable[[Path], Path]:
    def build(d: Path) -> Path:
        (d / name).write_text(text)
        return d / name

    return build


def _only(cell_type: str, cells: list[list[int]]) -> Callable[[Path], Path]:
    def build(d: Path) -> Path:
        pts = np.vstack([UNIT_SQUARE, [[0.0, 0.0, 1.0]]])
        return write_vtu(d / f"only_{cell_type}.vtu", pts, [(cell_type, cells)])

    return build


def _xdmf_without_h5(d: Path) -> Path:
    """An .xdmf whose heavy data file (written beside it by meshio) has gone."""
    path = write_format(d, "xdmf")
    for h5 in d.glob("*.h5"):
        h5.unlink()
    return path


# (case id, builder, message fragment): source of each file layout in its builder
BAD_FILES = [
    ("missing", _missing, "no such file"),
    ("directory", _directory, "is a directory"),
    ("unknown-extension", _unknown_extension, "--format"),
    ("empty", _text("empty.vtk", ""), "empty"),
    ("garbage-msh", _garbage(".msh"), "corrupt"),
    ("garbage-vtu", _garbage(".vtu"), "corrupt"),
    ("garbage-med", _garbage(".med"), "corrupt"),
    ("truncated-msh", _truncated("gmsh22-ascii"), "corrupt"),
    ("truncated-msh41-binary", _truncated("gmsh41-binary"), "corrupt"),
    ("truncated-vtu", _truncated("vtu"), "corrupt"),
    ("truncated-bdf", _truncated("nastran"), "corrupt"),
    ("xdmf-without-its-h5", _xdmf_without_h5, "missing"),
    ("only-lines", _only("line", [[0, 1], [1, 2]]), "no supported elements"),
    ("only-polygon", _only("polygon", [[0, 1, 2, 3, 4]]), "polygon"),
    (
        "node-past-end-vtk",
        _text("past_end.vtk", legacy_vtk(GOOD_POINTS, "4 0 1 2 7")),
        "refers to node 7",
    ),
    (
        "negative-node-vtk",
        _text("negative.vtk", legacy_vtk(GOOD_POINTS, "4 0 1 2 -1")),
        "refers to node -1",
    ),
    (
        "node-past-end-msh",
        _text("past_end.msh", gmsh22(GMSH_NODES, "1 3 2 0 1 1 2 3 9")),
        "node that is not in the file",
    ),
    (
        "nan-vtk",
        _text("nan.vtk", legacy_vtk("0 0 0\n1 0 0\n1 nan 0\n0 1 0", "4 0 1 2 3")),
        "NaN or infinity",
    ),
    (
        "inf-msh",
        _text("inf.msh", gmsh22("1 0 0 0\n2 1 0 0\n3 1 1 0\n4 0 inf 0", "1 3 2 0 1 1 2 3 4")),
        "NaN or infinity",
    ),
]


def _digest(path: Path) -> str | None:
    if not path.is_file():
        return None
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _snapshot(directory: Path) -> dict[str, str | None]:
    return {p.name: _digest(p) for p in directory.iterdir()}


def assert_refused(done, fragment: str, outdir: Path, before: dict[str, str | None]) -> None:
    """Exit 2, one 'meshaudit: error:' line naming the problem, no traceback, nothing new."""
    assert done.returncode == 2, (done.returncode, done.stdout, done.stderr)
    lines = done.stderr.splitlines()
    assert len(lines) == 1, done.stderr
    assert lines[0].startswith("meshaudit: error:"), lines[0]
    assert fragment.lower() in lines[0].lower(), lines[0]
    assert "Traceback" not in done.stderr + done.stdout
    assert done.stdout == ""
    assert _snapshot(outdir) == before  # no report, no temporary file


@pytest.fixture
def outdir(tmp_path: Path) -> Path:
    """A report directory holding one file that must survive every refusal unchanged."""
    out = tmp_path / "reports"
    out.mkdir()
    (out / "r.json").write_text('{"from": "an earlier run"}\n')
    return out


def _report_args(outdir: Path) -> list[Path | str]:
    return ["--json", outdir / "r.json", "--csv", outdir / "r.csv", "--junit", outdir / "r.xml"]


@pytest.mark.parametrize(("case", "build", "fragment"), BAD_FILES, ids=[c[0] for c in BAD_FILES])
def test_bad_file_is_refused(
    case: str, build: Callable[[Path], Path], fragment: str, tmp_path: Path, outdir: Path, run_cli
) -> None:
    indir = tmp_path / "in"
    indir.mkdir()
    mesh = build(indir)
    inputs_before = _snapshot(indir)
    before = _snapshot(outdir)
    done = run_cli("check", mesh, *_report_args(outdir))
    assert_refused(done, fragment, outdir, before)
    assert _snapshot(indir) == inputs_before  # the input is never modified
    # the API refuses the same input with an InputError (no other exception type)
    with pytest.raises(InputError):
        meshaudit.audit(mesh)


@pytest.fixture
def good_mesh(tmp_path: Path) -> Path:
    indir = tmp_path / "in"
    indir.mkdir()
    return write_vtu(indir / "plate.vtu", UNIT_SQUARE, [("quad", [[0, 1, 2, 3]])])


def _profile(d: Path, name: str, text: str) -> Path:
    (d / name).write_text(text)
    return d / name


BAD_OPTIONS: list = [
    ("unknown-option", lambda d, m: ["--colour", "blue"], "unrecognized arguments"),
    ("top-negative", lambda d, m: ["--top", "-1"], "--top"),
    ("top-not-a-number", lambda d, m: ["--top", "x"], "--top"),
    ("unknown-profile", lambda d, m: ["--profile", "no-such-profile"], "unknown profile"),
    (
        "profile-not-toml",
        lambda d, m: ["--profile", _profile(d, "broken.toml", "[quad\naspect = ")],
        "not valid TOML",
    ),
    (
        # aspect ratio is worse when high, so warn 8 above fail 4 is the wrong order
        "profile-warn-beyond-fail",
        lambda d, m: [
            "--profile",
            _profile(d, "order.toml", "[quad]\naspect_ratio = { warn = 8, fail = 4 }\n"),
        ],
        "warn 8.0 is above fail 4.0",
    ),
    (
        # scaled Jacobian is worse when low, so warn 0.2 below fail 0.5 is the wrong order
        "profile-warn-below-fail",
        lambda d, m: [
            "--profile",
            _profile(d, "o2.toml", "[triangle]\nscaled_jacobian = { warn = 0.2, fail = 0.5 }"),
        ],
        "below fail",
    ),
    ("fail-on-maybe", lambda d, m: ["--fail-on", "maybe"], "--fail-on"),
    ("format-unknown", lambda d, m: ["--format", "no-such-format"], "no-such-format"),
    (
        "report-dir-missing",
        lambda d, m: ["--junit", d / "no" / "such" / "dir" / "r.xml"],
        "does not exist",
    ),
    ("report-is-input", lambda d, m: ["--junit", m], "overwrite the input"),
    (
        "report-is-profile",
        lambda d, m: [
            "--profile",
            _profile(d, "mine.toml", 'name = "mine"\n'),
            "--csv",
            d / "mine.toml",
        ],
        "overwrite the input",
    ),
    ("report-twice", lambda d, m: ["--junit", d / "same.xml", "--json", d / "same.xml"], "same"),
]

OPTION_IDS = [c[0] for c in BAD_OPTIONS]


#: Option cases also run as a separate process; the others run the same command line
#: in-process (argument parsing is pure Python), capturing the terminal at the fd level.
SUBPROCESS_OPTIONS = ("unknown-option", "profile-not-toml", "report-is-input")


def _run_in_process(args: list, capfd: pytest.CaptureFixture[str]) -> CompletedProcess:
    capfd.readouterr()
    status = main([str(a) for a in args])
    out, err = capfd.readouterr()
    return CompletedProcess(args, status, out, err)


@pytest.mark.parametrize(("case", "extra", "fragment"), BAD_OPTIONS, ids=OPTION_IDS)
def test_bad_option_is_refused(
    case: str,
    extra,
    fragment: str,
    good_mesh: Path,
    outdir: Path,
    tmp_path: Path,
    run_cli,
    capfd: pytest.CaptureFixture[str],
) -> None:
    """A bad option refuses the run before anything is read or written."""
    mesh_before = _digest(good_mesh)
    args = ["check", good_mesh, *extra(tmp_path, good_mesh)]
    if case == "report-is-profile":
        args += ["--json", outdir / "r.json"]
    elif case != "report-twice":
        args += ["--json", outdir / "r.json", "--csv", outdir / "r.csv"]
    profile_before = _digest(tmp_path / "mine.toml")
    before = _snapshot(outdir)
    done = run_cli(*args) if case in SUBPROCESS_OPTIONS else _run_in_process(args, capfd)
    assert_refused(done, fragment, outdir, before)
    assert _digest(good_mesh) == mesh_before
    assert _digest(tmp_path / "mine.toml") == profile_before
    assert not (tmp_path / "same.xml").exists()


def test_permission_denied_branch(good_mesh: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Tests run as root, who reads anything: simulate an unreadable file.

    Both the up-front access check and a PermissionError raised inside the reader give an
    InputError naming the problem.
    """
    import meshaudit.mesh.reading as reading

    monkeypatch.setattr(reading.os, "access", lambda path, mode: False)
    with pytest.raises(InputError, match="permission denied"):
        meshaudit.audit(good_mesh)
    monkeypatch.undo()

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied", str(good_mesh))

    monkeypatch.setattr(meshio, "read", refuse)
    with pytest.raises(InputError, match="permission denied"):
        meshaudit.audit(good_mesh)


def test_permission_denied_in_cli(good_mesh: Path, capsys, monkeypatch) -> None:
    """The CLI turns the permission error into one line and exit 2 (in-process run)."""
    import meshaudit.mesh.reading as reading
    from meshaudit.cli import main

    monkeypatch.setattr(reading.os, "access", lambda path, mode: False)
    assert main(["check", str(good_mesh)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and err[0].startswith("meshaudit: error:")
    assert "permission denied" in err[0]


def test_bad_meshes_in_memory() -> None:
    """The API refuses in-memory meshes with the same classes of problem."""
    bad = {
        "NaN": meshio.Mesh(
            np.array([[0.0, 0.0], [1.0, 0.0], [np.nan, 1.0], [0.0, 1.0]]),
            [("quad", [[0, 1, 2, 3]])],
        ),
        "node 4": meshio.Mesh(UNIT_SQUARE, [("quad", [[0, 1, 2, 4]])]),
        "no supported elements": meshio.Mesh(UNIT_SQUARE, [("line", [[0, 1]])]),
    }
    for fragment, mesh in bad.items():
        with pytest.raises(InputError, match=fragment):
            meshaudit.audit(mesh)
    with pytest.raises(InputError):
        meshaudit.audit(42)
    with pytest.raises(InputError, match="fail_on"):
        meshaudit.audit(mixed_mesh(), fail_on="maybe")
    with pytest.raises(ProfileError, match="unknown profile"):
        meshaudit.audit(mixed_mesh(), profile="no-such-profile")


def test_missing_format_library_is_named(good_mesh: Path, monkeypatch) -> None:
    """A reader whose optional library is absent gives an InputError naming the library."""

    def needs_library(*args, **kwargs):
        raise ImportError("No module named 'netCDF4'", name="netCDF4")

    monkeypatch.setattr(meshio, "read", needs_library)
    with pytest.raises(InputError, match="missing library: netCDF4"):
        meshaudit.audit(good_mesh)


# A gmsh 2.2 quad with three tags: meshio's reader warns that it cannot use the third.
THREE_TAGS = gmsh22(GMSH_NODES, "1 3 3 0 1 0 1 2 3 4")


def test_meshio_warnings_never_reach_the_user(tmp_path: Path, capfd, run_cli) -> None:
    """meshio prints 'Warning: ...' for this file; meshaudit's stderr stays clean."""
    path = tmp_path / "three_tags.msh"
    path.write_text(THREE_TAGS)
    meshio.read(path)  # the reference reader does warn (else this test proves nothing)
    assert "Warning" in capfd.readouterr().err
    done = run_cli("check", path, "--quiet")
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""
    assert "Warning" not in done.stdout
    assert len(done.stdout.splitlines()) == 1
