"""Every output, at once, on every bundled sample and on meshes whose metrics hold one
value everywhere: each file is written and valid by a parser outside meshaudit.

Checks (each against a general-purpose parser, not against meshaudit's own output):
JSON by Python's json module with NaN and Infinity refused (they are not JSON, RFC 8259);
CSV by Python's csv module (every row as wide as the header); JUnit by
xml.etree.ElementTree; PNG by its 8-byte signature (PNG specification); the annotated mesh
read back by meshio with one value per cell; the HTML page by Python's html.parser, with
its embedded plot a PNG too.
"""

from __future__ import annotations

import base64
import csv
import json
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import meshio
import numpy as np
import pytest
from conftest import SAMPLES
from hypothesis import given, settings
from hypothesis import strategies as st

import meshaudit
from meshaudit.mesh.reading import TESTED_EXTENSIONS
from meshaudit.outputs.ranges import clipped_for_colour, drawable_range

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification, section 5.2


def _refuse(name: str) -> None:
    raise ValueError(f"not JSON: {name}")


def strict_json(path: Path) -> object:
    """Parse as JSON proper: NaN, Infinity and -Infinity are refused."""
    return json.loads(path.read_text(encoding="utf-8"), parse_constant=_refuse)


class _Tags(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.images: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append(tag)
        if tag == "img":
            self.images.append(dict(attrs).get("src") or "")


def _grid(nx: int, ny: int) -> tuple[np.ndarray, np.ndarray]:
    x, y = np.meshgrid(np.arange(nx + 1.0), np.arange(ny + 1.0), indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), np.zeros(x.size)])
    node = np.arange(points.shape[0]).reshape(nx + 1, ny + 1)
    quads = np.stack([node[:-1, :-1], node[1:, :-1], node[1:, 1:], node[:-1, 1:]], axis=-1).reshape(
        -1, 4
    )
    return points, quads


def _uniform_quads(path: Path) -> None:
    points, quads = _grid(6, 4)  # every metric one value everywhere: unit squares
    meshio.write(path, meshio.Mesh(points, [("quad", quads)]))


def _uniform_triangles(path: Path) -> None:
    points, quads = _grid(4, 3)
    tris = np.concatenate([quads[:, [0, 1, 2]], quads[:, [0, 2, 3]]])
    meshio.write(path, meshio.Mesh(points, [("triangle", tris)]))


def _one_square(path: Path) -> None:
    points = np.array([[0.0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]])
    meshio.write(path, meshio.Mesh(points, [("quad", np.array([[0, 1, 2, 3]]))]))


def _all_collapsed(path: Path) -> None:
    # two quads collapsed to points: aspect ratio, taper, condition and Jacobian ratio are
    # infinite everywhere, area and det J zero everywhere (constant, and all infinite)
    points = np.array([[0.0, 0, 0]] * 4 + [[2.0, 0, 0]] * 4)
    cells = np.array([[0, 1, 2, 3], [4, 5, 6, 7]])
    meshio.write(path, meshio.Mesh(points, [("quad", cells)]))


def _round_off_only(path: Path) -> None:
    # a unit square cut by np.linspace into 10 x 10: areas, det J, aspect ratio and
    # condition number differ from element to element only by round-off (about 1e-17)
    x, y = np.meshgrid(np.linspace(0.0, 1.0, 11), np.linspace(0.0, 1.0, 11), indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), np.zeros(x.size)])
    _, quads = _grid(10, 10)
    meshio.write(path, meshio.Mesh(points, [("quad", quads)]))


def _scaled_grid(scale: float):
    def make(path: Path) -> None:
        # every coordinate of a uniform grid times ``scale``: at 1e300 area and det J are
        # infinite everywhere (1e600), at 1e-300 zero (1e-600): past the range of a double
        points, quads = _grid(4, 3)
        meshio.write(path, meshio.Mesh(points * scale, [("quad", quads)]))

    return make


MADE = {
    "uniform_quads": _uniform_quads,
    "uniform_triangles": _uniform_triangles,
    "one_square": _one_square,
    "all_collapsed": _all_collapsed,
    "round_off_only": _round_off_only,
    "huge_grid": _scaled_grid(1e300),
    "tiny_grid": _scaled_grid(1e-300),
}

#: Every bundled sample mesh: any file of samples/ in a format meshaudit documents.
SAMPLE_FILES = sorted(p for p in SAMPLES.iterdir() if p.suffix in TESTED_EXTENSIONS)


def test_the_samples_are_found() -> None:
    assert len(SAMPLE_FILES) >= 4


