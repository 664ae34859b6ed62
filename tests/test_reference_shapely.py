"""Areas, validity and convexity checked against shapely (outside reference).

shapely (GEOS) computes polygon areas by the shoelace formula, judges a polygon invalid
when its boundary crosses itself, and builds convex hulls; none of that shares code or
formulas with meshaudit's bilinear-map area and flags.
"""

from __future__ import annotations

from dataclasses import replace

import meshio
import numpy as np
import shapely

import meshaudit


def _star_polygons(rng: np.random.Generator, n: int, k: int, min_radius: float) -> np.ndarray:
    """``n`` random simple polygons with ``k`` nodes, counter-clockwise, shape (n, k, 2).

    Nodes at increasing polar angles around the origin (every gap under 170 degrees, so
    the origin sees every edge and the polygon cannot cross itself) and random radii; a
    small ``min_radius`` lets a node dip inward and make a re-entrant corner.
    """
    gaps = rng.uniform(0.3, 1.0, size=(n, k))
    gaps = gaps / gaps.sum(axis=1, keepdims=True) * 2.0 * np.pi
    ok = gaps.max(axis=1) < np.radians(170.0)
    theta = np.cumsum(gaps, axis=1)[ok] + rng.uniform(0, 2 * np.pi, size=(ok.sum(), 1))
    r = rng.uniform(min_radius, 1.0, size=theta.shape)
    scale = rng.uniform(0.1, 10.0, size=(theta.shape[0], 1, 1))
    shift = rng.uniform(-50.0, 50.0, size=(theta.shape[0], 1, 2))
    return np.stack([r * np.cos(theta), r * np.sin(theta)], axis=-1) * scale + shift


def _audit(polys: np.ndarray, cell_type: str, overlaps: bool = True):
    n, k, _ = polys.shape
    cells = np.arange(n * k).reshape(n, k)
    profile = meshaudit.BUILTIN_PROFILES["standard"]
    if not overlaps:
        severity = {**profile.findings.severity, "overlapping_elements": "off"}
        profile = replace(profile, findings=replace(profile.findings, severity=severity))
    return meshaudit.audit(meshio.Mesh(polys.reshape(-1, 2), [(cell_type, cells)]), profile)


def _shapely_polygons(polys: np.ndarray) -> np.ndarray:
    closed = np.concatenate([polys, polys[:, :1]], axis=1)
    return shapely.polygons(closed)


def test_quad_area_matches_shapely():
    """Source: shapely.area (shoelace formula) of random simple quads, convex and
    re-entrant, at scales 0.1 to 10; also when listed clockwise (area is unsigned)."""
    rng = np.random.default_rng(20)
    polys = _star_polygons(rng, 2000, 4, min_radius=0.05)
    polys = np.concatenate([polys, polys[:200, ::-1]])  # some clockwise copies
    report = _audit(polys, "quad")
    assert report.flag("nonconvex").sum() > 50  # the sample does hold re-entrant quads
    np.testing.assert_allclose(
        report.metrics["area"], shapely.area(_shapely_polygons(polys)), rtol=1e-11
    )


def test_triangle_area_matches_shapely():
    """Source: shapely.area of random triangles (any winding)."""
    rng = np.random.default_rng(21)
    polys = rng.uniform(-5.0, 5.0, size=(2000, 3, 2))
    # 2000 triangles piled on one 10 x 10 square: the overlap check refuses such a pile
    # (see tests/test_pile_ups.py), and the areas are what this test is about
    report = _audit(polys, "triangle", overlaps=False)
    np.testing.assert_allclose(
        report.metrics["area"], shapely.area(_shapely_polygons(polys)), rtol=1e-10
    )


def test_bow_tie_flag_matches_shapely_validity():
    """Source: shapely.is_valid is false exactly for the self-crossing (bow-tie) quads.

    Bow-ties are made by swapping nodes 3 and 4 of a simple quad; a swap of a
    re-entrant quad can give another simple quad, which shapely and we must both call
    valid / not self-intersecting."""
    rng = np.random.default_rng(22)
    polys = _star_polygons(rng, 3000, 4, min_radius=0.1)
    swap = rng.random(len(polys)) < 0.5
    polys[swap] = polys[swap][:, [0, 1, 3, 2]]
    valid = shapely.is_valid(_shapely_polygons(polys))
    assert (~valid).sum() > 500 and valid.sum() > 500
    report = _audit(polys, "quad")
    np.testing.assert_array_equal(report.flag("self_intersecting"), ~valid)
    assert not report.flag("degenerate").any()
    assert (report.verdict_names[~valid] == "fail").all()
    # shapely's area of a crossed ring is its shoelace value: the difference of the lobes.
    np.testing.assert_allclose(
        report.metrics["area"], shapely.area(_shapely_polygons(polys)), rtol=1e-9, atol=1e-12
    )


def test_nonconvex_flag_matches_shapely_convex_hull():
    """Source: shapely.convex_hull: a simple polygon is convex exactly when its hull has
    the polygon's own area. Quads with a corner within 1 degree of straight are left out
    (their hull excess is at rounding level and either answer is right)."""
    rng = np.random.default_rng(23)
    polys = _star_polygons(rng, 3000, 4, min_radius=0.05)
    geoms = _shapely_polygons(polys)
    assert shapely.is_valid(geoms).all()
    excess = shapely.area(shapely.convex_hull(geoms)) / shapely.area(geoms) - 1.0

    to_next = np.roll(polys, -1, axis=1) - polys
    to_prev = np.roll(polys, 1, axis=1) - polys
    cos = np.einsum("nki,nki->nk", to_next, to_prev) / (
        np.linalg.norm(to_next, axis=-1) * np.linalg.norm(to_prev, axis=-1)
    )
    clear = (cos > np.cos(np.radians(179.0))).all(axis=1)

    report = _audit(polys, "quad")
    nonconvex = report.flag("nonconvex")[clear]
    hull_convex = excess[clear] < 1e-9
    assert nonconvex.sum() > 50 and (~nonconvex).sum() > 50
    np.testing.assert_array_equal(~nonconvex, hull_convex)
