"""Matching parts along their boundaries, on the driver, from the parts' free edges and
free faces.

Each part sends its free edges (edges one of its surface elements uses) with their end
nodes, and its solids' free faces (:class:`~meshaudit.distributed.work.Boundary`);
everything here works on those arrays alone, sorted and grouped as a whole, never
element by element.

1. **Nodes across parts.** Where every part carries global node ids, two ends with the
   same id are one node. Otherwise ends of *different* parts closer than the
   coincident-node tolerance (the relative tolerance times the shorter of their shortest
   edges) are one node: the parts are joined the way one file made of them with its
   shared nodes merged would be. Ends of one part stay distinct (an unmerged node of a
   part is found as in one file).
2. **Interface edges.** A free edge of a part used by exactly one free edge of another
   part (same two nodes) lies on the cut between parts: it is interior, never a free
   edge. One used by more than two elements across parts is a non-manifold edge.
3. **Elements repeated across parts.** Elements with a corner on a free edge of their
   part whose corner nodes are the same set as such an element of another part: the
   later one (by position) repeats the earlier; it is reported as a duplicate and its
   edges are left out of the matching, as in one file. Corners are compared by global
   node id where the parts have them (so a copy of a neighbouring part's element, a
   halo cell written into both parts, is found); without ids only corners on free
   edges can match, so a copy is found only when all corners of both elements lie on
   their parts' free edges. Solids with a corner on their part's skin are compared the
   same way, by global ids only, and left out of the face matching (:mod:`.solid_cut`).
4. **Free edges, cracks, loops.** The free edges left are the mesh's free edges. Their
   ends are grouped into places (:func:`meshaudit.mesh_checks.nodes.coincident_clusters`,
   the sweep the single-file check uses, with each end's tolerance from its part); a
   free edge joining the same two places as another is a crack edge, whether the two
   edges come from one part or two (with global ids, two parts whose nodes along the cut
   have different ids are cracked there). The free edges are chained into loops with the
   rules of :func:`meshaudit.mesh_checks.edges.free_edges`, and the single-file
   hanging-node check runs over them (hosts the free edges, candidates their ends: the
   planar rule), so a coarse part beside a finer one is a non-conforming interface.
5. **Unmerged nodes across parts** (global ids): a place holding ends of two or more
   parts with different ids is a ``coincident_nodes`` place.

6. **Solids** (:mod:`.solid_cut`): the parts' free faces on these node numbers make the
   whole mesh's face table; cut faces are interior, and the single-file face checks run
   over the faces left free (cracks, non-conforming faces and their hanging nodes,
   non-manifold faces, voids).

Not matched across parts (each part's own checks still run): overlaps between elements
of different parts, orientation patches that continue across a cut (shells and planes
containing z: each part's smaller group is flagged within the part; edges run the same
way by the elements on both sides of a cut make an ``opposite_normals`` finding naming
those elements, and a note), solids inside out relative to a neighbour in another
part, and solids repeated in two parts without global ids.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..judge.finding_kinds import FindingSettings
from ..mesh.elements import ElementBlock, ElementMesh
from ..mesh.frames import Frame
from ..mesh.topology import EdgeTable
from ..mesh_checks.edges import FreeEdges, chained, crack_flags, with_winding
from ..mesh_checks.findings import MESSAGE_IDS, Finding
from ..mesh_checks.hanging import HangingNodes, hanging_nodes
from ..mesh_checks.nodes import NodeClusters, coincident_clusters
from ..mesh_checks.surfaces import BoundarySurfaces
from .solid_cut import face_nodes, match_faces
from .work import Boundary


@dataclass
class CrossPart:
    """What the matching found: extra findings, the free edges of the whole mesh, how
    many part nodes were the same node as one of another part, and report notes."""

    findings: list[Finding]
    free: FreeEdges | None
    shared_nodes: int
    notes: list[str]
    #: the boundary surfaces of the solids of the whole mesh (None without solids)
    surfaces: BoundarySurfaces | None = None
    #: whole-mesh positions of elements repeating an element of another part
    copies: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))


def _some(values: np.ndarray) -> str:
    shown = ", ".join(str(int(v)) for v in values[:MESSAGE_IDS])
    return shown + (", ..." if values.size > MESSAGE_IDS else "")


def match_parts(
    boundaries: Sequence[Boundary | None],
    global_ids: bool,
    settings: FindingSettings,
    frame: Frame,
) -> CrossPart:
    """Match the parts' free edges (see the module docstring)."""
    parts = [b for b in boundaries if b is not None]
    if not parts:
        return CrossPart([], None, 0, [])
    part_of = np.concatenate([np.full(b.key.size, k) for k, b in enumerate(parts)])
    xyz = np.concatenate([b.xyz for b in parts])
    number = np.concatenate([b.number for b in parts])
    tol = np.concatenate([b.tolerance for b in parts])
    first = np.cumsum([0] + [b.key.size for b in parts])[:-1]
    ends = np.concatenate([b.edges + f for b, f in zip(parts, first)])
    element = np.concatenate([b.edge_element for b in parts])
    ids = np.concatenate([b.edge_ids for b in parts])
    sign = np.concatenate([b.edge_sign for b in parts])
    on_interface = np.concatenate([b.edge_interface for b in parts])
    edge_part = part_of[ends[:, 0]] if ends.size else np.zeros(0, dtype=np.int64)

    # 1. one number per node of the whole mesh
    keys = None  # the global id of each node number
    if global_ids:
        keys, node = np.unique(np.concatenate([b.key for b in parts]), return_inverse=True)
        node = node.ravel()
    else:
        node = _joined_by_place(xyz, tol, part_of)
    n_nodes = int(node.max()) + 1 if node.size else 0
    shared = int(node.size - np.unique(node).size)
    # one row per node: its first end's coordinates and number, its smallest tolerance
    head = np.full(n_nodes, node.size, dtype=np.int64)
    np.minimum.at(head, node, np.arange(node.size))
    node_xyz, node_number = xyz[head], number[head]
    node_tol = np.full(n_nodes, np.inf)
    np.minimum.at(node_tol, node, tol)
    node_parts = _span(node, part_of, part_of, n_nodes)  # parts each node has an end in

    findings: list[Finding] = []
    # 3. elements repeated across parts
    copies = _repeated(parts, first, node, global_ids, settings, findings)
    if global_ids:
        copies = np.concatenate([copies, _repeated_solids(parts, settings, findings)])
    keep = ~np.isin(element, copies)

    # 2. interface edges
    a, b = node[ends[:, 0]], node[ends[:, 1]]
    key = np.minimum(a, b) * np.int64(max(n_nodes, 1)) + np.maximum(a, b)
    _, inverse, uses = np.unique(key[keep], return_inverse=True, return_counts=True)
    count = np.zeros(key.size, dtype=np.int64)
    count[keep] = uses[inverse.ravel()]
    spans = np.zeros(key.size, dtype=bool)
    if keep.any():
        lo, hi = _span(inverse.ravel(), edge_part[keep], edge_part[keep], uses.size)
        spans[keep] = (lo != hi)[inverse.ravel()]
    notes = []
    matched = np.flatnonzero(keep & (count == 2) & spans)
    seam = matched[_same_way(a[matched], key[matched])]
    if seam.size and frame.orientation == "relative":
        notes.append(
            f"{seam.size // 2} edge(s) between parts are run the same way by the elements on "
            "both sides: their normals disagree across the cut (which side is flipped_normal "
            "is decided within each part)"
        )
        if settings.enabled("opposite_normals"):
            findings.append(
                _found(
                    settings,
                    "opposite_normals",
                    np.unique(element[seam]).size,
                    element_ids=np.unique(ids[seam]),
                    node_ids=np.unique(node_number[np.concatenate([a[seam], b[seam]])]),
                    message=f"{seam.size // 2} edge(s) between parts are run the same way by "
                    f"the elements on both sides: elements {_some(np.unique(ids[seam]))} face "
                    "against their neighbours across the cut",
                    element_index=np.unique(element[seam]),
                    edges=node_number[np.stack([a[seam], b[seam]], axis=1)],
                )
            )
    crowded = keep & (count > 2) & spans
    if crowded.any() and settings.enabled("non_manifold_edges"):
        edges_nm = np.unique(key[crowded])
        findings.append(
            _found(
                settings,
                "non_manifold_edges",
                int(edges_nm.size),
                element_ids=np.unique(ids[crowded]),
                node_ids=np.unique(node_number[np.concatenate([a[crowded], b[crowded]])]),
                message=f"{edges_nm.size} edge(s) between parts shared by more than two "
                f"elements: {_some(np.unique(ids[crowded]))}",
                element_index=np.unique(element[crowded]),
            )
        )

    # 4. the free edges of the whole mesh
    free_mask = keep & (count == 1)
    fa, fb = a[free_mask], b[free_mask]
    used = np.zeros(n_nodes, dtype=bool)
    used[fa] = used[fb] = True
    corners = face_nodes(parts, first, node)  # the solids' free faces of every part
    used[corners[corners >= 0]] = True
    places = _places(node_xyz, node_tol, np.flatnonzero(used), settings)
    crack = crack_flags(places.rep[fa], places.rep[fb], max(n_nodes, 1))
    interface = on_interface[free_mask]
    if settings.enabled("hanging_nodes"):
        hang = _hanging(fa, fb, node_xyz, places, settings, frame)
        if hang.node.size:
            interface = np.zeros(fa.size, dtype=bool)
            interface[hang.interface_uses] = True
            findings.append(
                _hanging_finding(hang, element[free_mask], ids[free_mask], node_number, settings)
            )
    free = _loops(fa, fb, element[free_mask], sign[free_mask], crack, interface, node_xyz, frame)
    if crack.any() and settings.enabled("crack_edges"):
        rows = np.flatnonzero(crack)
        loops = np.unique(free.loop[rows])
        pairs = np.stack([fa[rows], fb[rows]], axis=1)
        findings.append(
            _found(
                settings,
                "crack_edges",
                int(rows.size),
                element_ids=np.unique(ids[free_mask][rows]),
                node_ids=np.unique(node_number[pairs]),
                message=f"{rows.size} free edge(s) lie on other free edges (unmerged nodes "
                f"cut the part) in free-edge loop(s) {_some(loops)}",
                element_index=np.unique(element[free_mask][rows]),
                edges=node_number[pairs],
                edge_xyz=node_xyz[pairs],
            )
        )

    # 6. (solids) the parts' free faces matched: cut faces interior, the face checks
    face_findings, surfaces = match_faces(
        parts, corners, places.rep, node_xyz, node_number, settings, copies, keys
    )
    findings += face_findings

    # 5. unmerged nodes of different parts at one place
    if global_ids and settings.enabled("coincident_nodes") and places.members.size:
        members = places.members
        rep = places.rep[members]
        lo, hi = _span(rep, node_parts[0][members], node_parts[1][members], n_nodes)
        across = lo[rep] != hi[rep]
        if across.any():
            held = members[across]
            reps = places.rep[held]
            count_places = int(np.unique(reps).size)
            others = held[reps != held]
            pairs = np.stack([node_number[places.rep[others]], node_number[others]], axis=1)
            findings.append(
                _found(
                    settings,
                    "coincident_nodes",
                    count_places,
                    element_ids=np.zeros(0, dtype=np.int64),
                    node_ids=np.unique(node_number[held]),
                    message=f"{held.size} distinct nodes of different parts at "
                    f"{count_places} place(s), not merged: nodes "
                    f"{_some(np.unique(node_number[held]))}",
                    pairs=pairs,
                    node_xyz=node_xyz[held],
                )
            )
    return CrossPart(findings, free, shared, notes, surfaces, copies)