@pytest.mark.parametrize(
    "mesh",
    [pytest.param(p, id=p.name) for p in SAMPLE_FILES]
    + [pytest.param(name, id=name) for name in MADE],
)
def test_every_output_is_written_and_valid(mesh, tmp_path: Path, run_cli) -> None:
    if isinstance(mesh, str):
        path = tmp_path / f"{mesh}.vtu"
        MADE[mesh](path)
    else:
        path = mesh
    out = tmp_path / "out"
    out.mkdir()
    files = {
        "json": out / "r.json",
        "csv": out / "r.csv",
        "junit": out / "r.xml",
        "html": out / "r.html",
        "plot": out / "r.png",
        "annotate": out / "r.vtu",
    }
    args = [a for key, p in files.items() for a in (f"--{key}", p)]
    done = run_cli("check", path, *args, "--no-config", cwd=tmp_path)
    assert done.returncode in (0, 1), done.stderr
    assert "error" not in done.stderr and "Warning" not in done.stderr, done.stderr

    report = strict_json(files["json"])
    n = sum(report["summary"]["elements_by_type"].values())

    with open(files["csv"], newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    assert len(rows) == n + 1
    assert {len(r) for r in rows} == {len(rows[0])}

    root = ET.parse(files["junit"]).getroot()
    assert root.tag in ("testsuites", "testsuite")
    assert root.iter("testcase") is not None and any(True for _ in root.iter("testcase"))

    assert files["plot"].read_bytes()[:8] == PNG_SIGNATURE

    annotated = meshio.read(files["annotate"])
    kinds = report["summary"]["elements_by_type"]
    assert sum(len(c.data) for c in annotated.cells if c.type in kinds) == n
    verdicts = np.concatenate(
        [v for c, v in zip(annotated.cells, annotated.cell_data["verdict"]) if c.type in kinds]
    )
    assert verdicts.size == n and set(verdicts.tolist()) <= {0, 1, 2}

    text = files["html"].read_text(encoding="utf-8")
    tags = _Tags()
    tags.feed(text)
    tags.close()
    assert text.rstrip().endswith("</html>")
    assert "svg" in tags.tags  # at least one histogram is drawn
    (src,) = tags.images
    assert base64.b64decode(src.split(",", 1)[1])[:8] == PNG_SIGNATURE
    for svg in re.findall(r"<svg.*?</svg>", text, flags=re.S):
        ET.fromstring(svg)  # each inline histogram is well-formed XML
        assert "nan" not in svg.lower() and "inf" not in re.sub(r"<title>.*?</title>", "", svg)

    # explain on one element: the worst one
    audited = meshaudit.audit(str(path))
    element = int(audited.ids[audited.worst(1, only_flagged=False)[0]])
    ex_json, ex_png = out / "e.json", out / "e.png"
    done = run_cli(
        "explain", path, element, "--plot", ex_png, "--json", ex_json, "--no-config", cwd=tmp_path
    )
    assert done.returncode in (0, 1), done.stderr
    assert "error" not in done.stderr and "Warning" not in done.stderr, done.stderr
    explained = strict_json(ex_json)
    assert explained["id"] == element
    assert ex_png.read_bytes()[:8] == PNG_SIGNATURE


finite = st.floats(allow_nan=False, allow_infinity=False)


@settings(max_examples=300, deadline=None)
@given(finite, finite, st.integers(min_value=0, max_value=40))
def test_any_values_get_a_histogram_and_a_colour_scale(a: float, b: float, ulps: int) -> None:
    # numpy's histogram (a reference outside meshaudit) cuts the drawn range into 30
    # distinct bins, and the colour arithmetic (x - lo) / (hi - lo) stays finite, for any
    # finite values: far apart, equal, or a few units in the last place apart
    lo, hi = sorted((a, b))
    values = np.array([lo, hi, np.nextafter(lo, hi) if ulps else lo], dtype=float)
    values = np.concatenate([values, [lo] * ulps])
    d_lo, d_hi = drawable_range(float(values.min()), float(values.max()), 30)
    assert np.isfinite(d_lo) and np.isfinite(d_hi) and d_lo < d_hi
    inside = values[(values >= d_lo) & (values <= d_hi)]
    counts, edges = np.histogram(inside, bins=30, range=(d_lo, d_hi))
    assert counts.sum() == inside.size and np.all(np.diff(edges) > 0)
    with np.errstate(over="raise", invalid="raise", divide="raise", under="ignore"):
        drawn = clipped_for_colour(np.r_[values, np.inf, -np.inf], d_lo, d_hi)
        assert np.all(np.isfinite((drawn - d_lo) / (d_hi - d_lo)))
