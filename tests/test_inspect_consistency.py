"""On the failing sample, the plot, the annotated mesh, explain and the HTML report point at
the same elements with the same values as the JSON and CSV reports."""

from __future__ import annotations

import csv
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import meshio
import numpy as np
import pytest

SAMPLE = Path(__file__).resolve().parents[1] / "samples" / "bracket_plate_defects.msh"
#: The planted defects, by reported id (see samples/make_samples.py, positions 1-based).
PLANTED = {293, 75, 227, 210, 354}


class _Rows(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.rows: list[dict] = []
        self._cells: list[str] | None = None
        self._values: list[str | None] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "tr" and "data-id" in a:
            self.rows.append({"id": int(a["data-id"]), "verdict": a["data-verdict"]})
            self._values = []
        elif tag == "td" and self.rows:
            self._values.append(a.get("data-v"))
            self.rows[-1]["values"] = self._values


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    import subprocess
    import sys

    tmp = tmp_path_factory.mktemp("sample")
    env_root = str(Path(__file__).resolve().parents[1])
    files = {k: tmp / f"r.{k}" for k in ("json", "csv", "svg", "vtu", "html")}
    cmd = [
        sys.executable,
        "-m",
        "meshaudit",
        "check",
        str(SAMPLE),
        "--quiet",
        "--json",
        files["json"],
        "--csv",
        files["csv"],
        "--plot",
        files["svg"],
        "--annotate",
        files["vtu"],
        "--html",
        files["html"],
    ]
    import os

    env = dict(os.environ, PYTHONPATH=env_root)
    done = subprocess.run(list(map(str, cmd)), capture_output=True, text=True, env=env)
    assert done.returncode == 1, done.stderr
    doc = json.loads(files["json"].read_text())
    explained = {}
    for rec in doc["elements"]:
        out = tmp / f"e{rec['id']}.json"
        run = subprocess.run(
            [
                sys.executable,
                "-m",
                "meshaudit",
                "explain",
                str(SAMPLE),
                str(rec["id"]),
                "--json",
                str(out),
            ],
            capture_output=True,
            text=True,
            env=env,
        )
        assert run.returncode == (1 if rec["verdict"] == "fail" else 0), run.stderr
        explained[rec["id"]] = json.loads(out.read_text())
    return doc, files, explained


def test_json_names_the_planted_defects(outputs):
    doc, _, _ = outputs
    assert {r["id"] for r in doc["elements"] if r["verdict"] == "fail"} == PLANTED


def test_csv_agrees_with_json(outputs):
    doc, files, _ = outputs
    with open(files["csv"], newline="") as fh:
        rows = {int(r["id"]): r for r in csv.DictReader(fh)}
    for rec in doc["elements"]:
        row = rows[rec["id"]]
        assert row["verdict"] == rec["verdict"]
        assert float(row["score"]) == pytest.approx(rec["score"], rel=1e-9)
        assert set(filter(None, row["flags"].split(";"))) == set(rec["flags"])


def test_plot_labels_the_failing_ids(outputs):
    doc, files, _ = outputs
    labelled = {int(m) for m in re.findall(rb'id="fail-id-(\d+)"', files["svg"].read_bytes())}
    assert labelled == {r["id"] for r in doc["elements"] if r["verdict"] == "fail"}


def test_annotated_mesh_carries_the_same_values(outputs):
    doc, files, _ = outputs
    mesh = meshio.read(files["vtu"])
    ids = np.concatenate([np.asarray(a) for a in mesh.cell_data["element_id"]])
    score = np.concatenate([np.asarray(a) for a in mesh.cell_data["score"]])
    verdict = np.concatenate([np.asarray(a) for a in mesh.cell_data["verdict"]])
    codes = {"ok": 0, "warn": 1, "fail": 2}
    for rec in doc["elements"]:
        (k,) = np.flatnonzero(ids == rec["id"])
        assert verdict[k] == codes[rec["verdict"]]
        assert score[k] == pytest.approx(rec["score"], rel=1e-12)
        for name, value in rec["metrics"].items():
            got = np.concatenate([np.asarray(a) for a in mesh.cell_data[name]])[k]
            # JSON: null where not defined (NaN), "inf" where infinite
            expected = np.nan if value is None else float(value)
            assert got == pytest.approx(expected, nan_ok=True)
    assert int((verdict == 2).sum()) == doc["counts"]["fail"]


def test_explain_agrees_with_json(outputs):
    doc, _, explained = outputs
    for rec in doc["elements"]:
        ex = explained[rec["id"]]
        assert ex["verdict"] == rec["verdict"] and set(ex["flags"]) == set(rec["flags"])
        metrics = {m["name"]: m for m in ex["metrics"]}
        for name, value in rec["metrics"].items():
            assert metrics[name]["value"] == (None if value is None else pytest.approx(value))
        gauss = [g["det_j"] for g in ex["gauss_points"]]
        assert min(gauss) == pytest.approx(rec["metrics"]["det_j_min"])
        assert max(gauss) == pytest.approx(rec["metrics"]["det_j_max"])
        assert min(n["det_j"] for n in ex["det_j_nodes"]) == pytest.approx(
            rec["metrics"]["det_j_corner_min"]
        )
        assert {m for m, v in metrics.items() if v["level"] in ("warn", "fail")} == set(
            rec["breaches"]
        )


def test_html_table_agrees_with_json(outputs):
    doc, files, _ = outputs
    parsed = _Rows()
    parsed.feed(files["html"].read_text(encoding="utf-8"))
    assert [r["id"] for r in parsed.rows] == [r["id"] for r in doc["elements"]]
    from meshaudit.outputs.html_report import table_columns

    names = [name for name, _ in table_columns()]
    for row, rec in zip(parsed.rows, doc["elements"]):
        assert row["verdict"] == rec["verdict"]
        for name, value in rec["metrics"].items():
            cell = row["values"][names.index(name)]
            if value is None:  # not defined (NaN): an empty data-v
                assert cell == ""
            elif value in ("inf", "-inf"):  # infinity is written out
                assert cell == {"inf": "Infinity", "-inf": "-Infinity"}[value]
            else:
                assert float(cell) == pytest.approx(value, rel=1e-12), name
