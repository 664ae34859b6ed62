"""JSON, CSV, JUnit and terminal reports, exit statuses, and all-or-nothing writes.

The meshes are analytic shapes whose metrics are known from geometry: a unit square
(ideal), rectangles of side ratio 6 and 12 (Robinson's aspect ratio of a rectangle is its
side ratio), a unit square numbered clockwise (negative det J everywhere: inverted, common
practice) and two ideal-ish triangles (equilateral; right isosceles).
"""

from __future__ import annotations

import csv
import io
import json
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from io_meshes import S60, write_vtu

from meshaudit import BUILTIN_PROFILES, OutputError
from meshaudit.metrics import METRIC_INFO, METRIC_NAMES
from meshaudit.outputs import atomic

STANDARD = BUILTIN_PROFILES["standard"]

# shape name -> (cell type, corners, centroid). Element ids are 1-based positions.
SHAPES = {
    "square": ("quad", [(0, 0), (1, 0), (1, 1), (0, 1)], (0.5, 0.5)),
    "rect6": ("quad", [(2, 0), (8, 0), (8, 1), (2, 1)], (5.0, 0.5)),
    "rect12": ("quad", [(10, 0), (22, 0), (22, 1), (10, 1)], (16.0, 0.5)),
    "clockwise": ("quad", [(30, 0), (30, 1), (31, 1), (31, 0)], (30.5, 0.5)),
    "equilateral": ("triangle", [(0, 3), (1, 3), (0.5, 3 + S60)], (0.5, 3 + S60 / 3)),
    "right": ("triangle", [(2, 3), (3, 3), (2, 4)], (7 / 3, 10 / 3)),
}
#: Surface areas by the shoelace formula (absolute value).
AREAS = {
    "square": 1.0,
    "rect6": 6.0,
    "rect12": 12.0,
    "clockwise": 1.0,
    "equilateral": np.sqrt(3) / 4,
    "right": 0.5,
}


def write_shapes(path: Path, names: list[str], with_line: bool = True) -> Path:
    points, quads, tris = [], [], []
    for name in names:
        kind, corners, _ = SHAPES[name]
        ids = list(range(len(points), len(points) + len(corners)))
        points += [(x, y, 0.0) for x, y in corners]
        (quads if kind == "quad" else tris).append(ids)
    cells = [("line", [[0, 1]])] if with_line else []
    cells += [("quad", quads)] if quads else []
    cells += [("triangle", tris)] if tris else []
    return write_vtu(path, np.array(points, dtype=float), cells)


ALL = list(SHAPES)  # quads first, then triangles: read order == this order


def test_limits_the_meshes_rely_on() -> None:
    """Guard: the analytic shapes sit clearly inside the standard limit bands used below."""
    aspect = STANDARD.limit("quad", "aspect_ratio")
    assert aspect.warn < 6 < aspect.fail < 12


def _no_constants(token: str) -> float:
    raise AssertionError(f"non-standard JSON number {token}")


@pytest.fixture
def full_run(tmp_path: Path, run_cli):
    """The mixed mesh audited once with every report (default element selection)."""
    mesh = write_shapes(tmp_path / "plate.vtu", ALL)
    out = {k: tmp_path / f"r.{k}" for k in ("json", "csv", "xml")}
    done = run_cli(
        "check", mesh, "--json", out["json"], "--csv", out["csv"], "--junit", out["xml"],
        "--top", "2",
    )  # fmt: skip
    return done, out


def test_one_run_all_reports(full_run) -> None:
    """One CLI run (they cost ~0.5 s each) checked for every output."""
    _check_exit_status_and_terminal(full_run)
    _check_json_report(full_run)
    _check_csv_report(full_run)
    _check_junit_report(full_run)


def _check_exit_status_and_terminal(full_run) -> None:
    """Two elements fail (12:1 rectangle, clockwise square): exit 1; --top 2 lists two."""
    done, _ = full_run
    assert done.returncode == 1, done.stderr
    assert done.stderr == ""
    assert "top 2 of 3 not ok" in done.stdout
    section = done.stdout.split("Worst elements", 1)[1].split("\n\n", 1)[0]
    ids = [ln.split("│")[1].strip() for ln in section.splitlines() if ln.startswith("│")]
    assert [i for i in ids if i] == ["4", "3"]  # wrapped cells leave the id column empty
    last = done.stdout.strip().splitlines()[-1]
    assert last.startswith("FAIL") and last.endswith("gate on fail")  # one unwrapped line


