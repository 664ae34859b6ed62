"""What a worker does with one part: read it, measure it, send back small results.

Every task first sets the process's allocator as ``meshaudit check`` does
(:func:`meshaudit.engine.memory.return_large_blocks`: a Dask worker starts with glibc
told to hand freed memory back at once, which made each part's chunk temporaries fault
in anew: 10^6 quads in 4 parts on 2 workers took 13 s that way, 7.5 s this way).

Every function here is a pure function of its arguments (a part's path and what the
driver decided), so a Dask worker, a local process or the calling thread can run it.
A part is read where it is measured; only the summaries below travel back:

- :func:`survey_part`: sizes and the moments of the nodes, for the measuring frame;
- :func:`plane_check`: how far the nodes lie from a plane the driver proposes;
- :func:`part_cut_sizes`: the sizes of the elements on the part's free sides, for the
  size ratio across cuts (:mod:`meshaudit.distributed.cut_sizes`);
- :func:`audit_part`: the part audited in the whole mesh's frame by the existing engine
  (:func:`meshaudit.engine.run.audit_elements`, which measures chunks with the pure
  chunk kernel), summarised as verdict and flag counts, a :class:`~.sketch.Sketch` per
  metric, the not-ok elements (worst first, at most ``keep``), the part's own
  mesh-level findings and its :class:`Boundary` (free edges and the elements at them,
  its solids' free faces),
  which the driver matches across parts (:mod:`meshaudit.distributed.interfaces`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..engine.memory import return_large_blocks
from ..judge.profiles import Profile
from ..mesh import labels
from ..mesh.elements import ElementMesh
from ..mesh.faces import FaceTable
from ..mesh.frames import SOLID_FRAME, XY_FRAME, Frame, area_vectors
from ..mesh.parts import cell_count, global_node_ids
from ..mesh.reading import build_elements, read_meshio_said
from ..mesh.slices import XdmfSlice, read_slice
from ..mesh_checks.findings import Finding
from ..mesh_checks.nodes import shortest_edge_at
from ..paths import display_name
from ..results.report import Report
from .cut_sizes import CutSizes, cut_sizes, free_sides
from .overlaps import Probes, against_probes, rim_polygons
from .sketch import Sketch


def read_part(
    path: str | XdmfSlice, file_format: str | None, cell_offset: int = 0, point_offset: int = 0
):
    """(meshio mesh, element arrays, global node ids or None) of one part, its elements
    numbered as the whole mesh numbers them (see :mod:`meshaudit.mesh.parts`). A slice
    of an XDMF file (:mod:`meshaudit.mesh.slices`) is read as its rows of the file: its
    nodes' rows are their numbers and the global node ids it is matched by."""
    if isinstance(path, XdmfSlice):
        raw, rows, _ = read_slice(path)
        numbering = replace(labels.VTK, cell_base=cell_offset, node_labels=rows)
        return raw, build_elements(raw, display_name(str(path)), numbering), rows
    raw, said = read_meshio_said(path, file_format)
    numbering = labels.for_file(path, file_format, raw, said)
    gids = global_node_ids(raw)
    if numbering.cell_labels is None:
        numbering = replace(numbering, cell_base=numbering.cell_base + cell_offset)
    if gids is not None:
        numbering = replace(numbering, nodes="global node id", node_labels=gids)
    elif numbering.node_labels is None:
        numbering = replace(numbering, node_base=numbering.node_base + point_offset)
    return raw, build_elements(raw, display_name(path), numbering), gids


@dataclass
class Survey:
    """Sizes of one part and the moments of the nodes its surface elements use."""

    cells: int  # every cell, lines too: what positions count
    points: int
    elements: int  # audited elements
    global_ids: bool
    has_solids: bool
    count: int  # used surface nodes
    centre: np.ndarray  # (3,) their mean
    scatter: np.ndarray  # (3, 3) sum of (p - centre)(p - centre)^T
    low: np.ndarray  # (3,) per-axis minimum
    high: np.ndarray
    magnitude: float  # largest |coordinate|
    #: the sizes on the part's free sides (:func:`part_cut_sizes`), measured in the x-y
    #: frame when the part's surface nodes share one z (or it has no surface elements):
    #: the frame of the whole mesh when every part's do, saving a round; else None
    cut: CutSizes | None = None
    #: the part's surface elements with a free edge: positions in the part, corners
    #: (r, 4, 3) NaN padded (probes for overlaps across parts, :mod:`.overlaps`)
    rim_rows: np.ndarray | None = None
    rim_xyz: np.ndarray | None = None


