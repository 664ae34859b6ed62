"""A partitioned mesh audited on a Dask LocalCluster gives the audit of the same mesh
merged into one file.

The outside references: the merged file is made by the test helper (numpy and meshio,
see :mod:`partitioned_meshes`), not by meshaudit; the planted defects are known by
construction (how many crack edges and unmerged places a split of four nodes along the
cut makes, which element is the halo copy, which is reversed); percentiles are checked
against ``numpy.percentile`` of the merged audit's columns.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from partitioned_meshes import two_worker_client, write_partitioned

import meshaudit
from meshaudit.distributed import audit_parts
from meshaudit.distributed.sketch import KEPT_BITS, Sketch
from meshaudit.results.report import PERCENTILES

distributed = pytest.importorskip("distributed")

NX, NY, PARTS = 24, 10, 3


@pytest.fixture(scope="module")
def client():
    """Two workers in this process (threads): starts in about a second."""
    with two_worker_client() as c:
        yield c


def _findings(report) -> dict:
    return {
        f.kind: (
            f.severity,
            f.count,
            sorted(f.element_ids.tolist()),
            sorted(f.node_ids.tolist()),
            sorted(map(tuple, f.pairs.tolist())),
        )
        for f in report.findings
    }


def _loops(report) -> list:
    return sorted(
        (d["kind"], d["edges"], round(d["length"], 9), d["crack_edges"])
        for d in report.free_edges.loops()
    )


def _not_ok(report) -> dict:
    rows = report.worst(only_flagged=True)
    positions = report.positions(rows)
    return {
        int(report.ids[r]): (
            int(p),
            int(report.verdict[r]),
            int(report.flag_bits[r]),
            {m: float(report.metrics[m][r]) for m in report.metrics},
        )
        for r, p in zip(rows.tolist(), positions.tolist())
    }


def _same_numbers(a: dict, b: dict) -> None:
    """Element by element, metric by metric: equal, NaN where NaN."""
    assert a.keys() == b.keys()
    for key in a:
        pa, va, fa, ma = a[key]
        pb, vb, fb, mb = b[key]
        assert (pa, va, fa) == (pb, vb, fb)
        for m in ma:
            assert ma[m] == mb[m] or (np.isnan(ma[m]) and np.isnan(mb[m])), (key, m)


def test_local_cluster_gives_the_merged_file_audit(tmp_path, client):
    pvtu, merged = write_partitioned(tmp_path, NX, NY, PARTS)
    one = meshaudit.audit(str(merged))
    many = audit_parts(pvtu, cluster=client)

    assert many.passed == one.passed is False
    assert many.verdict_counts() == one.verdict_counts()
    assert many.flag_counts() == one.flag_counts()
    _same_numbers(_not_ok(many), _not_ok(one))
    assert _findings(many) == _findings(one)
    assert _loops(many) == _loops(one)

    # by construction: four nodes of the cut split (rows 2..5 of x = 8) make five cut
    # segments seen from both sides, 10 crack edges, and 4 unmerged places; the halo
    # copy is the last cell of part 1; element 5 * 24 + 1 was written reversed
    found = {f.kind: f for f in many.findings}
    assert found["crack_edges"].count == 10
    assert found["coincident_nodes"].count == 4
    part0 = NX // PARTS * NY
    part1 = part0 + NX // PARTS * NY + 1
    assert found["duplicate_elements"].element_ids.tolist() == [part1 - 1]
    reversed_id = (NY // 2) * (NX // PARTS) + 1  # row 5, column 1 of part 0
    assert found["inconsistent_winding"].element_ids.tolist() == [reversed_id]
    # the cut itself is no free edge: the outer loop is the plate's outline
    outer = [d for d in many.free_edges.loops() if d["kind"] == "outer"]
    assert [d["edges"] for d in outer] == [2 * (NX + NY)]


def test_statistics_exact_counts_and_ends_percentiles_within_the_sketch_bound(tmp_path, client):
    pvtu, merged = write_partitioned(tmp_path, NX, NY, PARTS, crack=False, halo=False)
    one = meshaudit.audit(str(merged))
    many = audit_parts(pvtu, cluster=client)
    for name, entry in many.statistics().items():
        ref = one.statistics()[name]
        for key in ("count", "infinite", "min", "max", "past_warn", "past_fail"):
            assert entry[key] == ref[key], (name, key)
        values = one.metrics[name][np.isfinite(one.metrics[name])]
        if values.size == 0:
            continue
        expected = np.percentile(values, [q for _, q in PERCENTILES])  # numpy's linear
        got = np.array([entry[k] for k, _ in PERCENTILES])
        bound = 2.0**-KEPT_BITS * np.abs(expected).max()
        assert np.all(np.abs(got - expected) <= bound), name


def test_without_global_ids_parts_are_joined_by_coordinates(tmp_path, client):
    pvtu, merged = write_partitioned(
        tmp_path, NX, NY, PARTS, crack=False, halo=False, global_ids=False
    )
    one = meshaudit.audit(str(merged))
    many = audit_parts(pvtu, cluster=client)
    assert many.verdict_counts() == one.verdict_counts()
    assert _findings(many) == _findings(one)
    assert _loops(many) == _loops(one)
    # by construction: no crack, and the plate's outline is the only free-edge loop
    assert [(d["kind"], d["edges"]) for d in many.free_edges.loops()] == [("outer", 2 * (NX + NY))]
    # nodes: the merged file has (NX + 1)(NY + 1); the parts share those on the cuts
    assert many.summary.n_points == (NX + 1) * (NY + 1)


def test_sketch_percentiles_against_numpy():
    """Values of both signs over many magnitudes, cut into three parts: counts, minimum
    and maximum exact, percentiles within 2^-10 of the magnitude (numpy.percentile)."""
    rng = np.random.default_rng(3)
    values = rng.standard_normal(5000) * 10.0 ** rng.integers(-3, 4, 5000)
    pieces = np.array_split(values, 3)
    merged = Sketch.merged([Sketch.of(p, None) for p in pieces]).statistics()
    expected = np.percentile(values, [q for _, q in PERCENTILES])
    assert merged["count"] == values.size
    assert merged["min"] == values.min() and merged["max"] == values.max()
    for (key, _), want in zip(PERCENTILES, expected):
        assert abs(merged[key] - want) <= 2.0**-KEPT_BITS * abs(want) + 1e-300, key
    # values with short mantissas come out exact: integers below 2^10
    whole = rng.integers(0, 1000, 999).astype(float)
    stats = Sketch.merged([Sketch.of(p, None) for p in np.array_split(whole, 4)]).statistics()
    for (key, _), want in zip(PERCENTILES, np.percentile(whole, [q for _, q in PERCENTILES])):
        assert stats[key] == want, key


def test_check_command_on_a_pvtu(tmp_path, run_cli):
    pvtu, merged = write_partitioned(tmp_path, NX, NY, PARTS)
    out = tmp_path / "elements"
    out.mkdir()
    res = run_cli("check", pvtu, "--json", tmp_path / "r.json", "--elements", out, "--quiet")
    assert res.returncode == 1, res.stderr
    assert "FAIL" in res.stdout and "of 241 elements" in res.stdout
    doc = json.loads((tmp_path / "r.json").read_text())
    single = run_cli("check", merged, "--json", tmp_path / "s.json", "--quiet")
    ref = json.loads((tmp_path / "s.json").read_text())
    assert single.returncode == 1
    assert doc["counts"] == ref["counts"]
    assert [e["index"] for e in doc["elements"]] == [e["index"] for e in ref["elements"]]
    assert {f["kind"]: f["count"] for f in doc["findings"]} == {
        f["kind"]: f["count"] for f in ref["findings"]
    }
    # one CSV per part plus the index; together every element once, by its position
    files = sorted(p.name for p in out.iterdir())
    assert files == [
        "plate.part00000.csv",
        "plate.part00001.csv",
        "plate.part00002.csv",
        "plate.parts.csv",
    ]
    index = []
    for name in files[:3]:
        lines = (out / name).read_text().splitlines()[1:]
        index += [int(line.split(",")[0]) for line in lines]
    assert index == list(range(241))


def test_parts_pattern_is_one_mesh(tmp_path, run_cli):
    write_partitioned(tmp_path, NX, NY, PARTS)
    res = run_cli("check", "--parts", str(tmp_path / "plate_*.vtu"), "--quiet")
    assert res.returncode == 1, res.stderr
    assert res.stdout.count("FAIL") == 1 and "of 241 elements" in res.stdout


@pytest.mark.parametrize(
    "trouble",
    ["missing piece", "no pieces", "plot"],
)
def test_refused_in_one_line(tmp_path, run_cli, trouble):
    pvtu, _ = write_partitioned(tmp_path, 6, 2, 2, crack=False, halo=False)
    args = ["check", pvtu]
    if trouble == "missing piece":
        (tmp_path / "plate_1.vtu").unlink()
    elif trouble == "no pieces":
        pvtu.write_text('<VTKFile type="PUnstructuredGrid"><PUnstructuredGrid/></VTKFile>')
    else:
        args += ["--plot", tmp_path / "p.png"]
    res = run_cli(*args)
    assert res.returncode == 2
    assert len(res.stderr.strip().splitlines()) == 1 and "Traceback" not in res.stderr


def test_core_never_imports_dask():
    code = (
        "import sys, meshaudit; meshaudit.audit('samples/bracket_plate.msh'); "
        "assert 'distributed' not in sys.modules and 'dask' not in sys.modules"
    )
    from conftest import REPO

    subprocess.run([sys.executable, "-c", code], check=True, cwd=REPO)


def _hex_block(folder, n: int, global_ids: bool):
    """An n x n x n block of unit cubes cut in two parts across x, and the same block
    in one file (numpy and meshio): node (i, j, k) at index (i (n+1) + j)(n+1) + k."""
    import meshio

    x, y, z = np.meshgrid(*(np.arange(n + 1.0),) * 3, indexing="ij")
    pts = np.stack([x.ravel(), y.ravel(), z.ravel()], 1)

    def idx(i, j, k):
        return (i * (n + 1) + j) * (n + 1) + k

    i, j, k = (a.ravel() for a in np.meshgrid(*(np.arange(n),) * 3, indexing="ij"))
    hexes = np.stack(
        [
            idx(i, j, k),
            idx(i + 1, j, k),
            idx(i + 1, j + 1, k),
            idx(i, j + 1, k),
            idx(i, j, k + 1),
            idx(i + 1, j, k + 1),
            idx(i + 1, j + 1, k + 1),
            idx(i, j + 1, k + 1),
        ],
        1,
    )
    owner = i * 2 // n
    files = []
    for p in range(2):
        cells = hexes[owner == p]
        used = np.unique(cells)
        data = {"GlobalNodeId": used} if global_ids else {}
        path = folder / f"block_{p}.vtu"
        local = np.searchsorted(used, cells)
        meshio.write(path, meshio.Mesh(pts[used], [("hexahedron", local)], point_data=data))
        files.append(str(path))
    merged = folder / "block_merged.vtu"
    cells = np.concatenate([hexes[owner == p] for p in range(2)])
    meshio.write(merged, meshio.Mesh(pts, [("hexahedron", cells)]))
    return files, merged


@pytest.mark.parametrize("global_ids", [True, False])
def test_solid_parts_share_the_nodes_of_their_cut(tmp_path, client, global_ids):
    """Nodes of solids are matched across parts: a 4 x 4 x 4 block of hexahedra cut in
    two has 5^3 nodes (by construction), not 5^3 + the 25 of the cut counted twice."""
    from meshaudit.mesh.parts import PartSet

    files, merged = _hex_block(tmp_path, 4, global_ids)
    one = meshaudit.audit(str(merged))
    many = audit_parts(PartSet("block", tuple(files)), cluster=client)
    assert many.summary.n_points == one.summary.n_points == 5**3
    assert many.verdict_counts() == one.verdict_counts() == {"ok": 64, "warn": 0, "fail": 0}
    assert _findings(many) == _findings(one) == {}


def _coarse_beside_fine(folder):
    """Part 0: 2 x 3 squares of side 2 (x in 0..4); part 1: 4 x 6 squares of side 1 (x in
    4..8): along the cut x = 4 the fine part has a node in the middle of each coarse side,
    which the coarse part does not have (numpy and meshio; ids = merged point index)."""
    import meshio

    def grid(x0, nx, ny, h):
        x, y = np.meshgrid(x0 + h * np.arange(nx + 1.0), h * np.arange(ny + 1.0))
        pts = np.stack([x.ravel(), y.ravel(), np.zeros(x.size)], axis=1)
        i, j = np.meshgrid(np.arange(nx), np.arange(ny))
        n0 = (j * (nx + 1) + i).ravel()
        return pts, np.stack([n0, n0 + 1, n0 + nx + 2, n0 + nx + 1], axis=1)

    pa, qa = grid(0.0, 2, 3, 2.0)
    pb, qb = grid(4.0, 4, 6, 1.0)
    pts = np.concatenate([pa, pb])
    cells = [qa, qb + len(pa)]
    # merge the fine part's cut nodes with the coarse part's at the same place
    key = np.round(pts[:, :2] * 2).astype(np.int64) @ np.array([1, 1000])
    _, first, ident = np.unique(key, return_index=True, return_inverse=True)
    gid = np.argsort(np.argsort(first))[ident]  # merged index, in order of first use
    points = np.zeros((int(gid.max()) + 1, 3))
    points[gid] = pts
    files = []
    for k, c in enumerate(cells):
        used = np.unique(c)
        path = folder / f"cut_{k}.vtu"
        mesh = meshio.Mesh(
            pts[used], [("quad", np.searchsorted(used, c))], point_data={"GlobalNodeId": gid[used]}
        )
        meshio.write(path, mesh)
        files.append(str(path))
    merged = folder / "cut_merged.vtu"
    meshio.write(merged, meshio.Mesh(points, [("quad", np.concatenate([gid[c] for c in cells]))]))
    return files, merged


def test_hanging_nodes_across_a_cut(tmp_path, client):
    """A coarse part beside a fine one: by construction the 3 fine nodes in the middle of
    the coarse sides on the cut hang, as in the merged file."""
    from meshaudit.mesh.parts import PartSet

    files, merged = _coarse_beside_fine(tmp_path)
    one = meshaudit.audit(str(merged))
    many = audit_parts(PartSet("cut", tuple(files)), cluster=client)
    assert _findings(many) == _findings(one)
    assert {f.kind: f.count for f in many.findings} == {"hanging_nodes": 3}
    assert many.passed is one.passed is False
    assert _loops(many) == _loops(one)


def test_no_element_report_is_left_when_a_part_fails(tmp_path, client):
    """The element report of one part cannot be written: the audit stops with that
    error (exit status 2 on the command line) and the element reports the other parts
    wrote are removed: no half-written set of files."""
    from meshaudit.errors import OutputError

    pvtu, _ = write_partitioned(tmp_path, NX, NY, PARTS, crack=False, halo=False)
    out = tmp_path / "elements"
    out.mkdir()
    with pytest.raises(OutputError, match="disk full"):
        audit_parts(pvtu, cluster=client, element_writer=_FailsOnLastPart(str(out), "plate"))
    assert list(out.iterdir()) == []


def _fails_on_last(writer, report, offset, index):
    from meshaudit.errors import OutputError

    if index == PARTS - 1:
        raise OutputError("plate.part00002.csv: cannot write: disk full")
    return writer.write(report, offset, index)


class _FailsOnLastPart:
    """A part writer whose last part fails, the others writing as usual."""

    def __init__(self, directory: str, stem: str) -> None:
        from meshaudit.outputs.part_elements import PartWriter

        self.inner = PartWriter(directory, stem)

    def check(self) -> None:
        self.inner.check()

    def write(self, report, offset, index):
        return self.inner(report, offset, index)

    def __call__(self, report, offset, index):
        return _fails_on_last(self, report, offset, index)

    def finish(self, *args) -> None:
        self.inner.finish(*args)

    def discard(self, n: int) -> None:
        self.inner.discard(n)


def test_cluster_from_the_configuration_file(tmp_path, run_cli):
    """``cluster`` in meshaudit.toml is the scheduler the parts go to: an address no
    scheduler can have is refused in one line (exit status 2), as --cluster is."""
    pvtu, _ = write_partitioned(tmp_path, 6, 2, 2, crack=False, halo=False)
    (tmp_path / "meshaudit.toml").write_text('cluster = "nowhere://scheduler"\n')
    res = run_cli("check", pvtu)
    assert res.returncode == 2
    assert "meshaudit: error: cannot reach the Dask scheduler at nowhere://scheduler" in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1


def _half_cylinder(folder, flip_second: bool):
    """A shell: 8 x 4 quads on a half cylinder of radius 3 (nodes leave every plane),
    cut in two parts across its arc; ``flip_second``: the second part's quads are written
    the other way round (numpy and meshio; ids = merged point index)."""
    import meshio

    angle, height = np.meshgrid(np.linspace(0.0, np.pi, 9), np.linspace(0.0, 4.0, 5))
    pts = np.stack([3 * np.cos(angle), 3 * np.sin(angle), height], axis=-1).reshape(-1, 3)
    i, j = np.meshgrid(np.arange(8), np.arange(4))
    n0 = (j * 9 + i).ravel()
    quads = np.stack([n0, n0 + 1, n0 + 10, n0 + 9], axis=1)
    owner = i.ravel() // 4
    cells = [quads[owner == 0], quads[owner == 1]]
    if flip_second:
        cells[1] = cells[1][:, ::-1]
    files = []
    for k, c in enumerate(cells):
        used = np.unique(c)
        path = folder / f"shell_{k}.vtu"
        mesh = meshio.Mesh(
            pts[used], [("quad", np.searchsorted(used, c))], point_data={"GlobalNodeId": used}
        )
        meshio.write(path, mesh)
        files.append(str(path))
    merged = folder / "shell_merged.vtu"
    meshio.write(merged, meshio.Mesh(pts, [("quad", np.concatenate(cells))]))
    return files, merged


def test_normals_disagreeing_across_a_cut_are_reported(tmp_path, client):
    """A shell whose second part is wound the other way: one file reports
    opposite_normals (a warning), and so does the partitioned audit, naming the elements
    on both sides of the cut (by construction the 4 quads of column 3 and the 4 of
    column 4); with --fail-on warn both fail, with the default gate both pass."""
    from meshaudit.mesh.parts import PartSet

    files, merged = _half_cylinder(tmp_path, flip_second=True)
    for gate, passed in (("fail", True), ("warn", False)):
        one = meshaudit.audit(str(merged), fail_on=gate)
        many = audit_parts(PartSet("shell", tuple(files)), fail_on=gate, cluster=client)
        assert one.summary.frame == many.summary.frame == "shell"
        assert one.passed is many.passed is passed
        found = {f.kind: f for f in many.findings}
        assert set(found) == {f.kind for f in one.findings} == {"opposite_normals"}
        seam = sorted(found["opposite_normals"].element_ids.tolist())
        assert seam == [3, 7, 11, 15, 16, 20, 24, 28]  # column 3 of part 0, column 0 of part 1
    files, merged = _half_cylinder(tmp_path, flip_second=False)
    many = audit_parts(PartSet("shell", tuple(files)), cluster=client)
    one = meshaudit.audit(str(merged))
    assert many.findings == [] and _findings(one) == {}
    # a shell: the sizes across the cut come from a round of their own, with the same
    # result (the extremes are exact, the percentiles within the sketch's bound)
    for key in ("count", "min", "max", "past_warn", "past_fail"):
        assert many.statistics()["size_ratio"][key] == one.statistics()["size_ratio"][key]


def test_benchmark_runs_and_agrees_with_one_process(tmp_path):
    """Smoke test of benchmarks/bench_distributed.py at 2,000 quads in 2 parts (no
    timing asserted): it writes the pieces, audits them on a local cluster and in one
    process, and finds the two JSON reports in agreement."""
    import os

    from conftest import REPO

    env = dict(os.environ, PYTHONPATH=str(REPO))
    done = subprocess.run(
        [
            sys.executable,
            "-m",
            "benchmarks.bench_distributed",
            "--elements",
            "2000",
            "--parts",
            "2",
            "--out",
            str(tmp_path),
        ],
        cwd=REPO,
        env=env,
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert done.returncode == 0, done.stderr[-2000:]
    assert "same verdict, counts and findings: True" in done.stdout
    assert "| partitioned | 2,000 | 2 | 2 |" in done.stdout


def _graded_strip(folder, global_ids: bool, tilted: bool = False):
    """Two parts of 2 x 3 quads, 0.25 wide in part 0 (x in 0..0.5) and 1 wide in part 1
    (x in 0.5..2.5), 1 high: by construction the size ratio (sqrt of the area ratio) is
    sqrt(1 / 0.25) = 2 for the quads on either side of the cut x = 0.5 and 1 for the
    others; and the same strip in one file (numpy and meshio; ids = merged point index)."""
    import meshio

    xs = np.array([0.0, 0.25, 0.5, 1.5, 2.5])
    x, y = np.meshgrid(xs, np.arange(4.0))
    pts = np.stack([x.ravel(), y.ravel(), np.zeros(x.size)], axis=1)
    if tilted:  # turned 30 degrees about the x axis: a plane that is not x-y
        c, s = np.cos(np.pi / 6), np.sin(np.pi / 6)
        pts = pts @ np.array([[1.0, 0, 0], [0, c, s], [0, -s, c]])
    i, j = np.meshgrid(np.arange(4), np.arange(3))
    n0 = (j * 5 + i).ravel()
    quads = np.stack([n0, n0 + 1, n0 + 6, n0 + 5], axis=1)
    owner = i.ravel() // 2
    files = []
    for p in range(2):
        cells = quads[owner == p]
        used = np.unique(cells)
        data = {"GlobalNodeId": used} if global_ids else {}
        path = folder / f"strip_{p}.vtu"
        local = np.searchsorted(used, cells)
        meshio.write(path, meshio.Mesh(pts[used], [("quad", local)], point_data=data))
        files.append(str(path))
    merged = folder / "strip_merged.vtu"
    meshio.write(
        merged, meshio.Mesh(pts, [("quad", np.concatenate([quads[owner == p] for p in range(2)]))])
    )
    return files, merged


@pytest.mark.parametrize(("global_ids", "tilted"), [(True, False), (False, False), (True, True)])
def test_size_ratio_across_a_cut(tmp_path, client, global_ids, tilted):
    """Every element's size_ratio (read back from the per-part element reports) is the
    closed-form value of the graded strip and that of the merged file's audit (on a
    tilted plane, where the sizes take a round of their own, to rounding)."""
    import csv

    from meshaudit.mesh.parts import PartSet
    from meshaudit.outputs.part_elements import PartWriter

    files, merged = _graded_strip(tmp_path, global_ids, tilted)
    out = tmp_path / "elements"
    out.mkdir()
    many = audit_parts(
        PartSet("strip", tuple(files)), cluster=client, element_writer=PartWriter(str(out), "strip")
    )
    values = {}
    for k in range(2):
        with open(out / f"strip.part{k:05d}.csv", newline="") as fh:
            for row in csv.DictReader(fh):
                values[int(row["index"])] = float(row["size_ratio"])
    # merged order: part 0's six quads (columns 0, 1 of rows 0..2), then part 1's
    column = np.array([0, 1, 0, 1, 0, 1, 2, 3, 2, 3, 2, 3])
    expected = np.where((column == 1) | (column == 2), 2.0, 1.0)
    got = np.array([values[e] for e in range(12)])
    one = meshaudit.audit(str(merged))
    if tilted:
        assert many.summary.frame == one.summary.frame == "planar"
        assert np.allclose(got, expected, rtol=1e-12, atol=0)
        assert np.allclose(got, one.metrics["size_ratio"], rtol=1e-12, atol=0)
        return
    assert np.array_equal(got, expected)
    assert np.array_equal(got, one.metrics["size_ratio"])
    assert many.statistics()["size_ratio"] == one.statistics()["size_ratio"]


def test_columnar_element_reports_read_back(tmp_path, run_cli):
    """--elements DIR --columnar writes one Parquet file per part; read back with pyarrow
    they hold every element once, by position, with the graded strip's closed-form area
    (0.25 and 1) and size ratio (2 beside the cut, else 1), and the merged file's
    verdicts."""
    pq = pytest.importorskip("pyarrow.parquet")
    _, merged = _graded_strip(tmp_path, global_ids=True)
    out = tmp_path / "elements"
    out.mkdir()
    pattern = str(tmp_path / "strip_?.vtu")
    res = run_cli("check", "--parts", pattern, "--elements", out, "--columnar", "--quiet")
    assert res.returncode in (0, 1), res.stderr
    assert sorted(p.name for p in out.iterdir()) == [
        "strip_.part00000.parquet",
        "strip_.part00001.parquet",
        "strip_.parts.csv",
    ]
    tables = [pq.read_table(out / f"strip_.part{k:05d}.parquet").to_pydict() for k in range(2)]
    rows = {name: [v for t in tables for v in t[name]] for name in tables[0]}
    assert rows["index"] == list(range(12))
    column = np.array([0, 1, 0, 1, 0, 1, 2, 3, 2, 3, 2, 3])
    assert np.allclose(rows["area"], np.where(column < 2, 0.25, 1.0), rtol=1e-12)
    assert rows["size_ratio"] == np.where((column == 1) | (column == 2), 2.0, 1.0).tolist()
    one = meshaudit.audit(str(merged))
    assert rows["verdict"] == one.verdict_names.astype(str).tolist()


def _hexes(n: int, h: float, x0: float):
    """Points and hexahedra of an n x n x n block of cubes of side h from (x0, 0, 0);
    node (i, j, k) at index (i (n+1) + j)(n+1) + k; and each cube's i."""
    x, y, z = np.meshgrid(*(np.arange(n + 1.0),) * 3, indexing="ij")
    pts = np.stack([x0 + h * x.ravel(), h * y.ravel(), h * z.ravel()], 1)

    def idx(i, j, k):
        return (i * (n + 1) + j) * (n + 1) + k

    i, j, k = (a.ravel() for a in np.meshgrid(*(np.arange(n),) * 3, indexing="ij"))
    corners = [
        (0, 0, 0),
        (1, 0, 0),
        (1, 1, 0),
        (0, 1, 0),
        (0, 0, 1),
        (1, 0, 1),
        (1, 1, 1),
        (0, 1, 1),
    ]
    hexes = np.stack([idx(i + a, j + b, k + c) for a, b, c in corners], 1)
    return pts, hexes, i


