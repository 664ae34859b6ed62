"""The compiled element pass against the numpy kernels it stands in for, and the fallback.

The compiled quad pass (``meshaudit.metrics._fused``, C) repeats the numpy kernel's
arithmetic operation by operation, built without fused multiply-add, and takes its arc
tangents from numpy as the numpy kernel does, so every metric must equal the numpy
kernel's to the bit (a NaN equals any NaN), and every flag, breach level and verdict must
be the same. The compiled hexahedron pass sums det J in another order than the numpy
kernel's matrix products and einsum: its det J metrics (volume, det_j_min, det_j_max,
det_j_corner_min, det_j_lower_bound) must agree within 1e-12 L^3 (L the longest edge: a
few thousand units in the last place of the element's own scale, well inside the
1e-10 L^3 floor the verdicts allow for round-off) and the Jacobian ratio to 1e-9
relative where det_j_min > 1e-6 L^3; its shape metrics take the same operations in the
same order and must agree to 1e-12 relative (they do to the bit here); flags and
verdicts must be identical. The
numpy kernels themselves are checked against outside references elsewhere (scikit-fem,
sympy, shapely, closed-form shapes); here the compiled pass is also checked on closed-form
shapes directly (common practice: a 2b x 2h rectangle has det J = b h; Knupp 2001: a
parallelogram's scaled Jacobian is the sine of its angle; Robinson 1987: a trapezoid's
taper is |c - a| / (c + a)).

Skipped, with the reason, where the extension is not built; but where a C compiler is on
PATH it must be built (CI installs with one), so a broken build cannot pass unnoticed.
"""

from __future__ import annotations

import json
import math
import os
import shutil
import sysconfig

import meshio
import numpy as np
import pytest
from conftest import SAMPLES
from hypothesis import given, settings
from hypothesis import strategies as st

import meshaudit
from meshaudit.cells.registry import CELL_TYPES
from meshaudit.engine.measure import measure_chunk
from meshaudit.judge.profiles import load_profile
from meshaudit.mesh.frames import Frame
from meshaudit.metrics import fused, quad
from meshaudit.metrics.solid import hexahedron

BUILT = fused.built()
needs_build = pytest.mark.skipif(
    not BUILT, reason="the compiled extension meshaudit.metrics._fused is not built here"
)

PLANAR = Frame("planar", normal=np.array([0.0, 0.0, 1.0]), axes=np.eye(3)[:2])
SHELL = Frame("shell")


def _compiler() -> str | None:
    """The C compiler setuptools would call, when it is on PATH."""
    cc = os.environ.get("CC") or sysconfig.get_config_var("CC") or "cc"
    return shutil.which(cc.split()[0])


def test_built_where_a_compiler_is_on_path():
    if _compiler() is None:
        pytest.skip("no C compiler on PATH: the numpy kernels alone are expected")
    assert BUILT, "a C compiler is on PATH but meshaudit.metrics._fused did not build"