def survey_part(path: str | XdmfSlice, file_format: str | None) -> Survey:
    """Read a part and summarise it (see :class:`Survey`)."""
    return_large_blocks()
    raw, mesh, gids = read_part(path, file_format)
    surface, _ = mesh.surface_part()
    pts = surface.points[surface.used_nodes()] if surface.n_elements else np.zeros((0, 3))
    centre = pts.mean(axis=0) if len(pts) else np.zeros(3)
    d = pts - centre
    cut = None
    sides = free_sides(mesh)
    if surface.n_elements == 0:
        cut = cut_sizes(mesh, gids, SOLID_FRAME, None, sides)
    elif pts[:, 2].min() == pts[:, 2].max():
        xy = replace(XY_FRAME, beside_solids=mesh.has_solids)
        cut = cut_sizes(mesh, gids, xy, None, sides)
    rim_rows, rim_xyz = rim_polygons(mesh, sides[1])
    return Survey(
        cell_count(raw),
        mesh.n_points,
        mesh.n_elements,
        gids is not None,
        mesh.has_solids,
        len(pts),
        centre,
        d.T @ d,
        pts.min(axis=0) if len(pts) else np.full(3, np.inf),
        pts.max(axis=0) if len(pts) else np.full(3, -np.inf),
        float(np.abs(pts).max()) if len(pts) else 0.0,
        cut,
        rim_rows,
        rim_xyz,
    )


def plane_check(
    path: str | XdmfSlice, file_format: str | None, centre: np.ndarray, normal: np.ndarray
) -> tuple[float, float, float]:
    """(largest distance of a used surface node from the plane through ``centre`` with
    unit ``normal``; least and greatest position of those nodes across the plane's trace
    on x-y), for :func:`meshaudit.distributed.frame.whole_frame`."""
    _, mesh, _ = read_part(path, file_format)
    surface, _ = mesh.surface_part()
    if surface.n_elements == 0:
        return 0.0, np.inf, -np.inf
    pts = surface.points[surface.used_nodes()]
    deviation = float(np.abs((pts - centre) @ normal).max())
    across = float(np.hypot(normal[0], normal[1]))
    if across == 0.0:
        return deviation, 0.0, 0.0
    trace = pts[:, :2] @ (normal[:2] / across)
    return deviation, float(trace.min()), float(trace.max())


@dataclass
class Boundary:
    """What the driver needs of a part to match it with the others (see
    :mod:`meshaudit.distributed.interfaces`).

    Nodes are the ends of the part's free edges (edges one of its surface elements
    uses) and the corners of its solids' free faces (faces one solid uses: the part's
    skin, its cut included), so that nodes of solid parts are matched too: ``key``
    their global node id (or -1 where the parts have none), ``number`` their reported
    number, ``xyz`` coordinates, ``tolerance`` the coincident-node
    tolerance (relative tolerance x shortest edge at the node in this part). ``edges``
    are the uses, by the part's surface elements, of every edge whose two ends are such
    nodes (free edges and the edges along them), as rows of these nodes in the
    direction the element runs; elements repeating another of the part are left out.
    """

    key: np.ndarray
    number: np.ndarray
    xyz: np.ndarray
    tolerance: np.ndarray
    edges: np.ndarray  # (m, 2)
    edge_element: np.ndarray  # (m,) element position in the whole mesh
    edge_ids: np.ndarray  # (m,) that element's number
    edge_interface: np.ndarray  # (m,) on a non-conforming interface inside the part
    edge_sign: np.ndarray  # (m,) winding of the element about the plane normal (+1/-1), or 0
    rim_index: np.ndarray  # (r,) elements with a corner on a free edge: whole-mesh positions
    rim_ids: np.ndarray
    #: (r, 8) the corners, -1 padded: columns 0-3 rows of the free-edge nodes above (-2 -
    #: node index for a corner on none), columns 4-7 their global node ids (when the
    #: part has them)
    rim_corners: np.ndarray
    #: the part's solids' free faces: (f, 4) rows of the nodes above in outward order,
    #: -1 padded; the solid's position in the whole mesh and its number
    faces: np.ndarray
    face_element: np.ndarray
    face_ids: np.ndarray
    #: solids with a corner on those nodes (parts with global ids): (s, 8) their corner
    #: ids ascending, -1 padded; their positions in the whole mesh and numbers
    solid_corners: np.ndarray
    solid_index: np.ndarray
    solid_ids: np.ndarray
    #: every face of those solids (with global ids): corner ids ascending (-1 padded),
    #: the solid's position and that of the part's other solid on it (-1: none)
    link_keys: np.ndarray
    link_owner: np.ndarray
    link_other: np.ndarray
    link_other_ids: np.ndarray


