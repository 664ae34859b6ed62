"""The stiffness metrics in the audit: material input, regions, findings, every output.

Outside references, named at each check: the isoparametric det J of the bilinear quad in
closed form (Robinson's e0..e3 form, common practice), the exact pure-bending closed form
of the bilinear rectangle (checked symbolically in test_stiffness_reference.py), the
plane-strain / plane-stress equivalence of elasticity (E' = E/(1 - nu^2), nu' = nu/(1 - nu),
common practice), and the quadratic completeness of elements under an affine map
(MacNeal and Harder 1985's parallelogram elements, from memory).
"""

from __future__ import annotations

import csv
import itertools
import json
import math

import meshio
import numpy as np
import pytest

import meshaudit
from meshaudit.cells.registry import CELL_TYPES
from meshaudit.metrics import STIFFNESS_METRICS, stiffness

STEEL = meshaudit.Material(E=210000.0, nu=0.3, rho=7.85e-9, t=2.0)  # N, mm, tonne -> s


def _grid(nx: int, ny: int, widths=None) -> meshio.Mesh:
    """Quads on a grid of unit height rows; column widths ``widths`` (default 1)."""
    xs = np.concatenate([[0.0], np.cumsum(widths if widths is not None else np.ones(nx))])
    points = np.array([[x, y] for y in range(ny + 1) for x in xs])
    n = len(xs)
    quads = [
        [j * n + i, j * n + i + 1, (j + 1) * n + i + 1, (j + 1) * n + i]
        for j in range(ny)
        for i in range(nx)
    ]
    return meshio.Mesh(points, [("quad", np.array(quads))])


def test_without_a_material_nothing_is_measured():
    report = meshaudit.audit(_grid(3, 2))
    for name in STIFFNESS_METRICS:
        assert np.isnan(report.metrics[name]).all()
    assert report.materials is None
    assert not any(
        f.kind in ("constant_strain_failure", "small_time_step") for f in report.findings
    )


def test_unit_square_grid_with_steel():
    report = meshaudit.audit(_grid(3, 2), material=STEEL)
    steps = report.metrics["stable_time_step"]
    # common practice: dt ~ L / c with c = sqrt(E / rho); a square element reads between
    # 1/sqrt(2) and 1 of it (see test_stiffness_reference.py)
    ratio = steps / (1.0 / STEEL.wave_speed)
    assert np.all((ratio > 1 / math.sqrt(2) - 1e-12) & (ratio <= 1.0))
    # the bilinear square in pure bending: nu^2/(1 - nu^2) + 1/(2 (1 + nu)) (sympy, see
    # test_stiffness_reference.py)
    nu = STEEL.nu
    assert report.metrics["bending_error"] == pytest.approx(nu**2 / (1 - nu**2) + 1 / (2 + 2 * nu))
    assert report.metrics["bending_error_distortion"] == pytest.approx(0.0, abs=1e-12)
    assert report.passed and not report.findings


def test_plane_strain_is_plane_stress_with_the_effective_constants():
    # elasticity (common practice): plane strain with E, nu behaves as plane stress with
    # E' = E / (1 - nu^2), nu' = nu / (1 - nu)
    mesh = _grid(2, 1, widths=[3.0, 1.5])
    e, nu = 1000.0, 0.3
    strain = meshaudit.audit(mesh, material=meshaudit.Material(e, nu, 1.0, plane="strain"))
    stress = meshaudit.audit(mesh, material=meshaudit.Material(e / (1 - nu**2), nu / (1 - nu), 1.0))
    for name in ("stable_time_step", "bending_error"):
        assert strain.metrics[name] == pytest.approx(stress.metrics[name], rel=1e-12)


