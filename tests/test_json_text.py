"""The JSON report's element lines, written column by column, against the json module.

Reference: Python's json module encoding the element record dicts (the same separators,
ASCII output, no NaN). The column-wise text must be exactly what it writes, for meshes
with every kind of value: failing and warning elements, quadratic elements (midside
metrics defined), infinite metrics, regions, a user limit written as a whole number.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from benchmarks.meshgen import distorted_plate
from meshaudit import BUILTIN_PROFILES, Limit, api, with_limit
from meshaudit.outputs import json_report
from meshaudit.outputs.json_elements import element_lines
from meshaudit.results.report import FLAG_NAMES

SAMPLES = Path(__file__).resolve().parents[1] / "samples"
ENCODE = json.JSONEncoder(allow_nan=False, separators=(", ", ": ")).encode


def _reference_render(report, every_element: bool) -> str:
    """The report text as the json module writes it from the document dict: indented head,
    one element record per line."""
    doc = json_report.to_dict(report, every_element)
    elements = doc.pop("elements")
    head = json.dumps(doc, indent=1, allow_nan=False)
    body = "[\n  " + ",\n  ".join(map(ENCODE, elements)) + "\n ]" if elements else "[]"
    return head[:-2] + f',\n "elements": {body}\n}}\n'


def _region_report():
    """A plate with a region judged under user limits given as whole numbers (ints)."""
    mesh = distorted_plate(3000, seed=4)
    mesh.cell_sets = {"rim": [np.arange(0, 3000, 3)]}
    standard = BUILTIN_PROFILES["standard"]
    rim = with_limit(standard, "quad", "max_angle", Limit(100, 175, "this test"))
    return api.audit(mesh, profile=standard, regions={"rim": rim})


REPORTS = {
    "defects": lambda: api.audit(SAMPLES / "bracket_plate_defects.msh"),
    "crack tip (quadratic)": lambda: api.audit(SAMPLES / "bracket_crack_tip.vtu"),
    "flange shell": lambda: api.audit(SAMPLES / "bracket_flange_shell.vtu"),
    "region with int limits": _region_report,
}


@pytest.mark.parametrize("name", sorted(REPORTS))
def test_element_lines_are_what_the_json_module_writes(name):
    report = REPORTS[name]()
    for rows in (report.index, report.worst(only_flagged=True)):
        assert element_lines(report, rows) == list(map(ENCODE, report.element_records(rows)))


@pytest.mark.parametrize("every_element", [False, True])
@pytest.mark.parametrize("name", sorted(REPORTS))
def test_render_matches_the_json_module(name, every_element):
    report = REPORTS[name]()
    assert json_report.render(report, every_element) == _reference_render(report, every_element)


def test_infinite_metrics_and_int_limits_are_written_as_json_writes_them():
    """Planted: an infinite condition number (the string "inf", as the CSV report writes
    it), NaN warp (null), -0.0 (0.0), a whole-number limit."""
    report = _region_report()
    report.metrics["condition"][[0, 5]] = np.inf
    report.metrics["warp"][1] = np.nan
    report.metrics["skew"][2] = -0.0
    text = "\n".join(element_lines(report, report.index[:10]))
    assert text == "\n".join(map(ENCODE, report.element_records(report.index[:10])))
    lines = text.splitlines()
    assert '"condition": "inf"' in lines[0] and '"condition": "inf"' in lines[5]
    assert '"warp": null' in lines[1] and '"skew": 0.0' in lines[2]
    assert any('"limit": 100}' in line for line in element_lines(report, report.worst()))


def test_a_non_finite_centroid_is_refused_as_by_the_json_module():
    report = api.audit(SAMPLES / "bracket_plate.msh")
    report.centroids[2, 0] = np.nan
    with pytest.raises(ValueError):
        ENCODE(report.element_records(np.array([2]))[0])
    with pytest.raises(ValueError):
        element_lines(report, np.array([2]))


def test_counts_match_numpy_bincount_and_a_count_per_flag_bit():
    """Verdict counts against numpy.bincount; flag counts against counting each flag's bit
    over the elements one flag at a time (a plate with planted bad elements)."""
    report = api.audit(distorted_plate(20_000, seed=9))
    assert (
        list(report.verdict_counts().values())
        == np.bincount(report.verdict, minlength=3)[:3].tolist()
    )
    expected = {}
    for bit, name in enumerate(FLAG_NAMES):
        n = int(np.count_nonzero(report.flag_bits & np.uint32(1 << bit)))
        if n:
            expected[name] = n
    assert report.flag_counts() == expected
    assert {"inverted", "nonconvex"} <= set(expected)  # the planted ones are there


@pytest.mark.parametrize("every_element", [False, True])
def test_written_in_slices_the_text_is_unchanged(tmp_path, monkeypatch, every_element):
    """Element lines rendered a few at a time and written piece by piece: the same text as
    the json module writes in one go."""
    report = _region_report()
    assert report.worst().size > 2 * 7  # several slices either way
    monkeypatch.setattr(json_report, "ROWS_PER_PIECE", 7)
    expected = _reference_render(report, every_element)
    assert json_report.render(report, every_element) == expected
    json_report.write(tmp_path / "r.json", report, every_element)
    assert (tmp_path / "r.json").read_bytes() == expected.encode("ascii")
