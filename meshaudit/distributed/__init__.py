"""Partitioned meshes audited part by part, on a Dask cluster or locally.

:func:`audit_parts` is the entry point (see :mod:`meshaudit.distributed.run`); nothing
here imports Dask until a partitioned mesh is audited.
"""

from __future__ import annotations

from .run import KEEP, audit_parts, part_set

__all__ = ["KEEP", "audit_parts", "part_set"]
