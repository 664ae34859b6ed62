"""One XDMF file with HDF5 heavy data audited in slices of contiguous elements gives the
audit of the same file read whole, and each slice's worker reads only its rows.

The outside references: the file is written by meshio's XDMF writer (HDF5 heavy data);
the single-process audit reads it whole through meshio; the rows a slice needs are
worked out here from the connectivity read with h5py directly; the planted defects are
known by construction (:func:`partitioned_meshes.write_xdmf_plate`).
"""

from __future__ import annotations

import json

import h5py
import numpy as np
import pytest
from partitioned_meshes import plate, two_worker_client, write_xdmf_plate
from test_distributed import _findings, _loops, _not_ok, _same_numbers

import meshaudit
from meshaudit.distributed import audit_parts
from meshaudit.mesh import slices
from meshaudit.mesh.slices import XdmfSlice, read_layout, read_slice, slice_range

distributed = pytest.importorskip("distributed")

NX, NY = 24, 10


@pytest.fixture(scope="module")
def client():
    """Two workers in this process (threads), so the reads they make can be recorded."""
    with two_worker_client() as c:
        yield c


@pytest.fixture
def reads(monkeypatch):
    """Every hyperslab read, as (dataset name, first row, end row)."""
    seen: list[tuple[str, int, int]] = []
    inner = slices.hyperslab

    def recorded(dataset, first, end):
        seen.append((dataset.name, int(first), int(end)))
        return inner(dataset, first, end)

    monkeypatch.setattr(slices, "hyperslab", recorded)
    return seen


def test_slices_on_a_local_cluster_give_the_whole_file_audit(tmp_path, client, reads):
    path = write_xdmf_plate(tmp_path, NX, NY)
    one = meshaudit.audit(str(path))
    many = audit_parts(path, slices=3, cluster=client)

    assert many.passed == one.passed is False
    assert many.verdict_counts() == one.verdict_counts()
    assert many.flag_counts() == one.flag_counts()
    assert many.summary.n_points == one.summary.n_points
    assert many.summary.n_elements == one.summary.n_elements == NX * NY + 1
    _same_numbers(_not_ok(many), _not_ok(one))
    assert _findings(many) == _findings(one)
    assert _loops(many) == _loops(one)
    # by construction: a crack of 4 edges seen from both sides, 3 unmerged places, the
    # appended copy of element (row 3, column 10), element (row 5, column 1) reversed
    found = {f.kind: f for f in many.findings}
    assert found["crack_edges"].count == 8
    assert found["coincident_nodes"].count == 3
    assert found["duplicate_elements"].element_ids.tolist() == [NX * NY]
    assert found["inconsistent_winding"].element_ids.tolist() == [5 * NX + 1]

    # the workers read the connectivity only in slices, never the whole of it
    layout = read_layout(path)
    topology = {(first, end) for name, first, end in reads if name == layout.topology.dataset}
    assert topology == {slice_range(NX * NY + 1, k, 3) for k in range(3)}


def test_a_slice_reads_only_the_node_rows_its_elements_use(tmp_path, reads, monkeypatch):
    path = write_xdmf_plate(tmp_path, NX, NY)
    layout = read_layout(path)
    with h5py.File(layout.topology.file, "r") as f:  # the outside reference: h5py
        conn = f[layout.topology.dataset][()]
        n_points = f[layout.geometry.dataset].shape[0]
    monkeypatch.setattr(slices, "GAP", 0)  # no unused rows read between runs
    for k in range(4):
        reads.clear()
        mesh, rows, first = read_slice(XdmfSlice(str(path), k, 4))
        start, end = slice_range(conn.shape[0], k, 4)
        needed = np.unique(conn[start:end])
        geometry = np.concatenate(
            [np.arange(a, b) for name, a, b in reads if name == layout.geometry.dataset]
        )
        assert np.array_equal(np.sort(geometry), needed)  # each needed row once, no other
        assert needed.size < n_points / 2
        assert [(a, b) for name, a, b in reads if name == layout.topology.dataset] == [(start, end)]
        assert first == start and np.array_equal(rows, needed)
        # the slice's elements are the file's rows, on the file's coordinates
        with h5py.File(layout.geometry.file, "r") as f:
            xyz = f[layout.geometry.dataset][()]
        assert np.array_equal(rows[mesh.cells[0].data], conn[start:end])
        assert np.array_equal(mesh.points, xyz[rows])


