"""The measuring frame of a partitioned mesh, decided from the parts' summaries.

The rule is that of :func:`meshaudit.mesh.frames.choose_frame` for one file, applied to
the nodes of all parts: planar when every node the surface elements use lies within
``PLANAR_TOLERANCE`` x the extent (plus ``ROUNDING`` x the largest coordinate) of the
nodes' least-squares plane, else a shell. When the used nodes of every part share one z
(the usual 2-D model), the frame is x-y, exactly as for one file. Otherwise the plane
comes from the merged moments of the parts (centre and scatter matrix, combined with the
parallel-axis rule) instead of the singular value decomposition of the nodes: the same
plane up to rounding, so metrics of a tilted planar mesh may differ from the single-file
audit in the last few digits. The distances from that plane are then measured on each
part (:func:`meshaudit.distributed.work.plane_check`).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace

import numpy as np

from ..mesh.frames import PLANAR_TOLERANCE, ROUNDING, SOLID_FRAME, XY_FRAME, Frame, _plane_axes
from .work import Survey

#: ``check(centre, normal)`` -> per part (deviation, trace low, trace high).
PlaneCheck = Callable[[np.ndarray, np.ndarray], Sequence[tuple[float, float, float]]]


def whole_frame(surveys: Sequence[Survey], check: PlaneCheck) -> Frame:
    """The frame of the mesh the ``surveys`` describe (module docstring)."""
    has_solids = any(s.has_solids for s in surveys)
    full = [s for s in surveys if s.count]
    if not full:
        return SOLID_FRAME
    low = np.min([s.low for s in full], axis=0)
    high = np.max([s.high for s in full], axis=0)
    xy = replace(XY_FRAME, beside_solids=has_solids)
    if low[2] == high[2]:
        return xy
    n = sum(s.count for s in full)
    centre = sum(s.centre * s.count for s in full) / n
    scatter = sum(
        s.scatter + s.count * np.outer(s.centre - centre, s.centre - centre) for s in full
    )
    _, vectors = np.linalg.eigh(scatter)
    normal = vectors[:, 0]  # smallest principal direction
    extent = float((high - low).max())
    tolerance = PLANAR_TOLERANCE * extent + ROUNDING * max(s.magnitude for s in full)
    checks = check(centre, normal)
    deviation = max(c[0] for c in checks)
    if deviation > tolerance:
        return Frame("shell", flatness=deviation / extent, fit_normal=normal)
    across = float(np.hypot(normal[0], normal[1]))
    trace = max(c[2] for c in checks) - min(c[1] for c in checks)
    vertical = across > 0.5 and trace <= tolerance
    if vertical:
        normal = np.array([normal[0], normal[1], 0.0]) / across
        if normal[np.argmax(np.abs(normal))] < 0.0:
            normal = -normal
    elif normal[2] < 0.0:
        normal = -normal
    return Frame("planar", normal, _plane_axes(normal), vertical=vertical, beside_solids=has_solids)