def _joined_by_place(xyz: np.ndarray, tol: np.ndarray, part_of: np.ndarray) -> np.ndarray:
    """Without global ids: a number per end, ends of different parts within tolerance
    sharing one (ends of one part keep numbers of their own)."""
    n = xyz.shape[0]
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    clusters = coincident_clusters(
        xyz, np.arange(n), float(tol.max()), lambda idx: tol[idx], ("crack_edges",)
    )
    rep = clusters.rep
    members = clusters.members
    # a place whose ends all belong to one part is an unmerged node of that part: kept
    lo, hi = _span(rep[members], part_of[members], part_of[members], n)
    joined = rep.copy()
    alone = members[lo[rep[members]] == hi[rep[members]]]
    joined[alone] = alone
    _, number = np.unique(joined, return_inverse=True)
    return number.ravel()


def _hanging(
    a: np.ndarray,
    b: np.ndarray,
    xyz: np.ndarray,
    places: NodeClusters,
    settings: FindingSettings,
    frame: Frame,
) -> HangingNodes:
    """The single-file hanging-node check (:func:`meshaudit.mesh_checks.hanging.hanging_nodes`)
    over the free edges ``a`` -> ``b`` of the whole mesh: hosts are the free edges and
    the candidates their ends, the planar rule (on a shell the parts' own checks add the
    other corner nodes). Each free edge stands as an element of its own, a triangle
    (a, b, b) with no midside node, so hosts are straight: a curved quadratic side is
    taken as its chord here."""
    m = a.size
    order = np.sort(np.stack([a, b], axis=1), axis=1)
    table = EdgeTable(
        start=a,
        end=b,
        element=np.arange(m),
        local=np.zeros(m, dtype=np.int8),
        edge=np.arange(m),
        nodes=order,
        uses=np.ones(m, dtype=np.int64),
    )
    edges_as_elements = ElementMesh(
        points=xyz,
        blocks=[ElementBlock("triangle", np.stack([a, b, b], axis=1), np.arange(m), np.arange(m))],
    )
    return hanging_nodes(
        edges_as_elements, table, places.rep, settings.coincident_tolerance, False, np.arange(m)
    )


