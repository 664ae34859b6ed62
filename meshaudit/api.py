"""The stage sequence: read the mesh, then audit its element arrays.

:func:`audit` returns the :class:`~meshaudit.results.report.Report`; :func:`audit_mesh`
keeps the mesh beside it, for plots, the annotated mesh and explain. The stages
themselves live in :mod:`meshaudit.mesh` (reading), :mod:`meshaudit.engine` (metrics,
verdicts and mesh-level checks, chunk by chunk) and :mod:`meshaudit.results`.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from typing import Any

from .engine.materials import MaterialSpec
from .engine.run import ProgressCallback, audit_elements
from .errors import InputError
from .judge.profiles import Profile
from .mesh.parts import is_partitioned
from .mesh.reading import load, load_with_mesh
from .results.inspection import AuditedMesh
from .results.report import Report


def audit(
    source: Any,
    profile: Profile | str | os.PathLike[str] | None = None,
    file_format: str | None = None,
    fail_on: str = "fail",
    regions: Mapping[str, Profile | str | os.PathLike[str]] | None = None,
    progress: ProgressCallback | None = None,
    workers: int | None = None,
    material: MaterialSpec = None,
) -> Report:
    """Audit a mesh file (any format meshio reads) or a ``meshio.Mesh`` in memory.

    ``progress`` (optional) is called as the stages go: see :data:`ProgressCallback`.
    ``workers``: threads, as in :func:`audit_elements`. ``material``: a
    :class:`meshaudit.Material` (or region name -> material, ``"default"`` for the rest)
    to measure the stable time step and the bending error with (see
    :mod:`meshaudit.metrics.stiffness`); without it they are not defined.
    A ``.pvtu`` path is a partitioned mesh: its pieces are audited as one mesh by
    :func:`meshaudit.distributed.audit_parts` on a local cluster (without a material).

    >>> import meshio, numpy as np
    >>> points = np.array([[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]])
    >>> mesh = meshio.Mesh(points, [("quad", [[0, 1, 2, 3]])])
    >>> report = audit(mesh)
    >>> float(report.metrics["det_j_min"][0])   # a 2b x 2h rectangle has det J = b*h
    0.5
    >>> report.passed
    True
    """
    if is_partitioned(source):  # a .pvtu: its pieces audited as one mesh
        from .distributed import audit_parts

        if material is not None:
            raise InputError(f"{source}: a partitioned mesh is audited without a material")

        return audit_parts(source, profile, fail_on, regions, file_format=file_format)
    if progress is not None:
        progress("read", 0, 0)
    mesh = load(source, file_format)
    return audit_elements(mesh, profile, fail_on, regions, progress, workers, material)


def audit_mesh(
    source: Any,
    profile: Profile | str | os.PathLike[str] | None = None,
    file_format: str | None = None,
    fail_on: str = "fail",
    regions: Mapping[str, Profile | str | os.PathLike[str]] | None = None,
    progress: ProgressCallback | None = None,
    material: MaterialSpec = None,
) -> AuditedMesh:
    """Like :func:`audit`, but keeps the mesh for plots, annotation and explain (not for
    a partitioned mesh, which is never in one process whole)."""
    if is_partitioned(source):
        raise InputError(
            f"{source}: a partitioned mesh is not read whole; audit it with meshaudit.audit "
            "or meshaudit.distributed.audit_parts"
        )
    if progress is not None:
        progress("read", 0, 0)
    raw, elements = load_with_mesh(source, file_format)
    report = audit_elements(elements, profile, fail_on, regions, progress, material=material)
    return AuditedMesh(report, elements, raw)
