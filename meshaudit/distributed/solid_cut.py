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
Solids repeated in two parts (halo copies, found by global ids in :mod:`.interfaces`)
are left out, as one file leaves duplicates out: their faces go, and the faces they
shared in their part with solids that are no copies come back as those solids' faces
(:func:`_beside`), which meet the originals' faces on the other side of the cut.
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


def _beside(
    parts: Sequence[Boundary], copies: np.ndarray, keys: np.ndarray, corners: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Faces a copy shared in its part with a solid that is no copy, as uses by that
    solid ((f, 4) node numbers, its position, its number): without the copy they are
    that solid's faces toward the original's part, where the original uses them. Only
    faces some part sent as free are kept (the original's side of the cut)."""
    none = np.zeros(0, dtype=np.int64)
    link = np.concatenate([b.link_keys for b in parts])
    owner = np.concatenate([b.link_owner for b in parts])
    other = np.concatenate([b.link_other for b in parts])
    other_ids = np.concatenate([b.link_other_ids for b in parts])
    take = np.isin(owner, copies) & (other >= 0) & ~np.isin(other, copies)
    link, other, other_ids = link[take], other[take], other_ids[take]
    present = link >= 0
    at = np.minimum(np.searchsorted(keys, np.where(present, link, 0)), max(keys.size - 1, 0))
    known = keys.size > 0 and (~present | (keys[at] == link)).all(axis=1)
    if not np.any(known):
        return none.reshape(0, 4), none, none
    nodes = np.where(present, at, -1)[known]
    other, other_ids = other[known], other_ids[known]
    sent = np.sort(np.where(corners >= 0, corners, np.iinfo(np.int64).max), axis=1)
    mine = np.sort(np.where(nodes >= 0, nodes, np.iinfo(np.int64).max), axis=1)
    _, inverse = np.unique(np.concatenate([sent, mine]), axis=0, return_inverse=True)
    inverse = inverse.ravel()
    matched = np.isin(inverse[sent.shape[0] :], inverse[: sent.shape[0]])
    return nodes[matched], other[matched], other_ids[matched]


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
    copies: np.ndarray | None = None,
    keys: np.ndarray | None = None,
) -> tuple[list[Finding], BoundarySurfaces | None]:
    """The face findings of the whole mesh and its boundary surfaces (module docstring):
    ``corners`` from :func:`face_nodes`, ``rep`` (nodes,) each node's place, ``xyz`` and
    ``number`` each node's coordinates and reported number. ``copies``: positions of
    solids repeating one of another part, left out as one file leaves them out; with
    ``keys`` (the global id of each node number, ascending), the faces they shared in
    their part with a solid that is no copy are that solid's again (:func:`_beside`)."""
    if corners.shape[0] == 0:
        return [], None
    element = np.concatenate([b.face_element for b in parts])
    ids = np.concatenate([b.face_ids for b in parts])
    if copies is not None and copies.size:
        kept = ~np.isin(element, copies)
        corners, element, ids = corners[kept], element[kept], ids[kept]
        if keys is not None:
            more, owner, owner_ids = _beside(parts, copies, keys, corners)
            corners = np.concatenate([corners, more])
            element = np.concatenate([element, owner])
            ids = np.concatenate([ids, owner_ids])
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
