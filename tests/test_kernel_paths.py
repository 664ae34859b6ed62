"""The kernels' shortcut paths against the plain definitions, on shapes that take each path.

The quad and triangle kernels give a convex, counter-clockwise element its two extreme
angles from cotangents and send every other element (clockwise, re-entrant, bow-tie,
degenerate) through a per-corner arc tangent; a flat quad's warp looks at the second
diagonal split only where the first split's triangles do not both have area of one sign.
The expected values here are the textbook definitions, computed corner by corner in the
test (common practice: interior angle = atan2(det[a, b], a . b) in the element's own
winding, reflex above 180; warp as defined in meshaudit.metrics.quad.warp).
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


def _fold_angles(p3: np.ndarray) -> np.ndarray:
    """Warp by its definition, element by element (common practice, see
    metrics.quad.warp): fold angle of each diagonal split between the triangles' normals
    in the element's own winding; the larger of the splits whose triangles both face
    along the element's area vector (n . N >= 0), else the larger of both."""
    out = []
    for x1, x2, x3, x4 in p3:
        normal = np.cross(x3 - x1, x4 - x2)
        angles, counts = [], []
        for a, b in (((x1, x2, x3), (x1, x3, x4)), ((x2, x3, x4), (x2, x4, x1))):
            na = np.cross(a[1] - a[0], a[2] - a[0])
            nb = np.cross(b[1] - b[0], b[2] - b[0])
            angles.append(math.degrees(math.atan2(np.linalg.norm(np.cross(na, nb)), na @ nb)))
            counts.append(na @ normal >= 0 and nb @ normal >= 0)
        counted = [a for a, c in zip(angles, counts) if c]
        out.append(max(counted) if counted else max(angles))
    return np.array(out)


def test_flat_warp_takes_the_definition_on_both_paths():
    """A flat quad reads 0 unless it crosses itself (180: its lobes face apart); a
    collapsed triangle folds nothing, so no shape reads NaN. The same shapes in a plane
    z = c (the flat shortcut) and tilted out of x-y (the general path)."""
    shapes = np.array(
        [
            [[0.0, 0.0], [1.0, 0.0], [2.0, 0.0], [1.0, 1.0]],  # nodes 1, 2, 3 in a line
            [[0.0, 0.0], [1.0, 0.0], [2.0, 0.0], [3.0, 0.0]],  # all in a line
            [[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]],  # square
            [[0.0, 0.0], [0.0, 1.0], [1.0, 1.0], [1.0, 0.0]],  # square, clockwise
            [[0.0, 0.0], [2.0, 1.0], [0.0, 0.3], [-2.0, 1.0]],  # dart
            [[-2.0, 1.0], [0.0, 0.3], [2.0, 1.0], [0.0, 0.0]],  # dart, clockwise
            [[0.0, 0.0], [1.0, 1.0], [1.0, 0.0], [0.0, 1.0]],  # bow-tie, lobes cancel
            [[0.0, 0.0], [2.0, 2.0], [2.0, 0.0], [0.0, 1.0]],  # bow-tie, one lobe larger
            [[0.0, 0.0], [1.0, 0.0], [1.0, 0.0], [0.0, 1.0]],  # collapsed edge
            [[0.0, 0.0], [1.0, 0.0], [0.0, 0.0], [0.0, 1.0]],  # corners 1 and 3 together
            [[2.0, 2.0], [2.0, 2.0], [2.0, 2.0], [2.0, 2.0]],  # a point
        ]
    )
    flat3 = np.concatenate([shapes, np.full((*shapes.shape[:2], 1), 4.0)], axis=-1)
    expected = _fold_angles(flat3)
    assert expected.tolist() == [0, 0, 0, 0, 0, 0, 180, 180, 0, 180, 0]
    warp = _audit(shapes, "quad").metrics["warp"]
    assert warp.tolist() == expected.tolist()
    c, s = math.cos(0.4), math.sin(0.4)
    tilted = flat3 @ np.array([[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]]).T
    n = len(tilted)
    mesh = meshio.Mesh(tilted.reshape(-1, 3), [("quad", np.arange(4 * n).reshape(n, 4))])
    np.testing.assert_allclose(meshaudit.audit(mesh).metrics["warp"], expected, atol=1e-9)
