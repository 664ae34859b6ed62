"""The CSV report against numpy's string formatting and Python's csv reader.

Reference: each cell formatted by ``numpy.char.mod`` ("%d" for numbers of elements,
"%.10g" for floats, so an infinity reads inf; -0.0 as 0; NaN, not defined, as an empty
cell) and rows joined by commas; the file must be exactly that text, also when written a
few rows at a time, and read back by the csv module with one row per element.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pytest

from benchmarks.meshgen import distorted_plate
from meshaudit import api
from meshaudit.outputs import csv_report

SAMPLES = Path(__file__).resolve().parents[1] / "samples"


def _reference(report) -> str:
    def floats(values):
        out = np.char.mod("%.10g", np.where(values == 0.0, 0.0, values)).astype(object)
        out[np.isnan(values)] = ""
        return out

    cols = [
        np.char.mod("%d", report.index),
        np.char.mod("%d", report.ids),
        report.types,
        report.verdict_names,
        floats(report.score),
        report.flag_strings(";"),
        *(floats(report.centroids[:, k]) for k in range(3)),
        *(floats(report.metrics[m]) for m in csv_report.TRAILING),
        report.file_region_labels(slice(None)),  # no region in these meshes: empty cells
    ]
    rows = [",".join(csv_report.COLUMNS)] + [",".join(map(str, row)) for row in zip(*cols)]
    return "\n".join(rows) + "\n"


def _planted():
    """A plate with planted bad elements, plus an infinite and a NaN metric and a -0.0."""
    report = api.audit(distorted_plate(2000, seed=2))
    report.metrics["condition"][4] = np.inf
    report.metrics["warp"][5] = np.nan
    report.metrics["skew"][6] = -0.0
    return report


REPORTS = {
    "planted": _planted,
    "crack tip (quadratic)": lambda: api.audit(SAMPLES / "bracket_crack_tip.vtu"),
    "flange shell": lambda: api.audit(SAMPLES / "bracket_flange_shell.vtu"),
}


@pytest.mark.parametrize("name", sorted(REPORTS))
def test_csv_text_is_numpy_formatting_joined(name, tmp_path, monkeypatch):
    report = REPORTS[name]()
    expected = _reference(report)
    assert csv_report.render(report) == expected
    monkeypatch.setattr(csv_report, "ROWS_PER_PIECE", 7)  # several pieces
    csv_report.write(tmp_path / "r.csv", report)
    text = (tmp_path / "r.csv").read_text(encoding="utf-8")
    assert text == expected
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[0] == list(csv_report.COLUMNS)
    assert len(rows) == len(report) + 1
    assert [int(r[1]) for r in rows[1:]] == report.ids.tolist()
    if name == "planted":  # the planted cells, as the JSON report carries them
        column = {c: k for k, c in enumerate(csv_report.COLUMNS)}
        assert rows[5][column["condition"]] == "inf"
        assert rows[6][column["warp"]] == "" and rows[7][column["skew"]] == "0"
