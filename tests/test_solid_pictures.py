"""Pictures of solids: the boundary faces, the volume plot (a planted interior failure is
seen at its projected place), the explain picture of a solid (reference element beside
the element), the annotated mesh of solids, and labels that do not cover each other."""

from __future__ import annotations

import json
from itertools import combinations
from pathlib import Path

import meshio
import numpy as np
import pytest
from matplotlib.text import Text

from meshaudit import audit_mesh, explain
from meshaudit.cells.registry import CELL_TYPES
from meshaudit.mesh.faces import boundary_faces
from meshaudit.metrics import METRIC_NAMES
from meshaudit.outputs import explain_plot, plot
from meshaudit.outputs.solid_views import (
    best_direction,
    face_area_vectors,
    projected_area,
    volume_view,
)
from meshaudit.outputs.volume_plot import rule_text

SAMPLES = Path(__file__).resolve().parents[1] / "samples"

#: meshio's hexahedron order of the unit cube's corners: bottom counter-clockwise, then top.
CUBE = np.array(
    [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]]
)


def hex_block(n: int, size: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and hexahedra of an n x n x n block of cubes of side ``size`` (x fastest)."""
    axis = np.arange(n + 1) * size
    z, y, x = np.meshgrid(axis, axis, axis, indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), z.ravel()]).astype(float)
    k, j, i = (g.ravel() for g in np.meshgrid(*(np.arange(n),) * 3, indexing="ij"))
    node = lambda a, b, c: (k + c) * (n + 1) ** 2 + (j + b) * (n + 1) + (i + a)  # noqa: E731
    cells = np.column_stack([node(*corner) for corner in CUBE])
    return points, cells


def cell_index(n: int, i: int, j: int, k: int) -> int:
    return (k * n + j) * n + i


# -- boundary faces ----------------------------------------------------------------------------
def test_boundary_of_a_block_is_its_six_sides():
    # closed form: an a x b x c block of cubes has 2(ab + bc + ca) boundary squares, their
    # outward area vectors sum to zero (divergence theorem: a closed surface) and each
    # points out of the block (away from its centre)
    n = 4
    points, cells = hex_block(n)
    audited = audit_mesh(meshio.Mesh(points, [("hexahedron", cells)]))
    corners, owner = boundary_faces(audited.elements)
    assert len(corners) == 6 * n * n
    p = points[corners]
    area = 0.5 * np.cross(p[:, 2] - p[:, 0], p[:, 3] - p[:, 1])
    np.testing.assert_allclose(area.sum(axis=0), 0.0, atol=1e-12)
    np.testing.assert_allclose(np.linalg.norm(area, axis=1), 1.0)
    outward = np.einsum("ij,ij->i", area, p.mean(axis=1) - n / 2.0)
    assert (outward > 0).all()
    # every owner is a cell on the block's surface
    ijk = np.column_stack(np.unravel_index(owner, (n, n, n)))
    assert ((ijk == 0) | (ijk == n - 1)).any(axis=1).all()


def test_boundary_of_the_bracket_lug_hexahedra_and_wedges():
    # samples/make_solid_samples.py: a 60 x 40 x 10 block (6 x 4 x 2 hexahedra) with a
    # fillet of right-triangle section (legs 20, 20) on top along x = 0, 40 long (16
    # wedges). Boundary area, closed form: block 2(60*40 + 60*10 + 40*10) less the 20 x 40
    # under the fillet, plus the fillet's two triangular ends, its face at x = 0 and its
    # slope. Faces: 88 - 8 of the block, 4 x 2 triangular ends + 4 x 4 quadrilaterals.
    audited = audit_mesh(SAMPLES / "bracket_lug.vtu")
    corners, owner = boundary_faces(audited.elements)
    assert len(corners) == 80 + 8 + 16
    p = audited.elements.points[corners]
    tri = corners[:, 2] == corners[:, 3]
    area = np.where(
        tri[:, None],
        0.5 * np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]),
        0.5 * np.cross(p[:, 2] - p[:, 0], p[:, 3] - p[:, 1]),
    )
    expected = 6800.0 - 800.0 + 2 * 200.0 + 20.0 * 40.0 + np.hypot(20.0, 20.0) * 40.0
    assert np.linalg.norm(area, axis=1).sum() == pytest.approx(expected)
    np.testing.assert_allclose(area.sum(axis=0), 0.0, atol=1e-9)
    assert tri.sum() == 8
    assert set(audited.report.types[owner[tri]]) == {"wedge"}


def test_boundary_of_a_block_of_tetrahedra_is_two_triangles_per_square():
    # every cube cut into 6 tetrahedra around its diagonal from corner 0 to corner 6
    # (Kuhn's subdivision, conforming between cubes): each boundary square of the block
    # is two triangles, 2 * 6 n^2 in all, of total area 6 n^2 (closed form)
    n = 3
    points, hexes = hex_block(n)
    paths = ((1, 2), (1, 5), (3, 2), (3, 7), (4, 5), (4, 7))  # the 6 monotone paths 0 -> 6
    tets = np.concatenate([hexes[:, [0, a, b, 6]] for a, b in paths])
    p = points[tets]
    signed = np.einsum(
        "ij,ij->i", np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]), p[:, 3] - p[:, 0]
    )
    tets[signed < 0] = tets[signed < 0][:, [0, 2, 1, 3]]  # each one positively oriented
    audited = audit_mesh(meshio.Mesh(points, [("tetra", tets)]))
    corners, _ = boundary_faces(audited.elements)
    assert len(corners) == 12 * n * n
    q = points[corners]
    area = 0.5 * np.cross(q[:, 1] - q[:, 0], q[:, 2] - q[:, 0])
    assert np.linalg.norm(area, axis=1).sum() == pytest.approx(6.0 * n * n)
    np.testing.assert_allclose(area.sum(axis=0), 0.0, atol=1e-12)
    assert (np.einsum("ij,ij->i", area, q[:, :3].mean(axis=1) - n / 2.0) > 0).all()


def test_boundary_faces_are_the_corner_sets_used_once():
    # an independent count: Python's Counter over every face's corner set (frozenset)
    from collections import Counter

    from meshaudit.mesh.faces import solid_faces

    audited = audit_mesh(SAMPLES / "bracket_lug_defects.vtu")
    every, _ = solid_faces(audited.elements)
    counts = Counter(frozenset(face.tolist()) for face in every)
    once = {key for key, n in counts.items() if n == 1}
    corners, owner = boundary_faces(audited.elements)
    assert {frozenset(face.tolist()) for face in corners} == once
    assert len(corners) == len(once)
    for face, row in zip(corners, owner):  # each face belongs to its owner
        block = next(b for b in audited.elements.blocks if row in b.index)
        nodes = set(block.connectivity[row - block.index[0]].tolist())
        assert set(face.tolist()) <= nodes


# -- the volume plot -----------------------------------------------------------------------
def _pixels(fig) -> np.ndarray:
    fig.canvas.draw()
    return np.asarray(fig.canvas.buffer_rgba())[..., :3].astype(int)


def _element_pixels(fig, ax, page: np.ndarray) -> np.ndarray:
    """RGB of the pixels inside the projected convex outline ``page`` (m, 2) of one
    element, shrunk a little towards its centre (no edge lines of its own)."""
    from matplotlib.path import Path as MplPath

    image = _pixels(fig)
    height = image.shape[0]
    display = ax.transData.transform(page)
    centre = display.mean(axis=0)
    hull = _hull(display)
    lo, hi = display.min(axis=0).astype(int), display.max(axis=0).astype(int) + 1
    xs, ys = np.meshgrid(np.arange(lo[0], hi[0]), np.arange(lo[1], hi[1]))
    probe = np.column_stack([xs.ravel() + 0.5, ys.ravel() + 0.5])
    inside = MplPath(centre + 0.9 * (hull - centre)).contains_points(probe)
    rows = height - 1 - ys.ravel()[inside]
    return image[rows, xs.ravel()[inside]]


def _hull(points: np.ndarray) -> np.ndarray:
    """Convex hull (monotone chain) of 2-D points, counter-clockwise."""
    pts = sorted(map(tuple, points))

    def turn(o, a, b) -> float:
        return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])

    def half(seq):
        out = []
        for p in seq:
            while len(out) >= 2 and turn(out[-2], out[-1], p) <= 0:
                out.pop()
            out.append(p)
        return out

    lower, upper = half(pts), half(reversed(pts))
    return np.array(lower[:-1] + upper[:-1])


def _block_audit(inverted: bool):
    n = 5
    points, cells = hex_block(n, size=10.0)
    middle = cell_index(n, 2, 2, 2)
    if inverted:  # bottom and top swapped: det J < 0 everywhere (the cell itself unmoved)
        cells[middle] = np.roll(cells[middle], 4)
    return audit_mesh(meshio.Mesh(points, [("hexahedron", cells)])), middle


@pytest.mark.parametrize("inverted", [True, False])
def test_planted_interior_failure_is_seen_where_it_projects(inverted):
    audited, middle = _block_audit(inverted)
    report = audited.report
    assert list(np.flatnonzero(report.verdict == 2)) == ([middle] if inverted else [])
    fig = plot.draw(report, audited.elements, insets=0)
    ax = next(a for a in fig.axes if a.get_gid() == "mesh")
    view = volume_view(audited.elements.points)
    corners = audited.elements.points[audited.elements.blocks[0].connectivity[middle]]
    inside = _element_pixels(fig, ax, view.project(corners))
    assert len(inside) > 100
    # the opaque fill: the colour of score 0 on viridis (the lowest end), exactly as
    # matplotlib's colormap gives it, unblended with the white page
    from matplotlib import colormaps

    fill = np.round(np.array(colormaps["viridis"](0.0)[:3]) * 255).astype(int)
    is_fill = (np.abs(inside - fill) <= 3).all(axis=1)
    is_black = (inside <= 40).all(axis=1)  # the outline colour (black)
    if inverted:
        assert is_fill.mean() > 0.5  # the interior element covers its place, opaque
        assert is_black.any()  # its edges, outlined
    else:
        assert not is_fill.any() and not is_black.any()  # only the see-through skin


def test_volume_plot_labels_and_titles_the_planted_element():
    audited, middle = _block_audit(True)
    fig = plot.draw(audited.report, audited.elements)
    texts = [t for a in fig.axes for t in a.texts]
    ids = {t.get_text() for t in texts if (t.get_gid() or "").startswith("fail-id-")}
    assert ids == {str(middle)}  # the element's number as the reports give it
    titles = [a.get_title() for a in fig.axes if (a.get_gid() or "") != "mesh"]
    close = [t for t in titles if t.startswith(f"id {middle} ")]
    assert len(close) == 1 and "inverted: det J < 0" in close[0]


def test_rule_text_names_the_flag_or_the_metric_furthest_past_its_limit():
    assert rule_text(["inverted", "warp"], [("warp", 40.0, 20.0)]) == (
        "inverted: det J < 0 (+1 more)"
    )
    # 4.1 is 59 % below 10; 31 is 3 % past 30: the dihedral is named, in degrees
    text = rule_text([], [("min_dihedral", 4.1, 10.0), ("edge_ratio", 31.0, 30.0)])
    assert text == "min_dihedral 4.1° < 10° (+1 more)"


def test_close_up_direction_shows_a_slab_large_and_opens_every_face():
    # Cauchy's projection formula: a box a x b x c seen along unit d casts a shadow of
    # bc|dx| + ca|dy| + ab|dz|, largest (Cauchy-Schwarz) sqrt((bc)^2 + (ca)^2 + (ab)^2)
    a, b, c = 10.0, 6.0, 1.0
    box = CUBE * [a, b, c]
    areas = face_area_vectors(CELL_TYPES["hexahedron"], box - box.mean(axis=0))
    d = best_direction(areas)
    largest = np.sqrt((b * c) ** 2 + (c * a) ** 2 + (a * b) ** 2)
    shadow = float(projected_area(areas, d[None])[0])
    assert shadow == pytest.approx(b * c * abs(d[0]) + c * a * abs(d[1]) + a * b * abs(d[2]))
    assert 0.85 * largest <= shadow <= largest + 1e-9
    assert (np.abs(d) > 0.05).all()  # no face of the box seen edge-on


# -- the explain picture of a solid --------------------------------------------------------------
def _single(cell_type: str, coords: np.ndarray):
    mesh = meshio.Mesh(coords, [(cell_type, np.arange(len(coords))[None])])
    audited = audit_mesh(mesh)
    return audited, explain(audited, 0)


def _panels(fig):
    gids = {a.get_gid(): a for a in fig.axes}
    return gids["reference-panel"], gids["element-panel"]


def _points(ax, gid: str) -> int:
    return sum(len(line.get_xdata()) for line in ax.lines if line.get_gid() == gid)


# Gauss rules (common practice): 2 x 2 x 2 Gauss-Legendre for the trilinear hexahedron,
# 3 x 3 x 3 for the quadratic ones; the 1-point centroid rule for the linear
# tetrahedron and the 4-point degree-2 rule for tetra10; 3 triangle points x 2 line
# points for the wedge.
@pytest.mark.parametrize(
    ("cell_type", "count"),
    [("hexahedron", 8), ("hexahedron20", 27), ("tetra", 1), ("tetra10", 4), ("wedge", 6)],
)
def test_explain_solid_has_reference_and_element_panels(cell_type, count):
    cell = CELL_TYPES[cell_type]
    audited, ex = _single(cell_type, 2.0 * cell.reference_nodes + [1.0, 2.0, 3.0])
    fig = explain_plot.draw(audited, ex)
    ref, element = _panels(fig)
    assert _points(ref, "reference-gauss") == count
    assert _points(element, "gauss") == count
    corners = [t for t in ref.texts if (t.get_gid() or "").startswith("corner-")]
    assert sorted(t.get_text() for t in corners) == sorted(
        str(k + 1) for k in range(cell.n_corners)
    )


def test_explain_box_labels_read_det_j_of_the_box():
    # an a x b x c box mapped from the cube [-1, 1]^3: det J = abc / 8 at every point
    # (closed form), and the labels read what meshaudit.explain computed
    a, b, c = 4.0, 3.0, 2.0
    audited, ex = _single("hexahedron", CUBE * [a, b, c])
    fig = explain_plot.draw(audited, ex)
    _, element = _panels(fig)
    gauss = {
        t.get_gid(): t.get_text() for t in element.texts if (t.get_gid() or "").startswith("gauss-")
    }
    assert len(gauss) == 8
    for k, d in enumerate(ex.det_j_gauss):
        assert d == pytest.approx(a * b * c / 8.0)
        assert gauss[f"gauss-{k + 1}"] == f"g{k + 1}: {d:.4g}"
    corner = {
        t.get_gid(): t.get_text()
        for t in element.texts
        if (t.get_gid() or "").startswith("corner-")
    }
    for k in range(8):
        assert corner[f"corner-{k + 1}"].endswith(f"det J {a * b * c / 8.0:.4g}")
    assert not [c for c in element.collections if c.get_gid() == "folded"]
    assert _points(element, "negative-det-j") == 0


def test_explain_inverted_solid_marks_negative_det_j():
    # bracket_lug_defects.vtu, hexahedron 46: one top corner pulled below the bottom face
    # (samples/make_solid_samples.py): det J < 0 at that corner and nearby Gauss points
    audited = audit_mesh(SAMPLES / "bracket_lug_defects.vtu")
    ex = explain(audited, 46)
    fig = explain_plot.draw(audited, ex)
    _, element = _panels(fig)
    negative = int((ex.det_j_gauss < 0).sum() + (np.nan_to_num(ex.det_j_nodes, nan=1.0) < 0).sum())
    assert negative > 0
    assert _points(element, "negative-det-j") == negative
    assert [c for c in element.collections if c.get_gid() == "folded"]
    assert "inverted: det J < 0" in fig.get_suptitle()
    neighbours = next(c for c in element.collections if c.get_gid() == "neighbours")
    assert len(neighbours.get_paths()) >= len(ex.neighbour_ids)  # every face of each


# -- labels do not cover each other --------------------------------------------------------------
LABEL_GIDS = ("fail-id-", "warn-id-", "corner-", "gauss-", "neighbour")


def _assert_no_overlap(fig):
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    for ax in fig.axes:
        boxes = [
            Text.get_window_extent(t, renderer)
            for t in ax.texts
            if (t.get_gid() or "").startswith(LABEL_GIDS) and t.get_visible()
        ]
        for p, q in combinations(boxes, 2):
            assert not p.overlaps(q), (p, q)
    return fig


def test_volume_plot_labels_do_not_overlap():
    # a block with a whole layer of inverted cells side by side: labels crowd
    n = 16
    points, cells = hex_block(n, size=10.0)
    rows = [cell_index(n, i, j, 8) for i in range(n) for j in range(n)]
    for r in rows:
        cells[r] = np.roll(cells[r], 4)
    audited = audit_mesh(meshio.Mesh(points, [("hexahedron", cells)]))
    fig = _assert_no_overlap(plot.draw(audited.report, audited.elements))
    labels = [t for t in fig.axes[0].texts if (t.get_gid() or "").startswith("fail-id-")]
    unlabelled = [t for t in fig.axes[0].texts if t.get_gid() == "unlabelled"]
    shown = len(labels) + (int(unlabelled[0].get_text().split()[0]) if unlabelled else 0)
    assert shown == len(set(rows))  # each failing element labelled or counted


@pytest.mark.parametrize("cell_type", ["hexahedron27", "pyramid"])
def test_explain_labels_do_not_overlap(cell_type):
    cell = CELL_TYPES[cell_type]
    rng = np.random.default_rng(2)
    audited, ex = _single(
        cell_type, 3.0 * cell.reference_nodes + rng.uniform(-0.1, 0.1, cell.reference_nodes.shape)
    )
    _assert_no_overlap(explain_plot.draw(audited, ex))


# -- the annotated mesh of solids ------------------------------------------------------------------
def test_annotated_solids_carry_the_json_report(run_cli, tmp_path):
    out, js = tmp_path / "lug.vtu", tmp_path / "lug.json"
    sample = SAMPLES / "bracket_lug_defects.vtu"
    result = run_cli("check", sample, "--annotate", out, "--json", js, "--all", "--quiet")
    assert result.returncode == 1, result.stderr
    doc = json.loads(js.read_text())
    records = {e["id"]: e for e in doc["elements"]}
    back = meshio.read(out)  # meshio's own VTU reader
    read = meshio.read(sample)
    assert [(c.type, len(c.data)) for c in back.cells] == [
        (c.type, len(c.data)) for c in read.cells
    ]
    ids = np.concatenate(back.cell_data["element_id"])
    assert sorted(ids.tolist()) == sorted(records)
    assert len(ids) == sum(len(c.data) for c in read.cells)  # every solid, none dropped
    verdicts = {"ok": 0, "warn": 1, "fail": 2}
    np.testing.assert_array_equal(
        np.concatenate(back.cell_data["verdict"]), [verdicts[records[i]["verdict"]] for i in ids]
    )
    for name in METRIC_NAMES:
        got = np.concatenate(back.cell_data[name])
        want = []
        for i in ids:
            v = records[i]["metrics"][name]
            want.append(np.nan if v is None else float(v))
        np.testing.assert_array_equal(got, np.array(want), err_msg=name)


# -- the HTML report of solids ---------------------------------------------------------------------
def test_html_report_of_the_lug_shows_its_failing_solids(tmp_path):
    # samples/make_solid_samples.py plants three failures: hexahedra 46 and 5, wedge 48
    import base64
    import io
    import re

    import matplotlib.image
    from matplotlib import colormaps

    from meshaudit.outputs import html_report

    audited = audit_mesh(SAMPLES / "bracket_lug_defects.vtu")
    page = html_report.render(audited.report, audited.elements)
    assert {int(i) for i in re.findall(r'data-id="(\d+)"', page)} == {5, 46, 48}
    for metric in ("volume", "min_dihedral", "max_dihedral", "edge_ratio"):
        assert f'data-metric="{metric}"' in page  # the solid metrics' histograms
    assert "flagged elements opaque" in page
    png = re.search(r'src="data:image/png;base64,([^"]+)"', page).group(1)
    image = matplotlib.image.imread(io.BytesIO(base64.b64decode(png)), format="png")[..., :3]
    # the failing solids (scores near 0) are painted in the lowest colour of viridis
    low = np.array(colormaps["viridis"](0.0)[:3])
    assert (np.abs(image - low) < 0.02).all(axis=-1).sum() > 500


def test_skin_of_a_quadratic_solid_is_drawn_through_its_midside_nodes():
    # Fact of the trade: a quadratic element's map passes through each of its nodes (its
    # shape functions are 1 at their own node, 0 at the others), so its boundary face
    # drawn through the map passes through a bulged midside node, off the straight edge.
    from meshaudit.outputs.volume_plot import skin, skin_polygons

    cell = CELL_TYPES["hexahedron20"]
    coords = cell.reference_nodes * 5.0
    edge = next(i for i, p in enumerate(cell.reference_nodes) if np.allclose(p, [0, -1, -1]))
    coords[edge] += [0.0, -1.0, -1.0]  # bulged outward from the edge (0, -5, -5)
    audited = audit_mesh(meshio.Mesh(coords, [("hexahedron20", np.arange(20)[None])]))
    view = volume_view(audited.elements.points)
    faces, owner, local = skin(audited.elements)
    polys = skin_polygons(audited.elements, view, faces, owner, local)
    target = view.project(coords[edge])
    straight = view.project(np.array([0.0, -5.0, -5.0]))
    nearest = np.min(np.linalg.norm(polys.reshape(-1, 2) - target, axis=1))
    assert nearest < 1e-9  # the drawn outline passes through the midside node
    assert np.linalg.norm(target - straight) > 0.5  # which is off the straight edge
    fig = plot.draw(audited.report, audited.elements, insets=0)
    ax = next(a for a in fig.axes if a.get_gid() == "mesh")
    (coll,) = [c for c in ax.collections if c.get_gid() == "skin"]
    drawn = np.concatenate([p.vertices for p in coll.get_paths()])
    assert np.min(np.linalg.norm(drawn - target, axis=1)) < 1e-9