def _hanging_finding(
    hang: HangingNodes,
    element: np.ndarray,
    ids: np.ndarray,
    number: np.ndarray,
    settings: FindingSettings,
) -> Finding:
    """The ``hanging_nodes`` finding of :func:`_hanging` (rows of free edges mapped to
    their elements), worded as the single-file check words it."""
    hosts = np.unique(ids[hang.host_element[:, 1]])
    users = np.unique(ids[hang.users])
    nodes = hang.nodes
    involved = np.unique(element[hang.elements])
    return _found(
        settings,
        "hanging_nodes",
        int(nodes.size),
        element_ids=np.unique(ids[hang.elements]),
        node_ids=number[nodes],
        message=f"{nodes.size} node(s) inside free edges of elements {_some(hosts)} without "
        "being their nodes: a non-conforming interface, not connected unless the solver "
        f"ties it; the nodes are used by elements {_some(users)}",
        element_index=involved,
        pairs=np.stack([number[hang.host_element[:, 0]], ids[hang.host_element[:, 1]]], axis=1),
        edges=number[hang.edges],
        node_xyz=np.zeros((0, 3)),
    )


def _found(settings: FindingSettings, kind: str, count: int, **fields: Any) -> Finding:
    """A finding of ``kind`` at its severity under ``settings``."""
    return Finding(kind=kind, severity=settings.severity[kind], count=int(count), **fields)


