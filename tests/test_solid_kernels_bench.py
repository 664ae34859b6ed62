"""Smoke test of benchmarks/solid_kernels.py (no timing assertion: speed is measured, not
tested): its elements are what it promises and its command runs."""

from __future__ import annotations

import numpy as np
import pytest

from benchmarks import solid_prisms as solid_kernels


@pytest.mark.parametrize("family", sorted(solid_kernels.SPLITS))
def test_undistorted_slab_fills_its_boxes(family):
    # closed form: without jitter each box of side a is cut into elements of total volume
    # a^3 (two prisms of a^3 / 2, six pyramids of a^3 / 6), all positive and valid
    n_per_box = len(solid_kernels.SPLITS[family][1])
    x = solid_kernels.elements(family, 60 * n_per_box, jitter=0.0)
    assert x.shape[0] == 60 * n_per_box
    side = np.linalg.norm(x[0, 1] - x[0, 0])
    cell_type = solid_kernels.SPLITS[family][0]
    measure = __import__(solid_kernels.MODULES[family], fromlist=["measure"]).measure
    metrics, flags = measure(x, cell_type)
    np.testing.assert_allclose(metrics["volume"], side**3 / n_per_box, rtol=1e-12)
    assert not any(flag.any() for flag in flags.values())


def test_command_runs(capsys):
    solid_kernels.main(["--elements", "2000", "--repeat", "1"])
    out = capsys.readouterr().out
    for family in solid_kernels.SPLITS:
        assert f"{family}: 2000 elements" in out
