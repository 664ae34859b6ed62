"""explain: det J at Gauss points and nodes, metrics against limits, the element figure."""

from __future__ import annotations

import json

import meshio
import numpy as np
import pytest
import skfem
from inspect_meshes import planted_plate

from meshaudit import audit_mesh, explain
from meshaudit.judge.profiles import BUILTIN
from meshaudit.metrics.quad import corner_jacobians, gauss_jacobians
from meshaudit.outputs import explain_plot

G = 1.0 / np.sqrt(3.0)  # 2x2 Gauss-Legendre abscissa


def one_quad(corners) -> meshio.Mesh:
    return meshio.Mesh(np.asarray(corners, dtype=float), [("quad", np.array([[0, 1, 2, 3]]))])


def test_rectangle_det_j_is_b_times_h_everywhere():
    # A 2b x 2h rectangle maps from [-1, 1]^2 with det J = b*h at every point
    # (common practice check value for the bilinear quad).
    b, h = 3.0, 1.25
    ex = explain(audit_mesh(one_quad([[0, 0], [2 * b, 0], [2 * b, 2 * h], [0, 2 * h]])), 0)
    np.testing.assert_allclose(ex.det_j_gauss, b * h, rtol=1e-12)
    np.testing.assert_allclose(ex.det_j_nodes, b * h, rtol=1e-12)
    np.testing.assert_allclose(np.abs(ex.gauss_points), G, rtol=1e-12)
    assert ex.verdict == "ok" and ex.breaches == []


def test_distorted_quad_matches_scikit_fem_and_our_kernel():
    corners = np.array([[0.0, 0.0], [3.0, 0.2], [3.5, 2.0], [0.2, 1.5]])
    ex = explain(audit_mesh(one_quad(corners)), 0)
    np.testing.assert_allclose(ex.det_j_gauss, gauss_jacobians(corners[None])[0], rtol=1e-12)
    np.testing.assert_allclose(ex.det_j_nodes, corner_jacobians(corners[None])[0], rtol=1e-12)
    # scikit-fem's isoparametric map lives on [0, 1]^2: X = (xi + 1) / 2, so its
    # det DF is 4 det J at the same physical points.
    mesh = skfem.MeshQuad1(corners.T, np.array([[0], [1], [2], [3]]))
    ref01 = (ex.gauss_points.T + 1.0) / 2.0
    np.testing.assert_allclose(mesh._mapping().detDF(ref01)[0] / 4.0, ex.det_j_gauss, rtol=1e-12)


def test_reversed_quad_explained(run_cli, tmp_path):
    source = tmp_path / "plate.vtu"
    meshio.write(source, planted_plate())
    result = run_cli(
        "explain", source, "7", "--json", tmp_path / "e.json", "--plot", tmp_path / "e.png"
    )
    assert result.returncode == 1, result.stderr  # element 7 fails
    doc = json.loads((tmp_path / "e.json").read_text())
    # unit square traversed clockwise: det J = -(1/2)(1/2) = -0.25 everywhere (b = h = 1/2)
    assert [g["det_j"] for g in doc["gauss_points"]] == pytest.approx([-0.25] * 4)
    assert [n["det_j"] for n in doc["det_j_nodes"]] == pytest.approx([-0.25] * 4)
    assert {"inverted", "reversed"} <= set(doc["flags"])
    assert "clockwise" in doc["flag_reasons"]["reversed"]
    sj = next(m for m in doc["metrics"] if m["name"] == "scaled_jacobian")
    sj_fail = BUILTIN["standard"].limit("quad", "scaled_jacobian").fail
    assert sj["level"] == "fail" and f"below the fail limit {sj_fail:g}" in sj["reason"]
    assert "det J at the Gauss points" in result.stdout and "-0.25" in result.stdout
    assert (tmp_path / "e.png").read_bytes().startswith(b"\x89PNG")
    # neighbours share a node with quad 7 (column 1, row 1 of a 6 x 4 grid; VTK cell
    # index = row * 6 + column)
    assert sorted(doc["neighbours"]) == [0, 1, 2, 6, 8, 12, 13, 14]


def test_folded_quad_figure_hatches_the_negative_part():
    audited = audit_mesh(planted_plate())
    ex = explain(audited, 14)  # bow-tie: det J changes sign inside the element
    assert (ex.det_j_gauss > 0).any() and (ex.det_j_gauss < 0).any()
    fig = explain_plot.draw(audited, ex)
    gids = {c.get_gid() for c in fig.axes[0].collections}
    assert {"folded", "grid", "neighbours"} <= gids
    folded = next(c for c in fig.axes[0].collections if c.get_gid() == "folded")
    assert 0 < len(folded.get_paths()) < 64  # part of the 8 x 8 grid cells, not all


