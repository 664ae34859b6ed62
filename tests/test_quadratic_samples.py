"""The shipped quadratic demo meshes (samples/make_quadratic_samples.py) audit as stated.

Facts checked: the quarter-point rule (Henshell and Shaw 1975; Barsoum 1976) for the
crack-tip rosette, whose ray midside nodes sit at a quarter of the ray; arc geometry for
the curved rings (a 45-degree arc's midpoint is (1 - cos 22.5) / (2 sin 22.5) of its chord
off the chord); and one element wound against its neighbours in the flange shell.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import meshio
import numpy as np

from meshaudit import audit
from meshaudit.judge.profiles import profile_from_dict

SAMPLES = Path(__file__).resolve().parents[1] / "samples"


def _generator():
    spec = importlib.util.spec_from_file_location("gen", SAMPLES / "make_quadratic_samples.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_shipped_files_are_what_the_generator_makes():
    gen = _generator()
    for name, mesh in (
        ("bracket_crack_tip.vtu", gen.crack_tip()),
        ("bracket_flange_shell.vtu", gen.flange_shell()),
    ):
        shipped = meshio.read(SAMPLES / name)
        np.testing.assert_array_equal(shipped.points, mesh.points)
        for got, want in zip(shipped.cells, mesh.cells, strict=True):
            assert got.type == want.type
            np.testing.assert_array_equal(got.data, want.data)


def test_crack_tip_rosette_is_reported_as_quarter_point_elements():
    report = audit(SAMPLES / "bracket_crack_tip.vtu")
    tip = report.types == "triangle6"
    assert tip.sum() == 8
    assert report.flag("quarter_point")[tip].all() and not report.flag("quarter_point")[~tip].any()
    np.testing.assert_allclose(report.metrics["det_j_corner_min"][tip], 0.0, atol=1e-12)
    # Over the whole element (Bernstein bound): zero at the tip and nowhere below it, as
    # the quarter-point rule says; the curved rings certainly positive.
    assert (report.metrics["det_j_lower_bound"][tip] == 0.0).all()
    assert (report.metrics["det_j_lower_bound"][~tip] > 0.0).all()
    assert set(report.verdict_names[tip]) == {"warn"}
    assert set(report.verdict_names[~tip]) == {"ok"}
    sagitta = (1 - np.cos(np.pi / 8)) / (2 * np.sin(np.pi / 8))
    np.testing.assert_allclose(report.metrics["midside_offset_across"][~tip], sagitta, rtol=1e-9)
    # The crack faces are modelled with unmerged nodes on purpose (tip node shared): the
    # mesh-level checks see them, by construction one corner pair per ring and one crack
    # edge per ring on each face ...
    rings = len(_generator().RING_RADII)
    found = {f.kind: f for f in report.findings}
    assert set(found) == {"coincident_nodes", "crack_edges"}
    assert found["coincident_nodes"].count == rings
    assert found["crack_edges"].count == 2 * rings
    # ... and a fracture model marks them as intended in its profile.
    intended = {"findings": {"coincident_nodes": "info", "crack_edges": "info"}}
    assert audit(SAMPLES / "bracket_crack_tip.vtu", profile_from_dict(intended)).passed


def test_flange_shell_names_its_flipped_element():
    report = audit(SAMPLES / "bracket_flange_shell.vtu")
    assert report.summary.frame == "shell"
    # element index 7 of the file, the VTK cell index of a file of quad8 cells only
    assert report.ids[report.flag("flipped_normal")].tolist() == [7]
    assert not report.flag("inverted").any()
    assert (report.metrics["det_j_lower_bound"] > 0.0).all()
