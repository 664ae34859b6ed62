"""A quad whose two diagonal corners are at the same place is collapsed: degenerate, fail.

Reference: shapely, a general-purpose geometry library, gives such an outline (a, b, a, c)
zero area (two spikes from a, no interior); two corners at one place collapse an element
(common practice). 1,008 random quads per case: both diagonals, in the plane and in
space, corners exactly together or 1e-12 of the longest edge apart (within the relative
tolerance 1e-9 of the README), linear quads and straight-sided quad8.
"""

from __future__ import annotations

from dataclasses import replace

import meshio
import numpy as np
import pytest
import shapely

import meshaudit

N = 1008


def _collapsed(rng: np.random.Generator, diagonal: int, flat: bool, gap: float) -> np.ndarray:
    """N quads (N, 4, 3): corners ``diagonal`` and ``diagonal + 2`` at one place (``gap``
    times the longest edge apart), the other two anywhere; sizes from 1e-3 to 1e3."""
    size = 10.0 ** rng.uniform(-3, 3, size=(N, 1))
    a, b, c = (rng.normal(size=(N, 3)) * size for _ in range(3))
    if flat:
        a[:, 2] = b[:, 2] = c[:, 2] = 0.0
    quads = np.empty((N, 4, 3))
    quads[:, diagonal] = a
    quads[:, diagonal + 2] = a
    quads[:, (diagonal + 1) % 4] = b
    quads[:, (diagonal + 3) % 4] = c
    if gap:
        longest = np.linalg.norm(np.roll(quads, -1, axis=1) - quads, axis=2).max(axis=1)
        direction = rng.normal(size=(N, 3))
        if flat:
            direction[:, 2] = 0.0
        direction /= np.linalg.norm(direction, axis=1, keepdims=True)
        quads[:, diagonal + 2] += gap * longest[:, None] * direction
    return quads


#: The quads are random and piled on one another: the overlap check refuses such a pile
#: (it is not what this test is about), so it is off.
_PROFILE = meshaudit.BUILTIN_PROFILES["standard"]
_PROFILE = replace(
    _PROFILE,
    findings=replace(
        _PROFILE.findings,
        severity={**_PROFILE.findings.severity, "overlapping_elements": "off"},
    ),
)


def _audit(quads: np.ndarray, quadratic: bool) -> meshaudit.Report:
    points = quads.reshape(-1, 3)
    cells = np.arange(points.shape[0]).reshape(-1, 4)
    if not quadratic:
        return meshaudit.audit(meshio.Mesh(points, [("quad", cells)]), _PROFILE)
    mids = 0.5 * (quads + np.roll(quads, -1, axis=1))  # straight sides
    points = np.concatenate([points, mids.reshape(-1, 3)])
    mid_cells = len(quads) * 4 + np.arange(len(quads) * 4).reshape(-1, 4)
    return meshaudit.audit(
        meshio.Mesh(points, [("quad8", np.hstack([cells, mid_cells]))]), _PROFILE
    )


@pytest.mark.parametrize("quadratic", [False, True], ids=["quad", "quad8"])
@pytest.mark.parametrize("gap", [0.0, 1e-12], ids=["together", "1e-12 apart"])
@pytest.mark.parametrize("flat", [True, False], ids=["planar", "space"])
@pytest.mark.parametrize("diagonal", [0, 1], ids=["corners 1-3", "corners 2-4"])
def test_diagonal_corners_together_are_degenerate(diagonal, flat, gap, quadratic) -> None:
    rng = np.random.default_rng(1008 + 10 * diagonal + 2 * flat + int(gap > 0) + 4 * quadratic)
    quads = _collapsed(rng, diagonal, flat, gap)
    if flat and gap == 0.0:  # the outside reference: no area at all
        areas = shapely.area(shapely.polygons(quads[:, :, :2]))
        assert np.all(areas == 0.0)
    report = _audit(quads, quadratic)
    assert report.flag("degenerate").all()
    assert (report.verdict_names == "fail").all()
    assert (report.score == 0.0).all()
