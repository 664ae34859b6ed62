"""--annotate: the mesh written back with the audit as cell data, read back through meshio."""

from __future__ import annotations

import hashlib

import meshio
import numpy as np
import pytest
from inspect_meshes import planted_plate

from meshaudit import audit_mesh
from meshaudit.metrics import METRIC_NAMES
from meshaudit.outputs import annotate
from meshaudit.results.report import FLAG_NAMES


def by_type(mesh: meshio.Mesh, name: str) -> dict[str, np.ndarray]:
    """Cell data ``name`` per cell type (meshio may merge blocks of one type on write)."""
    out: dict[str, list[np.ndarray]] = {}
    for cells, values in zip(mesh.cells, mesh.cell_data[name]):
        out.setdefault(cells.type, []).append(np.asarray(values))
    return {k: np.concatenate(v) for k, v in out.items()}


@pytest.mark.parametrize("suffix", [".vtu", ".vtk"])
def test_round_trip_equals_report_arrays(run_cli, tmp_path, suffix):
    source = tmp_path / "plate.vtu"
    meshio.write(source, planted_plate())
    digest = hashlib.sha256(source.read_bytes()).hexdigest()
    out = tmp_path / f"annotated{suffix}"
    result = run_cli("check", source, "--annotate", out, "--quiet")
    assert result.returncode == 1, result.stderr
    assert hashlib.sha256(source.read_bytes()).hexdigest() == digest  # input untouched

    report = audit_mesh(source).report
    back = meshio.read(out)  # an outside reader: meshio's own VTK/VTU parser
    n_quad = report.summary.element_counts["quad"]
    for name in METRIC_NAMES:
        got = by_type(back, name)
        np.testing.assert_array_equal(
            np.concatenate([got["quad"], got["triangle"]]), report.metrics[name], err_msg=name
        )
        assert np.isnan(got["line"]).all()  # lines are not audited
    verdict = by_type(back, "verdict")
    np.testing.assert_array_equal(
        np.concatenate([verdict["quad"], verdict["triangle"]]), report.verdict
    )
    assert (verdict["line"] == -1).all()
    bits = by_type(back, "flags")
    np.testing.assert_array_equal(
        np.concatenate([bits["quad"], bits["triangle"]]), report.flag_bits.astype(np.int64)
    )
    for flag in FLAG_NAMES:
        got = by_type(back, f"flag_{flag}")
        np.testing.assert_array_equal(
            np.concatenate([got["quad"], got["triangle"]]), report.flag(flag).astype(np.int8)
        )
        assert (got["line"] == -1).all()
    ids = by_type(back, "element_id")
    np.testing.assert_array_equal(ids["quad"][:n_quad], report.ids[:n_quad])


def test_reading_the_annotated_mesh_gives_the_same_audit(tmp_path):
    audited = audit_mesh(planted_plate())
    out = tmp_path / "a.vtu"
    annotate.render(out, audited.raw, audited.report)
    again = audit_mesh(out).report
    np.testing.assert_array_equal(again.ids, audited.report.ids)
    np.testing.assert_array_equal(again.verdict, audited.report.verdict)


def test_unsupported_extension_and_input_overwrite_refused(run_cli, tmp_path):
    source = tmp_path / "plate.vtu"
    meshio.write(source, planted_plate())
    before = source.read_bytes()
    bad = run_cli("check", source, "--annotate", tmp_path / "x.obj")
    assert bad.returncode == 2 and ".vtu or .vtk" in bad.stderr
    same = run_cli("check", source, "--annotate", source)
    assert same.returncode == 2 and "refusing to overwrite the input" in same.stderr
    assert source.read_bytes() == before
