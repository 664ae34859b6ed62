"""--plot and explain --plot: close-ups and titles say why, labels never cover each other."""

from __future__ import annotations

from pathlib import Path

import meshio
import numpy as np
import pytest
from inspect_meshes import curved_shell, grid, planted_plate

from meshaudit import audit_mesh, explain
from meshaudit.outputs import explain_plot, plot

SAMPLES = Path(__file__).resolve().parent.parent / "samples"


@pytest.fixture(scope="module")
def plate():
    return audit_mesh(planted_plate())


def close_up_titles(fig) -> dict[int, str]:
    out = {}
    for ax in fig.axes:
        gid = ax.title.get_gid() or ""
        if gid.startswith("close-up-"):
            out[int(gid[len("close-up-") :])] = ax.get_title()
    return out


def test_close_ups_are_titled_with_the_rule_broken(plate):
    titles = close_up_titles(plot.draw(plate.report, plate.elements, color_by="aspect_ratio"))
    # quad 7 has its corners listed clockwise: det J = -1 everywhere for a unit square
    # (bilinear map of a mirrored square, closed form), the first validity flag
    assert titles[7].split("\n")[1].startswith("inverted: det J < 0")
    # triangle 24 (base 1, height 1/4) sits on unit squares: areas 1/8 against 1, sides
    # in ratio sqrt(8) = 2.83 (closed form); it only warns, and the title says so
    flat = titles[24].replace("\n", " ")
    assert f"size_ratio {np.sqrt(8.0):.3g} > " in flat and "(warn)" in flat
    assert "(fail)" not in flat
    # the title no longer reads as the colouring metric's value alone
    assert not titles[24].split("\n")[1].startswith("aspect_ratio")


def test_explain_title_calls_a_warning_warn_not_invalid(plate):
    audited = plate
    ex = explain(audited, 24)  # the flat triangle: warn only (angles 26.6, 26.6, 126.9 deg)
    title = explain_plot.draw(audited, ex).axes[0].get_title()
    assert "invalid" not in title
    assert "warn limits breached" in title and "min_angle" in title
    ex = explain(audited, 7)  # the clockwise quad: det J = -1 < 0, a validity flag
    title = explain_plot.draw(audited, ex).axes[0].get_title()
    assert "invalid (fails): inverted" in title


def dense_plate() -> meshio.Mesh:
    """A 30 x 20 grid of unit squares with every fourth quad's corners listed clockwise
    (det J = -1: inverted) and every seventh one sheared (warn or fail on skew)."""
    points, quads = grid(30, 20)
    quads = quads.copy()
    quads[::4] = quads[::4][:, [0, 3, 2, 1]]
    points = points.astype(float)
    return meshio.Mesh(points, [("quad", quads)])


def label_boxes(fig) -> list[tuple[str, object]]:
    """(gid, rendered window box) of every element id label, as drawn."""
    renderer = fig.canvas.get_renderer()
    fig.draw_without_rendering()
    out = []
    for ax in fig.axes:
        for t in ax.texts:
            gid = t.get_gid() or ""
            if gid.startswith(("fail-id-", "warn-id-")):
                out.append((gid, t.get_window_extent(renderer)))
    return out


def no_two_overlap(boxes) -> bool:
    # two axis-aligned boxes overlap when both their x and their y intervals do
    return not any(
        a.x0 < b.x1 and b.x0 < a.x1 and a.y0 < b.y1 and b.y0 < a.y1
        for k, (_, a) in enumerate(boxes)
        for _, b in boxes[k + 1 :]
    )


@pytest.mark.parametrize("mesh", [dense_plate, curved_shell], ids=["dense", "curved"])
def test_id_labels_never_overlap(mesh):
    audited = audit_mesh(mesh())
    fig = plot.draw(audited.report, audited.elements)
    boxes = label_boxes(fig)
    failing = int(audited.report.failing.sum())
    assert failing > 0 and len(boxes) > 0
    assert no_two_overlap(boxes)
    # every failing element is labelled or counted in the note
    shown = sum(1 for gid, _ in boxes if gid.startswith("fail-id-"))
    notes = [t.get_text() for t in fig.axes[0].texts if t.get_gid() == "unlabelled"]
    if shown < failing:
        assert notes and notes[0].startswith(f"{failing - shown} more failing")


def test_warn_elements_labelled_where_room_allows(plate):
    boxes = label_boxes(plot.draw(plate.report, plate.elements))
    gids = {gid for gid, _ in boxes}
    # planted plate (tests/inspect_meshes.py): 7 and 14 fail, 24 and 18 warn; room for all
    assert {"fail-id-7", "fail-id-14"} <= gids
    assert gids & {"warn-id-24", "warn-id-18"}
    assert no_two_overlap(boxes)