def test_materials_by_region():
    mesh = _grid(2, 1)
    mesh.cell_sets = {"soft": [np.array([1])]}
    soft = meshaudit.Material(E=STEEL.E / 4, nu=0.3, rho=STEEL.rho)
    report = meshaudit.audit(mesh, material={"default": STEEL, "soft": soft})
    steps = report.metrics["stable_time_step"]
    # dt ~ sqrt(rho / E) (common practice): a quarter of the stiffness, twice the step
    assert steps[1] == pytest.approx(2 * steps[0], rel=1e-12)
    only = meshaudit.audit(mesh, material={"soft": soft})  # no default: element 0 has none
    assert np.isnan(only.metrics["stable_time_step"][0])
    assert only.metrics["stable_time_step"][1] == pytest.approx(steps[1])
    assert any("no material" in note for note in only.notes)


def _gauss_det_j(corners: np.ndarray) -> np.ndarray:
    """det J at the 2x2 Gauss points from the closed form det J = e1 x e2 + (e1 x e3) xi
    + (e3 x e2) eta (Robinson's form of the bilinear map, common practice)."""
    x = corners
    e1 = (-x[0] + x[1] + x[2] - x[3]) / 4
    e2 = (-x[0] - x[1] + x[2] + x[3]) / 4
    e3 = (x[0] - x[1] + x[2] - x[3]) / 4

    def cross(a, b):
        return a[0] * b[1] - a[1] * b[0]

    g = 1 / math.sqrt(3)
    return np.array(
        [cross(e1, e2) + cross(e1, e3) * s + cross(e3, e2) * t for s in (-g, g) for t in (-g, g)]
    )


@pytest.mark.parametrize(
    ("corners", "fails"),
    [
        # a bow-tie: det J changes sign inside, negative at two Gauss points
        ([[0, 0], [2, 2], [2, 0], [0, 2]], True),
        # a dart whose re-entrant corner is far in: det J < 0 at a Gauss point
        ([[0, 0], [2, 0], [0.3, 0.3], [0, 2]], True),
        # a mild dart: re-entrant, yet det J > 0 at every Gauss point
        ([[0, 0], [2, 0], [0.8, 0.8], [0, 2]], False),
    ],
)
def test_constant_strain_check(corners, fails):
    corners = np.array(corners, dtype=float)
    assert fails == bool((_gauss_det_j(corners) <= 0).any())  # the closed form decides
    points = np.vstack([corners, [[5, 0], [5, 2]]])
    mesh = meshio.Mesh(points, [("quad", np.array([[0, 1, 2, 3]]))])
    report = meshaudit.audit(mesh, material=STEEL)
    kinds = {f.kind: f for f in report.findings}
    assert ("constant_strain_failure" in kinds) == fails
    if fails:
        assert kinds["constant_strain_failure"].element_ids.tolist() == [0]
        assert kinds["constant_strain_failure"].severity == "fail"
        assert not report.passed
    # the element is not valid (re-entrant or crossed): no step, infinite bending error
    assert report.metrics["stable_time_step"][0] == 0.0
    assert math.isinf(report.metrics["bending_error"][0])


def test_a_valid_mesh_passes_the_constant_strain_check():
    rng = np.random.default_rng(3)
    mesh = _grid(6, 5)
    inner = (mesh.points[:, 0] % 6 > 0) & (mesh.points[:, 1] % 5 > 0)
    mesh.points[inner] += rng.uniform(-0.25, 0.25, (int(inner.sum()), 2))
    for cell_type in ("quad", "triangle"):
        if cell_type == "triangle":
            q = mesh.cells[0].data
            mesh = meshio.Mesh(mesh.points, [("triangle", np.vstack([q[:, :3], q[:, [0, 2, 3]]]))])
        report = meshaudit.audit(mesh, material=STEEL)
        assert (report.metrics["stable_time_step"] > 0).all()
        assert not [f for f in report.findings if f.kind == "constant_strain_failure"]


