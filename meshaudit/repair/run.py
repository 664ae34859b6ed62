"""The repair sequence: audit, repair the topology, move nodes, audit again.

:func:`repair` reads the mesh (or takes a ``meshio.Mesh``), audits it, and applies in
order: bow-tie quads reordered, coincident nodes merged, exact duplicate elements
dropped, reversed elements reversed, orphan nodes dropped (each can be switched off in
:class:`RepairOptions`), then node moves around the elements that still fail
(:mod:`meshaudit.repair.smooth`). The result is audited under the same profile. A node
move that raises the verdict of any element above its verdict in the input is not kept:
the corners of the elements it made worse go back where they were, and again while some
element is worse (up to :data:`SETTLE_ROUNDS` rounds); if that does not settle, every
move is dropped and only the topology repairs remain. Moves around failing elements that brought no
element to a better verdict are undone too (see :func:`meshaudit.repair.smooth.useful_nodes`;
not with ``everywhere``, which smooths on purpose). Nothing is written here: the caller writes
``Repair.mesh`` (see ``meshaudit fix``).
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..cells.registry import CELL_TYPES
from ..engine.run import ProgressCallback, audit_elements
from ..judge.profiles import Profile
from ..mesh.elements import ElementMesh
from ..mesh.reading import load, load_with_mesh
from ..results.report import Report
from . import duplicates, fixed, merge, outline, reverse, smooth
from .working import Working

#: How many rounds of putting back the corners of elements a move made worse.
SETTLE_ROUNDS = 8


@dataclass(frozen=True)
class RepairOptions:
    """Which repairs run (all by default) and how far node moves reach."""

    bowties: bool = True  # reorder the nodes of bow-tie quads
    merge: bool = True  # merge coincident nodes (unless the profile says they are intended)
    duplicates: bool = True  # drop exact duplicate elements
    reverse: bool = True  # reverse reversed elements
    orphans: bool = True  # drop nodes no cell uses
    move: bool = True  # move nodes to untangle and improve failing elements
    rings: int = 2  # how far around the failing elements nodes may move
    everywhere: bool = False  # move every node that is not fixed
    keep: tuple[str, ...] = ()  # node sets or element regions whose nodes stay
    restore: tuple[int, ...] = ()  # outline nodes (file numbers) to put back on the outline


@dataclass
class Repair:
    """What :func:`repair` returns.

    ``mesh``: the repaired ``meshio.Mesh`` (every cell block, data and set of the input,
    reindexed; the file's numbers as ``cells_id``/``points_id`` and as the data arrays
    ``element_id``/``node_id``). ``before``/``after``: the audits of the input and of the
    result. ``done``: repair -> the element numbers (node numbers for ``merged`` and
    ``orphans``, of the input) it changed. ``worst_move``: the largest node displacement
    divided by the mean length of the edges at that node (before the move), and
    ``worst_node`` that node's number. ``worsened``: element numbers whose verdict rose
    (empty unless even the topology repairs made some element worse; the result must then
    not be written). ``remaining``: element number -> why it still fails.
    """

    mesh: Any
    before: Report
    after: Report
    done: dict[str, np.ndarray]
    moved_nodes: int = 0
    worst_move: float = 0.0
    worst_node: int | None = None
    worsened: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    remaining: dict[int, str] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    @property
    def passed(self) -> bool:
        """Whether the repaired mesh passes its audit."""
        return self.after.passed

    @property
    def acceptable(self) -> bool:
        """Whether the result may be written: no element got worse."""
        return self.worsened.size == 0


def repair(
    source: Any,
    profile: Profile | str | os.PathLike[str] | None = None,
    file_format: str | None = None,
    fail_on: str = "fail",
    regions: Mapping[str, Profile | str | os.PathLike[str]] | None = None,
    options: RepairOptions | None = None,
    progress: ProgressCallback | None = None,
) -> Repair:
    """Repair a mesh file (any format meshio reads) or a ``meshio.Mesh``; see the module
    docstring. The input is only read.

    >>> import meshio, numpy as np
    >>> square = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
    >>> mesh = meshio.Mesh(square, [("quad", [[0, 3, 2, 1]])])   # clockwise
    >>> fixed = repair(mesh)
    >>> fixed.before.passed, fixed.after.passed, fixed.mesh.cells[0].data.tolist()
    (False, True, [[0, 1, 2, 3]])
    """
    options = options or RepairOptions()
    if progress is not None:
        progress("read", 0, 0)
    raw, elements = load_with_mesh(source, file_format)
    before = audit_elements(elements, profile, fail_on, regions)
    profile = before.profile
    work = Working.from_mesh(raw, elements)
    starts = {k: start for k, start, _ in work.rows()}
    done: dict[str, np.ndarray] = {}

    if options.bowties:
        done["bowties"] = _reorder_bowties(work, before)
    if options.merge and not merge.intended(profile.findings.severity):
        found = next((f for f in before.findings if f.kind == "coincident_nodes"), None)
        target, _ = merge.merge_target(found, work.node_ids, work.n_points)
        changed = target != np.arange(work.n_points)
        done["merged"] = work.node_ids[changed]
        work.map_nodes(target)
    if options.duplicates:
        audited = work.audited_blocks()
        keep = duplicates.duplicate_rows([work.cells[k] for k in audited])
        dropped = [work.cell_ids[k][~m] for k, m in zip(audited, keep)]
        done["duplicates"] = np.concatenate(dropped) if dropped else _none()
        for k, m in zip(audited, keep):
            if not m.all():
                work.keep_rows(k, m)
    if options.reverse:
        mid, mesh = audit_now_of(work, before)
        done["reversed"] = _reverse(work, reverse.reversed_rows(mesh, mid))
    if options.orphans:
        orphan = duplicates.orphan_nodes(work.used_nodes(), list(work.point_sets.values()))
        done["orphans"] = work.node_ids[orphan]
        if orphan.any():
            work.keep_nodes(~orphan)
    initial = work.points.copy()
    if options.restore:
        done["restored"] = _restore_outline(work, options.restore)

    result = Repair(work.to_meshio(), before, before, done)
    after, mesh = audit_now_of(work, before)
    held = _fixed_nodes(work, mesh, options.keep)
    fixed_nodes = held.copy()
    if options.move:
        after = _move(work, result, after, mesh, held, options, starts, progress)
    after.summary = replace(after.summary, source=f"{before.summary.source} repaired")
    result.after = after
    result.mesh = work.to_meshio()
    _record_move(result, initial, work.points, blocks_of(mesh), work.node_ids)
    result.worsened = _worsened(work, before, after, starts)
    result.remaining = _remaining(after, mesh, fixed_nodes, held, options.move)
    _suggest_restoring(result.remaining, after, mesh, work.points, work.node_ids)
    return result


def blocks_of(mesh: ElementMesh) -> list[tuple[str, np.ndarray]]:
    """(cell type, connectivity) of every audited block."""
    return [(b.cell_type, b.connectivity) for b in mesh.blocks]


def _restore_outline(work: Working, numbers: tuple[int, ...]) -> np.ndarray:
    """Put the outline nodes numbered ``numbers`` back on the outline (see
    :mod:`meshaudit.repair.outline`); midside nodes of their elements follow."""
    blocks = [work.cells[k] for k in work.audited_blocks()]
    nodes = outline.node_indices(work.node_ids, numbers)
    x = outline.restore(work.points, blocks, nodes, work.node_ids)
    moved = np.zeros(work.n_points, dtype=bool)
    moved[nodes] = True
    smooth.follow(x, work.points, blocks, moved, np.zeros(work.n_points, dtype=bool))
    work.points = x
    return np.sort(work.node_ids[nodes])


def _none() -> np.ndarray:
    return np.zeros(0, dtype=np.int64)


def _locate(work: Working, rows: np.ndarray) -> list[tuple[int, np.ndarray]]:
    """Report rows -> (block number, rows of that block)."""
    out = []
    for k, start, n in work.rows():
        inside = rows[(rows >= start) & (rows < start + n)] - start
        if inside.size:
            out.append((k, inside))
    return out


def _reverse(work: Working, mask: np.ndarray) -> np.ndarray:
    from .cells import reversal

    ids = []
    for k, rows in _locate(work, np.flatnonzero(mask)):
        t, data = work.cells[k]
        work.set_rows(k, rows, data[rows][:, reversal(t)])
        ids.append(work.cell_ids[k][rows])
    return np.concatenate(ids) if ids else _none()


def _reorder_bowties(work: Working, report: Report) -> np.ndarray:
    rows = np.flatnonzero(report.flag("self_intersecting"))
    located = [(k, r) for k, r in _locate(work, rows) if work.cells[k][0] == "quad"]
    if not located:
        return _none()
    n = work.n_points
    skip = {k: r for k, r in located}
    keys = []
    for k in work.audited_blocks():
        t, data = work.cells[k]
        cell = CELL_TYPES[t]
        if cell.dimension != 2:
            continue
        mine = np.ones(len(data), dtype=bool)
        if k in skip:
            mine[skip[k]] = False
        e = data[mine][:, cell.edges]
        low, high = np.minimum(e[..., 0], e[..., 1]), np.maximum(e[..., 0], e[..., 1])
        keys.append((low * n + high).ravel())
    others = np.sort(np.concatenate(keys))
    ids = []
    for k, r in located:
        data = work.cells[k][1]
        choice = reverse.bowtie_orders(work.points, data[r], others, n)
        good = choice >= 0
        if good.any():
            orders = reverse.BOWTIE_ORDERS[choice[good]]
            quads = data[r[good]]
            work.set_rows(k, r[good], np.take_along_axis(quads, orders, axis=1))
            ids.append(work.cell_ids[k][r[good]])
    return np.concatenate(ids) if ids else _none()


def _row_map(work: Working, starts: dict[int, int]) -> np.ndarray:
    """For each report row of the working mesh, its report row in the input."""
    parts = [starts[k] + work.origin[k] for k, _, _ in work.rows()]
    return np.concatenate(parts) if parts else _none()


def _worsened(work: Working, before: Report, after: Report, starts: dict[int, int]) -> np.ndarray:
    rows = _row_map(work, starts)
    worse = after.verdict > before.verdict[rows]
    return after.ids[worse]


def _fixed_nodes(work: Working, mesh: ElementMesh, keep: tuple[str, ...]) -> np.ndarray:
    blocks = blocks_of(mesh)
    out = fixed.boundary_nodes(work.n_points, blocks)
    out |= fixed.interface_nodes(work.n_points, blocks, mesh.cell_sets)
    out |= fixed.named_nodes(work.n_points, keep, work.point_sets, mesh.cell_sets, blocks)
    out[mesh.other_nodes] = True
    return out


def _plane_normal(report: Report, points: np.ndarray, blocks) -> np.ndarray | None:
    """The planar mesh's normal, turned to the side most of its elements face."""
    if report.summary.frame != "planar" or report.summary.normal is None:
        return None
    normal = np.asarray(report.summary.normal, dtype=float)
    facing = np.einsum("ij,j->", smooth.node_normals(points, blocks), normal)
    return -normal if facing < 0 else normal