@dataclass
class PartResult:
    """What one part sends back (see the module docstring)."""

    index: int
    elements: int
    element_counts: dict[str, int]
    skipped: dict[str, int]
    points: int
    notes: list[str]
    verdicts: np.ndarray  # (3,) ok, warn, fail
    patterns: dict[int, int]  # flag bit pattern -> elements (flagged ones)
    sketches: dict[str, Sketch]
    regions: dict[str, np.ndarray]  # region name -> (3,) verdict counts
    not_ok: int
    rows: dict[str, Any]  # the kept not-ok elements, column by column
    findings: list[Finding]
    boundary: Boundary | None
    numbering: tuple[str, str]
    element_file: str | None = None
    #: (k, 2) whole-mesh positions (own element, other part's element) overlapping, and
    #: (k,) the own elements' numbers (see :mod:`.overlaps`)
    overlaps: np.ndarray = field(default_factory=lambda: np.zeros((0, 2), dtype=np.int64))
    overlap_ids: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))


@dataclass(frozen=True)
class PartTask:
    """Everything :func:`audit_part` needs besides the part's path (small, picklable)."""

    file_format: str | None
    frame: Frame
    profile: Profile
    fail_on: str
    regions: dict[str, Profile]
    keep: int  # not-ok elements sent back at most
    #: writes the part's element report, ``writer(report, first position, part number)``
    #: -> its file name (e.g. :class:`meshaudit.outputs.part_elements.PartWriter`); None:
    #: no element reports
    writer: Callable[[Report, int, int], str] | None = None


def part_cut_sizes(
    path: str | XdmfSlice,
    cell_offset: int,
    point_offset: int,
    by_ids: bool,
    task: PartTask,
) -> CutSizes:
    """The sizes of the part's elements on its free sides, for the size ratio across
    cuts (:mod:`meshaudit.distributed.cut_sizes`); ``by_ids``: every part has global
    node ids (else sides are matched by coordinates)."""
    return_large_blocks()
    _, mesh, gids = read_part(path, task.file_format, cell_offset, point_offset)
    frame = task.frame
    if mesh.surface_part()[0].n_elements == 0 and frame.kind != "solid":
        frame = Frame("solid")
    return cut_sizes(mesh, gids if by_ids else None, frame, task.profile)