def test_unknown_id_exits_2_with_one_line(run_cli, tmp_path):
    source = tmp_path / "plate.vtu"
    meshio.write(source, planted_plate())
    result = run_cli("explain", source, "999")
    assert result.returncode == 2
    assert result.stderr.strip().count("\n") == 0 and "no element with id 999" in result.stderr
    assert result.stdout == ""


@pytest.mark.parametrize("cell_type", ["quad", "quad8", "quad9", "triangle", "triangle6"])
def test_shape_functions_are_kronecker_and_sum_to_one(cell_type):
    # N_i(x_j) = delta_ij and sum N_i = 1 for any isoparametric element (common practice).
    from meshaudit.cells import CELL_TYPES
    from meshaudit.cells import quad as quad_ref
    from meshaudit.cells import triangle as triangle_ref

    shape_functions = CELL_TYPES[cell_type].shape_functions
    nodes = {
        "quad": quad_ref.QUAD_CORNERS,
        "quad8": quad_ref.QUAD8_NODES,
        "quad9": quad_ref.QUAD9_NODES,
        "triangle": np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]]),
        "triangle6": triangle_ref.TRIANGLE6_NODES,
    }[cell_type]
    np.testing.assert_allclose(shape_functions(nodes), np.eye(len(nodes)), atol=1e-14)
    pts = np.random.default_rng(1).uniform(0.0, 0.5, (20, 2))
    np.testing.assert_allclose(shape_functions(pts).sum(axis=1), 1.0, rtol=1e-14)


def test_quad8_rectangle_and_quarter_point():
    b, h = 2.0, 0.5
    c = np.array([[0, 0], [2 * b, 0], [2 * b, 2 * h], [0, 2 * h]], dtype=float)
    mids = (c + np.roll(c, -1, axis=0)) / 2
    straight = meshio.Mesh(np.vstack([c, mids]), [("quad8", np.arange(8)[None])])
    ex = explain(audit_mesh(straight), 0)
    assert len(ex.det_j_gauss) == 9 and len(ex.det_j_nodes) == 8  # 3x3 rule, every node
    np.testing.assert_allclose(ex.det_j_gauss, b * h, rtol=1e-12)  # b*h, common practice
    np.testing.assert_allclose(ex.det_j_nodes, b * h, rtol=1e-12)
    # Midside node of edge 1-2 at the quarter point next to node 1: det J vanishes at
    # node 1 (Henshell and Shaw 1975; Barsoum 1976).
    quarter = np.vstack([c, mids])
    quarter[4] = [b / 2, 0.0]
    ex = explain(audit_mesh(meshio.Mesh(quarter, [("quad8", np.arange(8)[None])])), 0)
    assert ex.det_j_nodes[0] == pytest.approx(0.0, abs=1e-12)
    assert (ex.det_j_gauss > 0).all()
    fig = explain_plot.draw(audit_mesh(meshio.Mesh(quarter, [("quad8", np.arange(8)[None])])), ex)
    assert any(c.get_gid() == "grid" for c in fig.axes[0].collections)


def test_explain_uses_the_same_configuration_as_check(run_cli, tmp_path):
    # A meshaudit.toml beside the mesh tightens the triangle min-angle limits: the flat
    # triangle (id 24, angles 26.6 / 26.6 / 126.9 deg by construction) then fails.
    source = tmp_path / "plate.vtu"
    meshio.write(source, planted_plate())
    (tmp_path / "meshaudit.toml").write_text(
        '[limits]\nextends = "standard"\n[limits.triangle]\nmin_angle = { warn = 40, fail = 30 }\n'
    )
    check = run_cli("check", source, "--json", tmp_path / "r.json", "--quiet")
    assert check.returncode == 1, check.stderr
    rec = next(
        r for r in json.loads((tmp_path / "r.json").read_text())["elements"] if r["id"] == 24
    )
    assert rec["verdict"] == "fail"
    explained = run_cli("explain", source, "24", "--json", tmp_path / "e.json")
    assert explained.returncode == 1, explained.stderr
    doc = json.loads((tmp_path / "e.json").read_text())
    angle = next(m for m in doc["metrics"] if m["name"] == "min_angle")
    assert doc["verdict"] == "fail" and (angle["warn"], angle["fail"]) == (40, 30)
    assert angle["value"] == pytest.approx(np.degrees(np.arctan(0.5)))  # atan(0.25 / 0.5)
    plain = run_cli("explain", source, "24", "--no-config", "--json", tmp_path / "p.json")
    assert (
        plain.returncode == 0 and json.loads((tmp_path / "p.json").read_text())["verdict"] == "warn"
    )