def test_small_time_step_finding():
    # one column 1/20 as wide as the others: its step is about 1/20 of theirs (dt ~ L,
    # common practice), below 1/10 of the median
    mesh = _grid(5, 2, widths=[1, 1, 0.05, 1, 1])
    report = meshaudit.audit(mesh, material=STEEL)
    kinds = {f.kind: f for f in report.findings}
    assert sorted(kinds["small_time_step"].element_ids.tolist()) == [2, 7]
    assert kinds["small_time_step"].severity == "warn"
    assert kinds["small_time_step"] not in report.failing_findings  # a warning
    assert not meshaudit.audit(_grid(5, 2), material=STEEL).findings


def test_time_step_limit_in_a_profile():
    mesh = _grid(3, 1, widths=[1.0, 0.5, 0.25])
    report = meshaudit.audit(mesh, material=STEEL)
    steps = report.metrics["stable_time_step"]
    limit = meshaudit.Limit(float(steps[1]) * 1.01, float(steps[2]) * 1.01)
    profile = meshaudit.with_limit(
        meshaudit.load_profile("standard"), "quad", "stable_time_step", limit
    )
    judged = meshaudit.audit(mesh, profile=profile, material=STEEL)
    assert judged.verdict.tolist() == [0, 1, 2]
    assert not judged.passed


def test_shell_elements_are_measured_in_their_own_plane():
    mesh = _grid(2, 2, widths=[1.0, 2.0])
    mesh.points[4, 1] += 0.1  # on the fold line: every element stays flat
    flat = meshaudit.audit(mesh, material=STEEL)
    # the same mesh turned about an axis and folded along x = 1: each element keeps its
    # shape, so its stiffness, mass and bending error (membrane) are unchanged
    p3 = np.column_stack([mesh.points, np.zeros(len(mesh.points))])
    fold = p3[:, 0] > 1.0
    angle = math.radians(40)
    rel = p3[fold, 0] - 1.0
    p3[fold, 0] = 1.0 + rel * math.cos(angle)
    p3[fold, 2] = rel * math.sin(angle)
    shell = meshaudit.audit(meshio.Mesh(p3, mesh.cells), material=STEEL)
    assert shell.summary.frame == "shell"
    for name in ("stable_time_step", "bending_error", "bending_error_distortion"):
        assert shell.metrics[name] == pytest.approx(flat.metrics[name], rel=1e-9, abs=1e-12)


def _quad_nodes(cell_type: str, corners: np.ndarray) -> np.ndarray:
    ref = CELL_TYPES[cell_type].reference_nodes
    return CELL_TYPES["quad"].shape_functions(ref) @ corners


def _bending(cell_type: str, corners, nu: float = 0.3) -> dict[str, float]:
    lam, mu = nu / (1 - nu**2), 1 / (2 * (1 + nu))
    nodes = _quad_nodes(cell_type, np.asarray(corners, dtype=float))
    out, _ = stiffness.measure_nodes(
        CELL_TYPES[cell_type], nodes[None], np.array([False]), np.array([lam]),
        np.array([mu]), np.array([1.0]),
    )  # fmt: skip
    return {k: float(v[0]) for k, v in out.items()}


def _parallelogram(angle: float) -> np.ndarray:
    s, h = 2 * math.cos(math.radians(angle)), 2 * math.sin(math.radians(angle))
    return np.array([[0, 0], [2, 0], [2 + s, h], [s, h]])


def _trapezoid(t: float) -> np.ndarray:
    return np.array([[0, 0], [2, 0], [2 - t, 2], [t, 2]])


def test_bending_error_grows_with_angular_distortion():
    # the trend Lee and Bathe 1993 and MacNeal and Harder 1985 report for the bilinear
    # quad (from memory): its parasitic shear in bending grows as the element shears
    values = [
        _bending("quad", _parallelogram(a))["bending_error_distortion"]
        for a in (90, 75, 60, 45, 30)
    ]
    assert values[0] == pytest.approx(0.0, abs=1e-12)
    assert all(b > a for a, b in itertools.pairwise(values))