def _check_json_report(full_run) -> None:
    _, out = full_run
    text = out["json"].read_text()
    doc = json.loads(text, parse_constant=_no_constants)  # no NaN / Infinity tokens
    assert doc["schema"].startswith("meshaudit.report/")
    s = doc["summary"]
    assert s["elements"] == 6
    assert s["elements_by_type"] == {"quad": 4, "triangle": 2}
    assert s["skipped_cells"] == {"line": 1}
    assert s["nodes"] == 4 * 4 + 2 * 3
    prof = doc["profile"]
    assert prof["name"] == "standard"
    lim = prof["limits"]["quad"]["aspect_ratio"]
    assert {"warn", "fail", "source"} <= set(lim)
    assert lim["source"]
    assert doc["verdict"] == "fail"
    assert doc["counts"] == {"ok": 3, "warn": 1, "fail": 2}
    stats = doc["statistics"]
    assert set(stats) == set(METRIC_NAMES)
    for entry in stats.values():
        assert {"min", "p5", "median", "p95", "max", "past_warn", "past_fail"} <= set(entry)
    areas = list(AREAS.values())
    for key, q in (("min", 0), ("p5", 5), ("median", 50), ("p95", 95), ("max", 100)):
        assert stats["area"][key] == pytest.approx(np.percentile(areas, q))
    # aspect ratios 1, 6, 12, 1 against warn 5 / fail 10: two past warn, one past fail
    assert stats["aspect_ratio"]["past_warn"] == 2
    assert stats["aspect_ratio"]["past_fail"] == 1
    # elements: the three not ok, failures first
    elements = doc["elements"]
    assert sorted(e["id"] for e in elements) == [2, 3, 4]
    assert [e["verdict"] for e in elements] == ["fail", "fail", "warn"]
    for e in elements:
        assert {"index", "id", "type", "verdict", "score", "flags", "centroid", "metrics"} <= set(e)
        assert e["index"] == e["id"] - 1
        assert set(e["metrics"]) == set(METRIC_NAMES)
    by_id = {e["id"]: e for e in elements}
    assert by_id[2]["centroid"] == pytest.approx([5.0, 0.5, 0.0])
    assert by_id[2]["metrics"]["aspect_ratio"] == pytest.approx(6.0)
    assert "aspect_ratio" in by_id[2]["flags"]
    assert {"inverted", "reversed"} <= set(by_id[4]["flags"])
    assert by_id[4]["score"] == 0.0


def test_json_all_elements_and_quiet(tmp_path: Path, run_cli) -> None:
    """--all lists every element in read order; --quiet prints exactly one line."""
    mesh = write_shapes(tmp_path / "plate.vtu", ALL)
    done = run_cli("check", mesh, "--all", "--json", tmp_path / "all.json", "--quiet")
    assert done.returncode == 1
    assert len(done.stdout.splitlines()) == 1
    assert done.stdout.startswith("FAIL")
    doc = json.loads((tmp_path / "all.json").read_text(), parse_constant=_no_constants)
    elements = doc["elements"]
    assert [e["index"] for e in elements] == list(range(6))
    assert [e["type"] for e in elements] == [SHAPES[n][0] for n in ALL]
    for e, name in zip(elements, ALL):
        assert e["metrics"]["area"] == pytest.approx(AREAS[name])
        assert e["centroid"][:2] == pytest.approx(SHAPES[name][2])
    assert elements[4]["metrics"]["skew"] is None  # a triangle has no skew


CSV_HEADER = "index,id,type,verdict,score,flags,centroid_x,centroid_y,centroid_z"