def slot_and_part(fig, xy_box):
    """(slot, part): the display box the layout gave the main view, and the display box
    of the part's bounding box (data corners xy_box (2, 2))."""
    fig.draw_without_rendering()
    ax = next(a for a in fig.axes if a.get_gid() == "mesh")
    slot = ax.get_position(original=True).transformed(fig.transFigure)
    corners = ax.transData.transform(np.asarray(xy_box, dtype=float))
    return slot, np.abs(corners[1] - corners[0])


@pytest.mark.parametrize("shape", [(30, 4), (12, 10), (4, 24)], ids=["wide", "square", "tall"])
def test_main_view_fills_its_area(shape):
    nx, ny = shape
    points, quads = grid(nx, ny)
    quads = quads.copy()
    quads[0] = quads[0][[0, 3, 2, 1]]  # one inverted quad: close-ups are drawn
    audited = audit_mesh(meshio.Mesh(points.astype(float), [("quad", quads)]))
    fig = plot.draw(audited.report, audited.elements)
    slot, (w, h) = slot_and_part(fig, [[0.0, 0.0], [nx, ny]])
    # the grid's bounding box is nx by ny (closed form); drawn at equal scale it covers
    # most of the slot in one direction (the view keeps a margin of 4 % of the part's
    # larger side on each edge: 1/1.08 = 0.93) and at least half of its area (no empty
    # quarter; a 30 x 4 strip with that margin covers 30/32.4 * 4/6.4 = 0.58 of it)
    assert max(w / slot.width, h / slot.height) > 0.88
    if nx / ny >= plot.MIN_WIDTH / plot.TALL_HEIGHT:  # a very tall part keeps a wider slot
        assert w * h > 0.5 * slot.width * slot.height  # (room for the colourbar's label)
    else:
        assert h / slot.height > 0.88


def test_colourbar_marks_name_their_family():
    # the sample bracket plate has quads and triangles; aspect_ratio limits differ per
    # family (an equilateral triangle and a square both have aspect ratio 1 but the
    # triangle measure grows faster: common practice to give each family its own limits)
    audited = audit_mesh(SAMPLES / "bracket_plate_defects.msh")
    report = audited.report
    fig = plot.draw(report, audited.elements, color_by="aspect_ratio")
    bar = next(a for a in fig.axes if a.get_gid() == "colourbar")
    named = {t.get_gid(): t for t in bar.texts if (t.get_gid() or "").startswith("limit-")}
    lo, hi = bar.get_xlim()
    for family in ("quad", "triangle"):
        lim = report.profile.limit(family, "aspect_ratio")
        for kind, value in (("warn", lim.warn), ("fail", lim.fail)):
            if value is None or not lo <= value <= hi:
                continue
            hits = [
                t
                for gid, t in named.items()
                if gid.startswith(f"limit-{kind}-") and family in gid.split("-")[2:]
            ]
            assert len(hits) == 1 and hits[0].xy[0] == pytest.approx(value)
            assert family in hits[0].get_text() and kind in hits[0].get_text()
    boxes = [(gid, t.get_window_extent(fig.canvas.get_renderer())) for gid, t in named.items()]
    assert len(boxes) == 4 and no_two_overlap(boxes)  # quad and triangle, warn and fail


def luminance(rgba) -> float:
    """Relative luminance of an sRGB colour (ITU-R BT.709 weights on linearised sRGB)."""
    c = np.asarray(rgba[:3], dtype=float)
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    return float(lin @ [0.2126, 0.7152, 0.0722])


def test_colour_by_verdict_three_levels_darker_is_worse(plate):
    report = plate.report
    fig = plot.draw(report, plate.elements, color_by="verdict")
    faces = next(c for c in fig.axes[0].collections if c.get_gid() == "faces")
    assert np.array_equal(np.asarray(faces.get_array()), report.verdict)
    faces.update_scalarmappable()  # colours are mapped from the values when drawn
    rgba = faces.get_facecolors()
    by_verdict = {v: {tuple(c) for c in rgba[report.verdict == v]} for v in (0, 1, 2)}
    assert all(len(colours) == 1 for colours in by_verdict.values())  # one colour each
    ok, warn, fail = (next(iter(by_verdict[v])) for v in (0, 1, 2))
    assert luminance(ok) > luminance(warn) > luminance(fail)  # darker is worse
    for c in (ok, warn, fail):  # no red or red-dominated colour: not a traffic light
        assert not (c[0] > c[1] and c[0] > c[2])
    bar = next(a for a in fig.axes if a.get_gid() == "colourbar")
    assert [t.get_text() for t in bar.get_xticklabels()] == ["ok", "warn", "fail"]


