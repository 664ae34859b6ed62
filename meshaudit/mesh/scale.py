"""Meshes of any finite size: measured at a power-of-two scale where nothing overflows.

Metrics are scale-invariant, and multiplying a double by a power of two is exact (short of
overflow or underflow), so a mesh, or an element, whose coordinates are too large or too
small for the products of lengths its metrics take (a square of side 1e154 has an area
near the largest double; one of side 1e-170 an area below the smallest) is measured with
its nodes scaled by 2^-k: its dimensionless metrics are exactly those of the scaled
nodes, and its areas and det J are the scaled ones times 4^k (infinite, or 0, where the
true value lies beyond the range of a double). Ordinary meshes are measured as they are.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from ..mesh_checks.findings import MeshFindings
    from .elements import ElementMesh

#: Coordinates of magnitude 2^-SAFE_EXPONENT to 2^SAFE_EXPONENT (about 8e-31 to 1.3e30)
#: are measured as they are. The metrics multiply up to eight lengths (the warp of a quad
#: in space takes the length of a cross product of two cross products of edges), which
#: stays inside the normal range of a double (2^-1022 to 2^1024) for elements up to twice
#: that size. Beyond it coordinates are measured scaled by a power of two (see
#: :func:`length_exponent`).
SAFE_EXPONENT = 100


def length_exponent(values: np.ndarray) -> int:
    """The power of two k at which coordinates ``values`` are measured: as
    ``values * 2**-k``. 0 (as they are) when their largest magnitude is 0 or lies within
    2^-:data:`SAFE_EXPONENT` .. 2^:data:`SAFE_EXPONENT`; otherwise the k that brings it
    into [0.5, 1).

    Metrics are scale-invariant, and multiplying by a power of two is exact in binary
    floating point (short of overflow or underflow), so the dimensionless metrics of the
    scaled nodes are those of the nodes themselves, and a length^2 metric is the scaled
    one times 4^k: any finite scale of a shape gives the same metrics and verdicts.
    """
    if values.size == 0:
        return 0
    top = max(-float(values.min()), float(values.max()))
    if top == 0.0 or not np.isfinite(top) or 2.0**-SAFE_EXPONENT <= top <= 2.0**SAFE_EXPONENT:
        return 0
    return int(np.frexp(top)[1])


def element_exponents(coords: np.ndarray) -> np.ndarray:
    """:func:`length_exponent` of each element of ``coords`` (n, k, d): (n,) int."""
    top = np.abs(coords).max(axis=(1, 2))
    safe = (top == 0.0) | ((top >= 2.0**-SAFE_EXPONENT) & (top <= 2.0**SAFE_EXPONENT))
    return np.where(safe, 0, np.frexp(top)[1]).astype(np.int64)


def scaled_lengths(values: np.ndarray, exponent: int | np.ndarray, power: int) -> np.ndarray:
    """``values`` (a length to the ``power``) measured on nodes scaled by 2^-exponent,
    given back in the nodes' own units: ``values * 2**(power * exponent)``, exactly; a
    value beyond the range of a double becomes infinite (or 0), as it truly is."""
    with np.errstate(over="ignore", under="ignore"):
        return np.ldexp(values, power * np.asarray(exponent, dtype=np.int64))


def normalised(mesh: ElementMesh) -> tuple[ElementMesh, int]:
    """``mesh`` with its nodes scaled by 2^-k, and k (see :func:`length_exponent`):
    the mesh itself and 0 when its coordinates lie within the safe range. Only the
    nodes elements use decide (an orphan node far away does not)."""
    k = length_exponent(mesh.points)
    if k:
        k = length_exponent(mesh.points[mesh.used_nodes()])
    if not k:
        return mesh, 0
    with np.errstate(under="ignore"):
        points = np.ldexp(mesh.points, -k)
    return replace(mesh, points=points), k


def rescaled_findings(found: MeshFindings, exponent: int) -> MeshFindings:
    """Mesh-level findings made on nodes scaled by 2^-exponent, with their coordinates
    (and the free-edge loops' lengths and areas) back in the nodes' own units."""
    findings = [
        replace(
            f,
            node_xyz=scaled_lengths(f.node_xyz, exponent, 1),
            edge_xyz=scaled_lengths(f.edge_xyz, exponent, 1),
        )
        for f in found.findings
    ]
    free = found.free_edges
    if free is not None:
        free = replace(
            free,
            xyz=scaled_lengths(free.xyz, exponent, 1),
            loop_length=scaled_lengths(free.loop_length, exponent, 1),
            loop_area=scaled_lengths(free.loop_area, exponent, 2),
        )
    surfaces = found.surfaces
    if surfaces is not None:
        surfaces = replace(
            surfaces,
            area=scaled_lengths(surfaces.area, exponent, 2),
            volume=scaled_lengths(surfaces.volume, exponent, 3),
        )
    return replace(found, findings=findings, free_edges=free, surfaces=surfaces)