def test_check_command_with_slices(tmp_path, run_cli):
    path = write_xdmf_plate(tmp_path, NX, NY)
    out = tmp_path / "elements"
    out.mkdir()
    args = ("--json", tmp_path / "r.json", "--quiet")
    sliced = run_cli("check", path, "--slices", "3", *args, "--elements", out)
    assert sliced.returncode == 1, sliced.stderr
    whole = run_cli("check", path, "--json", tmp_path / "s.json", "--quiet")
    assert whole.returncode == 1
    doc = json.loads((tmp_path / "r.json").read_text())
    ref = json.loads((tmp_path / "s.json").read_text())
    assert doc["counts"] == ref["counts"]
    assert [e["id"] for e in doc["elements"]] == [e["id"] for e in ref["elements"]]
    assert {f["kind"]: f["count"] for f in doc["findings"]} == {
        f["kind"]: f["count"] for f in ref["findings"]
    }
    # every element once, by its position in the file, across the three slice reports
    index = []
    for k in range(3):
        lines = (out / f"plate.part{k:05d}.csv").read_text().splitlines()[1:]
        index += [int(line.split(",")[0]) for line in lines]
    assert index == list(range(NX * NY + 1))


@pytest.mark.parametrize("trouble", ["mixed", "inline", "not xdmf", "heavy file gone"])
def test_files_that_cannot_be_sliced_are_refused_in_one_line(tmp_path, run_cli, trouble):
    import meshio

    pts = np.array([[0.0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [2, 0, 0]])
    quad = np.array([[0, 1, 2, 3]])
    path = tmp_path / "m.xdmf"
    if trouble == "mixed":  # meshio writes several cell types as a Mixed topology
        mesh = meshio.Mesh(pts, [("quad", quad), ("triangle", np.array([[1, 4, 2]]))])
        meshio.write(path, mesh, file_format="xdmf")
    elif trouble == "inline":
        meshio.write(
            path, meshio.Mesh(pts, [("quad", quad)]), file_format="xdmf", data_format="XML"
        )
    elif trouble == "not xdmf":
        path = tmp_path / "m.vtu"
        meshio.write(path, meshio.Mesh(pts, [("quad", quad)]))
    else:
        meshio.write(path, meshio.Mesh(pts, [("quad", quad)]), file_format="xdmf")
        (tmp_path / "m.h5").unlink()
    res = run_cli("check", path, "--slices", "2")
    assert res.returncode == 2
    assert len(res.stderr.strip().splitlines()) == 1 and "Traceback" not in res.stderr


def test_cell_attributes_come_sliced_with_the_elements(tmp_path):
    """A cell-centred attribute (a material number per element, written by meshio) is
    read for the slice's rows only, the rows h5py reads from the whole dataset."""
    import meshio

    pts, quads = plate(6, 4)
    material = np.arange(quads.shape[0]) % 3 + 1
    path = tmp_path / "m.xdmf"
    meshio.write(path, meshio.Mesh(pts, [("quad", quads)], cell_data={"mat": [material]}))
    layout = read_layout(path)
    assert [name for name, _ in layout.cell_attributes] == ["mat"]
    heavy = layout.cell_attributes[0][1]
    with h5py.File(heavy.file, "r") as f:
        whole = f[heavy.dataset][()]
    for k in range(3):
        mesh, _, first = read_slice(XdmfSlice(str(path), k, 3))
        start, end = slice_range(quads.shape[0], k, 3)
        assert first == start
        assert np.array_equal(mesh.cell_data["mat"][0], whole[start:end])


def test_node_rows_read_in_bounded_runs(tmp_path, reads, monkeypatch):
    """Rows read in runs: nearby rows together, no read crossing a block of SPAN rows
    (here 8), the values those of h5py's own selection of the same rows."""
    monkeypatch.setattr(slices, "SPAN", 8)
    data = np.arange(300.0).reshape(100, 3)
    with h5py.File(tmp_path / "d.h5", "w") as f:
        f["x"] = data
    rows = np.array([0, 3, 7, 8, 20, 21, 99])
    with h5py.File(tmp_path / "d.h5", "r") as f:
        got = slices.read_rows(f["x"], rows)
        expected = f["x"][rows.tolist()]  # h5py's point selection: the outside reference
    assert np.array_equal(got, expected)
    assert [(a, b) for _, a, b in reads] == [(0, 8), (8, 9), (20, 22), (99, 100)]
    assert all(a // 8 == (b - 1) // 8 for _, a, b in reads)