def test_quadratic_elements_bend_exactly_unless_distorted():
    # an affine map keeps quadratic fields in the span of quad8 and quad9 (their
    # parallelograms bend exactly); the trapezoid's bilinear map drops the eight-node
    # element's x^2 y^2 term, and its error grows with the taper (MacNeal and Harder
    # 1985, from memory); the nine-node element keeps it (its span holds the square of
    # any bilinear function)
    for angle in (90, 60, 30):
        assert _bending("quad8", _parallelogram(angle))["bending_error"] < 1e-10
        assert _bending("quad9", _parallelogram(angle))["bending_error"] < 1e-10
    tapered = [_bending("quad8", _trapezoid(t))["bending_error"] for t in (0.2, 0.4, 0.6)]
    assert tapered[0] > 1e-6 and all(b > a for a, b in itertools.pairwise(tapered))
    assert _bending("quad9", _trapezoid(0.6))["bending_error"] < 1e-10


def test_solids_get_a_step_and_a_bending_error():
    points = np.array(
        [
            [0, 0, 0],
            [1, 0, 0],
            [1, 1, 0],
            [0, 1, 0],
            [0, 0, 1],
            [1, 0, 1],
            [1, 1, 1],
            [0, 1, 1],
            [0.5, 0.5, 2],
        ],
        dtype=float,
    )
    mesh = meshio.Mesh(points, [("hexahedron", [list(range(8))]), ("pyramid", [[4, 5, 6, 7, 8]])])
    report = meshaudit.audit(mesh, material=STEEL)
    assert (report.metrics["stable_time_step"] > 0).all()
    assert np.isfinite(
        report.metrics["bending_error"]
    ).all()  # values: test_stiffness_solid_bending
    assert not report.findings


@pytest.mark.parametrize(
    "bad",
    ["E=0,nu=0.3,rho=1", "E=1,nu=0.5,rho=1", "E=1,nu=-1,rho=1", "E=1,nu=0.3,rho=0",
     "E=1,nu=0.3,rho=1,t=0", "E=1,nu=0.3", "E=1,nu=0.3,rho=x", "E=1,nu=0.3,rho=1,plane=bent",
     "E=1,nu=0.3,rho=1,G=2", "E=1,E=2,nu=0.3,rho=1", "E=nan,nu=0.3,rho=1"],
)  # fmt: skip
def test_bad_material_is_one_line_and_status_2(run_cli, bad, tmp_path):
    path = tmp_path / "plate.vtu"
    meshio.write(path, _grid(1, 1))
    result = run_cli("check", path, "--material", bad, "--no-config")
    assert result.returncode == 2
    assert len(result.stderr.strip().splitlines()) == 1 and "Traceback" not in result.stderr


def test_every_output_carries_the_metrics(run_cli, tmp_path):
    path = tmp_path / "plate.vtu"
    meshio.write(path, _grid(5, 2, widths=[1, 1, 0.05, 1, 1]))
    out = {k: tmp_path / f"r.{k}" for k in ("json", "csv", "junit", "html")}
    vtu = tmp_path / "annotated.vtu"
    result = run_cli(
        "check", path, "--no-config", "--material", "E=210000,nu=0.3,rho=7.85e-9,t=2",
        "--json", out["json"], "--csv", out["csv"], "--junit", out["junit"],
        "--html", out["html"], "--annotate", vtu, "--all",
    )  # fmt: skip
    assert result.returncode == 1, result.stderr  # the narrow column fails its aspect ratio
    assert "stable_time_step" in result.stdout and "time step" in result.stdout
    doc = json.loads(out["json"].read_text())
    smallest = doc["time_step"]["smallest"]
    steps = [e["metrics"]["stable_time_step"] for e in doc["elements"]]
    assert smallest[0]["stable_time_step"] == pytest.approx(min(steps))
    assert {s["element_id"] for s in smallest[:2]} == {2, 7}  # the narrow column
    assert doc["materials"]["default"]["E"] == 210000.0
    assert "small_time_step" in {f["kind"] for f in doc["findings"]}
    rows = list(csv.DictReader(out["csv"].open()))
    assert float(rows[2]["stable_time_step"]) == pytest.approx(min(steps))
    assert float(rows[0]["bending_error"]) > 0
    assert "no small time step" in out["junit"].read_text()
    assert "stable_time_step" in out["html"].read_text()
    annotated = meshio.read(vtu)
    assert np.allclose(annotated.cell_data["stable_time_step"][0], steps)
    explained = run_cli(
        "explain", path, "2", "--no-config", "--material", "E=210000,nu=0.3,rho=7.85e-9"
    )
    assert "pure bending" in explained.stdout and "lumped mass" in explained.stdout
    text = " ".join(explained.stdout.replace("│", " ").split())
    assert "energy of the strain error" in text and "at its Gauss points" in text


