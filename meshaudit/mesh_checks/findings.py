"""Mesh-level findings: defects no single element shows (unmerged nodes and the cracks
they open, hanging nodes of non-conforming interfaces, orphan nodes, duplicate and
overlapping elements, inconsistent orientation, non-manifold edges).

:func:`find` runs every enabled check of :mod:`meshaudit.mesh_checks` on the element
arrays and returns the findings (only kinds that occur: a clean mesh has none) plus the
free-edge loops. Each finding names elements and nodes by the numbers every report uses
(:mod:`meshaudit.mesh.labels`: the file's own labels where it has them) and carries plain
arrays a plot can draw: element positions, node coordinates, edge end coordinates.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from functools import partial
from typing import Any

import numpy as np

from ..arrays import unique_values
from ..judge.finding_kinds import KIND_INFO, FindingSettings
from ..mesh.elements import ElementMesh
from ..mesh.faces import SolidEdges
from ..mesh.frames import Frame
from ..mesh.topology import EdgeTable, edge_table
from . import duplicates, edges, hanging, nodes, overlap
from .orientation import Orientation, describe, judge

#: How many ids a finding's message names.
MESSAGE_IDS = 8


def _empty_int(*shape: int) -> np.ndarray:
    return np.zeros(shape or (0,), dtype=np.int64)


@dataclass(frozen=True, eq=False)
class Finding:
    """One kind of mesh-level defect and everything involved in it.

    ``element_index`` are 0-based audited-element positions (rows of the report
    arrays), ``element_ids`` the same elements' numbers. ``node_ids`` are the nodes'
    numbers (the file's node labels where it has them, see :mod:`meshaudit.mesh.labels`).
    ``pairs`` (k, 2) pair up the items the finding is about (for coincident nodes, node
    numbers: each node of a place with the place's representative, k - 1 rows for k
    nodes at one place; element numbers for duplicates and overlaps, hanging node number and host
    element number for hanging nodes), ``edges`` (m, 2) the node
    numbers of the edges involved. For drawing: ``edge_xyz`` (m, 2, 3) and ``node_xyz``
    (n, 3) the coordinates of those edges and nodes.
    """

    kind: str
    severity: str  # "info", "warn" or "fail"
    count: int  # see finding_kinds.KIND_INFO[kind].counts
    element_ids: np.ndarray
    node_ids: np.ndarray
    message: str
    element_index: np.ndarray = field(default_factory=_empty_int)
    pairs: np.ndarray = field(default_factory=lambda: _empty_int(0, 2))
    edges: np.ndarray = field(default_factory=lambda: _empty_int(0, 2))
    node_xyz: np.ndarray = field(default_factory=lambda: np.zeros((0, 3)))
    edge_xyz: np.ndarray = field(default_factory=lambda: np.zeros((0, 2, 3)))

    @property
    def counts(self) -> str:
        return KIND_INFO[self.kind].counts

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "severity": self.severity,
            "count": self.count,
            "counts": self.counts,
            "element_ids": self.element_ids.tolist(),
            "node_ids": self.node_ids.tolist(),
            "pairs": self.pairs.tolist(),
            "edges": self.edges.tolist(),
            "message": self.message,
        }


@dataclass
class MeshFindings:
    findings: list[Finding]
    free_edges: edges.FreeEdges | None
    #: the solids' free faces grouped into surfaces (None without solids)
    surfaces: Any = None


def at_report_positions(found: MeshFindings, positions: np.ndarray | None) -> MeshFindings:
    """Findings made on a mesh's surface part (see
    :meth:`meshaudit.mesh.elements.ElementMesh.surface_part`) with their element positions
    (``element_index``, the free edges' ``element``) turned into report positions;
    ``positions`` None: they are report positions already."""
    if positions is None:
        return found
    findings = [replace(f, element_index=positions[f.element_index]) for f in found.findings]
    free = found.free_edges
    if free is not None:
        free = replace(free, element=positions[free.element])
    return MeshFindings(findings, free, found.surfaces)


def _some(values: np.ndarray) -> str:
    shown = ", ".join(str(int(v)) for v in values[:MESSAGE_IDS])
    return shown + (f" and {values.size - MESSAGE_IDS} more" if values.size > MESSAGE_IDS else "")


class _Builder:
    """Collects findings, mapping element positions and node indices to the numbers the
    reports use, and nodes to coordinates."""

    def __init__(self, mesh: ElementMesh, ids: np.ndarray, settings: FindingSettings) -> None:
        self.points = mesh.points
        self.ids = ids
        self.node_numbers = mesh.numbering.node_numbers
        self.settings = settings
        self.findings: list[Finding] = []

    def on(self, kind: str) -> bool:
        return self.settings.enabled(kind)

    def some_nodes(self, nodes_: np.ndarray) -> str:
        """The first few of ``nodes_`` (0-based node indices) by their numbers, for a
        message."""
        return _some(self.node_numbers(nodes_))

    def add(
        self,
        kind: str,
        count: int,
        message: str,
        elements: np.ndarray | None = None,
        nodes_: np.ndarray | None = None,
        pairs: np.ndarray | None = None,
        edge_nodes: np.ndarray | None = None,
        node_pairs: np.ndarray | None = None,
    ) -> None:
        """Add a finding. ``elements``: 0-based element positions; ``nodes_``,
        ``edge_nodes`` (m, 2) and ``node_pairs`` (k, 2): 0-based node indices, reported
        by their numbers; ``pairs`` (k, 2): element numbers already (or node pairs given
        as ``node_pairs``). Messages name nodes through :meth:`some_nodes`."""
        if count == 0:
            return
        elements = _empty_int() if elements is None else unique_values(elements)
        if nodes_ is None:
            nodes_ = _empty_int() if edge_nodes is None else unique_values(edge_nodes)
        nodes_ = unique_values(nodes_)
        edge_nodes = _empty_int(0, 2) if edge_nodes is None else edge_nodes
        if node_pairs is not None:
            pairs = self.node_numbers(node_pairs).reshape(-1, 2)
        self.findings.append(
            Finding(
                kind=kind,
                severity=self.settings.severity[kind],
                count=int(count),
                element_ids=self.ids[elements],
                node_ids=self.node_numbers(nodes_),
                message=message,
                element_index=elements,
                pairs=_empty_int(0, 2) if pairs is None else pairs,
                edges=self.node_numbers(edge_nodes).reshape(-1, 2),
                node_xyz=self.points[nodes_],
                edge_xyz=self.points[edge_nodes].reshape(-1, 2, 3),
            )
        )


@dataclass
class TopologyPart:
    """What :func:`find_topology` found and what :func:`finish` still needs."""

    out: _Builder
    table: EdgeTable
    keep: np.ndarray
    free: edges.FreeEdges
    runs: np.ndarray | None = None  # planar: edges.forward_runs(table), for the fold check
    #: the coincident-node places, over the solids' nodes too when there are solids
    clusters: nodes.NodeClusters | None = None
    #: the checks of the solids (a :class:`~meshaudit.mesh_checks.solid_findings.SolidPart`)
    solid: Any = None


def unaudited_cells(mesh: ElementMesh, settings: FindingSettings) -> Finding | None:
    """The ``unaudited_cells`` finding: surface and volume cells of types not measured
    (see :meth:`ElementMesh.unaudited`), or None when there are none or the kind is off."""
    cells = mesh.unaudited()
    total = sum(cells.values())
    if total == 0 or not settings.enabled("unaudited_cells"):
        return None
    listed = ", ".join(f"{n:,} {t}" for t, n in cells.items())
    return Finding(
        kind="unaudited_cells",
        severity=settings.severity["unaudited_cells"],
        count=total,
        element_ids=_empty_int(),
        node_ids=_empty_int(),
        message=f"{listed} not audited (cell type not measured): their quality is unknown",
    )


def find(
    mesh: ElementMesh,
    ids: np.ndarray,
    frame: Frame,
    settings: FindingSettings | None = None,
    table: EdgeTable | None = None,
    shapes: overlap.PlanarShapes | None = None,
    orientation: Orientation | None = None,
) -> MeshFindings:
    """Run the mesh-level checks enabled in ``settings`` on ``mesh``.

    ``ids`` (n_elements,) element labels in audit order; ``frame`` says whether the mesh
    is planar (overlap checks) or a shell, and what orientation is judged against.
    ``table``, ``shapes`` (planar meshes) and ``orientation`` (the elements flagged
    ``reversed`` or ``flipped_normal``, see :mod:`meshaudit.mesh_checks.orientation`) are worked out
    here unless given; without the element flags at hand, an element counts as reversed
    when its corner polygon winds clockwise about the plane normal.

    The work comes in two parts that :func:`meshaudit.engine.run.audit_elements` runs apart:
    :func:`find_topology` needs only the connectivity and the nodes, so it can run while
    the elements are measured; :func:`finish` then adds the checks that need every
    element's winding and shape.
    """
    part = find_topology(mesh, ids, frame, settings, table)
    if shapes is None and frame.kind == "planar" and frame.axes is not None:
        shapes = overlap.planar_shapes(mesh, frame.axes)
    if orientation is None:
        clockwise = shapes.sign < 0 if shapes is not None else np.zeros(len(ids), dtype=bool)
        orientation = judge(mesh, frame, clockwise, table)
    return finish(part, mesh, frame, shapes, orientation=orientation)


def find_topology(
    mesh: ElementMesh,
    ids: np.ndarray,
    frame: Frame,
    settings: FindingSettings | None = None,
    table: EdgeTable | None = None,
    solids: SolidEdges | None = None,
) -> TopologyPart:
    """The checks that need only connectivity and nodes: orphan nodes, duplicate
    elements, coincident nodes, hanging nodes, free edges and cracks, non-manifold edges.

    ``solids``: the solids beside ``mesh`` (its surface part), when the mesh has any:
    the coincident nodes are then looked for among the solids' nodes too (the checks of
    the solids themselves are :mod:`meshaudit.mesh_checks.solid_findings`)."""
    settings = settings or FindingSettings()
    out = _Builder(mesh, ids, settings)
    if out.on("orphan_nodes"):
        orphans = nodes.orphan_nodes(mesh)
        out.add(
            "orphan_nodes",
            orphans.size,
            f"nodes no cell uses: {out.some_nodes(orphans)}",
            None,
            orphans,
        )

    copies, originals = duplicates.duplicate_elements(mesh)
    if out.on("duplicate_elements"):
        pairs = np.stack([ids[originals], ids[copies]], axis=1)
        text = ", ".join(f"{c} repeats {o}" for o, c in pairs[:MESSAGE_IDS])
        out.add("duplicate_elements", copies.size, f"element {text}", copies, None, pairs)
    keep = np.ones(mesh.n_elements, dtype=bool)
    keep[copies] = False
    table = edges.kept_table(table if table is not None else edge_table(mesh), keep)

    free_use = edges.free_uses(table)
    clusters = _coincident(mesh, table, settings, free_use, frame.kind != "planar", solids)
    if out.on("coincident_nodes"):
        count, members = clusters.count, clusters.members
        out.add(
            "coincident_nodes",
            count,
            f"{members.size} distinct nodes at {count} place(s), not merged: "
            f"nodes {out.some_nodes(members)}" + _shell_and_solid(mesh, clusters, solids),
            None,
            members,
            node_pairs=clusters.pairs,
        )

    interface = None
    if out.on("hanging_nodes"):
        shell = frame.kind != "planar"
        tolerance = settings.coincident_tolerance
        hang = hanging.hanging_nodes(mesh, table, clusters.rep, tolerance, shell, free_use)
        interface = hang.interface_uses
        hung = out.node_numbers(hang.host_element[:, 0])
        pairs = np.stack([hung, ids[hang.host_element[:, 1]]], axis=1)
        out.add(
            "hanging_nodes",
            hang.nodes.size,
            f"{hang.nodes.size} node(s) inside free edges of elements {_some(ids[hang.hosts])} "
            "without being their nodes: a non-conforming interface, not connected unless "
            f"the solver ties it; the nodes are used by elements {_some(ids[hang.users])}",
            hang.elements,
            hang.nodes,
            pairs,
            hang.edges,
        )
    free = edges.free_edges(table, mesh.points, clusters, interface=interface, uses=free_use)
    if out.on("crack_edges"):
        crack = np.flatnonzero(free.crack)
        loops = unique_values(free.loop[crack])
        out.add(
            "crack_edges",
            crack.size,
            f"{crack.size} free edge(s) lie on other free edges (unmerged nodes cut the part) "
            f"in free-edge loop(s) {_some(loops)}",
            free.element[crack],
            None,
            None,
            free.nodes[crack],
        )
    if out.on("non_manifold_edges"):
        nm_edges, nm_elements = edges.non_manifold_edges(table)
        out.add(
            "non_manifold_edges",
            nm_edges.size,
            f"{nm_edges.size} edge(s) shared by more than two elements: {_some(ids[nm_elements])}",
            nm_elements,
            None,
            None,
            table.nodes[nm_edges],
        )
    runs = None
    if frame.kind == "planar" and out.on("overlapping_elements"):
        runs = edges.forward_runs(table)
    return TopologyPart(out, table, keep, free, runs, clusters)


def finish(
    part: TopologyPart,
    mesh: ElementMesh,
    frame: Frame,
    shapes: overlap.PlanarShapes | None,
    grid: Callable[[], overlap.BoxGrid] | None = None,
    orientation: Orientation | None = None,
) -> MeshFindings:
    """Add the checks that need each element's winding and shape (the orientation
    finding from ``orientation``; planar meshes with ``shapes``: loop kinds and
    overlaps) and return the findings.

    ``grid``: returns the :class:`~meshaudit.mesh_checks.overlap.BoxGrid` of
    ``shapes`` when the caller builds it elsewhere (e.g. on another thread); called
    only when the overlap check gets that far."""
    if orientation is not None:
        _orientation_finding(part, orientation)
    free = part.free
    if shapes is not None and frame.kind == "planar" and frame.normal is not None:
        sign = shapes.sign.copy()
        sign[~part.keep] = 0  # duplicates are reported as such, not as wound the other way
        free = edges.with_winding(free, mesh.points, sign, frame.normal)
        if grid is None:
            grid = partial(overlap.BoxGrid.build, shapes.boxes)
        _planar_checks(part, mesh, free, shapes, sign, grid)
    return MeshFindings(part.out.findings, free)


def _orientation_finding(part: TopologyPart, orientation: Orientation) -> None:
    """The finding that names the elements flagged ``reversed`` (``inconsistent_winding``,
    orientation against +z) or ``flipped_normal`` (``opposite_normals``, relative
    orientation), with the same count and the same remedy; see
    :mod:`meshaudit.mesh_checks.orientation`. The edges are the seams where neighbours disagree."""
    out = part.out
    if orientation.reference == "none":  # solids alone: nothing compared
        return
    if orientation.reference == "+z":
        kind = "inconsistent_winding"
        named = orientation.turned
    else:
        kind = "opposite_normals"
        named = orientation.turned | orientation.twisted
    if not out.on(kind) or not named.any():
        return
    seams = _empty_int(0, 2)
    if kind == "opposite_normals":
        clash, _, _ = edges.same_direction_pairs(part.table)
        seams = part.table.nodes[clash]
    out.add(
        kind,
        int(np.count_nonzero(named)),
        describe(orientation, out.ids, _some),
        np.flatnonzero(named),
        None,
        None,
        seams,
    )


def _shell_and_solid(
    mesh: ElementMesh, clusters: nodes.NodeClusters, solids: SolidEdges | None
) -> str:
    """'; k of them join a shell node and a solid node ...' for the places where a node of
    a surface element ``mesh`` and a node of a solid are not merged ('' when none)."""
    if solids is None or clusters.members.size == 0 or mesh.n_elements == 0:
        return ""
    members, rep = clusters.members, clusters.rep
    on_shell, on_solid = mesh.used_nodes(), np.zeros(rep.size, dtype=bool)
    on_solid[solids.nodes] = True
    shell_place, solid_place = np.zeros(rep.size, dtype=bool), np.zeros(rep.size, dtype=bool)
    shell_place[rep[members[on_shell[members]]]] = True
    solid_place[rep[members[on_solid[members]]]] = True
    both = int(np.count_nonzero(shell_place & solid_place))
    if both == 0:
        return ""
    return (
        f"; {both} of these places join a shell node and a solid node: the shell is not "
        "tied to the solid there"
    )


#: The finding kinds that use the coincident-node clusters (the second group only on a
#: mesh with solids).
CLUSTER_KINDS = ("coincident_nodes", "crack_edges", "hanging_nodes")
SOLID_CLUSTER_KINDS = ("crack_faces", "non_conforming_faces")


def _coincident(
    mesh: ElementMesh,
    table: EdgeTable,
    settings: FindingSettings,
    free_use: np.ndarray,
    shell: bool,
    solids: SolidEdges | None = None,
) -> nodes.NodeClusters:
    """Clusters of distinct nodes at one place (see :mod:`meshaudit.mesh_checks.nodes`):
    nodes within ``coincident_tolerance`` x the shorter of their shortest adjacent edges,
    leaving out clusters whose nodes are all corners of one (degenerate) element.

    Only what an enabled check needs is clustered: every node elements use for
    ``coincident_nodes`` (and for ``hanging_nodes`` on a shell, where every corner node
    is tested); only the ends of free edges for ``crack_edges`` and for
    ``hanging_nodes`` on a planar mesh (cracks join free edges, and there only the ends
    of free edges are tested); nothing when all three are off. The sweep first uses one
    bound for every node (the tolerance x the longest edge); the local tolerance is then
    worked out only for the few nodes that bound lets through.

    With ``solids`` every corner node of a solid is a candidate too, and their edges
    count for the tolerance (a solid's node and a shell's node at one place are not
    merged either).
    """
    kinds = CLUSTER_KINDS + (SOLID_CLUSTER_KINDS if solids is not None else ())
    enabled = tuple(kind for kind in kinds if settings.enabled(kind))
    no_solid = solids is None or solids.nodes.size == 0
    if (table.n_edges == 0 and no_solid) or not enabled:
        return nodes.NodeClusters.none(mesh.n_points)
    pts = mesh.points
    relative = settings.coincident_tolerance
    longest = _longest_squared(pts, table.nodes) if table.n_edges else 0.0
    if not no_solid:
        longest = max(longest, solids.longest_squared())
    bound = relative * float(np.sqrt(longest))
    ends = np.zeros(mesh.n_points, dtype=bool)
    ends[table.start[free_use]] = True
    ends[table.end[free_use]] = True
    if "coincident_nodes" in enabled or (shell and "hanging_nodes" in enabled):
        # the nodes of free sides (ends and midside nodes), and any other node that may
        # lie within the tolerance of one of them: unmerged nodes that cut the part
        # always lie on free sides (see nodes_on_free_sides)
        on_free = nodes_on_free_sides(mesh, table, free_use, ends)
        others = mesh.used_nodes()
        others &= ~on_free
        candidates = np.flatnonzero(on_free)
        near = nodes.near_anchors(pts, others, candidates, bound)
        del others
        if near.size:
            candidates = unique_values(np.concatenate([candidates, near]))
    else:
        candidates = np.flatnonzero(ends)
    if not no_solid:
        candidates = unique_values(np.concatenate([candidates, solids.nodes]))

    def local(idx: np.ndarray) -> np.ndarray:
        live = table.nodes[table.uses > 0]
        involved = np.zeros(mesh.n_points, dtype=bool)
        involved[idx] = True
        near = live[involved[live[:, 0]] | involved[live[:, 1]]]
        shortest = nodes.shortest_edge_at(pts, near)[idx]
        if not no_solid:
            shortest = np.minimum(shortest, solids.shortest_at(involved)[idx])
        tolerance = relative * shortest
        tolerance[~np.isfinite(tolerance)] = 0.0
        return tolerance

    clusters = nodes.coincident_clusters(pts, candidates, bound, local, enabled)
    return nodes.without_degenerate(clusters, mesh if solids is None else solids.mesh)


def nodes_on_free_sides(
    mesh: ElementMesh, table: EdgeTable, free_use: np.ndarray, ends: np.ndarray
) -> np.ndarray:
    """(n_points,) bool: the ends of the free edges (``ends``) and the midside nodes of
    quadratic elements on them, plus the nodes of elements that have no edge in the
    table (every side collapsed).

    Two distinct nodes at one place that cut the part apart always lie on free sides:
    the elements around the place are split between the two nodes, and where a group
    of them ends its side is used by it alone. What lies elsewhere (two closed fans
    at one place) is handled by :func:`meshaudit.mesh_checks.nodes.near_anchors`
    only when some node of a free side is near."""
    on = ends.copy()
    for block in mesh.blocks:
        cell = block.cell
        sides = cell.midside_edges
        if sides is None or not len(block):
            continue
        rows = np.searchsorted(block.index, table.element[free_use])
        rows = np.minimum(rows, len(block) - 1)
        inside = block.index[rows] == table.element[free_use]
        local = table.local[free_use][inside].astype(np.int64)
        on[block.connectivity[rows[inside], sides[local, 2]]] = True
    return on


def _longest_squared(points: np.ndarray, edge_nodes: np.ndarray) -> float:
    """Largest squared length of the edges ``edge_nodes`` (m, 2), in blocks of
    :data:`nodes.BLOCK` edges, one coordinate at a time (bounded temporaries)."""
    longest = 0.0
    for start in range(0, edge_nodes.shape[0], nodes.BLOCK):
        part = edge_nodes[start : start + nodes.BLOCK]
        total = np.zeros(part.shape[0])
        for axis in range(points.shape[1]):
            column = points[:, axis]
            step = column[part[:, 1]]
            step -= column[part[:, 0]]
            step *= step
            total += step
        longest = max(longest, float(total.max()))
    return longest


def _planar_checks(
    part: TopologyPart,
    mesh: ElementMesh,
    free: edges.FreeEdges,
    shapes: overlap.PlanarShapes,
    sign: np.ndarray,
    grid: Callable[[], overlap.BoxGrid],
) -> None:
    out, table, keep = part.out, part.table, part.keep
    ids = out.ids
    if not out.on("overlapping_elements"):
        return
    _, fold_a, fold_b = edges.same_direction_pairs(table, flip=sign < 0, runs=part.runs)
    nm_edges, nm_elements = edges.non_manifold_edges(table)
    suspects = np.concatenate([np.flatnonzero(~shapes.convex & keep), fold_a, fold_b, nm_elements])
    around = unique_values(np.concatenate([free.element, overlap.node_neighbours(mesh, suspects)]))
    candidates = np.concatenate(
        [
            np.stack([fold_a, fold_b], axis=1),
            overlap.pairs_on_edges(table, nm_edges, mesh.points),
            grid().pairs_near(around, shapes.space) if around.size else _empty_int(0, 2),
        ]
    )
    candidates = candidates[keep[candidates[:, 0]] & keep[candidates[:, 1]]]
    fraction = out.settings.overlap_fraction
    pairs, _area = overlap.overlapping_pairs(mesh, shapes, candidates, fraction)
    labelled = ids[pairs] if pairs.size else _empty_int(0, 2)
    text = ", ".join(f"{a}/{b}" for a, b in labelled[:MESSAGE_IDS])
    out.add(
        "overlapping_elements",
        len(pairs),
        f"{len(pairs)} element pair(s) overlap: {text}",
        pairs.ravel(),
        None,
        labelled,
    )