def _solid_parts(folder, stem, pts, cells, gid):
    """Each part's hexahedra (rows of ``cells``) written with GlobalNodeId = ``gid`` of
    the points it uses, and the merged file (points by gid, cells in part order)."""
    import meshio

    files = []
    for p, c in enumerate(cells):
        used = np.unique(c)
        path = folder / f"{stem}_{p}.vtu"
        mesh = meshio.Mesh(
            pts[used],
            [("hexahedron", np.searchsorted(used, c))],
            point_data={"GlobalNodeId": gid[used]},
        )
        meshio.write(path, mesh)
        files.append(str(path))
    points = np.zeros((int(gid.max()) + 1, 3))
    points[gid] = pts
    merged = folder / f"{stem}_merged.vtu"
    meshio.write(
        merged, meshio.Mesh(points, [("hexahedron", np.concatenate([gid[c] for c in cells]))])
    )
    return files, merged


def test_crack_between_solid_parts(tmp_path, client):
    """A 4 x 4 x 4 block of cubes cut in two across x, the second part using nodes of its
    own at the 9 inner nodes of the cut (distinct ids at the places of the first part's):
    by construction each of the 16 cut faces, on either side, touches one of them, so
    32 free faces lie on other free faces at distinct nodes (crack_faces) and the 9
    places hold unmerged nodes, as in the merged file; the cut faces away from the crack
    are never free."""
    from meshaudit.mesh.parts import PartSet

    pts, hexes, i = _hexes(4, 1.0, 0.0)
    cut = np.flatnonzero((np.abs(pts[:, 0] - 2) < 1e-9) & (pts[:, 1] % 4 > 0) & (pts[:, 2] % 4 > 0))
    remap = np.arange(len(pts))
    remap[cut] = len(pts) + np.arange(cut.size)
    cells = [hexes[i < 2], remap[hexes[i >= 2]]]
    pts = np.concatenate([pts, pts[cut]])
    files, merged = _solid_parts(tmp_path, "cracked", pts, cells, np.arange(len(pts)))
    one = meshaudit.audit(str(merged))
    many = audit_parts(PartSet("cracked", tuple(files)), cluster=client)
    assert _findings(many) == _findings(one)
    counts = {f.kind: f.count for f in many.findings}
    assert counts["crack_faces"] == 32 and counts["coincident_nodes"] == 9
    assert many.passed is one.passed
    assert [r["kind"] for r in many.boundary_surfaces.records()] == [
        r["kind"] for r in one.boundary_surfaces.records()
    ]


