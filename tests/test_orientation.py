"""One orientation story: what is reversed, against what, in the flags and the finding.

Outside references: shapely's ``is_ccw`` of each element's outline seen from +z (the
winding a 2-D solver reading x and y sees) and ``area`` of the outline; rigid motions
keep every length, angle and area (geometry fact); a tilt about an axis in x-y by less
than 90 degrees keeps the side of the plane that faces +z (geometry fact); a mesh in a
plane containing z has no winding about z at all (its x-y projection is a line).
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest
import shapely

from meshaudit import audit
from meshaudit.metrics import METRIC_NAMES

#: Metrics of shape: the same under any rigid motion, whatever the orientation.
SHAPE = ("area", "aspect_ratio", "skew", "taper", "min_angle", "max_angle")


def triangle_grid(nx: int, ny: int, clockwise: int, seed: int = 7):
    """An nx x ny grid of unit squares split into 2 nx ny triangles in x-y, ``clockwise``
    of them (chosen at random) wound clockwise. Returns (points (m, 3), triangles, mask)."""
    xs, ys = np.meshgrid(np.arange(nx + 1.0), np.arange(ny + 1.0))
    pts = np.column_stack([xs.ravel(), ys.ravel(), np.zeros(xs.size)])
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    a = (j * (nx + 1) + i).ravel()
    b, c, d = a + 1, a + nx + 2, a + nx + 1
    tris = np.concatenate([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    mask = np.zeros(len(tris), dtype=bool)
    mask[np.random.default_rng(seed).choice(len(tris), clockwise, replace=False)] = True
    tris[mask] = tris[mask][:, ::-1]
    return pts, tris, mask


def shapely_clockwise(pts: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """Reference: shapely's winding of each outline projected on x-y (z dropped)."""
    rings = shapely.linearrings(pts[cells][..., :2])
    return ~shapely.is_ccw(rings)


def tilt(points: np.ndarray, angle: float, about: str = "x") -> np.ndarray:
    """``points`` turned by ``angle`` radians about the x or y axis through the origin."""
    c, s = np.cos(angle), np.sin(angle)
    r = {
        "x": np.array([[1, 0, 0], [0, c, -s], [0, s, c]]),
        "y": np.array([[c, 0, s], [0, 1, 0], [-s, 0, c]]),
    }[about]
    return points @ r.T


def about_z(points: np.ndarray, angle: float) -> np.ndarray:
    c, s = np.cos(angle), np.sin(angle)
    return points @ np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]]).T


def found(report) -> dict:
    return {f.kind: f for f in report.findings}


def assert_same_verdicts(a, b) -> None:
    assert a.verdict.tolist() == b.verdict.tolist()
    assert a.flag_bits.tolist() == b.flag_bits.tolist()
    assert [(f.kind, f.count, f.element_ids.tolist()) for f in a.findings] == [
        (f.kind, f.count, f.element_ids.tolist()) for f in b.findings
    ]


def assert_same_metrics(a, b) -> None:
    """Every metric equal to rounding (warp of a flat element: within 1e-6 degree)."""
    for name in METRIC_NAMES:
        np.testing.assert_allclose(
            a.metrics[name],
            b.metrics[name],
            rtol=1e-9,
            atol=1e-6 if name == "warp" else 1e-9,
            equal_nan=True,
            err_msg=name,
        )


# -- planar meshes: orientation against +z ----------------------------------------------


def test_most_elements_clockwise_flags_and_finding_name_the_same_elements():
    # 524 of 752 triangles clockwise, by construction; shapely says which.
    pts, tris, _ = triangle_grid(8, 47, clockwise=524)
    report = audit(meshio.Mesh(pts, [("triangle", tris)]))
    clockwise = shapely_clockwise(pts, tris)
    assert clockwise.sum() == 524 and len(tris) == 752
    assert report.summary.orientation == "+z"
    assert report.flag("reversed").tolist() == clockwise.tolist()
    assert report.flag("inverted").tolist() == clockwise.tolist()
    assert (report.verdict[clockwise] == 2).all()
    winding = found(report)["inconsistent_winding"]
    assert winding.count == 524
    assert winding.element_ids.tolist() == report.ids[clockwise].tolist()
    assert winding.message.startswith("524 of 752 elements are wound clockwise about +z")
    assert "reverse their node order" in winding.message


