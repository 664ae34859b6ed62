"""Mesh-level findings of the solids, from their face table.

The volume counterpart of the surface checks in :mod:`meshaudit.mesh_checks.findings`:
the face table (:mod:`meshaudit.mesh.faces`) plays the part of the edge table. From it:
duplicate solids, non-manifold faces (used by three or more solids), the free faces and
the surfaces they form (:mod:`.surfaces`: the skin, internal voids, cracks of unmerged
nodes), hanging nodes and non-conforming faces (:mod:`.solid_hanging`), solids inside
out relative to their neighbours (an interior face used the same way round by both of
its solids), and shell elements lying on faces of solids. The coincident-node places
come from the surface checks, which look at the solids' nodes too.

:func:`find_solid_topology` needs only the connectivity and nodes (it runs while the
elements are measured); :func:`finish_solid` adds the orientation finding, which names
for each solid whether its det J is negative (the ``inverted`` flag of the kernels).
Every finding is made in report positions.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..arrays import unique_values
from ..judge.finding_kinds import FindingSettings
from ..mesh.elements import ElementMesh
from ..mesh.faces import FaceTable, face_table, key_halves, matching_rows, same_way
from ..mesh.topology import orientation_groups
from . import duplicates
from .findings import MESSAGE_IDS, Finding, MeshFindings, _Builder, _some
from .solid_hanging import FaceInterface, face_interface
from .surfaces import BoundarySurfaces, boundary_surfaces, crack_faces


@dataclass
class SolidPart:
    """What :func:`find_solid_topology` found and :func:`finish_solid` still needs.

    ``positions`` (s,) the report positions of the solids; ``pairs`` (p, 2) solid
    positions (in the solid part) across each interior face and ``same`` (p,) whether the
    two use it the same way round, ``faces`` (p,) that face. ``whole``: ``table`` holds
    the faces of every solid (no duplicate solid was left out of it)."""

    out: _Builder
    positions: np.ndarray
    table: FaceTable
    surfaces: BoundarySurfaces
    pairs: np.ndarray
    same: np.ndarray
    faces: np.ndarray
    whole: bool = True


def find_solid_topology(
    mesh: ElementMesh,
    ids: np.ndarray,
    settings: FindingSettings,
    rep: np.ndarray,
    surface: ElementMesh | None = None,
    surface_positions: np.ndarray | None = None,
) -> SolidPart:
    """The checks of the solids of ``mesh`` (the whole mesh, ``ids`` its element numbers
    in report order) that need only connectivity and nodes. ``rep`` (n_points,) each
    node's place (coincident-node clusters); ``surface`` and ``surface_positions``: the
    mesh's surface part and its report positions, for the shells lying on solid faces."""
    solid, positions = mesh.solid_part()
    out = _Builder(mesh, ids, settings)
    copies, originals = duplicates.duplicate_elements(solid)
    if out.on("duplicate_elements") and copies.size:
        pairs = np.stack([ids[positions[originals]], ids[positions[copies]]], axis=1)
        text = ", ".join(f"{c} repeats {o}" for o, c in pairs[:MESSAGE_IDS])
        out.add(
            "duplicate_elements",
            copies.size,
            f"solid {text} (same corner nodes)",
            positions[copies],
            None,
            pairs,
        )
    keep = None
    if copies.size:
        keep = np.ones(solid.n_elements, dtype=bool)
        keep[copies] = False
    table = face_table(solid, keep)
    _non_manifold(out, table, positions)
    surfaces = _boundary(out, table, mesh.points, rep, positions, settings)
    if surface is not None and surface.n_elements and out.on("shells_on_solid_faces"):
        _shells_on_faces(out, table, surface, surface_positions, mesh.n_points)
    pairs, same, faces = _face_pairs(table)
    return SolidPart(out, positions, table, surfaces, pairs, same, faces, copies.size == 0)


def finish_solid(part: SolidPart, inverted: np.ndarray) -> tuple[list[Finding], BoundarySurfaces]:
    """The findings of the solids with the orientation finding added; ``inverted``
    (s,) bool the solids flagged ``inverted`` (negative det J somewhere), in the solid
    part's order. Returns (findings, boundary surfaces)."""
    out = part.out
    # no face used the same way round by its two solids: every patch agrees, nothing to
    # group (the grouping is the costly part)
    if out.on("inside_out_solids") and part.same.any():
        n = part.positions.size
        groups = orientation_groups(n, part.pairs[:, 0], part.pairs[:, 1], part.same)
        named = groups.flipped | groups.twisted
        if named.any():
            which = np.flatnonzero(named)
            mirrored = which[inverted[which]]
            folded = which[~inverted[which]]
            ids = out.ids[part.positions]
            parts = []
            if mirrored.size:
                parts.append(
                    f"{mirrored.size} of them inverted (negative det J: node order mirrored, "
                    f"reverse it): {_some(ids[mirrored])}"
                )
            if folded.size:
                parts.append(
                    f"{folded.size} with positive det J, so they fold over a neighbour on "
                    f"the same side of their common face (overlapping material): "
                    f"{_some(ids[folded])}"
                )
            clash = part.table.first[part.faces[part.same]]
            out.add(
                "inside_out_solids",
                which.size,
                f"{which.size} solid(s) inside out relative to their neighbours (a face "
                "they share is used the same way round by both): " + "; ".join(parts),
                part.positions[which],
                None,
                None,
                _face_sides(part.table.corners[clash]),
            )
    return out.findings, part.surfaces


