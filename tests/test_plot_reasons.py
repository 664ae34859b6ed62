"""--plot and explain --plot: close-ups and titles say why, labels never cover each other."""

from __future__ import annotations

import numpy as np
import pytest
from inspect_meshes import planted_plate

from meshaudit import audit_mesh, explain
from meshaudit.outputs import explain_plot, plot


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