def test_non_conforming_solid_parts(tmp_path, client):
    """A 2 x 2 x 2 block of cubes of side 2 (x in 0..4) beside a 4 x 4 x 4 block of cubes
    of side 1 (x in 4..8): on the cut x = 4 the fine part has 25 nodes, the coarse part
    9 of them, so by construction 16 fine nodes hang on the coarse faces, as in the
    merged file (nodes numbered by place)."""
    from meshaudit.mesh.parts import PartSet

    pa, ca, _ = _hexes(2, 2.0, 0.0)
    pb, cb, _ = _hexes(4, 1.0, 4.0)
    pts = np.concatenate([pa, pb])
    key = np.round(pts * 2).astype(np.int64) @ np.array([1, 100, 10_000])
    _, first, ident = np.unique(key, return_index=True, return_inverse=True)
    gid = np.argsort(np.argsort(first))[ident]
    files, merged = _solid_parts(tmp_path, "graded", pts, [ca, cb + len(pa)], gid)
    one = meshaudit.audit(str(merged))
    many = audit_parts(PartSet("graded", tuple(files)), cluster=client)
    assert _findings(many) == _findings(one)
    counts = {f.kind: f.count for f in many.findings}
    assert counts["hanging_nodes"] == 16
    assert "non_conforming_faces" in counts
    assert many.passed is one.passed


