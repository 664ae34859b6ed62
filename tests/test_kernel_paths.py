"""The kernels' shortcut paths against the plain definitions, on shapes that take each path.

The quad and triangle kernels give a convex, counter-clockwise element its two extreme
angles from cotangents and send every other element (clockwise, re-entrant, bow-tie,
degenerate) through a per-corner arc tangent; a flat quad's warp looks at the second
diagonal split only where the first has a collapsed triangle. The expected values here
are the textbook definitions, computed corner by corner in the test (common practice:
interior angle = atan2(det[a, b], a . b) in the element's own winding, reflex above 180).
"""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest

import meshaudit


def _interior_angles(p: np.ndarray) -> np.ndarray:
    """Interior angles (n, k) in degrees, in [0, 360), each element in its own winding."""
    a = np.roll(p, -1, axis=1) - p
    b = np.roll(p, 1, axis=1) - p
    cross = a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]
    x, y = p[..., 0], p[..., 1]
    twice_area = (x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y).sum(axis=1)
    winding = np.where(twice_area < 0.0, -1.0, 1.0)[:, None]
    ang = np.degrees(np.arctan2(winding * cross, (a * b).sum(axis=-1)))
    return np.where(ang < 0.0, ang + 360.0, ang)


def _audit(p: np.ndarray, cell: str) -> meshaudit.Report:
    n, k, _ = p.shape
    mesh = meshio.Mesh(p.reshape(-1, 2), [(cell, np.arange(n * k).reshape(n, k))])
    return meshaudit.audit(mesh)


@pytest.mark.parametrize(("cell", "k"), [("quad", 4), ("triangle", 3)])
def test_extreme_angles_match_the_definition_on_every_path(cell: str, k: int):
    """Random convex elements, the same wound clockwise, and (quads) darts with a reflex
    corner: smallest and largest interior angle as the per-corner definition gives them."""
    rng = np.random.default_rng(11)
    ring = np.stack([np.cos(np.arange(k) * 2 * np.pi / k), np.sin(np.arange(k) * 2 * np.pi / k)])
    convex = ring.T * rng.uniform(0.5, 3.0, (300, 1, 2)) + rng.normal(0.0, 0.15, (300, k, 2))
    shapes = [convex, convex[:, ::-1]]
    if k == 4:
        dart = np.array([[0.0, 0.0], [2.0, 1.0], [0.0, 0.3], [-2.0, 1.0]])
        shapes.append(dart + rng.normal(0.0, 0.05, (300, 4, 2)))
    p = np.concatenate(shapes) + rng.uniform(-50.0, 50.0, (len(shapes) * 300, 1, 2))
    angles = _interior_angles(p)
    m = _audit(p, cell).metrics
    np.testing.assert_allclose(m["min_angle"], angles.min(axis=1), rtol=1e-12, atol=1e-10)
    np.testing.assert_allclose(m["max_angle"], angles.max(axis=1), rtol=1e-12, atol=1e-10)
    if k == 4:
        assert (m["max_angle"][-300:] > 180.0).all()  # the darts really are re-entrant


def test_flat_warp_is_decided_by_the_split_that_has_an_angle():
    """Warp is the larger angle between the two triangles of either diagonal split; a split
    with a collapsed triangle has no angle (common practice, see metrics.quad.warp).
    Nodes 1, 2, 3 in a line collapse the 1-3 split's first triangle, so the 2-4 split
    decides: 0 for this flat quad. All four nodes in a line leave no split: NaN."""
    p = np.array(
        [
            [[0.0, 0.0], [1.0, 0.0], [2.0, 0.0], [1.0, 1.0]],
            [[0.0, 0.0], [1.0, 0.0], [2.0, 0.0], [3.0, 0.0]],
            [[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]],
        ]
    )
    warp = _audit(p, "quad").metrics["warp"]
    assert warp[0] == 0.0 and warp[2] == 0.0
    assert math.isnan(warp[1])