def _move(
    work: Working,
    result: Repair,
    after: Report,
    mesh: ElementMesh,
    held: np.ndarray,
    options: RepairOptions,
    starts: dict[int, int],
    progress: ProgressCallback | None,
) -> Report:
    """Move nodes (see the module docstring); ``held`` (fixed nodes) grows in place with
    the nodes of elements a move made worse."""
    gate = 1 if after.fail_on == "warn" else 2
    targets = (after.verdict >= gate) | after.flag("inverted")
    if not targets.any() and not options.everywhere:
        return after
    blocks = blocks_of(mesh)
    start = work.points.copy()
    normal = _plane_normal(after, start, blocks)
    free = smooth.free_nodes(
        work.n_points, blocks, held, targets, options.rings, options.everywhere
    )
    moved = smooth.move_nodes(start, blocks, free, normal, held, progress)
    work.points = moved.points
    rows = _row_map(work, starts)
    trial = _settle(work, start, blocks, free, held, result.before.verdict[rows], after)
    if trial is not None and not options.everywhere:
        useful = smooth.useful_nodes(blocks, free, trial.verdict < after.verdict)
        if useful.sum() < free.sum():  # undo the moves that brought no element further
            _keep_moves(work, start, blocks, useful, held)
            free &= useful
            trial = _settle(work, start, blocks, free, held, result.before.verdict[rows], after)
    if trial is None:
        result.notes.append("node moves dropped: they made some element worse than in the input")
        work.points = start
        return after
    return trial