def test_parts_overlapping_each_other(tmp_path, client):
    """Two parts of 4 x 3 unit squares, the second moved to start at x = 3.5, inside the
    first (nodes of its own): by construction each of its first column's 3 squares
    covers half of the first part's last-column square in its row, 3 pairs of elements
    of different parts overlapping, as in the merged file."""
    import meshio

    from meshaudit.mesh.parts import PartSet

    def squares(x0):
        x, y = np.meshgrid(x0 + np.arange(5.0), np.arange(4.0))
        pts = np.stack([x.ravel(), y.ravel(), np.zeros(x.size)], axis=1)
        i, j = np.meshgrid(np.arange(4), np.arange(3))
        n0 = (j * 5 + i).ravel()
        return pts, np.stack([n0, n0 + 1, n0 + 6, n0 + 5], axis=1)

    (pa, qa), (pb, qb) = squares(0.0), squares(3.5)
    files = []
    for k, (p, q) in enumerate(((pa, qa), (pb, qb))):
        path = tmp_path / f"lap_{k}.vtu"
        ids = np.arange(len(p)) + k * len(pa)
        meshio.write(path, meshio.Mesh(p, [("quad", q)], point_data={"GlobalNodeId": ids}))
        files.append(str(path))
    merged = tmp_path / "lap_merged.vtu"
    meshio.write(
        merged,
        meshio.Mesh(np.concatenate([pa, pb]), [("quad", np.concatenate([qa, qb + len(pa)]))]),
    )
    one = meshaudit.audit(str(merged))
    many = audit_parts(PartSet("lap", tuple(files)), cluster=client)
    found = {f.kind: f for f in many.findings}
    assert found["overlapping_elements"].count == 3
    # row j: square (3, j) of part 0 (element 4 j + 3) over square (0, j) of part 1 (12 + 4 j)
    expected = sorted((4 * j + 3, 12 + 4 * j) for j in range(3))
    assert sorted(map(tuple, found["overlapping_elements"].pairs.tolist())) == expected
    assert _findings(many) == _findings(one)
    assert many.passed is one.passed


