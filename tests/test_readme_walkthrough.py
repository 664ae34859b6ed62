"""The README's Python API walkthrough runs as written and its claims hold.

Reference facts: a 2b x 2h rectangle has det J = b*h at every Gauss point (isoparametric
bilinear map, common practice); a w x h rectangle has aspect ratio max(w, h)/min(w, h)
(Robinson 1987); its condition number at a corner is (w^2 + h^2)/(2 w h) (Knupp 2001).
The score follows its definition in the README ("Metrics"): (2 - verdict + 2^-T)/3 with
T the sum over the limited metrics of (value - ideal)/(fail limit - ideal); a rectangle
is at the ideal of every metric but aspect ratio and condition number.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
from conftest import REPO


def _walkthrough() -> str:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    section = text.split("## Python API walkthrough", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```python\n(.*?)```", section, flags=re.S)
    assert len(blocks) == 1
    return blocks[0]


def test_the_walkthrough_runs_and_its_numbers_are_right():
    ns: dict = {}
    exec(compile(_walkthrough(), "README walkthrough", "exec"), ns)
    first = ns["meshaudit"].audit(ns["mesh"])
    # positions from 0 over all cell blocks: meshaudit's stated convention for a mesh in
    # memory (the two quads are the mesh's only cells)
    assert first.ids.tolist() == [0, 1]
    assert first.summary.element_numbers.startswith("position among all cells of the mesh")
    np.testing.assert_allclose(first.metrics["aspect_ratio"], [2.0, 6.0])
    np.testing.assert_allclose(first.metrics["det_j_min"], [1.0 * 0.5, 3.0 * 0.5])
    np.testing.assert_allclose(first.metrics["condition"], [5 / 4, 37 / 12])
    assert first.verdict_names.tolist() == ["ok", "warn"]
    assert first.breached(1)["aspect_ratio"] == (pytest.approx(6.0), "warn", 5.0)
    # the condition warn limit is that of the 5:1 rectangle, (25 + 1)/(2 * 5)
    assert first.breached(1)["condition"] == (pytest.approx(37 / 12), "warn", 2.6)
    # aspect limits 5/10, condition limits 2.6/5.05 (the 10:1 rectangle: 101/20)
    for k, (w, verdict) in enumerate(((2.0, 0), (6.0, 1))):
        t = (w - 1) / (10 - 1) + ((w * w + 1) / (2 * w) - 1) / (101 / 20 - 1)
        assert first.score[k] == pytest.approx((2 - verdict + 2.0**-t) / 3)
    assert first.score[0] > 2 / 3 > first.score[1] >= 1 / 3
    assert ns["report"].verdict_names.tolist() == ["ok", "fail"]
    assert ns["result"].regressed
    failed = [c.name for c in ns["result"].checks if not c.passed]
    assert failed == ["failing_elements", "median_score", "worst_score"]
