"""Fuzz: whatever the input, ``meshaudit check`` keeps its contract.

The inputs are mangled files (every bundled sample and a small mesh written by meshio in
every tested format, each cut short at many places, with bytes overwritten at random, and
pure noise under a mesh extension) and random small meshes (random nodes on a coarse
lattice, so coincident and colinear corners are common; random quads, triangles, quad8 and
triangle6 whose corners may repeat, run clockwise or cross: inverted, bow-tie and degenerate
elements), at scales from 1e-150 to 1e150. For every case:

- the exit status is 0, 1 or 2;
- no traceback, no "internal error", no warning reaches stderr;
- with status 2: no report file and no temporary file is left;
- with status 0 or 1: the JSON report is strict JSON (no NaN or Infinity tokens), the CSV
  report has a header and rows of the same width, the JUnit report is well-formed XML;
- the input file is unchanged.

The command runs in-process (``meshaudit.cli.main``) so that hundreds of cases fit in the
suite's time. The cases are counted in :data:`CASES` (see ``test_the_fuzz_ran``).
"""

from __future__ import annotations

import contextlib
import csv
import hashlib
import io
import json
import random
import re
import warnings
import xml.etree.ElementTree as ET
from pathlib import Path

import meshio
import numpy as np
import pytest
from conftest import SAMPLES
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from meshaudit.cli import main

#: Cut points per seed file and overwritten-byte variants per seed file.
CUTS = 30
FLIPS = 25
#: Random meshes drawn by hypothesis.
RANDOM_MESHES = 250

#: Cases run so far in this session, by kind (checked by the last test of the module).
CASES: dict[str, int] = {
    "truncated": 0,
    "overwritten": 0,
    "noise": 0,
    "random mesh": 0,
    "random mesh in memory": 0,
    "random mesh, every output": 0,
}

REPORTS = ("r.json", "r.csv", "r.xml")


def _reject_constant(token: str) -> None:
    raise ValueError(f"non-standard JSON number {token}")


def run_check(mesh: Path, out: Path) -> tuple[int, str, str]:
    """``meshaudit check MESH --json --csv --junit`` in this process: (status, out, err)."""
    argv = ["check", str(mesh), "--top", "3"]
    argv += ["--json", str(out / REPORTS[0]), "--csv", str(out / REPORTS[1])]
    argv += ["--junit", str(out / REPORTS[2])]
    stdout, stderr = io.StringIO(), io.StringIO()
    with (
        contextlib.redirect_stdout(stdout),
        contextlib.redirect_stderr(stderr),
        warnings.catch_warnings(),
    ):
        warnings.simplefilter("always")  # any warning is printed to (captured) stderr
        status = main(argv)
    return status, stdout.getvalue(), stderr.getvalue()


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def assert_contract(mesh: Path, out: Path) -> int:
    """Run one case and check everything the contract promises; returns the status."""
    out.mkdir(parents=True, exist_ok=True)
    before = _digest(mesh)
    status, _stdout, stderr = run_check(mesh, out)
    where = f"{mesh.name}: status {status}, stderr {stderr[-500:]!r}"
    assert status in (0, 1, 2), where
    assert "Traceback" not in stderr and "internal error" not in stderr, where
    assert not re.search(r"\w+Warning: ", stderr), where  # a Python warning
    assert _digest(mesh) == before, f"{mesh.name}: the input was modified"
    left = sorted(p.name for p in out.iterdir())
    if status == 2:
        assert left == [], f"{where}: left behind {left}"
        assert stderr.startswith("meshaudit: error: "), where
        assert stderr.count("\n") == 1, where
        return status
    assert left == sorted(REPORTS), f"{where}: files {left}"
    json.loads((out / REPORTS[0]).read_text(encoding="utf-8"), parse_constant=_reject_constant)
    rows = list(csv.reader((out / REPORTS[1]).open(encoding="utf-8", newline="")))
    assert rows and rows[0][:2] == ["index", "id"], where
    assert {len(r) for r in rows} == {len(rows[0])}, f"{where}: ragged CSV"
    ET.parse(out / REPORTS[2])
    return status


# -- seed files -----------------------------------------------------------------------


def _small_mesh() -> meshio.Mesh:
    """A 3 x 2 plate of quads with a fan of triangles and two boundary lines (demo data)."""
    xs, ys = np.meshgrid(np.arange(4.0), np.arange(3.0))
    pts = np.column_stack([xs.ravel(), ys.ravel(), np.zeros(12)])
    pts = np.vstack([pts, [[4.0, 1.0, 0.0]]])
    i, j = np.meshgrid(np.arange(3), np.arange(2))
    a = (j * 4 + i).ravel()
    quads = np.column_stack([a, a + 1, a + 5, a + 4])
    tris = np.array([[3, 12, 7], [7, 12, 11]])
    lines = np.array([[0, 1], [1, 2]])
    return meshio.Mesh(pts, [("line", lines), ("quad", quads), ("triangle", tris)])