def _non_manifold(out: _Builder, table: FaceTable, positions: np.ndarray) -> None:
    if not out.on("non_manifold_faces"):
        return
    faces = np.flatnonzero(table.uses >= 3)
    if faces.size == 0:
        return
    uses = np.flatnonzero(np.isin(table.face, faces))
    elements = positions[table.element[uses]]
    named = _some(out.ids[unique_values(elements)])
    out.add(
        "non_manifold_faces",
        faces.size,
        f"{faces.size} face(s) shared by more than two solids: {named}",
        elements,
        None,
        None,
        _face_sides(table.corners[table.first[faces]]),
    )


def _boundary(
    out: _Builder,
    table: FaceTable,
    points: np.ndarray,
    rep: np.ndarray,
    positions: np.ndarray,
    settings: FindingSettings,
) -> BoundarySurfaces:
    """Free faces: cracks, the non-conforming interface, the surfaces they form."""
    free = table.boundary()
    corners = table.corners[free]
    crack = crack_faces(table, free, rep)
    interface = np.zeros(free.size, dtype=bool)
    links = None
    wanted = out.on("hanging_nodes") or out.on("non_conforming_faces")
    if wanted and free.size:
        found = face_interface(corners, points, rep, settings.coincident_tolerance, crack)
        interface, links = found.interface, found.links
        _hanging(out, table, free, found, positions)
        if out.on("non_conforming_faces") and interface.any():
            rows = np.flatnonzero(interface)
            _faces_finding(
                out,
                "non_conforming_faces",
                rows.size,
                f"{rows.size} free face(s) of solids lie on other free faces without "
                "matching them (a non-conforming interface: hanging nodes, or a "
                "quadrilateral face against two triangles); not connected unless the "
                "solver ties them: solids ",
                table.element[free[rows]],
                corners[rows],
                positions,
            )
    surfaces = boundary_surfaces(table, points, free, crack, interface, links)
    if out.on("crack_faces") and crack.any():
        rows = np.flatnonzero(crack)
        _faces_finding(
            out,
            "crack_faces",
            rows.size,
            f"{rows.size} free face(s) of solids lie on other free faces (unmerged nodes "
            f"cut the part) in crack surface(s) {_some(unique_values(surfaces.surface[rows]))}: "
            "solids ",
            table.element[free[rows]],
            corners[rows],
            positions,
        )
    voids = np.flatnonzero(surfaces.kind == "void")
    if out.on("internal_voids") and voids.size:
        rows = np.flatnonzero(np.isin(surfaces.surface, voids))
        shown = "; ".join(
            f"surface {v}: {surfaces.faces[v]} faces, area {surfaces.area[v]:.6g}, "
            f"volume {abs(surfaces.volume[v]):.6g}"
            for v in voids[:MESSAGE_IDS]
        )
        _faces_finding(
            out,
            "internal_voids",
            voids.size,
            f"{voids.size} internal void(s), closed surfaces inside the part ({shown}); "
            "solids around them: ",
            table.element[free[rows]],
            corners[rows],
            positions,
        )
    return surfaces


def _faces_finding(
    out: _Builder,
    kind: str,
    count: int,
    message: str,
    owners: np.ndarray,
    corners: np.ndarray,
    positions: np.ndarray,
) -> None:
    """Add a finding about free faces ``corners`` owned by solids ``owners`` (solid-part
    positions): the message ends with the solids' numbers, the edges are the faces'
    sides."""
    elements = positions[owners]
    named = _some(out.ids[unique_values(elements)])
    out.add(kind, count, message + named, elements, None, None, _face_sides(corners))


def _hanging(
    out: _Builder,
    table: FaceTable,
    free: np.ndarray,
    found: FaceInterface,
    positions: np.ndarray,
) -> None:
    if not out.on("hanging_nodes") or found.node.size == 0:
        return
    host_elements = positions[table.element[free[found.host]]]
    nodes_ = unique_values(found.node)
    hosts = unique_values(host_elements)
    users = np.flatnonzero(np.isin(table.corners[free], nodes_).any(axis=1))
    user_elements = unique_values(positions[table.element[free[users]]])
    pairs = np.stack([out.node_numbers(found.node), out.ids[host_elements]], axis=1)
    pairs = np.unique(pairs, axis=0)
    on_edge = unique_values(found.node[found.on_edge])
    inside = nodes_.size - on_edge.size
    out.add(
        "hanging_nodes",
        nodes_.size,
        f"{nodes_.size} node(s) of solids lie on free faces of solids {_some(out.ids[hosts])} "
        f"without being their nodes ({inside} inside a face, {on_edge.size} on an edge): a "
        "non-conforming interface, not connected unless the solver ties it; the nodes are "
        f"used by solids {_some(out.ids[user_elements])}",
        np.concatenate([hosts, user_elements]),
        nodes_,
        pairs,
        _face_sides(table.corners[free[unique_values(found.host)]]),
    )