def audit_part(
    path: str | XdmfSlice,
    index: int,
    cell_offset: int,
    point_offset: int,
    element_offset: int,
    task: PartTask,
    outside: tuple[np.ndarray, np.ndarray] | None = None,
    probes: Probes | None = None,
) -> PartResult:
    """Audit one part in the whole mesh's frame and summarise it (module docstring);
    ``outside``: its cut elements' size ratios against other parts' elements
    (:func:`meshaudit.distributed.cut_sizes.outside_ratios`); ``probes``: other parts'
    free-edge elements to look for overlaps with (:mod:`meshaudit.distributed.overlaps`)."""
    from ..engine.run import audit_elements

    return_large_blocks()

    _, mesh, gids = read_part(path, task.file_format, cell_offset, point_offset)
    frame = task.frame
    surface, positions = mesh.surface_part()
    if surface.n_elements == 0 and frame.kind != "solid":
        frame = Frame("solid")
    report = audit_elements(
        mesh,
        task.profile,
        task.fail_on,
        task.regions,
        workers=1,
        frame=frame,
        outside_ratio=outside,
    )
    counts = report.verdict_counts()
    flagged = report.flag_bits[report.flag_bits != 0]
    patterns, pcounts = np.unique(flagged, return_counts=True)
    sketches = {
        name: Sketch.of(values, report.levels.get(name))
        for name, values in report.metrics.items()
        if not _shared_nan(values)
    }
    regions = {}
    for k, name in enumerate(report.region_names, start=1):
        mask = report.region_codes == k
        regions[name] = np.bincount(report.verdict[mask], minlength=3)
    worst = report.worst(only_flagged=True)
    result = PartResult(
        index=index,
        elements=len(report),
        element_counts=dict(report.summary.element_counts),
        skipped=dict(report.summary.skipped),
        points=mesh.n_points,
        notes=list(report.notes),
        verdicts=np.array([counts["ok"], counts["warn"], counts["fail"]]),
        patterns=dict(zip(map(int, patterns), map(int, pcounts))),
        sketches=sketches,
        regions=regions,
        not_ok=int(worst.size),
        rows=_rows(report, worst[: task.keep], element_offset),
        findings=[_shifted(f, element_offset) for f in report.findings],
        boundary=_boundary(report, mesh, surface, positions, frame, task, element_offset, gids),
        numbering=(mesh.numbering.elements, mesh.numbering.nodes),
    )
    if probes is not None and frame.kind == "planar":
        pairs = against_probes(
            surface, positions, element_offset, probes, frame, task.profile.findings
        )
        result.overlaps = pairs
        result.overlap_ids = report.ids[pairs[:, 0] - element_offset]
    if task.writer is not None:
        result.element_file = task.writer(report, element_offset, index)
    return result


def _shared_nan(values: np.ndarray) -> bool:
    """A column the engine shares as one NaN (a metric no element of the part has)."""
    return values.strides == (0,)


def _rows(report: Report, rows: np.ndarray, offset: int) -> dict[str, Any]:
    return {
        "index": rows + offset,
        "ids": report.ids[rows],
        "types": [report.cell_types[c] for c in report.type_codes[rows].tolist()],
        "families": [report.cell_families[c] for c in report.families[rows].tolist()],
        "centroids": report.centroids[rows],
        "metrics": {m: np.asarray(v[rows]) for m, v in report.metrics.items()},
        "bits": report.flag_bits[rows],
        "levels": {m: v[rows] for m, v in report.levels.items()},
        "verdict": report.verdict[rows],
        "regions": None if report.region_codes is None else report.region_codes[rows],
    }


def _shifted(finding: Finding, offset: int) -> Finding:
    return replace(finding, element_index=finding.element_index + offset)