def test_halo_layer_of_solids_is_reported_as_duplicates(tmp_path, client):
    """A 4 x 4 x 4 block of cubes cut in two across x, the second part also holding a
    copy of the first part's layer beside the cut (16 cubes, a halo written into both
    parts, same global ids): by construction 16 duplicate solids, each the copy of a
    cube of that layer; the merged file's audit names the same pairs and both fail,
    and both see one skin of 6 x 16 faces."""
    from meshaudit.mesh.parts import PartSet

    pts, hexes, i = _hexes(4, 1.0, 0.0)
    cells = [hexes[i < 2], np.concatenate([hexes[i >= 2], hexes[i == 1]])]
    files, merged = _solid_parts(tmp_path, "halo", pts, cells, np.arange(len(pts)))
    one = meshaudit.audit(str(merged))
    many = audit_parts(PartSet("halo", tuple(files)), cluster=client)
    assert _findings(many) == _findings(one)
    pairs = {f.kind: f for f in many.findings}["duplicate_elements"].pairs.tolist()
    # layer 1 is elements 16..31 of part 0; their copies are the last 16 of part 1
    assert sorted(map(tuple, pairs)) == [(16 + k, 64 + k) for k in range(16)]
    assert many.passed is one.passed is False
    # without the copies, the faces beside them are matched again: one skin, the block's
    skins = [(r["kind"], r["faces"]) for r in many.boundary_surfaces.records()]
    assert skins == [(r["kind"], r["faces"]) for r in one.boundary_surfaces.records()]
    assert skins == [("skin", 6 * 16)]
