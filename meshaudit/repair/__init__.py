"""Repairs of what the audit finds, without moving the geometry the analyst drew.

One module per repair, pure functions over arrays: :mod:`.reverse` (reversed elements,
bow-tie quads), :mod:`.merge` (coincident nodes), :mod:`.duplicates` (duplicate
elements, orphan nodes), :mod:`.fixed` (the nodes that never move), :mod:`.smooth` and
:mod:`.objective` (node moves); :mod:`.working` holds the mesh being repaired and
:mod:`.run` the sequence, :func:`repair`.
"""

from __future__ import annotations

from .run import Repair, RepairOptions, repair

__all__ = ["Repair", "RepairOptions", "repair"]