#: (file name, meshio format, keyword arguments)
FORMATS = [
    ("g22.msh", "gmsh22", {"binary": False}),
    ("g22b.msh", "gmsh22", {"binary": True}),
    ("g41.msh", "gmsh", {"binary": False}),
    ("g41b.msh", "gmsh", {"binary": True}),
    ("plate.vtu", "vtu", {}),
    ("plate.vtk", "vtk", {"binary": False}),
    ("plateb.vtk", "vtk", {"binary": True}),
    ("plate.inp", "abaqus", {}),
    ("plate.bdf", "nastran", {}),
    ("plate.mesh", "medit", {}),
]


def _gmsh_ready(mesh: meshio.Mesh) -> meshio.Mesh:
    ones = [np.ones(len(c.data), dtype=int) for c in mesh.cells]
    entity = [np.full(len(c.data), k + 1) for k, c in enumerate(mesh.cells)]
    dim_tags = np.column_stack([np.full(len(mesh.points), 2), np.ones(len(mesh.points))])
    return meshio.Mesh(
        mesh.points,
        mesh.cells,
        point_data={"gmsh:dim_tags": dim_tags.astype(int)},
        cell_data={"gmsh:physical": ones, "gmsh:geometrical": entity},
    )


@pytest.fixture(scope="module")
def seeds(tmp_path_factory) -> list[Path]:
    folder = tmp_path_factory.mktemp("seeds")
    out = [p for p in sorted(SAMPLES.iterdir()) if p.suffix in (".msh", ".vtu", ".inp")]
    mesh = _small_mesh()
    for name, fmt, kwargs in FORMATS:
        path = folder / name
        source = _gmsh_ready(mesh) if fmt.startswith("gmsh") else mesh
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            meshio.write(path, source, file_format=fmt, **kwargs)
        out.append(path)
    return out


def _seed_names() -> list[str]:
    samples = [p.name for p in sorted(SAMPLES.iterdir()) if p.suffix in (".msh", ".vtu", ".inp")]
    return samples + [name for name, _, _ in FORMATS]


def _seed(seeds: list[Path], name: str) -> Path:
    return next(p for p in seeds if p.name == name)


@pytest.mark.parametrize("name", _seed_names())
def test_truncated_files(name, seeds, tmp_path):
    data = _seed(seeds, name).read_bytes()
    rng = random.Random(f"cut {name}")
    cuts = sorted({int(len(data) * k / CUTS) for k in range(CUTS)} | {rng.randrange(len(data))})
    for k, cut in enumerate(cuts):
        case = tmp_path / f"in{k}" / name
        case.parent.mkdir()
        case.write_bytes(data[:cut])
        assert_contract(case, tmp_path / f"out{k}")
        CASES["truncated"] += 1


@pytest.mark.parametrize("name", _seed_names())
def test_overwritten_bytes(name, seeds, tmp_path):
    data = _seed(seeds, name).read_bytes()
    rng = random.Random(f"flip {name}")
    for k in range(FLIPS):
        mangled = bytearray(data)
        for _ in range(rng.choice([1, 3, 20])):
            at = rng.randrange(len(mangled))
            mangled[at] = rng.choice([0, 10, 32, 45, 46, 48, 57, 255, rng.randrange(256)])
        case = tmp_path / f"in{k}" / name
        case.parent.mkdir()
        case.write_bytes(bytes(mangled))
        assert_contract(case, tmp_path / f"out{k}")
        CASES["overwritten"] += 1


@pytest.mark.parametrize("suffix", [".msh", ".vtu", ".vtk", ".inp", ".bdf", ".mesh", ".xdmf"])
def test_noise_under_a_mesh_extension(suffix, tmp_path):
    rng = random.Random(f"noise {suffix}")
    heads = [b"", b"$MeshFormat\n", b"<?xml version='1.0'?>\n", b"*NODE\n", b"GRID", b"\x00"]
    for k in range(6):
        noise = bytes(rng.randrange(256) for _ in range(rng.choice([1, 64, 4096])))
        case = tmp_path / f"in{k}" / f"noise{suffix}"
        case.parent.mkdir()
        case.write_bytes(heads[k % len(heads)] + noise)
        assert_contract(case, tmp_path / f"out{k}")
        CASES["noise"] += 1


# -- random small meshes ----------------------------------------------------------------

NODES_PER_CELL = {"quad": 4, "triangle": 3, "quad8": 8, "triangle6": 6}
WRITE_AS = [("r.vtu", "vtu"), ("r.msh", "gmsh22"), ("r.inp", "abaqus"), ("r.bdf", "nastran")]