def _keep_moves(work: Working, start: np.ndarray, blocks, keep: np.ndarray, held) -> None:
    """Put every corner but ``keep`` back where it started; other nodes follow."""
    x = start.copy()
    x[keep] = work.points[keep]
    smooth.follow(x, start, blocks, keep, held)
    work.points = x


def _settle(
    work: Working,
    start: np.ndarray,
    blocks,
    free: np.ndarray,
    held: np.ndarray,
    limit: np.ndarray,
    like: Report,
) -> Report | None:
    """Audit the moved mesh; while some element's verdict is above ``limit`` (its verdict
    in the input), put the corners of those elements back where they started (they join
    ``held``, and leave ``free``, in place). Returns the audit, or None when that does not
    settle within :data:`SETTLE_ROUNDS` rounds."""
    for _ in range(SETTLE_ROUNDS):
        trial, _ = audit_now_of(work, like)
        worse = np.flatnonzero(trial.verdict > limit)
        if worse.size == 0:
            return trial
        offset = 0
        for t, d in blocks:
            inside = worse[(worse >= offset) & (worse < offset + len(d))] - offset
            corners = d[inside, : CELL_TYPES[t].n_corners]
            held[corners] = True
            free[corners] = False
            offset += len(d)
        _keep_moves(work, start, blocks, free, held)
    return None