def _boundary(
    report: Report,
    mesh: ElementMesh,
    surface: ElementMesh,
    positions: np.ndarray | None,
    frame: Frame,
    task: PartTask,
    offset: int,
    gids: np.ndarray | None,
) -> Boundary | None:
    free = report.free_edges
    skin = skin_nodes(mesh)
    # duplicates within the part are left out, as the part's own checks leave them out
    copies = np.zeros(0, dtype=np.int64)
    for f in report.findings:
        if f.kind == "duplicate_elements":
            copies = f.element_index
    table = solid_table(mesh, copies)
    faces, face_element = free_faces(table)
    if free is None and skin.size == 0:
        return None
    free_nodes = free.nodes if free is not None else np.zeros((0, 2), dtype=np.int64)
    # nodes of free edges and of the solids' free faces, renumbered 0..b-1
    ends = np.unique(np.concatenate([free_nodes.ravel(), skin, faces[faces >= 0]]))
    local = np.full(mesh.n_points, -1, dtype=np.int64)
    local[ends] = np.arange(ends.size)
    on_edge = local >= 0
    corners_of = [(b, b.connectivity[:, : b.cell.n_corners]) for b in surface.blocks]
    edge_rows = [  # every element's edges, solids' too: the tolerance at each node
        b.connectivity[:, [i, j]] for b in mesh.blocks for i, j in b.cell.edges.tolist()
    ]
    every_edge = np.concatenate(edge_rows) if edge_rows else np.zeros((0, 2), dtype=np.int64)
    tolerance = (
        task.profile.findings.coincident_tolerance * shortest_edge_at(mesh.points, every_edge)[ends]
    )
    tolerance[~np.isfinite(tolerance)] = 0.0
    uses, use_element = [], []
    rim_index, rim_ids, rim_corners = [], [], []
    for block, corners in corners_of:
        rows = block.index if positions is None else positions[block.index]
        for i, j in block.cell.edges.tolist():
            both = on_edge[corners[:, i]] & on_edge[corners[:, j]]
            uses.append(corners[both][:, [i, j]])
            use_element.append(rows[both])
        touch = on_edge[corners].any(axis=1)
        if not touch.any():
            continue
        near = corners[touch]
        k = near.shape[1]
        pad = np.full((near.shape[0], 8), -1, dtype=np.int64)
        rows_of_ends = local[near]
        pad[:, :k] = np.where(rows_of_ends < 0, -2 - near, rows_of_ends)
        if gids is not None:  # global ids name every corner, on a free edge or not
            pad[:, 4 : 4 + k] = gids[near]
        rim_index.append(rows[touch] + offset)
        rim_ids.append(report.ids[rows[touch]])
        rim_corners.append(pad)
    none = np.zeros(0, dtype=np.int64)
    use_nodes = np.concatenate(uses) if uses else none.reshape(0, 2)
    element = np.concatenate(use_element) if use_element else none
    kept = ~np.isin(element, copies)
    use_nodes, element = use_nodes[kept], element[kept]
    sign = np.zeros(element.size, dtype=np.int8)
    if frame.kind == "planar" and frame.normal is not None and element.size:
        sign = _winding(mesh, element, frame.normal)
    return Boundary(
        key=gids[ends] if gids is not None else np.full(ends.size, -1, dtype=np.int64),
        number=mesh.numbering.node_numbers(ends),
        xyz=mesh.points[ends],
        tolerance=tolerance,
        edges=local[use_nodes],
        edge_element=element + offset,
        edge_ids=report.ids[element],
        edge_interface=np.zeros(element.size, dtype=bool)
        if free is None
        else _among(element, use_nodes, free.element[free.interface], free.nodes[free.interface]),
        edge_sign=sign,
        rim_index=np.concatenate(rim_index) if rim_index else none,
        rim_ids=np.concatenate(rim_ids) if rim_ids else none,
        rim_corners=np.concatenate(rim_corners) if rim_corners else none.reshape(0, 8),
        faces=np.where(faces >= 0, local[np.maximum(faces, 0)], -1),
        face_element=face_element + offset,
        face_ids=report.ids[face_element],
        **_solid_rim(mesh, on_edge, gids, report.ids, offset, table),
    )


def _solid_rim(
    mesh: ElementMesh,
    on_edge: np.ndarray,
    gids: np.ndarray | None,
    ids: np.ndarray,
    offset: int,
    table: tuple[FaceTable, np.ndarray] | None,
) -> dict[str, np.ndarray]:
    """The ``solid_*`` and ``link_*`` fields of :class:`Boundary`: solids with a corner
    on ``on_edge`` and their faces (:func:`face_links`)."""
    rows, index = [np.zeros((0, 8), dtype=np.int64)], [np.zeros(0, dtype=np.int64)]
    for block in mesh.blocks if gids is not None else []:
        if block.cell.dimension != 3:
            continue
        corners = block.connectivity[:, : block.cell.n_corners]
        touch = on_edge[corners].any(axis=1)
        pad = np.full((int(touch.sum()), 8), -1, dtype=np.int64)
        pad[:, : corners.shape[1]] = np.sort(gids[corners[touch]], axis=1)
        rows.append(pad)
        index.append(block.index[touch])
    at = np.concatenate(index)
    keys, owner, other = face_links(table, np.sort(at), gids)
    return {
        "solid_corners": np.concatenate(rows),
        "solid_index": at + offset,
        "solid_ids": ids[at],
        "link_keys": keys,
        "link_owner": owner + offset,
        "link_other": np.where(other >= 0, other + offset, -1),
        "link_other_ids": np.where(other >= 0, ids[np.maximum(other, 0)], -1),
    }


def solid_table(mesh: ElementMesh, copies: np.ndarray) -> tuple[FaceTable, np.ndarray] | None:
    """The face table of the solids of ``mesh`` without the ``copies`` (positions of
    duplicates) and the solids' positions; None without solids."""
    from ..mesh.faces import face_table

    if not mesh.has_solids:
        return None
    solid, positions = mesh.solid_part()
    return face_table(solid, ~np.isin(positions, copies)), positions


