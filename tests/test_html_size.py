"""The HTML page stays small and grows sensibly with the mesh; histograms show a single
element and never drop the failing ones; the breached column names the level.

Budgets (meshaudit's own, stated in meshaudit.outputs.html_report): a bundled sample's
page under 200 kB; any mesh's page under 1 MB, 10^4 elements that all warn included (the
table lists at most MAX_ROWS elements, the plot has fixed pixels, histograms fixed bins).
Reference facts: a parallelogram sheared by s over a unit height has skew atan(s) in
degrees (Robinson 1987: 90 deg minus its acute angle), so every element of the sheared
grid reads the same skew of atan(1.2) = 50.2 deg, past the standard warn limit 45.
"""

from __future__ import annotations

import math
import re

import meshio
import numpy as np
import pytest
from conftest import SAMPLES

from meshaudit import audit_mesh
from meshaudit.outputs import html_report

SAMPLE_BUDGET = 200_000
PAGE_BUDGET = 1_000_000


def grid(n: int, shear: float = 0.0) -> meshio.Mesh:
    xs, ys = np.meshgrid(np.arange(n + 1.0), np.arange(n + 1.0))
    pts = np.c_[xs.ravel() + shear * ys.ravel(), ys.ravel()]
    a = (np.arange(n)[None, :] + (n + 1) * np.arange(n)[:, None]).ravel()
    return meshio.Mesh(pts, [("quad", np.c_[a, a + 1, a + n + 2, a + n + 1])])


def _page(source) -> tuple[str, object]:
    audited = audit_mesh(source)
    return html_report.render(audited.report, audited.elements), audited.report


@pytest.mark.parametrize(
    "sample",
    [
        "bracket_plate.msh",
        "bracket_plate_defects.msh",
        "bracket_lug_defects.vtu",
        "bracket_flange_shell.vtu",
        "bracket_crack_tip.vtu",
    ],
)
def test_sample_pages_are_small(sample):
    page, _ = _page(SAMPLES / sample)
    assert len(page.encode()) < SAMPLE_BUDGET


def test_ten_thousand_elements_stay_under_the_budget():
    clean, report = _page(grid(100))
    assert len(report) == 10_000 and report.verdict_counts()["ok"] == 10_000
    assert len(clean.encode()) < PAGE_BUDGET
    warned, report = _page(grid(100, shear=1.2))
    assert report.metrics["skew"] == pytest.approx(np.full(10_000, math.degrees(math.atan(1.2))))
    assert report.verdict_counts()["warn"] == 10_000
    assert len(warned.encode()) < PAGE_BUDGET
    rows = re.findall(r'<tr class="warn" data-id=', warned)
    assert len(rows) == html_report.MAX_ROWS  # capped, and the page says so
    assert f"Listing the worst {html_report.MAX_ROWS} of 10000" in warned


def test_a_single_element_is_a_visible_bar_and_nothing_is_dropped():
    # 2500 unit squares and one square of side 6 (a bin of one beside a bin of 2500):
    # its area 36 lies beyond the 99th percentile, in the overflow bar
    mesh = grid(50)
    pts = np.vstack([mesh.points, [[100.0, 0.0], [106.0, 0.0], [106.0, 6.0], [100.0, 6.0]]])
    quads = np.vstack([mesh.cells[0].data, [[2601, 2602, 2603, 2604]]])
    page, _ = _page(meshio.Mesh(pts, [("quad", quads)]))
    fig = re.search(r'<figure data-metric="area">(.*?)</figure>', page).group(1)
    over = re.search(r'<rect [^>]*height="([\d.]+)"[^>]*data-overflow="above">', fig)
    assert over is not None and float(over.group(1)) >= html_report.MIN_BAR
    assert "above the range, " in fig and "to 36: 1</title>" in fig  # its range and count
    heights = [float(h) for h in re.findall(r'<rect [^>]*height="([\d.]+)"', fig)]
    assert min(heights) >= html_report.MIN_BAR and max(heights) > 10 * min(heights)
    # log scale: log(1 + 1) / log(1 + 2500) of the plot height for the lone element
    assert html_report.bar_height(1, 2500, 112.0) == pytest.approx(
        112.0 * math.log(2) / math.log(2501)
    )


def test_failing_infinite_values_are_counted_in_an_overflow_bar():
    # a bow-tie among squares: its Jacobian ratio is infinite (det J <= 0 at a Gauss point)
    mesh = grid(4)
    quads = mesh.cells[0].data.copy()
    quads[5] = quads[5][[0, 2, 1, 3]]
    page, report = _page(meshio.Mesh(mesh.points, [("quad", quads)]))
    assert np.isinf(report.metrics["jacobian_ratio"]).sum() == 1
    fig = re.search(r'<figure data-metric="jacobian_ratio">(.*?)</figure>', page).group(1)
    drawn = sum(int(c) for c in re.findall(r"<title>[^<]*: (\d+)</title></rect>", fig))
    assert drawn == 16  # every element, the infinite one in the overflow bar
    assert "1 of them infinite" in fig


def test_breached_column_names_the_level():
    mesh = grid(3)
    pts = mesh.points.copy()
    pts[5] += [0.6, 0.5]  # one interior node moved: its four elements distort
    page, report = _page(meshio.Mesh(pts, mesh.cells))
    cells = re.findall(r'<td class="b">(.*?)</td>', page)
    levels = re.findall(r"\((warn|fail)\)", " ".join(cells))
    breached = [report.breached(int(i)) for i in report.worst(only_flagged=True)]
    expected = [lvl for b in breached for (_, lvl, _) in b.values()]
    assert levels == expected and levels
