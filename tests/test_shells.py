"""Shell surfaces in 3-D: measuring in the element's plane, warp, normal consistency.

Outside references: rigid motions preserve every length and angle (geometry fact), the
warp of a unit square with one corner lifted by h is arccos(1 / (1 + h^2)) (vector
algebra, derived with sympy below), and a consistently oriented surface traverses each
shared edge in opposite directions from its two sides (common practice).
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import meshio
import numpy as np
import pytest
import sympy as sp

from meshaudit import audit
from meshaudit.metrics import METRIC_NAMES


def grid(nx: int, ny: int) -> tuple[np.ndarray, np.ndarray]:
    """nx x ny unit quads in the x-y plane, counter-clockwise seen from +z."""
    xs, ys = np.meshgrid(np.arange(nx + 1.0), np.arange(ny + 1.0))
    pts = np.column_stack([xs.ravel(), ys.ravel(), np.zeros(xs.size)])
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    a = (j * (nx + 1) + i).ravel()
    return pts, np.column_stack([a, a + 1, a + nx + 2, a + nx + 1])


def rotation(seed: int) -> np.ndarray:
    """A random proper rotation (QR of a Gaussian matrix, sign-fixed)."""
    q, r = np.linalg.qr(np.random.default_rng(seed).normal(size=(3, 3)))
    q = q * np.sign(np.diag(r))
    return q if np.linalg.det(q) > 0 else -q


def mixed_planar_mesh() -> meshio.Mesh:
    """A small distorted planar mesh with quad, quad8 and triangle6 elements."""
    pts, cells = grid(4, 3)
    rng = np.random.default_rng(3)
    pts[:, :2] += rng.uniform(-0.2, 0.2, (len(pts), 2))
    # A quad8 and a triangle6 placed beside the grid, with bent midside nodes.
    q8 = np.array(
        [[5, 0], [7, 0.2], [7.1, 2], [5, 1.8], [6, 0.3], [7.2, 1], [6, 1.7], [4.9, 1]], float
    )
    t6 = np.array([[8, 0], [10, 0.5], [8.5, 2], [9, 0.1], [9.4, 1.3], [8.1, 1]], float)
    extra = np.column_stack([np.vstack([q8, t6]), np.zeros(14)])
    n = len(pts)
    return meshio.Mesh(
        np.vstack([pts, extra]),
        [
            ("quad", cells),
            ("quad8", [list(range(n, n + 8))]),
            ("triangle6", [list(range(n + 8, n + 14))]),
        ],
    )


def assert_same_audit(a, b) -> None:
    for name in METRIC_NAMES:
        np.testing.assert_allclose(
            a.metrics[name], b.metrics[name], rtol=1e-9, atol=1e-9, err_msg=name
        )
    assert list(a.verdict) == list(b.verdict)
    assert list(a.flag_bits) == list(b.flag_bits)


def upright(r: np.ndarray) -> np.ndarray:
    """``r``, or ``r`` followed by a half turn about x when ``r`` turns +z downwards:
    either way a proper rotation that keeps the x-y side of a plane facing up."""
    return r if r[2, 2] > 0.0 else np.diag([1.0, -1.0, -1.0]) @ r


@pytest.mark.parametrize("seed", [0, 1])
def test_a_planar_mesh_rotated_in_space_audits_like_the_flat_one(seed):
    # Geometry fact: a rigid motion keeps every length, angle and area; one that keeps
    # the plane facing +z also keeps each element's winding as a 2-D solver sees it.
    flat = mixed_planar_mesh()
    turned = meshio.Mesh(flat.points @ upright(rotation(seed)).T + [3.0, -1.0, 7.0], flat.cells)
    a, b = audit(flat), audit(turned)
    assert b.summary.frame == "planar" and b.summary.orientation == "+z"
    assert_same_audit(a, b)


def test_a_planar_mesh_turned_over_is_wound_clockwise_about_z():
    # A half turn about x mirrors the mesh as a 2-D solver reading x and y sees it: every
    # element runs clockwise about +z (geometry fact), while its shape is unchanged.
    flat = mixed_planar_mesh()
    over = meshio.Mesh(flat.points * [1.0, -1.0, -1.0] + [0.0, 0.0, 2.0], flat.cells)
    a, b = audit(flat), audit(over)
    assert b.flag("reversed").all() and (b.verdict == 2).all()
    for name in ("area", "aspect_ratio", "min_angle", "max_angle", "skew", "taper"):
        np.testing.assert_allclose(a.metrics[name], b.metrics[name], rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(a.metrics["det_j_min"], -b.metrics["det_j_max"], rtol=1e-9)
    winding = {f.kind: f for f in b.findings}["inconsistent_winding"]
    assert winding.count == len(b) and winding.message.startswith(f"all {len(b)} elements")


def test_a_curved_shell_rotated_in_space_audits_the_same():
    # Same fact for a genuine shell, measured element by element in its own plane.
    pts, cells = grid(4, 4)
    pts[:, 2] = 0.15 * (pts[:, 0] - 2.0) ** 2 - 0.1 * pts[:, 0] * pts[:, 1]
    shell = meshio.Mesh(pts, [("quad", cells)])
    turned = meshio.Mesh(pts @ rotation(5).T, shell.cells)
    a, b = audit(shell), audit(turned)
    assert a.summary.frame == b.summary.frame == "shell"
    assert_same_audit(a, b)


def test_lifting_one_corner_grows_warp_monotonically_as_vector_algebra_says():
    # sympy: for the unit square with corner 3 lifted by h, the two triangles split on
    # diagonal 1-3 have normals (0, -h, 1) and (-h, 0, 1): warp = arccos(1 / (1 + h^2)),
    # the larger of the two splits.
    h = sp.symbols("h", positive=True)
    x1, x2, x3, x4 = (sp.Matrix(v) for v in ([0, 0, 0], [1, 0, 0], [1, 1, h], [0, 1, 0]))
    na, nb = (x2 - x1).cross(x3 - x1), (x3 - x1).cross(x4 - x1)
    cos_warp = sp.simplify(na.dot(nb) / (na.norm() * nb.norm()))
    warp_of = sp.lambdify(h, sp.deg(sp.acos(cos_warp)))
    lifts = np.linspace(0.0, 0.6, 13)
    warps = []
    for lift in lifts:
        pts = np.array([[0, 0, 0], [1, 0, 0], [1, 1, lift], [0, 1, 0]], dtype=float)
        warps.append(audit(meshio.Mesh(pts, [("quad", [[0, 1, 2, 3]])])).metrics["warp"][0])
    assert np.all(np.diff(warps) > 0.0)
    np.testing.assert_allclose(warps, [float(warp_of(v)) for v in lifts], atol=1e-9)


def curved_shell(flip: int | None = None) -> meshio.Mesh:
    """A quarter-cylinder shell of 4 x 5 quads labelled 101..120 (meshio's ``cells_id``, as
    its Nastran reader sets them), one optionally flipped."""
    theta, z = np.meshgrid(np.linspace(0.0, np.pi / 2, 5), np.linspace(0.0, 3.0, 6))
    pts = np.column_stack([np.cos(theta).ravel(), np.sin(theta).ravel(), z.ravel()])
    _, cells = grid(4, 5)
    if flip is not None:
        cells[flip] = cells[flip][::-1]
    labels = np.arange(101, 121)
    mesh = meshio.Mesh(pts, [("quad", cells)])
    mesh.cells_id = [labels]
    return mesh


def test_flipping_one_shell_element_is_reported_with_its_id(tmp_path, run_cli):
    # Common practice: the one element whose normal disagrees with all its neighbours is
    # the flipped one; it is named by its own label and is not called inverted.
    mesh = curved_shell(flip=7)
    report = audit(mesh)
    assert report.summary.frame == "shell"
    flagged = report.ids[report.flag("flipped_normal")]
    assert flagged.tolist() == [108]
    assert not report.flag("inverted").any()
    assert report.verdict_names[7] == "warn"
    # And in the JSON report written by the command line: a .vtu keeps no labels, so
    # there it is the VTK cell index (the cells in file order, from 0).
    path = tmp_path / "shell.vtu"
    meshio.write(path, mesh)
    out = tmp_path / "shell.json"
    done = run_cli("check", path, "--json", out)
    assert done.returncode == 0, done.stderr
    doc = json.loads(out.read_text())
    rows = [e for e in doc["elements"] if "flipped_normal" in e["flags"]]
    assert [e["id"] for e in rows] == [7]


def test_a_consistent_shell_has_no_flipped_element():
    report = audit(curved_shell())
    assert not report.flag("flipped_normal").any()
    assert report.summary.frame == "shell"


def test_junit_reports_the_flipped_element_as_a_warning(tmp_path, run_cli):
    # The JUnit case fails only when warnings gate (--fail-on warn), like the exit status.
    path = tmp_path / "shell.vtu"
    meshio.write(path, curved_shell(flip=12))
    for gate, status in (("fail", 0), ("warn", 1)):
        xml = tmp_path / f"{gate}.xml"
        done = run_cli("check", path, "--quiet", "--junit", xml, "--fail-on", gate)
        assert done.returncode == status, done.stderr
        root = ET.parse(xml).getroot()
        case = root.find(".//testcase[@name='no flipped_normal elements']")
        failure = case.find("failure")
        assert (failure is not None) == (gate == "warn")
        text = failure.text if failure is not None else case.find("system-out").text
        assert "ids: 12" in text  # VTK cell index of the flipped quad


def test_a_moebius_band_is_named_in_the_notes():
    # Topology fact: a Moebius band has no consistent normal; nothing is called flipped.
    n = 16
    t = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    rails = [
        np.column_stack(
            [
                (1 + s * np.cos(t / 2)) * np.cos(t),
                (1 + s * np.cos(t / 2)) * np.sin(t),
                s * np.sin(t / 2),
            ]
        )
        for s in (-0.3, 0.3)
    ]
    i = np.arange(n)
    cells = np.column_stack([i, (i + 1) % n, (i + 1) % n + n, i + n])
    cells[-1] = [n - 1, n, 0, 2 * n - 1]
    report = audit(meshio.Mesh(np.vstack(rails), [("quad", cells)]))
    assert not report.flag("flipped_normal").any()
    assert any("cannot be consistently oriented" in note for note in report.notes)


def test_quadratic_cylinder_shell_reads_the_arc_sagitta_across_its_edges():
    # Circle geometry: a chord subtending angle t has length 2 R sin(t/2) and its arc's
    # midpoint sits R (1 - cos(t/2)) off it, so across = (1 - cos(t/2)) / (2 sin(t/2)).
    # Nodes of quad8 elements on a cylinder of radius 2, 8 x 3 elements over 90 degrees.
    radius, n_theta, n_z = 2.0, 8, 3
    theta = np.linspace(0.0, np.pi / 2, 2 * n_theta + 1)
    z = np.linspace(0.0, 3.0, 2 * n_z + 1)
    tt, zz = np.meshgrid(theta, z)
    pts = np.column_stack([radius * np.cos(tt).ravel(), radius * np.sin(tt).ravel(), zz.ravel()])
    m = 2 * n_theta + 1
    i, j = np.meshgrid(np.arange(n_theta), np.arange(n_z))
    c = (2 * j * m + 2 * i).ravel()
    corners = [c, c + 2, c + 2 * m + 2, c + 2 * m]
    cells = np.column_stack([*corners, c + 1, c + m + 2, c + 2 * m + 1, c + m])
    report = audit(meshio.Mesh(pts, [("quad8", cells)]))
    step = (np.pi / 2) / n_theta
    expected = (1 - np.cos(step / 2)) / (2 * np.sin(step / 2))
    assert report.summary.frame == "shell"
    np.testing.assert_allclose(report.metrics["midside_offset_across"], expected, rtol=1e-12)
    np.testing.assert_allclose(report.metrics["midside_offset_along"], 0.0, atol=1e-12)
    assert not report.flag("flipped_normal").any() and not report.flag("inverted").any()
    # Flip one element (reverse corners and midsides together): only it is reported.
    flipped = cells.copy()
    flipped[5] = flipped[5][[0, 3, 2, 1, 7, 6, 5, 4]]
    report = audit(meshio.Mesh(pts, [("quad8", flipped)]))
    assert np.flatnonzero(report.flag("flipped_normal")).tolist() == [5]
