"""Solids across part cuts: the parts' free faces matched into the free faces of the
whole mesh, and the single-file face checks run over them (on the driver).

Each part sends its solids' free faces (:class:`~meshaudit.distributed.work.Boundary`:
corners in outward order, on the part's boundary nodes). With every node numbered once
for the whole mesh (:func:`meshaudit.distributed.interfaces.match_parts`), the faces of
all parts make one face table (:func:`meshaudit.mesh.faces.table_of_uses`): a face two
parts use, once each, is interior (a cut face is never free); a face three or more use
is a ``non_manifold_faces`` face. The faces used once are the whole mesh's free faces,
and over them the checks of one file run as they are
(:func:`meshaudit.mesh_checks.solid_findings._boundary`): faces on other free faces at
distinct nodes are ``crack_faces`` (two parts whose nodes on the cut carry different
ids are cracked there), free faces lying on others without matching them are
``non_conforming_faces`` with their ``hanging_nodes``, and the surfaces they form (skins,
``internal_voids``, cracks) are those of the whole mesh. The parts' own findings of
these kinds are replaced by these (:func:`meshaudit.distributed.report.merged_findings`).
Solids repeated in two parts (halo copies) are reported as duplicates
(:mod:`.interfaces`), but their faces stay in the table as given: the faces beside a halo
layer are not matched again (see the README).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np

from ..judge.finding_kinds import FindingSettings
from ..mesh.elements import ElementMesh
from ..mesh.faces import table_of_uses
from ..mesh.labels import IN_MEMORY
from ..mesh_checks.findings import Finding, _Builder
from ..mesh_checks.solid_findings import _boundary, _non_manifold
from ..mesh_checks.surfaces import BoundarySurfaces
from .work import Boundary

#: Kinds the parts find on their own free faces and the driver finds again over the
#: whole mesh's (the parts' own are dropped).
REDONE = ("crack_faces", "non_conforming_faces", "internal_voids", "hanging_nodes")


def face_nodes(parts: Sequence[Boundary], first: np.ndarray, node: np.ndarray) -> np.ndarray:
    """(f, 4) the parts' free faces on the whole mesh's node numbers (-1 padded)."""
    rows = [
        np.where(b.faces >= 0, node[np.maximum(b.faces, 0) + f], -1) for b, f in zip(parts, first)
    ]
    return np.concatenate(rows) if rows else np.zeros((0, 4), dtype=np.int64)


def match_faces(
    parts: Sequence[Boundary],
    corners: np.ndarray,
    rep: np.ndarray,
    xyz: np.ndarray,
    number: np.ndarray,
    settings: FindingSettings,
) -> tuple[list[Finding], BoundarySurfaces | None]:
    """The face findings of the whole mesh and its boundary surfaces (module docstring):
    ``corners`` from :func:`face_nodes`, ``rep`` (nodes,) each node's place, ``xyz`` and
    ``number`` each node's coordinates and reported number."""
    if corners.shape[0] == 0:
        return [], None
    element = np.concatenate([b.face_element for b in parts])
    ids = np.concatenate([b.face_ids for b in parts])
    # the solids on these faces, numbered 0..e-1 here (positions: their whole-mesh ones)
    positions, compact = np.unique(element, return_inverse=True)
    compact = compact.ravel()
    solid_ids = np.zeros(positions.size, dtype=np.int64)
    solid_ids[compact] = ids
    table = table_of_uses(corners, compact, np.zeros(compact.size, dtype=np.int8), xyz.shape[0])
    nodes_only = ElementMesh(
        points=xyz, blocks=[], numbering=replace(IN_MEMORY, node_labels=number)
    )
    out = _Builder(nodes_only, solid_ids, settings)
    here = np.arange(positions.size)
    _non_manifold(out, table, here)
    surfaces = _boundary(out, table, xyz, rep, here, settings)
    findings = [replace(f, element_index=positions[f.element_index]) for f in out.findings]
    return findings, surfaces
