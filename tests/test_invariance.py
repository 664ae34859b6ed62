"""Property tests: metrics do not depend on where, how large or how numbered an element is.

Common practice (a fact of the trade, no single source): a shape measure must not change
under translation, rotation, uniform scaling or a cyclic renumbering of the nodes, and
area and det J, being squared lengths, scale with the square of the length scale.
Each hypothesis example draws a seed and transform parameters and audits a few hundred
random valid quads and triangles at once.
"""

from __future__ import annotations

import meshio
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

import meshaudit
from meshaudit.metrics import METRIC_NAMES

SQUARED = ("area", "det_j_min", "det_j_max", "det_j_corner_min", "det_j_lower_bound")
DIMENSIONLESS = tuple(m for m in METRIC_NAMES if m not in SQUARED)
#: Absolute tolerances (degrees) for angle metrics that can sit at zero (skew, and the
#: warp of a flat element). Warp comes from small out-of-plane differences of coordinates
#: that a far translation of a small element rounds at ~1e-11 relative, so after
#: cancellation it keeps about 8 digits: 1e-6 degree is still far below any warp limit.
ABSOLUTE = {"skew": 1e-7, "min_angle": 1e-7, "max_angle": 1e-7, "warp": 1e-6}
#: Relative tolerance. A small element moved far from the origin keeps only ~11-12
#: significant digits in its coordinate differences, and angle-like metrics lose a few more
#: in cancellation; 1e-7 is far above that rounding and far below any formula error.
RTOL = 1e-7
MIN_ANGLE_DEG = 5.0  # keep away from near-degenerate elements