def _check_csv_report(full_run) -> None:
    _, out = full_run
    text = out["csv"].read_text()
    header = text.splitlines()[0]
    names = [m for m in METRIC_NAMES if m != "score"]
    assert header == CSV_HEADER + "," + ",".join(names) + ",file_region"  # the file's region, last
    rows = list(csv.DictReader(io.StringIO(text)))
    assert len(rows) == 6
    assert [r["index"] for r in rows] == [str(i) for i in range(6)]
    assert [r["id"] for r in rows] == [str(i) for i in range(1, 7)]
    assert [r["type"] for r in rows] == [SHAPES[n][0] for n in ALL]
    assert [r["verdict"] for r in rows] == ["ok", "warn", "fail", "fail", "ok", "ok"]
    for row, name in zip(rows, ALL):
        cx, cy = SHAPES[name][2]
        assert float(row["centroid_x"]) == pytest.approx(cx)
        assert float(row["centroid_y"]) == pytest.approx(cy)
        assert float(row["centroid_z"]) == 0.0
        assert float(row["area"]) == pytest.approx(AREAS[name])
        meaningless = ("skew", "taper", "warp")
        if row["type"] == "triangle":
            assert all(row[m] == "" for m in meaningless)
        else:
            assert all(row[m] != "" for m in meaningless)
    assert rows[0]["flags"] == ""
    assert {"inverted", "reversed"} <= set(rows[3]["flags"].split(";"))
    assert "aspect_ratio" in rows[1]["flags"].split(";")


def _cases(path: Path) -> dict[str, ET.Element]:
    root = ET.parse(path).getroot()
    suites = root.findall("testsuite")
    assert len(suites) == 1
    cases = suites[0].findall("testcase")
    assert suites[0].get("tests") == str(len(cases))
    assert suites[0].get("failures") == str(sum(c.find("failure") is not None for c in cases))
    return {c.get("name"): c for c in cases}


def _beyond(value: float, threshold: float, worse: str) -> bool:
    return value > threshold if worse == "high" else value < threshold


def _check_junit_report(full_run) -> None:
    """One case per validity flag and per limit of each present family; each case's count
    equals the number of CSV rows of that family strictly beyond the limit."""
    done, out = full_run
    cases = _cases(out["xml"])
    rows = list(csv.DictReader(io.StringIO(out["csv"].read_text())))
    validity = [n for n in cases if n.startswith("no ")]
    assert {"no inverted elements", "no degenerate elements"} <= set(validity)
    limit_cases = 0
    present = {r["type"] for r in rows}
    for family, limits in STANDARD.limits.items():
        if family not in present:  # cases only for the families the mesh has
            continue
        for metric, lim in limits.items():
            worse = METRIC_INFO[metric].worse
            for kind, threshold in (("fail", lim.fail), ("warn", lim.warn)):
                if threshold is None:
                    continue
                limit_cases += 1
                match = [n for n in cases if n.startswith(f"{family} {metric} ")]
                match = [n for n in match if n.endswith(f"({kind} limit)")]
                assert len(match) == 1, (family, metric, kind)
                case = cases[match[0]]
                n = sum(
                    1
                    for r in rows
                    if r["type"] == family
                    and r[metric] != ""
                    and _beyond(float(r[metric]), threshold, worse)
                )
                failure = case.find("failure")
                text = failure.get("message") if failure is not None else case.findtext("*")
                assert text.startswith(f"{n} {family} element"), (match[0], text)
                assert (failure is not None) == (n > 0 and kind == "fail"), match[0]
    assert len(cases) == len(validity) + limit_cases
    # messages name counts and worst ids: aspect ratio 12 (id 3) is worse than 6 (id 2)
    warn_case = next(n for n in cases if n.startswith("quad aspect_ratio") and "warn" in n)
    assert "worst ids: 3, 2" in cases[warn_case].findtext("*")
    inverted = cases["no inverted elements"].find("failure")
    assert inverted is not None and inverted.get("message").startswith("1 element")
    assert "ids: 4" in inverted.get("message")
    assert done.returncode == 1 and any(c.find("failure") is not None for c in cases.values())