def audit_now_of(work: Working, like: Report) -> tuple[Report, ElementMesh]:
    """Audit the working mesh under the profile, regions and gate of ``like``."""
    mesh = load(work.to_meshio(with_ids=False))
    regions = dict(zip(like.region_names, like.region_profiles)) or None
    return audit_elements(mesh, like.profile, like.fail_on, regions), mesh


def _record_move(result: Repair, x0: np.ndarray, x1: np.ndarray, blocks, node_ids) -> None:
    disp = np.linalg.norm(x1 - x0, axis=1)
    moved = disp > 0
    result.moved_nodes = int(np.count_nonzero(moved))
    if not moved.any():
        return
    total = np.zeros(len(x0))
    count = np.zeros(len(x0))
    for t, d in blocks:
        e = d[:, CELL_TYPES[t].edges].reshape(-1, 2)
        length = np.linalg.norm(x0[e[:, 0]] - x0[e[:, 1]], axis=1)
        for col in (0, 1):
            total += np.bincount(e[:, col], weights=length, minlength=len(x0))
            count += np.bincount(e[:, col], minlength=len(x0))
    size = np.where(count > 0, total / np.maximum(count, 1), np.inf)
    ratio = np.where(moved, disp / size, 0.0)
    worst = int(np.argmax(ratio))
    result.worst_move = float(ratio[worst])
    result.worst_node = int(node_ids[worst])


def _remaining(
    after: Report, mesh: ElementMesh, fixed_nodes: np.ndarray, held: np.ndarray, moved: bool
) -> dict[int, str]:
    """Element number -> why it still fails, from how many of its corners could move
    (``fixed_nodes``: never move; ``held``: those and the corners put back)."""
    out: dict[int, str] = {}
    failing = after.failing
    for b in mesh.blocks:
        rows = b.index[failing[b.index]]
        if rows.size == 0:
            continue
        c = b.cell.n_corners
        corners = b.connectivity[rows - b.index[0], :c]
        n_fixed = fixed_nodes[corners].sum(axis=1)
        n_held = held[corners].sum(axis=1)
        ordered = np.sort(corners, axis=1)
        collapsed = (ordered[:, 1:] == ordered[:, :-1]).any(axis=1)
        for row, f, h, one in zip(rows, n_fixed, n_held, collapsed):
            if one:
                why = "two of its corners are one node (collapsed): no node move can open it"
            elif f == c:
                why = "every corner is fixed (boundary, interface or named nodes)"
            elif not moved:
                why = "node moves were switched off"
            elif h == c:
                why = (
                    f"{f} of its {c} corners are fixed (boundary, interface or named), the "
                    "others were put back: moving them made another element worse"
                )
            else:
                why = (
                    f"{f} of its {c} corners are fixed (boundary, interface or named): "
                    "moving the others cannot bring it within the limits"
                )
            out[int(after.ids[row])] = why
    return out


def _suggest_restoring(
    remaining: dict[int, str],
    after: Report,
    mesh: ElementMesh,
    points: np.ndarray,
    node_ids: np.ndarray,
) -> None:
    """Add to the reason of each still-failing element the outline nodes among its corners
    that lie off the outline their neighbours continue (see
    :func:`meshaudit.repair.outline.astray`), with the option that puts them back."""
    if not remaining:
        return  # nothing to explain: the outline is not searched
    astray = outline.astray(points, blocks_of(mesh))
    for b in mesh.blocks:
        corners = b.connectivity[:, : b.cell.n_corners]
        for i in np.flatnonzero(astray[corners].any(axis=1)):
            element = int(after.ids[b.index[i]])
            if element not in remaining:
                continue
            nodes = corners[i][astray[corners[i]]]
            numbers = ",".join(str(int(n)) for n in node_ids[nodes])
            word = "node" if len(nodes) == 1 else "nodes"
            remaining[element] += (
                f"; outline {word} {numbers} lie{'s' if len(nodes) == 1 else ''} off the "
                f"outline {'its' if len(nodes) == 1 else 'their'} neighbours continue: "
                f"--restore-outline {numbers} puts {'it' if len(nodes) == 1 else 'them'} back"
            )