def free_faces(table: tuple[FaceTable, np.ndarray] | None) -> tuple[np.ndarray, np.ndarray]:
    """(corners (f, 4) in outward order, -1 padded; (f,) the solid's position) of the
    faces one solid uses (the part's skin, the cut included), from :func:`solid_table`."""
    if table is None:
        return np.zeros((0, 4), dtype=np.int64), np.zeros(0, dtype=np.int64)
    faces, positions = table
    free = faces.boundary()
    return faces.corners[free].astype(np.int64), positions[faces.element[free]]


def face_links(
    table: tuple[FaceTable, np.ndarray] | None, solids: np.ndarray, gids: np.ndarray | None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Every face of the ``solids`` (positions, ascending) as (corner ids ascending
    (f, 4), -1 padded at the end; the solid's position; the position of the part's other
    solid on it, -1 when none or several): what the driver needs to match the faces
    beside a solid found to be a copy of another part's."""
    none = np.zeros(0, dtype=np.int64)
    if table is None or gids is None or solids.size == 0:
        return none.reshape(0, 4), none, none
    faces, positions = table
    owner = positions[faces.element]
    mine = np.flatnonzero(np.isin(owner, solids))
    corners = faces.corners[mine].astype(np.int64)
    keys = np.sort(np.where(corners >= 0, gids[np.maximum(corners, 0)], np.iinfo(np.int64).max))
    keys[keys == np.iinfo(np.int64).max] = -1
    face = faces.face[mine]
    two = faces.uses[face] == 2
    other_use = np.where(faces.first[face] == mine, faces.last[face], faces.first[face])
    other = np.where(two, owner[other_use], -1)
    return keys, owner[mine], other


def skin_nodes(mesh: ElementMesh) -> np.ndarray:
    """Corner nodes of the faces one solid of ``mesh`` uses (its skin; a part's cut
    faces among them), ascending; empty without solids. Faces are compared by their
    sorted corners, all solid blocks at once."""
    rows = []
    for block in mesh.blocks:
        if block.cell.dimension != 3:
            continue
        for face in block.cell.faces:
            corners = np.sort(block.connectivity[:, list(face)], axis=1)
            pad = np.full((corners.shape[0], 4), -1, dtype=np.int64)
            pad[:, : corners.shape[1]] = corners
            rows.append(pad)
    if not rows:
        return np.zeros(0, dtype=np.int64)
    faces, counts = np.unique(np.concatenate(rows), axis=0, return_counts=True)
    nodes = np.unique(faces[counts == 1])
    return nodes[nodes >= 0]


def _among(element: np.ndarray, nodes: np.ndarray, of_element: np.ndarray, of_nodes: np.ndarray):
    """(k,) bool: which uses (``element``, ``nodes`` (k, 2)) are among the uses
    (``of_element``, ``of_nodes``), compared as whole rows."""
    if element.size == 0 or of_element.size == 0:
        return np.zeros(element.size, dtype=bool)
    rows = np.concatenate(
        [np.column_stack([of_element, of_nodes]), np.column_stack([element, nodes])]
    ).astype(np.int64)
    _, inverse = np.unique(rows, axis=0, return_inverse=True)
    inverse = inverse.ravel()
    return np.isin(inverse[of_element.size :], inverse[: of_element.size])


def _winding(mesh: ElementMesh, rows: np.ndarray, normal: np.ndarray) -> np.ndarray:
    """+1 / -1: the corner polygon of each element ``rows`` winds counter-clockwise /
    clockwise about ``normal``."""
    sign = np.zeros(rows.size, dtype=np.int8)
    for block in mesh.blocks:
        if block.cell.dimension != 2:
            continue
        at = np.searchsorted(block.index, rows)
        inside = (at < len(block)) & (block.index[np.minimum(at, len(block) - 1)] == rows)
        if not inside.any():
            continue
        corners = mesh.points[block.connectivity[at[inside], : block.cell.n_corners]]
        sign[inside] = np.where(area_vectors(corners) @ normal < 0.0, -1, 1)
    return sign