@st.composite
def random_meshes(draw) -> tuple[meshio.Mesh, tuple[str, str]]:
    n = draw(st.integers(3, 14))
    lattice = draw(st.sampled_from([2, 3, 5]))  # a coarse lattice: coincident, colinear
    coords = draw(st.lists(st.integers(0, lattice), min_size=3 * n, max_size=3 * n))
    pts = np.array(coords, dtype=float).reshape(n, 3)
    if draw(st.booleans()):
        pts[:, 2] = 0.0  # planar (2-D); otherwise a shell or a warped surface
    pts *= draw(st.sampled_from([1.0, 1e-150, 1e-9, 1e9, 1e150]))
    pts += draw(st.sampled_from([0.0, 1e6]))
    blocks = []
    for cell_type in draw(st.lists(st.sampled_from(sorted(NODES_PER_CELL)), min_size=1)):
        k = NODES_PER_CELL[cell_type]
        rows = draw(st.integers(1, 4))
        conn = draw(st.lists(st.integers(0, n - 1), min_size=k * rows, max_size=k * rows))
        blocks.append((cell_type, np.array(conn).reshape(rows, k)))
    return meshio.Mesh(pts, blocks), draw(st.sampled_from(WRITE_AS))


@settings(
    max_examples=RANDOM_MESHES,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(case=random_meshes())
def test_random_small_meshes(case, tmp_path_factory):
    mesh, (name, fmt) = case
    folder = tmp_path_factory.mktemp("rnd")
    path = folder / "in" / name
    path.parent.mkdir()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            source = _gmsh_ready(mesh) if fmt.startswith("gmsh") else mesh
            meshio.write(path, source, file_format=fmt)
    except Exception:  # a mesh meshio itself cannot write is no case for meshaudit
        return
    assert_contract(path, folder / "out")
    CASES["random mesh"] += 1


@settings(max_examples=RANDOM_MESHES, deadline=None)
@given(case=random_meshes())
def test_random_small_meshes_through_the_api(case):
    """In memory the same contract holds: an audit or a MeshAuditError, nothing else, and
    the JSON text of any report is strict JSON."""
    from meshaudit import audit
    from meshaudit.errors import MeshAuditError
    from meshaudit.outputs import json_report

    mesh, _ = case
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a warning would be a bug here
        try:
            report = audit(mesh)
        except MeshAuditError:
            CASES["random mesh in memory"] += 1
            return
        text = json_report.render(report, every_element=True)
    json.loads(text, parse_constant=_reject_constant)
    assert set(np.unique(report.verdict).tolist()) <= {0, 1, 2}
    assert ((report.score >= 0) & (report.score <= 1)).all()
    CASES["random mesh in memory"] += 1


@settings(
    max_examples=12,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(case=random_meshes())
def test_random_small_meshes_every_output(case, tmp_path_factory):
    """The drawing outputs too (plot, HTML, annotated mesh), fewer cases: they take a
    second each. Each file is written and readable, or none is (status 2)."""
    mesh, (name, fmt) = case
    folder = tmp_path_factory.mktemp("all")
    path = folder / "in" / name
    path.parent.mkdir()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            meshio.write(path, _gmsh_ready(mesh) if fmt.startswith("gmsh") else mesh, fmt)
    except Exception:
        return
    out = folder / "out"
    out.mkdir()
    names = {"--plot": "p.png", "--html": "r.html", "--annotate": "a.vtu", "--json": "r.json"}
    argv = ["check", str(path), "--quiet"]
    for option, file_name in names.items():
        argv += [option, str(out / file_name)]
    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        status = main(argv)
    err = stderr.getvalue()
    assert status in (0, 1, 2), err
    assert "Traceback" not in err and "internal error" not in err, err
    assert not re.search(r"\w+Warning: ", err), err
    left = sorted(p.name for p in out.iterdir())
    if status == 2:
        assert left == [], left
    else:
        assert left == sorted(names.values()), left
        assert (out / "p.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        assert (out / "r.html").read_text(encoding="utf-8").rstrip().endswith("</html>")
        meshio.read(out / "a.vtu")
        json.loads((out / "r.json").read_text(encoding="utf-8"), parse_constant=_reject_constant)
    CASES["random mesh, every output"] += 1


def test_the_fuzz_ran():
    """The cases above ran (this test comes last in the module): their count, by kind,
    is in the captured output of this test (`pytest -rP tests/test_fuzz.py`)."""
    print("fuzz cases:", CASES, "total", sum(CASES.values()))
    if CASES["truncated"]:  # the module ran as a whole
        assert CASES["truncated"] >= CUTS * len(FORMATS)
        assert CASES["overwritten"] == FLIPS * len(_seed_names())
