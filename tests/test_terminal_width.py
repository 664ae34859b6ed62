"""Terminal tables at 80 columns: no name cut, round-off printed as 0, several meshes told
apart and said why they fail.

References: rich's own renderer at width 80 (the terminal library the reports print with);
a square's skew is 0 (Robinson 1987: principal axes perpendicular), so a printed skew of
1e-12 on a turned unit-square grid is round-off (common practice: values many orders
below the data's scale are noise); a rectangle's area is w h (common practice).
"""

from __future__ import annotations

import io
import json
import re

import meshio
import numpy as np
import pytest
from conftest import SAMPLES

import meshaudit
from meshaudit.metrics import METRIC_NAMES
from meshaudit.outputs import batch_terminal, compare_terminal, json_report, terminal
from meshaudit.outputs.console import PlainConsole
from meshaudit.outputs.display import SHORT
from meshaudit.results.status import Outcome, exit_status, failure_reason


def _text(render, *args, width=80, **kwargs) -> str:
    console = PlainConsole(width=width, record=True, file=io.StringIO())
    render(*args, console, **kwargs)
    return console.export_text()


def _names_whole(text: str, names) -> None:
    """Each name appears as a whole word, full or as its declared short form."""
    for name in names:
        shown = SHORT.get(name, name)
        assert re.search(rf"(?<![\w-]){re.escape(shown)}(?![\w-])", text), name
        assert name in SHORT or re.search(rf"(?<![\w-]){re.escape(name)}(?![\w-])", text)


@pytest.mark.parametrize(
    "sample", ["bracket_plate_defects.msh", "bracket_lug_defects.vtu", "bracket_crack_tip.vtu"]
)
def test_single_mesh_report_fits_80_columns_without_cutting_names(sample):
    report = meshaudit.audit(SAMPLES / sample)
    text = _text(terminal.render, report, top=10)
    body = text.rsplit("\n", 2)[0]  # the verdict line is never wrapped, by design
    assert all(len(line) <= 80 for line in body.splitlines())
    assert "…" not in text  # rich's ellipsis: nothing was cut
    stats = report.statistics()
    shown = [n for n in METRIC_NAMES if stats[n]["count"] or stats[n]["infinite"]]
    _names_whole(text, shown)
    # the legend names every short form used
    legend = text[text.index("short names:") :]
    for name in shown:
        if name in SHORT:
            assert f"{SHORT[name]} = {name}" in " ".join(legend.split())
    for f in report.findings:  # finding kinds whole
        assert f.kind in text
    # at 160 columns, full names and no legend
    wide = _text(terminal.render, report, top=10, width=160)
    assert "short names:" not in wide
    _names_whole(wide, [n for n in shown if n not in SHORT])
    for name in shown:
        assert name in wide


def _turned_grid(scale: float = 1.0) -> meshio.Mesh:
    """A 3 x 2 grid of squares of side ``scale``, turned 30 degrees and moved away from the
    origin: its skew is 0 up to round-off."""
    t = np.radians(30.0)
    rot = np.array([[np.cos(t), -np.sin(t)], [np.sin(t), np.cos(t)]])
    xs, ys = np.meshgrid(np.arange(4.0), np.arange(3.0))
    pts = scale * (np.c_[xs.ravel(), ys.ravel()] @ rot.T + [1e3, 7e2])
    quads = [
        [j * 4 + i, j * 4 + i + 1, j * 4 + i + 5, j * 4 + i + 4] for j in range(2) for i in range(3)
    ]
    return meshio.Mesh(pts, [("quad", np.array(quads))])


def _row(text: str, label: str) -> list[str]:
    line = next(ln for ln in text.splitlines() if ln.split()[:1] == [label])
    return line.split()


def test_round_off_prints_as_zero_and_json_keeps_it():
    report = meshaudit.audit(_turned_grid())
    skew = report.metrics["skew"]
    assert 0 < skew.max() < 1e-6  # round-off of a square's 0 (the premise of this test)
    text = _text(terminal.render, report)
    assert _row(text, "skew")[-3] == "0"  # max column: below 1e-6 deg prints 0
    doc = json.loads(json_report.render(report, every_element=True))
    assert doc["statistics"]["skew"]["max"] == skew.max()  # JSON keeps every digit


def test_small_elements_keep_their_small_sizes():
    # squares of side 1e-6: area 1e-12 is data, not round-off (the tolerance scales with
    # the element size), and prints as such
    report = meshaudit.audit(_turned_grid(1e-6))
    assert report.metrics["area"] == pytest.approx(np.full(6, 1e-12), rel=1e-6)
    row = _row(_text(terminal.render, report), "area")
    assert row[2] != "0" and float(row[2]) == pytest.approx(1e-12, rel=1e-3)


def test_several_meshes_at_80_columns_are_told_apart_and_say_why(tmp_path):
    deep = tmp_path / "a" / "deeply" / "nested" / "directory" / "of" / "bracket" / "revisions"
    deep.mkdir(parents=True)
    outcomes = []
    for name in ("bracket_plate.msh", "bracket_plate_defects.msh", "bracket_lug_defects.vtu"):
        path = deep / f"revision_one_{name}"
        path.write_bytes((SAMPLES / name).read_bytes())
        report = meshaudit.audit(path)
        outcomes.append(
            Outcome(
                str(path),
                exit_status(report.passed),
                len(report),
                report.verdict_counts(),
                float(report.score.min()),
                report.profile.name,
                why=failure_reason(report),
            )
        )
    text = _text(batch_terminal.render, outcomes)
    assert all(len(line) <= 80 for line in text.splitlines())
    assert "…" not in text
    assert str(deep) in "".join(text.split())  # the common directory, whole (wrapped)
    # the file column, read back: a row starts where its verdict does; a long name
    # wraps onto the row's next lines and is put together again here
    lines = text.splitlines()
    header = next(k for k, ln in enumerate(lines) if ln.startswith("file "))
    col = lines[header].index("verdict")
    end = lines[header].index("elements")
    names: list[str] = []
    verdicts: list[str] = []
    for line in lines[header + 2 : -1]:
        if line[col:].startswith(("pass", "FAIL")):
            names.append("")
            verdicts.append("")
        names[-1] += line[:col].strip()
        verdicts[-1] += " " + line[col:end].strip()
    assert names == [
        "revision_one_bracket_plate.msh",
        "revision_one_bracket_plate_defects.msh",
        "revision_one_bracket_lug_defects.vtu",
    ]
    assert [" ".join(v.split()) for v in verdicts] == [
        "pass",
        "FAIL: 5 elements fail; inconsistent_winding (fail, 1)",
        # the inverted hexahedron's own copy of a corner leaves that corner hanging on
        # its faces (the solids' mesh-level checks)
        "FAIL: 3 elements fail; hanging_nodes (fail, 1)",
    ]


def test_compare_at_80_columns_keeps_names_whole():
    old = meshaudit.audit(SAMPLES / "bracket_plate.msh")
    new = meshaudit.audit(SAMPLES / "bracket_plate_defects.msh")
    text = _text(compare_terminal.render, meshaudit.compare(old, new))
    assert "…" not in text
    shown = [n for n in METRIC_NAMES if new.statistics()[n]["count"]]
    _names_whole(text, shown)