def _span(
    group: np.ndarray, low: np.ndarray, high: np.ndarray, n: int
) -> tuple[np.ndarray, np.ndarray]:
    """(n,) least of ``low`` and greatest of ``high`` over the items of each group
    (``group`` (k,) in 0..n-1): which parts a group spans."""
    lo = np.full(n, np.iinfo(np.int64).max)
    hi = np.full(n, -1)
    np.minimum.at(lo, group, low)
    np.maximum.at(hi, group, high)
    return lo, hi


def _places(
    xyz: np.ndarray, tol: np.ndarray, candidates: np.ndarray, settings: FindingSettings
) -> NodeClusters:
    """Distinct nodes of the whole mesh at one place (free-edge ends only)."""
    on = [k for k in ("crack_edges", "crack_faces", "coincident_nodes") if settings.enabled(k)]
    if candidates.size < 2 or not on:
        return NodeClusters.none(xyz.shape[0])
    finite = np.where(np.isfinite(tol), tol, 0.0)
    return coincident_clusters(
        xyz, candidates, float(finite[candidates].max()), lambda idx: finite[idx], tuple(on)
    )


def _same_way(a: np.ndarray, key: np.ndarray) -> np.ndarray:
    """Positions of the uses of matched edges (each ``key`` twice) whose two elements
    run them from the same node ``a``: both uses of each such edge."""
    if key.size == 0:
        return np.zeros(0, dtype=np.int64)
    order = np.argsort(key, kind="stable")
    first, second = order[0::2], order[1::2]
    same = a[first] == a[second]
    return np.sort(np.concatenate([first[same], second[same]]))