def test_warnings_gate_only_with_fail_on_warn(tmp_path: Path, run_cli) -> None:
    """A mesh whose worst element only warns (6:1 rectangle) passes, unless --fail-on warn;
    a mesh of ideal shapes passes either way."""
    mesh = write_shapes(tmp_path / "warn.vtu", ["square", "rect6", "equilateral"])
    relaxed = run_cli("check", mesh, "--junit", tmp_path / "a.xml", "--quiet")
    assert relaxed.returncode == 0, relaxed.stderr
    assert relaxed.stdout.startswith("PASS")
    assert not any(c.find("failure") is not None for c in _cases(tmp_path / "a.xml").values())

    strict = run_cli(
        "check", mesh, "--fail-on", "warn", "--junit", tmp_path / "b.xml",
        "--json", tmp_path / "b.json", "--quiet",
    )  # fmt: skip
    assert strict.returncode == 1, strict.stderr
    assert strict.stdout.startswith("FAIL")
    cases = _cases(tmp_path / "b.xml")
    failed = {n for n, c in cases.items() if c.find("failure") is not None}
    assert "quad aspect_ratio <= 5 (warn limit)" in failed
    assert all("warn limit" in n for n in failed)
    doc = json.loads((tmp_path / "b.json").read_text())
    assert doc["verdict"] == "fail" and doc["fail_on"] == "warn"

    ideal = write_shapes(tmp_path / "ideal.vtu", ["square", "equilateral"], with_line=False)
    done = run_cli("check", ideal, "--fail-on", "warn", "--quiet")
    assert done.returncode == 0 and done.stdout.startswith("PASS")


def test_junit_counts_warning_flags_under_fail_on_warn(tmp_path: Path, run_cli) -> None:
    """A shell strip whose third element is numbered against its neighbours warns only by
    its flipped normal; with --fail-on warn the exit status is 1 and the JUnit XML must
    fail too (one case per warning flag kind).

    Source: three unit squares folded 30° along shared edges (a shell, not planar), the
    last one numbered the other way round; areas 1 by construction.
    """
    c, s = np.cos(np.pi / 6), np.sin(np.pi / 6)
    xs, zs = [0.0, 1.0, 1.0 + c, 2.0 + c], [0.0, 0.0, s, s]
    points = np.array([[x, y, z] for x, z in zip(xs, zs) for y in (0.0, 1.0)])

    def quad(k: int) -> list[int]:
        return [2 * k, 2 * k + 2, 2 * k + 3, 2 * k + 1]

    mesh = write_vtu(tmp_path / "strip.vtu", points, [("quad", [quad(0), quad(1), quad(2)[::-1]])])
    done = run_cli("check", mesh, "--fail-on", "warn", "--junit", tmp_path / "s.xml", "--quiet")
    assert done.returncode == 1, done.stderr
    cases = _cases(tmp_path / "s.xml")
    failed = {n for n, case in cases.items() if case.find("failure") is not None}
    # The same clash is also a mesh-level finding (opposite normals, warn severity).
    assert failed == {"no flipped_normal elements", "no opposite normals"}
    # the third cell of the file: VTK cell index 2
    assert "ids: 2" in cases["no flipped_normal elements"].find("failure").get("message")


# -- atomic writes ------------------------------------------------------------------
def _write(text: str):
    return lambda p: p.write_text(text)


def _explode(p: Path) -> None:
    p.write_text("half a rep")
    raise ValueError("renderer broke")


def test_atomic_write_all_leaves_nothing_on_failure(tmp_path: Path) -> None:
    keep = tmp_path / "report.json"
    keep.write_text("earlier report\n")
    with pytest.raises(ValueError, match="renderer broke"):
        atomic.write_all(
            [
                (tmp_path / "new.csv", _write("a,b\n")),
                (keep, _write("x")),
                (tmp_path / "j.xml", _explode),
            ]
        )
    assert sorted(p.name for p in tmp_path.iterdir()) == ["report.json"]
    assert keep.read_text() == "earlier report\n"


def test_atomic_write_all_turns_os_errors_into_one_line(tmp_path: Path) -> None:
    def disk_full(p: Path) -> None:
        raise OSError(28, "No space left on device")

    with pytest.raises(OutputError, match="No space left on device"):
        atomic.write_all([(tmp_path / "r.json", disk_full)])
    assert list(tmp_path.iterdir()) == []


def test_atomic_write_all_writes_everything(tmp_path: Path) -> None:
    (tmp_path / "a.txt").write_text("old")
    atomic.write_all([(tmp_path / "a.txt", _write("new a")), (tmp_path / "b.txt", _write("b"))])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt", "b.txt"]
    assert (tmp_path / "a.txt").read_text() == "new a"
