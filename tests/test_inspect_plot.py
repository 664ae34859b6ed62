"""--plot: valid PNG/SVG/PDF files, failing ids labelled, shells projected, big meshes cheap."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import meshio
import numpy as np
import pytest
from inspect_meshes import curved_shell, grid, planted_plate

from meshaudit import audit_mesh
from meshaudit.outputs import plot

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, section 5.2)


def labelled_ids(fig) -> set[int]:
    """Ids labelled in a figure: texts whose gid is fail-id-<id>."""
    ids = set()
    for ax in fig.axes:
        for t in ax.texts:
            gid = t.get_gid() or ""
            if gid.startswith("fail-id-"):
                assert t.get_text() == gid[len("fail-id-") :]
                ids.add(int(t.get_text()))
    return ids


@pytest.fixture(scope="module")
def plate():
    return audit_mesh(planted_plate())


def test_failing_ids_are_exactly_the_labelled_ones(plate):
    fig = plot.draw(plate.report, plate.elements)
    expected = set(plate.report.ids[plate.report.verdict == 2].tolist())
    assert expected == {7, 14}  # planted: reversed quad and bow-tie (tests/inspect_meshes.py)
    assert labelled_ids(fig) == expected


def test_outline_styles_fail_solid_and_warn_dashed(plate):
    fig = plot.draw(plate.report, plate.elements)
    main = fig.axes[0]
    by_gid = {c.get_gid(): c for c in main.collections}
    fail, warn = by_gid["fail-outline"], by_gid["warn-outline"]
    # warn: the flat triangle 24 and the unit square 18 under it (a size jump of sqrt 8)
    assert len(fail.get_paths()) == 2 and len(warn.get_paths()) == 2
    assert fail.get_linestyle()[0][1] is None  # solid
    assert warn.get_linestyle()[0][1] is not None  # dashed
    assert fail.get_linewidth()[0] > warn.get_linewidth()[0]
    # perceptually uniform colormap on the faces (matplotlib's viridis family)
    assert by_gid["faces"].get_cmap().name.startswith("viridis")


def test_colourbar_labelled_and_title_has_verdict(plate):
    fig = plot.draw(plate.report, plate.elements, color_by="aspect_ratio")
    bar = next(a for a in fig.axes if a.get_gid() == "colourbar")
    assert "aspect_ratio" in bar.get_xlabel()
    title = fig.get_suptitle()
    assert title.startswith("FAIL") and "2 of 26 elements fail, 2 warn, 22 ok" in title


def test_insets_show_worst_elements(plate):
    fig = plot.draw(plate.report, plate.elements)
    titles = [a.get_title() for a in fig.axes[1:] if a.get_title().startswith("id ")]
    assert [t.split(":")[0] for t in titles] == ["id 7", "id 14", "id 24", "id 18"]


@pytest.mark.parametrize("suffix", [".png", ".svg", ".pdf"])
def test_file_formats_are_valid(run_cli, tmp_path, suffix):
    mesh_file = tmp_path / "plate.vtu"
    meshio.write(mesh_file, planted_plate())
    out = tmp_path / f"plot{suffix}"
    result = run_cli("check", mesh_file, "--plot", out, "--quiet")
    assert result.returncode == 1, result.stderr
    data = out.read_bytes()
    if suffix == ".png":
        assert data.startswith(PNG_MAGIC)
        import matplotlib.image

        image = matplotlib.image.imread(out)
        assert image.shape[0] > 500 and image.shape[1] > 800
    elif suffix == ".pdf":
        assert data.startswith(b"%PDF-") and b"%%EOF" in data[-64:]
    else:
        root = ET.fromstring(data)  # well-formed XML with the SVG root
        assert root.tag == "{http://www.w3.org/2000/svg}svg"
        ids = {int(m) for m in re.findall(rb'id="fail-id-(\d+)"', data)}
        assert ids == {7, 14}


def test_bad_plot_extension_is_one_line_exit_2(run_cli, tmp_path):
    mesh_file = tmp_path / "plate.vtu"
    meshio.write(mesh_file, planted_plate())
    result = run_cli("check", mesh_file, "--plot", tmp_path / "p.gif")
    assert result.returncode == 2
    assert result.stderr.count("\n") == 1 and ".png, .svg or .pdf" in result.stderr
    assert not (tmp_path / "p.gif").exists()


def test_shell_is_drawn_on_its_best_fit_plane_or_obliquely_when_curved():
    from meshaudit.outputs.projection import best_fit_view, flatness

    audited = audit_mesh(curved_shell())
    assert audited.report.summary.frame == "shell"
    points = audited.elements.points
    flat = best_fit_view(points)
    # quarter cylinder around z through angles 0..90 deg: the best-fit plane contains the
    # axis direction z and the chord direction (1, -1, 0)/sqrt 2; its normal is the bisector
    # (1, 1, 0)/sqrt 2 (geometry of the shape, common practice).
    assert abs(flat.normal @ np.array([1.0, 1.0, 0.0]) / np.sqrt(2.0)) == pytest.approx(1.0)
    # depth: sagitta r (1 - cos 45 deg) = 2.93 over the larger of chord 14.1 and length 8
    assert flatness(points, flat) == pytest.approx(10 * (1 - np.cos(np.pi / 4)) / (10 * np.sqrt(2)))
    view = plot.mesh_view(audited.report, audited.elements)
    # markedly curved, so seen obliquely: the view direction is the bisector turned by
    # the elevation and azimuth, from the side the element normals face (outwards)
    elevation, azimuth = np.radians(plot.OBLIQUE)
    bisector = np.array([1.0, 1.0, 0.0]) / np.sqrt(2.0)
    assert view.normal @ bisector == pytest.approx(np.cos(elevation) * np.cos(azimuth))
    np.testing.assert_allclose(view.axes @ view.axes.T, np.eye(2), atol=1e-12)
    fig = plot.draw(audited.report, audited.elements)
    assert labelled_ids(fig) == set(audited.report.ids[audited.report.failing].tolist())
    assert "shell seen from direction" in fig.axes[0].get_title()


def test_large_mesh_uses_a_few_artists_not_one_per_element():
    points, quads = grid(200, 150)  # 30 000 elements
    points = points.astype(float)
    quads[[10, 5000]] = quads[[10, 5000]][:, ::-1]  # two reversed (clockwise) quads
    audited = audit_mesh(meshio.Mesh(points, [("quad", quads)]))
    fig = plot.draw(audited.report, audited.elements, insets=0)
    main = fig.axes[0]
    assert len(main.collections) + len(main.images) + len(main.lines) <= 5
    (faces,) = [im for im in main.images if im.get_gid() == "faces"]
    assert np.asarray(faces.get_array()).shape[1] == plot.RASTER_WIDTH
    # 200 elements across 1600 pixels: 8 px each, more than raster.MAX_SPAN, so every
    # element is in the single polygon collection drawn over the (empty) image
    large = next(c for c in main.collections if c.get_gid() == "large-faces")
    assert len(large.get_paths()) == 30_000
    assert labelled_ids(fig) == {10, 5000}
    outline = next(c for c in main.collections if c.get_gid() == "fail-outline")
    assert len(outline.get_paths()) == 2


def test_raster_colours_match_the_element_under_each_pixel():
    # Outside reference: shapely's point-in-polygon on the same elements.
    from shapely import Point, Polygon

    from meshaudit.outputs import raster

    rng = np.random.default_rng(7)
    points, quads = grid(40, 30, h=1.0)
    points = points + rng.uniform(-0.2, 0.2, points.shape)  # distorted, still valid
    verts = points[quads]
    colours = rng.integers(1, 255, (len(verts), 4), dtype=np.uint8)
    colours[:, 3] = 255
    flat = verts.reshape(-1, 2)
    g = raster.grid_for(flat.min(axis=0), flat.max(axis=0), 120)  # about 3 px per element
    image, big = raster.paint(verts, colours, g)
    assert not big.any()
    polygons = [Polygon(v) for v in verts]
    checked = 0
    for _ in range(300):
        i, j = int(rng.integers(0, g.width)), int(rng.integers(0, g.height))
        centre = Point(g.x0 + (i + 0.5) * g.pixel, g.y0 + (j + 0.5) * g.pixel)
        owners = [k for k, poly in enumerate(polygons) if poly.contains(centre)]
        if len(owners) == 1:  # pixel centre strictly inside exactly one element
            assert (image[j, i] == colours[owners[0]]).all()
            checked += 1
    assert checked > 200


def test_raster_triangle_with_repeated_corner_matches_shapely():
    from shapely import Point, Polygon

    from meshaudit.outputs import raster

    tri = np.array([[[0.0, 0.0], [5.0, 0.6], [1.2, 4.7], [1.2, 4.7]]])  # drawn as a quad
    g = raster.Grid(0.0, 0.0, 1.0, 6, 6)
    image, big = raster.paint(tri, np.array([[10, 20, 30, 255]], dtype=np.uint8), g)
    assert not big.any()
    shape = Polygon(tri[0, :3])
    for j in range(6):
        for i in range(6):
            centre = Point(i + 0.5, j + 0.5)
            if shape.contains(centre):
                assert image[j, i, 3] == 255
            elif shape.exterior.distance(centre) > 1e-9 and not (i, j) == (2, 1):
                assert image[j, i, 3] == 0, (i, j)  # (2, 1) holds the centroid pixel


def test_mesh_level_findings_are_drawn_when_the_report_has_them(plate):
    """Hook for report.findings: edges as dash-dot lines, nodes as crosses, elements dashed."""
    from types import SimpleNamespace

    points = plate.elements.points
    crack = SimpleNamespace(
        kind="crack_edges",
        severity="fail",
        edge_xyz=np.stack([points[[2, 9]], points[[9, 16]]]),  # two grid edges, x = 2
        node_ids=np.array([9]),
        element_index=np.array([1, 8]),  # ok elements beside those edges
    )
    plate.report.findings = [crack]
    try:
        fig = plot.draw(plate.report, plate.elements)
    finally:
        del plate.report.findings
    main = fig.axes[0]
    lines = next(c for c in main.collections if c.get_gid() == "findings")
    assert len(lines.get_segments()) == 2
    np.testing.assert_allclose(lines.get_segments()[0], points[[2, 9], :2])
    (cross,) = [ln for ln in main.lines if ln.get_gid() == "finding-nodes"]
    np.testing.assert_allclose(cross.get_xydata(), points[[9], :2])
    outlined = next(c for c in main.collections if c.get_gid() == "finding-outline")
    assert len(outlined.get_paths()) == 2
    assert "1 mesh-level finding" in fig.get_suptitle()
    assert labelled_ids(fig) == {7, 14}  # findings do not change the failing-id labels


def test_quadratic_element_drawn_with_its_curved_edge():
    # A 4 x 2 quad8 whose bottom midside node is pushed out by h: the edge is a parabola
    # and adds 2/3 * L * h to the rectangle (Archimedes' quadrature of the parabola).
    L, H, h = 4.0, 2.0, 0.6
    nodes = np.array(
        [[0, 0], [L, 0], [L, H], [0, H], [L / 2, -h], [L, H / 2], [L / 2, H], [0, H / 2]],
        dtype=float,
    )
    audited = audit_mesh(meshio.Mesh(nodes, [("quad8", np.arange(8)[None])]))
    fig = plot.draw(audited.report, audited.elements, insets=0)
    faces = next(c for c in fig.axes[0].collections if c.get_gid() == "faces")
    x, y = faces.get_paths()[0].vertices[:-1].T  # drop the closing vertex
    area = 0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))
    exact = L * H + 2.0 / 3.0 * L * h
    assert area == pytest.approx(exact, rel=0.02)  # sampled polyline, 6 points per edge
    assert abs(area - L * H) > 0.5 * (exact - L * H)  # clearly not the straight-edged quad
