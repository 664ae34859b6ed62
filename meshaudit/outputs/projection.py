"""Drawing coordinates: how a planar mesh or a shell in 3-D is laid onto the page.

A planar mesh is drawn in its own plane (x-y as is for an x-y mesh). A shell surface is
drawn projected onto the best-fit plane of all its nodes (the two largest principal
directions of the node cloud), seen from the side its normal points to; faces are drawn
back to front so nearer elements cover farther ones where the projection overlaps.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..mesh.scale import length_exponent, scaled_lengths


@dataclass(frozen=True)
class View:
    """An orthographic view: page x = (p - origin) . axes[0], page y = (p - origin) . axes[1]."""

    origin: np.ndarray  # (3,)
    axes: np.ndarray  # (2, 3) unit vectors
    normal: np.ndarray  # (3,) towards the viewer
    #: Length the page counts in: 1 (the mesh's unit) unless the mesh is of extreme size
    #: (see :func:`drawing_unit`).
    unit: float = 1.0

    def project(self, points: np.ndarray) -> np.ndarray:
        """Page coordinates (..., 2) of points (..., 3), in units of :attr:`unit`. A point
        no element uses may be infinite: it projects to NaN (never drawn), quietly."""
        with np.errstate(invalid="ignore"):
            page = (points - self.origin) @ self.axes.T
            if self.unit != 1.0:
                page /= self.unit
        return page

    def depth(self, points: np.ndarray) -> np.ndarray:
        """Distance towards the viewer (larger is nearer), same leading shape as points."""
        return (points - self.origin) @ self.normal


def _orient(axes: np.ndarray) -> np.ndarray:
    """Flip principal directions so each has a positive largest component (stable views)."""
    out = axes.copy()
    for k in range(out.shape[0]):
        if out[k, np.argmax(np.abs(out[k]))] < 0:
            out[k] = -out[k]
    return out


def best_fit_view(points: np.ndarray) -> View:
    """View onto the best-fit plane of ``points`` (n, 3); x-y as is when they are flat in z.

    Worked out on the points scaled by a power of two where they are of extreme size (see
    :mod:`meshaudit.mesh.scale`), so that no sum of squares overflows; the origin is given back
    in the points' own units."""
    if len(points) < 3 or np.ptp(points[:, 2]) == 0.0:  # x-y mesh: page = model x, y
        return View(np.zeros(3), np.eye(3)[:2], np.array([0.0, 0.0, 1.0]))
    k = length_exponent(points)
    points = scaled_lengths(points, -k, 1) if k else points
    centre = points.mean(axis=0)
    sample = points if len(points) <= 200_000 else points[:: len(points) // 200_000 + 1]
    _, _, vt = np.linalg.svd(sample - centre, full_matrices=False)
    axes = _orient(vt[:2])
    normal = np.cross(axes[0], axes[1])
    return View(scaled_lengths(centre, k, 1) if k else centre, axes, normal)


def plane_view(corners: np.ndarray) -> View:
    """View onto one element's own best-fit plane; ``corners`` (k, 3) in node order.

    Page x runs along the element's first edge and the normal follows the node order, so
    the element is drawn as it is measured (a clockwise element stays clockwise in a
    planar x-y mesh because the caller passes the mesh plane instead). An element of
    extreme size is worked out at a power-of-two scale, as :func:`best_fit_view` does.
    """
    k = length_exponent(corners)
    if k:
        view = plane_view(scaled_lengths(corners, -k, 1))
        return View(scaled_lengths(view.origin, k, 1), view.axes, view.normal)
    centre = corners.mean(axis=0)
    if len(corners) == 4:
        normal = np.cross(corners[2] - corners[0], corners[3] - corners[1])
    else:
        normal = np.cross(corners[1] - corners[0], corners[2] - corners[0])
    length = np.linalg.norm(normal)
    if length == 0.0:
        return best_fit_view(corners)
    normal = normal / length
    t1 = corners[1] - corners[0]
    t1 = t1 - (t1 @ normal) * normal
    t1 = t1 / (np.linalg.norm(t1) or 1.0)
    t2 = np.cross(normal, t1)
    return View(centre, np.stack([t1, t2]), normal)


def _rotate(v: np.ndarray, axis: np.ndarray, angle: float) -> np.ndarray:
    """Rodrigues' rotation of vectors ``v`` (..., 3) about unit ``axis`` by ``angle`` rad."""
    c, s = np.cos(angle), np.sin(angle)
    return v * c + np.cross(axis, v) * s + np.outer(v @ axis, axis).reshape(v.shape) * (1 - c)


def tilted(view: View, elevation_deg: float, azimuth_deg: float) -> View:
    """An oblique view: ``view`` turned about its page x axis by ``elevation_deg`` (seen
    from above), then about the new page y axis by ``azimuth_deg``."""
    frame = np.stack([view.axes[0], view.axes[1], view.normal])
    frame = _rotate(frame, frame[0], np.radians(elevation_deg))
    frame = _rotate(frame, frame[1], np.radians(azimuth_deg))
    return View(view.origin, frame[:2], frame[2])


def flatness(points: np.ndarray, view: View) -> float:
    """Out-of-plane depth range over in-plane size: 0 for a flat set of points."""
    k = length_exponent(points)
    if k:  # a ratio: the same at a power-of-two scale, where nothing overflows
        points = scaled_lengths(points, -k, 1)
        view = View(scaled_lengths(view.origin, -k, 1), view.axes, view.normal)
    size = float(np.ptp(view.project(points), axis=0).max()) or 1.0
    return float(np.ptp(view.depth(points))) / size


def with_unit(view: View, unit: float) -> View:
    """``view`` counting its page in ``unit``."""
    return replace(view, unit=unit)


def drawing_unit(points: np.ndarray) -> float:
    """1, or for points of extreme size (beyond 2^+-200, see :mod:`meshaudit.mesh.scale`) the
    power of ten nearest their size: matplotlib cannot lay out axes on coordinates much
    below 1e-280, so such a mesh is drawn counting in this unit (the axes say so)."""
    k = length_exponent(points)
    return 1.0 if k == 0 else float(10.0 ** round(k * math.log10(2.0)))


def unit_text(view: View) -> str:
    """What the axes count in, for their labels ('' in the mesh's own unit)."""
    return "" if view.unit == 1.0 else f" (in units of {view.unit:.0e})"