def test_cli_accepts_colour_by_verdict(run_cli, tmp_path):
    out = tmp_path / "v.png"
    result = run_cli(
        "check",
        SAMPLES / "bracket_plate_defects.msh",
        "--plot",
        out,
        "--color-by",
        "verdict",
        "--quiet",
    )
    assert result.returncode == 1 and out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    bad = run_cli("check", SAMPLES / "bracket_plate.msh", "--plot", out, "--color-by", "verdicts")
    assert bad.returncode == 2 and "verdict" in bad.stderr


def test_explain_node_and_gauss_labels_do_not_overlap():
    # a 4 x 0.4 rectangle: its 2x2 Gauss points sit at xi, eta = +-1/sqrt(3)
    # (Gauss-Legendre, closed form), 0.085 from the long sides: node and Gauss labels
    # crowd each other unless placed
    corners = np.array([[0.0, 0.0], [4.0, 0.0], [4.0, 0.4], [0.0, 0.4]])
    audited = audit_mesh(meshio.Mesh(corners, [("quad", np.arange(4)[None])]))
    ex = explain(audited, 0)
    fig = explain_plot.draw(audited, ex)
    renderer = fig.canvas.get_renderer()
    fig.draw_without_rendering()
    texts = [t for t in fig.axes[0].texts if (t.get_gid() or "").startswith(("node-", "gauss-"))]
    boxes = [(t.get_gid(), t.get_window_extent(renderer)) for t in texts]
    assert no_two_overlap(boxes)
    left_out = [t.get_text() for t in fig.axes[0].texts if t.get_gid() == "unlabelled"]
    dropped = int(left_out[0].split()[0]) if left_out else 0
    assert len(texts) + dropped == 4 + 4  # four nodes, four Gauss points
    gauss = [t for t in texts if t.get_gid().startswith("gauss-")]
    # det J of a 4 x 0.4 rectangle on [-1, 1]^2 is (4/2)(0.4/2) = 0.4 everywhere
    assert all(float(t.get_text()) == pytest.approx(0.4) for t in gauss)


def shoelace(xy) -> float:
    x, y = np.asarray(xy, dtype=float).T
    return 0.5 * abs(float(x @ np.roll(y, -1) - np.roll(x, -1) @ y))


def test_shell_close_up_along_its_normal_and_back_face_hatched():
    mesh = curved_shell()
    quads = mesh.cells[0].data.copy()
    quads[5] = quads[5][[0, 2, 1, 3]]  # undo the bow-tie (tests/inspect_meshes.py)
    quads[20] = quads[20][::-1]  # one normal flipped against its neighbours
    audited = audit_mesh(meshio.Mesh(mesh.points, [("quad", quads)]))
    report = audited.report
    assert "flipped_normal" in report.flags_of(20)
    fig = plot.draw(report, audited.elements)
    main = fig.axes[0]
    back = next(c for c in main.collections if c.get_gid() == "back-faces")
    assert len(back.get_paths()) == 1  # only the flipped quad is seen from behind
    # quad 20 spans 7.5 degrees of a radius-10 cylinder and 2 along its axis: a flat
    # rectangle 2*10*sin(3.75 deg) by 2 (closed form); seen along its own normal its
    # drawn area is that, whatever the overall view direction
    title = next(a for a in fig.axes if (a.title.get_gid() or "") == "close-up-20")
    outline = next(c for c in title.collections if c.get_gid() == "inset-outline")
    area = shoelace(outline.get_paths()[0].vertices[:4])
    assert area == pytest.approx(2 * 10 * np.sin(np.radians(3.75)) * 2.0, rel=1e-9)


def test_orphan_nodes_drawn_small_where_they_are():
    # the planted plate plus two nodes no element uses (by construction: orphans)
    mesh = planted_plate()
    extra = np.array([[2.5, 1.5, 0.0], [7.0, 5.0, 0.0]])[:, : mesh.points.shape[1]]
    mesh = meshio.Mesh(np.vstack([mesh.points, extra]), mesh.cells)
    audited = audit_mesh(mesh)
    fig = plot.draw(audited.report, audited.elements)
    main = fig.axes[0]
    (rings,) = [ln for ln in main.lines if ln.get_gid() == "orphan-nodes"]
    np.testing.assert_allclose(rings.get_xydata(), extra[:, :2])
    assert rings.get_marker() == "o" and rings.get_markerfacecolor() == "none"
    assert rings.get_markersize() <= 4  # small: the face under it stays visible
    crosses = [ln for ln in main.lines if ln.get_gid() == "finding-nodes"]
    assert all(
        len(c.get_xydata()) == 0 or not np.isin(c.get_xydata(), extra[:, :2]).all() for c in crosses
    )
    assert any("orphan" in t.get_text() for t in fig.legends[0].get_texts())