def test_all_elements_clockwise_is_named_as_the_whole_mesh():
    pts, tris, _ = triangle_grid(6, 5, clockwise=60)
    report = audit(meshio.Mesh(pts, [("triangle", tris)]))
    assert shapely_clockwise(pts, tris).all()
    assert report.flag("reversed").all() and (report.verdict == 2).all()
    winding = found(report)["inconsistent_winding"]
    assert winding.count == 60 and winding.element_ids.size == 60
    assert winding.message.startswith("all 60 elements are wound clockwise about +z")
    assert "every element" in winding.message


@pytest.mark.parametrize("about", ["x", "y"])
@pytest.mark.parametrize("angle", [1e-3, -1e-3, 0.7, 1.5])
def test_a_tilt_does_not_change_any_verdict(angle: float, about: str):
    # Geometry fact: turning the plane by less than 90 degrees about an axis in x-y keeps
    # the side facing +z, so a 2-D solver reading x and y sees the same winding, and the
    # shapes do not change. All-clockwise and mixed meshes alike.
    for count in (752, 524, 0):
        pts, tris, _ = triangle_grid(8, 47, clockwise=count)
        flat = audit(meshio.Mesh(pts, [("triangle", tris)]))
        tilted_pts = tilt(pts, angle, about)
        tilted = audit(meshio.Mesh(tilted_pts, [("triangle", tris)]))
        assert tilted.summary.frame == "planar" and tilted.summary.orientation == "+z"
        assert shapely_clockwise(tilted_pts, tris).tolist() == flat.flag("reversed").tolist()
        assert_same_verdicts(flat, tilted)
        assert_same_metrics(flat, tilted)
        assert any("tilted" in note for note in tilted.notes)


def test_tilted_quads_keep_the_shapely_area_of_the_flat_outline():
    # shapely: polygon area of each flat outline; the tilted mesh is measured in its plane.
    rng = np.random.default_rng(4)
    xs, ys = np.meshgrid(np.arange(7.0), np.arange(5.0))
    pts = np.column_stack([xs.ravel(), ys.ravel(), np.zeros(xs.size)])
    pts[:, :2] += rng.uniform(-0.25, 0.25, (len(pts), 2))
    i, j = np.meshgrid(np.arange(6), np.arange(4))
    a = (j * 7 + i).ravel()
    quads = np.column_stack([a, a + 1, a + 8, a + 7])
    quads[::3] = quads[::3, ::-1]  # every third clockwise, by construction
    expected = shapely.area(shapely.polygons(pts[quads][..., :2]))
    for angle in (0.0, 1e-3, 1.2):
        report = audit(
            meshio.Mesh(tilt(pts, angle) + np.array([5.0, -3.0, 2.0]), [("quad", quads)])
        )
        np.testing.assert_allclose(report.metrics["area"], expected, rtol=1e-12)
        assert report.flag("reversed").tolist() == shapely_clockwise(pts, quads).tolist()


@pytest.mark.parametrize("angle", [0.3, np.pi / 2, 2.0, np.pi, -2.5])
def test_a_rotation_about_z_does_not_change_any_verdict(angle: float):
    pts, tris, _ = triangle_grid(8, 47, clockwise=524)
    flat = audit(meshio.Mesh(pts, [("triangle", tris)]))
    turned = audit(meshio.Mesh(about_z(pts, angle), [("triangle", tris)]))
    assert_same_verdicts(flat, turned)
    assert_same_metrics(flat, turned)
    # and of a tilted mesh, too
    leaning = tilt(pts, 1e-3)
    a = audit(meshio.Mesh(leaning, [("triangle", tris)]))
    b = audit(meshio.Mesh(about_z(leaning, angle), [("triangle", tris)]))
    assert_same_verdicts(a, b)
    assert_same_metrics(a, b)