def _repeated(
    parts: Sequence[Boundary],
    first: np.ndarray,
    node: np.ndarray,
    global_ids: bool,
    settings: FindingSettings,
    findings: list[Finding],
) -> np.ndarray:
    """Elements at part boundaries repeating an element of another part (same corner
    nodes in any order); adds the finding; returns the copies' positions."""
    rows, index, ids, part = [], [], [], []
    for k, (b, f) in enumerate(zip(parts, first)):
        c = b.rim_corners[:, :4]
        if global_ids:
            rows.append(np.sort(b.rim_corners[:, 4:], axis=1))
            index.append(b.rim_index)
            ids.append(b.rim_ids)
            part.append(np.full(b.rim_index.size, k))
            continue
        inside = c >= 0
        mapped = np.where(inside, node[np.where(inside, c, 0) + f], -1)
        # a corner not on a free edge cannot be another part's node: a key of its own
        mapped = np.where(c < -1, -(k + 1) * (1 << 40) + c, mapped)
        rows.append(np.sort(mapped, axis=1))
        index.append(b.rim_index)
        ids.append(b.rim_ids)
        part.append(np.full(b.rim_index.size, k))
    return _copies(
        np.concatenate(rows),
        np.concatenate(index),
        np.concatenate(ids),
        np.concatenate(part),
        settings,
        findings,
        "element",
    )


def _repeated_solids(
    parts: Sequence[Boundary], settings: FindingSettings, findings: list[Finding]
) -> np.ndarray:
    """Solids at the parts' skins repeating a solid of another part (same corner ids in
    any order: a halo copy written into both parts; parts with global ids only); adds
    the finding; returns the copies' positions."""
    rows = [b.solid_corners for b in parts]
    if sum(r.shape[0] for r in rows) < 2:
        return np.zeros(0, dtype=np.int64)
    return _copies(
        np.concatenate(rows),
        np.concatenate([b.solid_index for b in parts]),
        np.concatenate([b.solid_ids for b in parts]),
        np.concatenate([np.full(b.solid_index.size, k) for k, b in enumerate(parts)]),
        settings,
        findings,
        "solid",
    )


def _copies(
    corners: np.ndarray,
    index: np.ndarray,
    ids: np.ndarray,
    part: np.ndarray,
    settings: FindingSettings,
    findings: list[Finding],
    what: str,
) -> np.ndarray:
    """Rows of equal ``corners`` ((r, c) keys) of elements at ``index`` (numbers
    ``ids``, in ``part``): the later ones copies of the first, reported when no earlier
    element of its group is in its own part (those the part's own check found)."""
    if corners.shape[0] < 2:
        return np.zeros(0, dtype=np.int64)
    order = np.lexsort((index, *corners.T[::-1]))
    corners, index, ids, part = corners[order], index[order], ids[order], part[order]
    same = np.concatenate([[False], (corners[1:] == corners[:-1]).all(axis=1)])
    group = np.cumsum(~same) - 1
    lead = np.flatnonzero(~same)
    # a copy is reported here when no earlier element of its group is in its own part
    # (those its part's own check has found); the original is the group's first
    later = np.flatnonzero(same)
    earlier_same_part = np.zeros(later.size, dtype=bool)
    for k in range(int(part.max()) + 1):  # parts, not elements
        mine = part == k
        seen = np.maximum.accumulate(np.where(mine, np.arange(part.size), -1))
        prev = np.concatenate([[-1], seen[:-1]])
        earlier_same_part |= mine[later] & (prev[later] >= lead[group[later]])
    copies = later[~earlier_same_part]
    if copies.size and settings.enabled("duplicate_elements"):
        originals = lead[group[copies]]
        pairs = np.stack([ids[originals], ids[copies]], axis=1)
        text = ", ".join(f"{c} repeats {o}" for o, c in pairs[:MESSAGE_IDS])
        findings.append(
            _found(
                settings,
                "duplicate_elements",
                int(copies.size),
                element_ids=np.sort(ids[copies]),
                node_ids=np.zeros(0, dtype=np.int64),
                message=f"{what} {text}",
                element_index=np.sort(index[copies]),
                pairs=pairs,
            )
        )
    return index[copies]


def _loops(
    a: np.ndarray,
    b: np.ndarray,
    element: np.ndarray,
    sign: np.ndarray,
    crack: np.ndarray,
    on_interface: np.ndarray,
    xyz: np.ndarray,
    frame: Frame,
) -> FreeEdges:
    """The free edges chained into loops (:func:`meshaudit.mesh_checks.edges.chained`),
    classed by winding on a planar mesh (``sign`` per edge: its element's winding)."""
    free = chained(a, b, np.arange(a.size), crack, on_interface, xyz)
    if frame.kind == "planar" and frame.normal is not None and a.size:
        free = with_winding(free, xyz, sign.astype(np.float64), frame.normal)
    return replace(free, element=element)