def _same_bits(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Element-wise: the same float64 to the bit (0.0 and -0.0 differ), or both NaN."""
    a, b = np.asarray(a, dtype=np.float64), np.asarray(b, dtype=np.float64)
    return (a.view(np.int64) == b.view(np.int64)) | (np.isnan(a) & np.isnan(b))


def _assert_same(numpy_result, compiled_result) -> None:
    (m0, f0), (m1, f1) = numpy_result, compiled_result
    assert list(m0) == list(m1) and list(f0) == list(f1)
    for name in m0:
        same = _same_bits(m0[name], m1[name])
        bad = np.flatnonzero(~same)
        assert bad.size == 0, (name, bad[:5], m0[name][bad[:5]], m1[name][bad[:5]])
    for name in f0:
        assert f0[name].dtype == f1[name].dtype == bool
        np.testing.assert_array_equal(f0[name], f1[name], err_msg=name)


def _both(coords3: np.ndarray, plane: np.ndarray):
    with np.errstate(all="ignore"):  # products of huge lengths overflow in both
        return quad.measure(coords3, plane), fused.measure_quad(coords3, plane)


# -- closed-form shapes, on the compiled pass alone -------------------------------------
@needs_build
def test_rectangle_parallelogram_trapezoid():
    b, h, theta = 3.0, 0.5, math.radians(60.0)
    c, s = math.cos(theta), math.sin(theta)
    shapes = np.array(
        [
            [[0, 0], [2 * b, 0], [2 * b, 2 * h], [0, 2 * h]],  # 2b x 2h rectangle
            [[0, 0], [2, 0], [2 + c, s], [c, s]],  # parallelogram, angle theta
            [[0, 0], [4, 0], [3, 1], [1, 1]],  # trapezoid, parallel sides a = 4, c = 2
        ],
        dtype=float,
    )
    coords3 = np.concatenate([shapes, np.zeros((3, 4, 1))], axis=2)
    m, f = fused.measure_quad(coords3, shapes)
    # common practice: det J of a 2b x 2h rectangle is b h everywhere, its area 4 b h
    assert m["det_j_min"][0] == m["det_j_max"][0] == m["det_j_corner_min"][0] == b * h
    assert m["area"][0] == 4 * b * h
    assert m["aspect_ratio"][0] == b / h and m["scaled_jacobian"][0] == 1.0
    assert m["skew"][0] == 0.0 and m["taper"][0] == 0.0 and m["jacobian_ratio"][0] == 1.0
    # Knupp (2001): scaled Jacobian of a parallelogram = sin(theta); Robinson: skew 30 deg
    assert m["scaled_jacobian"][1] == pytest.approx(math.sin(theta), rel=1e-15)
    assert m["skew"][1] == pytest.approx(30.0, rel=1e-13)
    assert m["min_angle"][1] == pytest.approx(60.0, rel=1e-13)
    assert m["max_angle"][1] == pytest.approx(120.0, rel=1e-13)
    # Robinson (1987): taper of a trapezoid = |c - a| / (c + a)
    assert m["taper"][2] == pytest.approx(2.0 / 6.0, rel=1e-15)
    assert not any(v.any() for v in f.values())


@needs_build
def test_flags_of_planted_shapes():
    shapes = np.array(
        [
            [[0, 0], [0, 1], [1, 1], [1, 0]],  # clockwise: reversed and inverted
            [[0, 0], [1, 1], [1, 0], [0, 1]],  # bow-tie
            [[0, 0], [2, 0], [0.5, 0.5], [0, 2]],  # re-entrant corner at node 3
            [[0, 0], [1, 0], [1, 0], [0, 1]],  # two nodes at one place: collapsed
        ],
        dtype=float,
    )
    coords3 = np.concatenate([shapes, np.zeros((4, 4, 1))], axis=2)
    _, f = fused.measure_quad(coords3, shapes)
    assert f["reversed"].tolist() == [True, False, False, False]
    # det J changes sign over a bow-tie and a re-entrant quad: negative at a corner
    assert f["inverted"].tolist() == [True, True, True, False]
    assert f["self_intersecting"].tolist() == [False, True, False, False]
    assert f["nonconvex"].tolist() == [False, False, True, False]
    assert f["degenerate"].tolist() == [False, False, False, True]


# -- compiled against numpy, to the bit ----------------------------------------------------
def _special_quads(rng: np.random.Generator, n: int, scale: float, spread: float) -> np.ndarray:
    """n quads (n, 4, 3) of every kind the kernels tell apart: near-squares, random
    (re-entrant, clockwise, bow-ties), collapsed ones (nodes merged, all on a line, all at
    one point), at ``scale``, off the plane z = 0 by ``spread`` of their size."""
    base = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
    q = base + rng.uniform(-0.3, 0.3, (n, 4, 2))
    kind = rng.integers(0, 8, n)
    q[kind == 1] = rng.standard_normal((int((kind == 1).sum()), 4, 2))
    q[kind == 2] = q[kind == 2][:, ::-1]  # clockwise
    q[kind == 3] = q[kind == 3][:, [0, 2, 1, 3]]  # bow-tie
    merged = kind == 4
    q[merged, 2] = q[merged, 1]
    line = kind == 5
    t = rng.uniform(0, 1, (int(line.sum()), 4, 1))
    q[line] = t * np.array([2.0, 1.0])
    q[kind == 6] = q[kind == 6][:, :1]  # collapsed to a point
    opposite = kind == 7
    q[opposite, 2] = q[opposite, 0]  # diagonal of zero length
    z = spread * rng.standard_normal((n, 4, 1))
    return np.concatenate([q, z], axis=2) * scale


@needs_build
@settings(max_examples=60, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    exponent=st.sampled_from([-150, -40, -3, 0, 2, 40, 150]),
    spread=st.sampled_from([0.0, 1e-9, 0.3]),
    offset=st.sampled_from([0.0, 1e6]),
)
def test_random_chunks_bit_identical(seed, exponent, spread, offset):
    rng = np.random.default_rng(seed)
    coords3 = _special_quads(rng, 300, 2.0**exponent, spread) + offset * 2.0**exponent
    plane = np.ascontiguousarray(coords3[:, :, :2])
    _assert_same(*_both(coords3, plane))


finite = st.floats(-1e3, 1e3, allow_nan=False, allow_infinity=False)
node = st.tuples(finite, finite, finite)


@needs_build
@settings(max_examples=150, deadline=None)
@given(
    quads=st.lists(st.lists(node, min_size=4, max_size=4), min_size=1, max_size=8),
    flat=st.booleans(),
    repeat=st.sampled_from([None, (0, 1), (1, 3), (0, 2), (2, 3)]),
)
def test_drawn_quads_bit_identical(quads, flat, repeat):
    coords3 = np.array(quads, dtype=float)
    if flat:
        coords3[:, :, 2] = coords3[0, 0, 2]
    if repeat is not None:  # a node repeated: collapsed, or a zero diagonal
        coords3[:, repeat[1]] = coords3[:, repeat[0]]
    plane = np.ascontiguousarray(coords3[:, :, :2])
    _assert_same(*_both(coords3, plane))


def _chunk(coords3: np.ndarray, frame: Frame, monkeypatch, kernel: str):
    if kernel == "numpy":
        monkeypatch.setenv(fused.KERNEL_VARIABLE, "numpy")
    else:
        monkeypatch.delenv(fused.KERNEL_VARIABLE, raising=False)
    return measure_chunk("quad", coords3, frame, load_profile(None))


@needs_build
@pytest.mark.parametrize("frame", [PLANAR, SHELL], ids=["planar", "shell"])
def test_verdicts_identical(frame, monkeypatch):
    rng = np.random.default_rng(5)
    coords3 = _special_quads(rng, 4000, 10.0, 0.0 if frame is PLANAR else 0.05)
    a = _chunk(coords3, frame, monkeypatch, "numpy")
    b = _chunk(coords3, frame, monkeypatch, "compiled")
    for name in a[0]:
        assert _same_bits(a[0][name], b[0][name]).all(), name
    np.testing.assert_array_equal(a[1], b[1])  # flag bits
    for name in a[2]:
        np.testing.assert_array_equal(a[2][name], b[2][name], err_msg=name)
    np.testing.assert_array_equal(a[3], b[3])  # verdicts
    assert (a[3] == 2).any() and (a[3] == 0).any()  # both verdicts occur


# -- the hexahedron ------------------------------------------------------------------------
CUBE = np.array(
    [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]],
    dtype=float,
)
DET_J = ("volume", "det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound")


def _assert_hex_close(numpy_result, compiled_result, coords: np.ndarray) -> None:
    (m0, f0), (m1, f1) = numpy_result, compiled_result
    assert list(m0) == list(m1) and list(f0) == list(f1)
    edges = (
        coords[:, [1, 2, 3, 0, 5, 6, 7, 4, 4, 5, 6, 7]]
        - coords[:, [0, 1, 2, 3, 4, 5, 6, 7, 0, 1, 2, 3]]
    )
    cube = np.sqrt((edges**2).sum(axis=2)).max(axis=1) ** 3
    for name in m0:
        a, b = m0[name], m1[name]
        same = _same_bits(a, b) | (a == b)  # equal infinities
        if name in DET_J:
            close = np.abs(a - b) <= 1e-12 * cube
        elif name == "jacobian_ratio":
            sure = m0["det_j_min"] > 1e-6 * cube
            close = ~sure | (np.abs(a - b) <= 1e-9 * np.abs(a))
        else:
            close = np.abs(a - b) <= 1e-12 * np.abs(a)
        bad = np.flatnonzero(~(same | close))
        assert bad.size == 0, (name, bad[:5], a[bad[:5]], b[bad[:5]])
    for name in f0:
        np.testing.assert_array_equal(f0[name], f1[name], err_msg=name)


def _special_hexes(rng: np.random.Generator, n: int, scale: float) -> np.ndarray:
    """n hexahedra (n, 8, 3): jittered cubes, random ones (inverted, twisted, crossing
    faces), mirrored, corners merged, flattened to a plane, at ``scale``."""
    h = CUBE + rng.uniform(-0.35, 0.35, (n, 8, 3))
    kind = rng.integers(0, 6, n)
    h[kind == 1] = rng.standard_normal((int((kind == 1).sum()), 8, 3))
    h[kind == 2] = h[kind == 2][:, [4, 5, 6, 7, 0, 1, 2, 3]]  # mirrored: reversed
    merged = kind == 3
    h[merged, 6] = h[merged, 5]
    h[kind == 4, :, 2] = 0.0  # flat
    twist = kind == 5
    h[twist, 4:] = h[twist][:, [6, 7, 4, 5]]  # top face turned by 180 degrees
    return h * scale


@needs_build
@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), exponent=st.sampled_from([-60, -3, 0, 5, 60]))
def test_hexahedra_agree(seed, exponent):
    coords = _special_hexes(np.random.default_rng(seed), 400, 2.0**exponent)
    with np.errstate(all="ignore"):
        expected = hexahedron.measure(coords, "hexahedron")
        got = fused.measure_hexahedron(coords)
        _assert_hex_close(expected, got, coords)


@needs_build
def test_hexahedron_closed_forms():
    """A 2 x 1 x 1 box: det J = 2/8 everywhere (common practice: abc/8 on [-1, 1]^3),
    aspect and edge ratio 2; the cube sheared to a face angle of 60 degrees: scaled
    Jacobian sin 60 (Knupp 2001), skew 30; a mirrored cube is reversed."""
    c60 = math.cos(math.radians(60.0))
    sheared = CUBE @ np.array([[1.0, c60, 0], [0, math.sin(math.radians(60.0)), 0], [0, 0, 1]]).T
    coords = np.stack([CUBE * [2.0, 1.0, 1.0], sheared, CUBE[[4, 5, 6, 7, 0, 1, 2, 3]]])
    m, f = fused.measure_hexahedron(coords)
    # (the 1-D Gauss-point basis is rounded: det J there reads 0.25 to a few ulps)
    assert m["det_j_min"][0] == pytest.approx(0.25, rel=1e-14)
    assert m["det_j_max"][0] == pytest.approx(0.25, rel=1e-14)
    assert m["volume"][0] == pytest.approx(2.0, rel=1e-14)
    assert m["aspect_ratio"][0] == 2.0 and m["edge_ratio"][0] == 2.0
    assert m["scaled_jacobian"][1] == pytest.approx(math.sin(math.radians(60.0)), rel=1e-14)
    assert m["skew"][1] == pytest.approx(30.0, rel=1e-12)
    assert f["reversed"].tolist() == [False, False, True]
    assert f["inverted"].tolist() == [False, False, True]


SAMPLE_FILES = sorted(p for p in SAMPLES.iterdir() if p.suffix in (".msh", ".vtu"))


@needs_build
@pytest.mark.parametrize("path", SAMPLE_FILES, ids=[p.name for p in SAMPLE_FILES])
def test_samples_identical(path, monkeypatch):
    monkeypatch.setenv(fused.KERNEL_VARIABLE, "numpy")
    a = meshaudit.audit(path)
    monkeypatch.delenv(fused.KERNEL_VARIABLE)
    b = meshaudit.audit(path)
    compiled = {"quad", "quad8", "quad9", "hexahedron"} & set(b.summary.element_counts)
    assert a.summary.kernel == "numpy"
    assert b.summary.kernel == ("compiled" if compiled else "numpy")
    hexes = b.type_codes == (
        b.cell_types.index("hexahedron") if "hexahedron" in b.cell_types else -1
    )
    for name in a.metrics:
        same = _same_bits(a.metrics[name], b.metrics[name])
        if name in (*DET_J, "jacobian_ratio", "score"):  # hexahedra: to round-off
            close = np.isclose(a.metrics[name], b.metrics[name], rtol=1e-12, atol=0.0)
            same |= hexes & close
        assert same.all(), name
    np.testing.assert_array_equal(a.flag_bits, b.flag_bits)
    np.testing.assert_array_equal(a.verdict, b.verdict)
    for name in a.levels:
        np.testing.assert_array_equal(a.levels[name], b.levels[name], err_msg=name)


# -- the fallback --------------------------------------------------------------------------
def test_numpy_forced_by_the_variable(monkeypatch, run_cli, tmp_path):
    """With the variable set the numpy kernel runs (and the summary says so), and its
    numbers are the closed-form ones: a 2 x 1 rectangle has det J = 1 x 0.5 (common
    practice) and aspect ratio 2."""
    monkeypatch.setenv(fused.KERNEL_VARIABLE, "numpy")
    assert fused.kernel_for(CELL_TYPES["quad"]) is quad.measure
    points = np.array([[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]])
    mesh = meshio.Mesh(points, [("quad", np.array([[0, 1, 2, 3]]))])
    report = meshaudit.audit(mesh)
    assert report.summary.kernel == "numpy"
    assert report.metrics["det_j_min"][0] == 0.5
    assert report.metrics["aspect_ratio"][0] == 2.0
    out = tmp_path / "r.json"
    res = run_cli("check", SAMPLES / "bracket_plate.msh", "--json", out, "--quiet")
    assert res.returncode == 0, res.stderr
    assert json.loads(out.read_text())["summary"]["kernel"] == "numpy"


@needs_build
def test_compiled_by_default(monkeypatch, run_cli, tmp_path):
    monkeypatch.delenv(fused.KERNEL_VARIABLE, raising=False)
    assert fused.kernel_for(CELL_TYPES["quad"]) is fused.measure_quad
    out = tmp_path / "r.json"
    res = run_cli("check", SAMPLES / "bracket_plate.msh", "--json", out, "--quiet")
    assert res.returncode == 0, res.stderr
    assert json.loads(out.read_text())["summary"]["kernel"] == "compiled"


def test_without_the_extension(monkeypatch):
    """As on a machine where it did not build: the numpy kernel, and the summary says so."""
    monkeypatch.delenv(fused.KERNEL_VARIABLE, raising=False)
    monkeypatch.setattr(fused, "_fused", None)
    assert not fused.built()
    assert fused.kernel_for(CELL_TYPES["quad"]) is quad.measure
    points = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
    report = meshaudit.audit(meshio.Mesh(points, [("quad", np.array([[0, 1, 2, 3]]))]))
    assert report.summary.kernel == "numpy"
    assert report.metrics["det_j_min"][0] == 0.25  # a 2b x 2h square, b = h = 1/2