def _cross2(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    return u[..., 0] * v[..., 1] - u[..., 1] * v[..., 0]


def _well_shaped(p: np.ndarray) -> np.ndarray:
    """Counter-clockwise convex polygons (n, k, 2) whose every angle is in (5, 175) deg."""
    a = np.roll(p, -1, axis=1) - p
    b = np.roll(p, 1, axis=1) - p
    ang = np.degrees(np.arctan2(_cross2(a, b), np.einsum("nki,nki->nk", a, b)))
    return ((ang > MIN_ANGLE_DEG) & (ang < 180.0 - MIN_ANGLE_DEG)).all(axis=1)


def _random_elements(rng: np.random.Generator, n: int, k: int) -> np.ndarray:
    """Up to ``n`` valid random k-gons (k = 3 or 4) of size ~1-5 scattered over a 20 x 20 box."""
    if k == 4:
        base = np.array([[-1.0, -1.0], [1.0, -1.0], [1.0, 1.0], [-1.0, 1.0]])
    else:
        base = np.array([[1.0, 0.0], [-0.5, 0.866], [-0.5, -0.866]])
    stretch = rng.uniform(0.5, 2.5, size=(n, 1, 2))
    p = base * stretch + rng.normal(0.0, 0.35, size=(n, k, 2))
    phi = rng.uniform(0.0, 2 * np.pi, size=n)
    rot = np.stack([np.cos(phi), -np.sin(phi), np.sin(phi), np.cos(phi)], -1).reshape(n, 2, 2)
    p = np.einsum("nij,nkj->nki", rot, p) + rng.uniform(-10.0, 10.0, size=(n, 1, 2))
    return p[_well_shaped(p)]


def _rotation3(rng: np.random.Generator) -> np.ndarray:
    q, r = np.linalg.qr(rng.normal(size=(3, 3)))
    q = q * np.sign(np.diag(r))
    return q if np.linalg.det(q) > 0 else -q


def _mesh(quads: np.ndarray, tris: np.ndarray) -> tuple[np.ndarray, list[np.ndarray]]:
    """Points and the two connectivity blocks (each element with its own nodes)."""
    points = np.concatenate([quads.reshape(-1, quads.shape[-1]), tris.reshape(-1, tris.shape[-1])])
    nq = len(quads)
    return points, [
        np.arange(4 * nq).reshape(nq, 4),
        4 * nq + np.arange(3 * len(tris)).reshape(len(tris), 3),
    ]


def _metrics(points: np.ndarray, cells: list[np.ndarray]) -> dict[str, np.ndarray]:
    mesh = meshio.Mesh(points, [("quad", cells[0]), ("triangle", cells[1])])
    report = meshaudit.audit(mesh)
    assert len(report) == len(cells[0]) + len(cells[1])
    return report.metrics


def _assert_invariant(got, ref, length_scale: float = 1.0, what: str = "") -> None:
    for name in DIMENSIONLESS:
        np.testing.assert_allclose(
            got[name],
            ref[name],
            rtol=RTOL,
            atol=ABSOLUTE.get(name, 0.0),
            equal_nan=True,
            err_msg=f"{name} under {what}",
        )
    for name in SQUARED:
        np.testing.assert_allclose(
            got[name], ref[name] * length_scale**2, rtol=RTOL, err_msg=f"{name} under {what}"
        )


def _cyclic_renumbering(rng, points, cells):
    """Each element's nodes shifted cyclically by its own random amount; nodes permuted."""
    new_cells = []
    for conn in cells:
        k = conn.shape[1]
        shift = rng.integers(0, k, size=len(conn))
        order = (np.arange(k)[None, :] + shift[:, None]) % k
        new_cells.append(np.take_along_axis(conn, order, axis=1))
    perm = rng.permutation(len(points))  # new node i is old node perm[i]
    inverse = np.argsort(perm)
    return points[perm], [inverse[c] for c in new_cells]


transforms = st.fixed_dictionaries(
    {
        "seed": st.integers(0, 2**32 - 1),
        "shift": st.tuples(*[st.floats(-100.0, 100.0)] * 3),
        "angle": st.floats(0.0, 2 * np.pi),
        "log_scale": st.floats(-3.0, 3.0),
    }
)


@settings(max_examples=50, deadline=None)
@given(transforms)
def test_planar_metrics_are_invariant(t):
    """Flat quads and triangles in the x-y plane; each transform checked on its own."""
    rng = np.random.default_rng(t["seed"])
    quads, tris = _random_elements(rng, 300, 4), _random_elements(rng, 200, 3)
    points, cells = _mesh(quads, tris)
    ref = _metrics(points, cells)
    # all valid (positive det J everywhere); some may fail the profile's shape limits
    # (score 0): the generator keeps angles within (5, 175) degrees, past the fail limits
    assert np.isfinite(ref["score"]).all() and (ref["det_j_lower_bound"] > 0).all()

    _assert_invariant(_metrics(points + np.array(t["shift"][:2]), cells), ref, what="shift")

    c, s = np.cos(t["angle"]), np.sin(t["angle"])
    turned = points @ np.array([[c, s], [-s, c]])
    _assert_invariant(_metrics(turned, cells), ref, what="in-plane rotation")

    scale = 10.0 ** t["log_scale"]
    _assert_invariant(_metrics(points * scale, cells), ref, scale, what="scaling")

    _assert_invariant(_metrics(*_cyclic_renumbering(rng, points, cells)), ref, what="renumbering")

    # A rigid 3-D motion keeps the mesh planar: it is audited in its best-fit plane. One
    # that keeps the plane facing +z also keeps each element's winding as a 2-D solver
    # reading x and y sees it (a half turn about x follows a rotation that turns it over).
    flat3 = np.column_stack([points, np.zeros(len(points))])
    rot = _rotation3(rng)
    if rot[2, 2] < 0.0:
        rot = np.diag([1.0, -1.0, -1.0]) @ rot
    moved = flat3 @ rot.T + np.array(t["shift"])
    _assert_invariant(_metrics(moved, cells), ref, what="3-D rotation of the plane")


@settings(max_examples=30, deadline=None)
@given(transforms)
def test_shell_metrics_are_invariant(t):
    """Warped quads and triangles in 3-D (a shell surface, each element in its own plane)."""
    rng = np.random.default_rng(t["seed"])
    quads, tris = _random_elements(rng, 300, 4), _random_elements(rng, 200, 3)
    lift = rng.uniform(-0.15, 0.15, size=(len(quads), 4, 1))
    quads3 = np.concatenate([quads, lift], axis=-1)
    tris3 = np.concatenate([tris, rng.uniform(-1, 1, size=(len(tris), 3, 1))], axis=-1)
    points, cells = _mesh(quads3, tris3)
    ref = _metrics(points, cells)
    assert (ref["warp"][: len(quads)] > 0.1).mean() > 0.5  # really warped

    rot = _rotation3(rng)
    scale = 10.0 ** t["log_scale"]
    moved = (points @ rot.T) * scale + np.array(t["shift"])
    _assert_invariant(_metrics(moved, cells), ref, scale, what="rigid motion and scaling")
    _assert_invariant(_metrics(*_cyclic_renumbering(rng, points, cells)), ref, what="renumbering")