@pytest.mark.parametrize("shift", [(3.0, -2.0, 0.0), (1e5, 2e5, -7.0), (-4e6, 1e6, 3e6)])
def test_a_translation_does_not_change_any_verdict(shift):
    # Far from the origin the coordinates keep fewer digits of the element size: the
    # planar test allows for the rounding of the coordinates, so the mesh stays planar.
    pts, tris, _ = triangle_grid(8, 47, clockwise=524)
    flat = audit(meshio.Mesh(pts, [("triangle", tris)]))
    for moved_pts in (pts + shift, tilt(pts, 1e-3) + shift):
        moved = audit(meshio.Mesh(moved_pts, [("triangle", tris)]))
        assert moved.summary.frame == "planar" and moved.summary.orientation == "+z"
        assert_same_verdicts(flat, moved)
        for name in SHAPE:
            np.testing.assert_allclose(
                moved.metrics[name], flat.metrics[name], rtol=1e-6, atol=1e-6, err_msg=name
            )


def test_a_clockwise_re_entrant_quad_is_reversed_and_named():
    # A dart (re-entrant at node 3) wound clockwise: its signed area is negative
    # (shapely) although its reflex corner has a positive det J; reversing its node
    # order gives the counter-clockwise dart, which stays re-entrant.
    dart = np.array([[0.0, 0.0, 0.0], [2.0, 1.0, 0.0], [0.0, 0.3, 0.0], [-2.0, 1.0, 0.0]])
    cw = dart[::-1].copy()
    report = audit(meshio.Mesh(cw, [("quad", [[0, 1, 2, 3]])]))
    assert shapely_clockwise(cw, np.array([[0, 1, 2, 3]]))[0]
    assert {"reversed", "inverted", "nonconvex"} <= set(report.flags_of(0))
    assert found(report)["inconsistent_winding"].element_ids.tolist() == [0]
    ccw = audit(meshio.Mesh(dart, [("quad", [[0, 1, 2, 3]])]))
    assert "reversed" not in ccw.flags_of(0) and "nonconvex" in ccw.flags_of(0)


# -- planar meshes in a plane containing z: relative orientation --------------------------


def xz_mesh(angle_about_z: float = 0.0, shift=(0.0, 0.0, 0.0)):
    """The 524-of-752 triangle grid stood up in the x-z plane (y = 0), then turned about z
    and moved: a plane containing z."""
    pts, tris, mask = triangle_grid(8, 47, clockwise=524)
    upright = np.column_stack([pts[:, 0], np.zeros(len(pts)), pts[:, 1]])
    return about_z(upright, angle_about_z) + shift, tris, mask, pts


@pytest.mark.parametrize(("angle", "shift"), [(0.0, (0, 0, 0)), (0.9, (1e4, -3e3, 50.0))])
def test_a_mesh_in_a_plane_containing_z_is_judged_between_neighbours(angle, shift):
    pts, tris, mask, flat_pts = xz_mesh(angle, shift)
    report = audit(meshio.Mesh(pts, [("triangle", tris)]))
    assert report.summary.frame == "planar" and report.summary.orientation == "relative"
    # no absolute orientation: nothing is reversed or inverted; the minority (the 228
    # counter-clockwise in the grid's own numbering, by construction) faces the other way
    assert not report.flag("reversed").any() and not report.flag("inverted").any()
    flipped = report.flag("flipped_normal")
    assert flipped.tolist() == (~mask).tolist()
    assert set(report.verdict[flipped].tolist()) == {1}
    clash = found(report)["opposite_normals"]
    assert clash.element_ids.tolist() == report.ids[flipped].tolist()
    assert clash.count == 228
    assert clash.message.startswith("228 of 752 elements face against the rest of their patch")
    assert "inconsistent_winding" not in found(report)
    assert any("contains the z direction" in note for note in report.notes)
    # the shapes are those of the flat grid (geometry fact); det J as each element's own
    # winding has it: positive, the triangle's doubled area
    flat = audit(meshio.Mesh(flat_pts, [("triangle", tris)]))
    for name in SHAPE:
        np.testing.assert_allclose(report.metrics[name], flat.metrics[name], atol=1e-9)
    np.testing.assert_allclose(report.metrics["det_j_min"], 1.0, rtol=1e-9)


