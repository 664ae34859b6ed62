"""Invalid quads on a curved shell are found in their own best-fit plane."""

from __future__ import annotations

import meshio
import numpy as np
import pytest

import meshaudit


def _cylinder_patch(radius: float = 10.0) -> tuple[np.ndarray, np.ndarray]:
    """A 6 x 4 patch of quads on a cylinder (a shell: the nodes do not share a plane)."""
    theta, z = np.meshgrid(np.linspace(0.0, 0.6, 7), np.linspace(0.0, 2.0, 5), indexing="ij")
    pts = np.column_stack(
        [radius * np.cos(theta.ravel()), radius * np.sin(theta.ravel()), z.ravel()]
    )
    idx = np.arange(len(pts)).reshape(7, 5)
    quads = np.column_stack(
        [idx[:-1, :-1].ravel(), idx[1:, :-1].ravel(), idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()]
    )
    return pts, quads


@pytest.mark.parametrize("swap", [[0, 1, 3, 2], [0, 2, 1, 3]])
def test_bowtie_on_a_curved_shell_is_self_intersecting(swap):
    # By construction: swapping two adjacent nodes of a quad makes two opposite edges cross
    # (the same test shapely's is_valid makes in the plane). Its area vector, the difference
    # of the two lobes, nearly vanishes, so the element plane comes from a least-squares fit.
    pts, quads = _cylinder_patch()
    quads[10] = quads[10][swap]
    report = meshaudit.audit(meshio.Mesh(pts, [("quad", quads)]))
    assert report.summary.frame == "shell"
    assert report.flag("self_intersecting").tolist() == [i == 10 for i in range(len(quads))]
    assert report.flag("inverted")[10]
    assert np.flatnonzero(report.verdict == 2).tolist() == [10]


def test_thin_shell_quads_keep_their_area_vector_normal():
    # A 1 x 0.01 strip bent on the cylinder: convex, so its own area vector gives the plane
    # and nothing is flagged (aspect ratio 100 is only a limit breach, not invalid).
    pts, quads = _cylinder_patch()
    pts[:, 2] *= 0.005
    report = meshaudit.audit(meshio.Mesh(pts, [("quad", quads)]))
    for flag in ("inverted", "self_intersecting", "nonconvex", "degenerate"):
        assert not report.flag(flag).any(), flag