def _shells_on_faces(
    out: _Builder,
    table: FaceTable,
    surface: ElementMesh,
    surface_positions: np.ndarray | None,
    n_points: int,
) -> None:
    """Shell elements whose corners are the corners of a solid's face, or (a triangle)
    three of a quadrilateral face's four corners."""
    if table.n_faces == 0:
        return
    shell_key = duplicates.sorted_corners(surface)
    sh, sl, _ = key_halves(shell_key, n_points)
    shell_code = np.stack([sh, sl], axis=1)
    at = np.full(surface.n_elements, -1, dtype=np.int64)
    candidates = [table.key]
    faces = [np.arange(table.n_faces)]
    quads = np.flatnonzero(table.key[:, 0] >= 0)
    for skip in range(4):  # the four corner triples of each quadrilateral face
        kept = [c for c in range(4) if c != skip]
        triple = np.full((quads.size, 4), -1, dtype=np.int64)
        triple[:, 1:] = table.key[quads][:, kept]
        candidates.append(triple)
        faces.append(quads)
    key = np.concatenate(candidates)
    fh, fl, _ = key_halves(key, n_points)
    _, found, shell = matching_rows(np.stack([fh, fl], axis=1), shell_code)
    at[shell] = np.concatenate(faces)[found]
    shells = np.flatnonzero(at >= 0)
    if shells.size == 0:
        return
    interior = int(np.count_nonzero(table.uses[at[shells]] >= 2))
    where = shells if surface_positions is None else surface_positions[shells]
    out.add(
        "shells_on_solid_faces",
        shells.size,
        f"{shells.size} shell element(s) lie on faces of solids, sharing their nodes (a skin "
        f"or coating): {shells.size - interior} on the solids' boundary, {interior} between "
        f"two solids: {_some(out.ids[where])}",
        where,
    )


def _face_pairs(table: FaceTable) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(pairs (p, 2) solid positions (solid part) across each face used twice, same
    (p,) whether both use it the same way round, faces (p,) the face numbers)."""
    faces = np.flatnonzero(table.uses == 2)
    first, last = table.first[faces], table.last[faces]
    same = same_way(table.corners[first], table.corners[last])
    pairs = np.stack([table.element[first], table.element[last]], axis=1).astype(np.int64)
    return pairs, same, faces


def _face_sides(corners: np.ndarray) -> np.ndarray:
    """(e, 2) the sides of faces ``corners`` (f, 4) (in order around each face, a
    triangle's fourth -1) as node pairs, smaller node first, each once: what a plot
    draws."""
    if corners.size == 0:
        return np.zeros((0, 2), dtype=np.int64)
    ends = np.roll(corners, -1, axis=1)
    tri = corners[:, 3] < 0
    ends[tri, 2] = corners[tri, 0]
    real = np.arange(4)[None, :] < np.where(tri, 3, 4)[:, None]
    a, b = corners[real], ends[real]
    return np.unique(np.stack([np.minimum(a, b), np.maximum(a, b)], axis=1), axis=0)


def merged(found: MeshFindings, solid: list[Finding], surfaces: BoundarySurfaces) -> MeshFindings:
    """The findings of the surface elements ``found`` with those of the solids added: a
    kind both have becomes one finding (counts added, items joined, messages joined by
    "; "), the solids' own kinds follow."""
    findings = list(found.findings)
    at = {f.kind: i for i, f in enumerate(findings)}
    for f in solid:
        if f.kind not in at:
            at[f.kind] = len(findings)
            findings.append(f)
            continue
        g = findings[at[f.kind]]
        index, first = np.unique(
            np.concatenate([g.element_index, f.element_index]), return_index=True
        )
        nodes_, node_first = np.unique(np.concatenate([g.node_ids, f.node_ids]), return_index=True)
        # nodes are counted once (a node may hang on a shell's edge and a solid's face)
        count = nodes_.size if g.counts == "nodes" else g.count + f.count
        findings[at[f.kind]] = replace(
            g,
            count=count,
            element_index=index,
            element_ids=np.concatenate([g.element_ids, f.element_ids])[first],
            node_ids=nodes_,
            node_xyz=np.concatenate([g.node_xyz, f.node_xyz])[node_first],
            pairs=np.concatenate([g.pairs, f.pairs]),
            edges=np.concatenate([g.edges, f.edges]),
            edge_xyz=np.concatenate([g.edge_xyz, f.edge_xyz]),
            message=f"{g.message}; {f.message}",
        )
    return MeshFindings(findings, found.free_edges, surfaces)