def test_a_shell_names_the_same_elements_in_flags_and_finding():
    # A bent strip with three elements reversed, by construction.
    xs, ys = np.meshgrid(np.arange(9.0), np.arange(4.0))
    pts = np.column_stack([xs.ravel(), ys.ravel(), 0.05 * xs.ravel() ** 2])
    i, j = np.meshgrid(np.arange(8), np.arange(3))
    a = (j * 9 + i).ravel()
    quads = np.column_stack([a, a + 1, a + 10, a + 9])
    quads[[2, 11, 20]] = quads[[2, 11, 20], ::-1]
    report = audit(meshio.Mesh(pts, [("quad", quads)]))
    assert report.summary.orientation == "relative"
    assert np.flatnonzero(report.flag("flipped_normal")).tolist() == [2, 11, 20]
    clash = found(report)["opposite_normals"]
    assert clash.element_ids.tolist() == [2, 11, 20] and clash.count == 3
    assert clash.message.startswith("3 of 24 elements face against the rest of their patch")


def test_a_nearly_flat_shell_says_what_a_2d_solver_would_see():
    # z noise of 1e-6 of the mesh size (above the planar tolerance 1e-9): a shell, judged
    # between neighbours only; the note counts the elements clockwise about +z (shapely,
    # on the outlines with z dropped), which a 2-D solver would see inverted.
    pts, tris, _ = triangle_grid(8, 47, clockwise=524)
    noisy = pts.copy()
    noisy[:, 2] = np.random.default_rng(2).uniform(-1.0, 1.0, len(pts)) * 47e-6
    report = audit(meshio.Mesh(noisy, [("triangle", tris)]))
    assert report.summary.frame == "shell" and report.summary.orientation == "relative"
    assert not report.flag("reversed").any()
    expected = int(shapely_clockwise(noisy, tris).sum())
    assert expected == 524
    assert any(f"{expected} of 752 elements wound clockwise about +z" in n for n in report.notes)
    # a clean flat-ish shell (every element counter-clockwise) gets no such note
    pts, tris, _ = triangle_grid(8, 47, clockwise=0)
    pts[:, 2] = np.random.default_rng(2).uniform(-1.0, 1.0, len(pts)) * 47e-6
    assert not any("clockwise" in n for n in audit(meshio.Mesh(pts, [("triangle", tris)])).notes)


def test_junit_and_html_tell_which_reference_applies():
    # The JUnit case of the check that does not apply is skipped; the HTML summary names
    # the reference and carries the report notes.
    import xml.etree.ElementTree as ET

    from meshaudit.outputs import html_report, junit_report

    pts, tris, _ = triangle_grid(8, 47, clockwise=524)
    upright = np.column_stack([pts[:, 0], np.zeros(len(pts)), pts[:, 1]])
    for points, applies, skipped in (
        (pts, "no inconsistent winding", "no opposite normals"),
        (upright, "no opposite normals", "no inconsistent winding"),
    ):
        report = audit(meshio.Mesh(points, [("triangle", tris)]))
        root = ET.fromstring(junit_report.render(report))
        cases = {c.get("name"): c for c in root.iter("testcase")}
        assert cases[skipped].find("skipped") is not None
        assert cases[applies].find("skipped") is None
        assert ("524" if applies == "no inconsistent winding" else "228") in ET.tostring(
            cases[applies], encoding="unicode"
        )
        page = html_report._summary(report)  # the summary block of the page
        assert report.summary.geometry_text() in page
    assert "contains the z direction" in page


def test_a_flat_mesh_with_one_node_off_by_a_denormal_is_judged_against_z():
    # Found by the fuzz test: a z of 1e-321 on one node (a flipped byte) left the plane
    # normal exactly +z, which was taken for a plane containing z, and the normal became
    # NaN. Geometry fact: the mesh is the flat grid to within any tolerance.
    xs, ys = np.meshgrid(np.arange(4.0), np.arange(3.0))
    pts = np.column_stack([xs.ravel(), ys.ravel(), np.zeros(12)])
    pts[5, 2] = 1.26e-321
    i, j = np.meshgrid(np.arange(3), np.arange(2))
    a = (j * 4 + i).ravel()
    quads = np.column_stack([a, a + 1, a + 5, a + 4])
    report = audit(meshio.Mesh(pts, [("quad", quads)]))
    assert report.summary.frame == "planar" and report.summary.orientation == "+z"
    np.testing.assert_allclose(report.summary.normal, [0.0, 0.0, 1.0])
    assert report.verdict_counts() == {"ok": 6, "warn": 0, "fail": 0}