def test_materials_from_the_configuration(run_cli, tmp_path):
    path = tmp_path / "plate.vtu"
    meshio.write(path, _grid(2, 1))
    (tmp_path / "meshaudit.toml").write_text(
        "[materials.default]\nE = 210000.0\nnu = 0.3\nrho = 7.85e-9\nt = 2.0\n"
    )
    result = run_cli("check", path, "--json", tmp_path / "r.json")
    assert result.returncode == 0, result.stderr
    doc = json.loads((tmp_path / "r.json").read_text())
    assert doc["time_step"]["smallest"]
    (tmp_path / "meshaudit.toml").write_text(
        "[materials.default]\nE = 210000.0\nnu = 0.7\nrho = 1.0\n"
    )
    result = run_cli("check", path)
    assert result.returncode == 2 and "nu" in result.stderr


def test_the_readme_table_is_the_scripts():
    # the README's bending table is what benchmarks/bending_table.py writes today
    from benchmarks.bending_table import table
    from tests.conftest import REPO

    assert table() in (REPO / "README.md").read_text(encoding="utf-8")


def test_the_readme_closed_forms():
    # README: the bilinear rectangle of aspect a reads nu^2/(1 - nu^2) + a^2/(2 (1 + nu))
    # (sympy, test_stiffness_reference.py): 0.48 for the square at nu = 0.3; the
    # equilateral triangle 2.01, the right isosceles one 4.42 (sympy's constant-strain
    # value, test_stiffness_strain_error.py)
    assert _bending("quad", [[0, 0], [2, 0], [2, 2], [0, 2]])["bending_error"] == pytest.approx(
        0.09 / 0.91 + 1 / 2.6
    )
    lam, mu = 0.3 / 0.91, 1 / 2.6
    for corners, expected in (
        ([[0, 0], [1, 0], [0.5, math.sqrt(3) / 2]], 2.01),
        ([[0, 0], [1, 0], [0, 1]], 4.42),
    ):
        out, _ = stiffness.measure_nodes(
            CELL_TYPES["triangle"], np.array([corners], dtype=float), np.array([False]),
            np.array([lam]), np.array([mu]), np.array([1.0]),
        )  # fmt: skip
        assert f"{out['bending_error'][0]:.3g}".startswith(str(expected))


@pytest.mark.parametrize("scale", [1e-150, 1e-40, 1e40, 1e200])
def test_any_finite_scale(scale):
    # dt ~ size (common practice), the bending error has no unit: at any finite scale
    # (the audit measures extreme meshes scaled by a power of two, README "Metrics")
    mesh = _grid(2, 1, widths=[2.0, 1.3])
    mesh.points[4, 1] += 0.2
    base = meshaudit.audit(mesh, material=STEEL).metrics
    scaled = meshaudit.audit(meshio.Mesh(mesh.points * scale, mesh.cells), material=STEEL).metrics
    assert scaled["stable_time_step"] == pytest.approx(base["stable_time_step"] * scale, rel=1e-12)
    assert scaled["bending_error"] == pytest.approx(base["bending_error"], rel=1e-12)
