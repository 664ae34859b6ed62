"""``audit``: the whole pipeline read -> element arrays -> metrics -> verdicts -> Report."""

from __future__ import annotations

import os
import threading
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import ThreadPoolExecutor, as_completed
from typing import Any

import numpy as np

from .cells.registry import CELL_TYPES, CellType
from .elements import ElementBlock, ElementMesh
from .errors import InputError
from .finding_kinds import MESH_CHECK_KINDS
from .findings import TopologyPart, find_topology, finish, unaudited_cells
from .frames import Frame, anchor, centroids, choose_frame, to_local
from .mesh_checks.overlap import BoxGrid, PlanarShapes
from .metrics import METRIC_NAMES, METRICS, quadratic
from .orientation import Orientation, nearly_flat_shell_note
from .orientation import judge as judge_orientation
from .profiles import Profile, load_profile
from .reading import load
from .regions import judge_by_region, region_codes
from .report import FLAG_BIT, MeshSummary, Report, metric_statistics
from .scale import element_exponents, normalised, rescaled_findings, scaled_lengths
from .score import rebanded
from .topology import EdgeTable, edge_table
from .verdicts import WARN

#: Elements measured per kernel call. Chunking bounds the kernels' temporaries (a few
#: dozen (n,) float64 arrays) whatever the mesh size, so peak memory is the mesh plus the
#: per-element result arrays plus a constant; 32768 elements keep those temporaries in the
#: CPU cache (256 KiB each), which measured about twice as fast as 200000.
CHUNK_SIZE = 32_768

#: ``progress(stage, done, total)``: told before a stage starts (done 0) and as it goes.
#: Stages: "read" (total 0: size unknown) and "measure" (total = elements). The core never
#: prints; the command line turns these calls into a progress bar on a terminal.
ProgressCallback = Callable[[str, int, int], None]

#: Most threads :func:`default_workers` suggests (measured on 2 cores only; beyond a
#: few threads the interpreter lock held between numpy calls would limit the gain).
MAX_WORKERS = 4

#: Metrics in length^2 (area and det J): the others are dimensionless.
AREA_METRICS: tuple[str, ...] = tuple(m.name for m in METRICS if m.unit == "length^2")

#: An element whose area lies outside 2^-200 .. 2^200 may be too small (or large) for
#: the products of up to eight lengths its metrics take; it is measured again at its own
#: scale (see :func:`measure_elements`).
_AREA_RANGE = (2.0**-200, 2.0**200)


def measure_elements(
    cell: CellType | str,
    coords3: np.ndarray,
    frame: Frame,
    exponent: int = 0,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Metrics and flags of elements of one cell type (see :mod:`meshaudit.cells`),
    nodes ``coords3`` (n, k, 3).

    A surface cell (dimension 2) is laid in its measuring plane (``frame``) and its family
    kernel measures the shape on the corner nodes; a quadratic cell type then gets its own
    Jacobian part and midside checks on all its nodes. A solid (dimension 3) is measured
    by its kernel on every node in space, with no measuring plane. Metrics the kernel does
    not measure are NaN.

    ``coords3`` may be the nodes scaled by 2^-``exponent`` (see
    :func:`meshaudit.frames.normalised`): area and det J are given back in the nodes'
    own units. An element whose area comes out beyond 2^+-200 is measured again with its
    nodes scaled by a power of two of its own (:func:`meshaudit.scale.element_exponents`),
    so that no product of lengths overflows or underflows. ``coords3`` are expected
    within 2^+-:data:`meshaudit.scale.SAFE_EXPONENT` (:func:`audit_elements` sees to it),
    so that any finite scale gives the same verdicts.
    """
    if isinstance(cell, str):
        cell = CELL_TYPES[cell]
    metrics, flags = _measure_elements(cell, coords3, frame)
    area = metrics["area"]  # never negative
    odd = np.flatnonzero(~((area > _AREA_RANGE[0]) & (area < _AREA_RANGE[1])))
    if odd.size:  # rare: collapsed elements, or elements of extreme size
        own = element_exponents(coords3[odd])
        rows, own = odd[own != 0], own[own != 0]
        if rows.size:
            with np.errstate(under="ignore"):
                scaled = np.ldexp(coords3[rows], -own[:, None, None])
            part = _measure_elements(cell, scaled, frame)
            _rescale(part[0], own)
            _merge(metrics, flags, rows, part)
    if exponent:
        _rescale(metrics, exponent)
    return metrics, flags


def _measure_elements(
    cell: CellType, coords3: np.ndarray, frame: Frame
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    if cell.dimension == 3:  # a solid: measured in space, no plane to lay it in
        metrics, flags = cell.kernel(coords3)
        return _with_every_metric(metrics, len(coords3)), flags
    n_corners = cell.n_corners
    corners = coords3[:, :n_corners]
    if cell.is_quadratic:
        local = to_local(coords3, frame, n_corners)
        metrics, flags = cell.kernel(corners, local[:, :n_corners])
        return quadratic.measure(cell.name, coords3, local, metrics, flags)
    metrics, flags = cell.kernel(corners, to_local(corners, frame))
    # det J of a linear surface element is bilinear or constant: its minimum is at a corner
    metrics["det_j_lower_bound"] = metrics["det_j_corner_min"]
    return _with_every_metric(metrics, len(corners)), flags


def _with_every_metric(metrics: dict[str, np.ndarray], n: int) -> dict[str, np.ndarray]:
    """``metrics`` with NaN for each metric of :data:`METRIC_NAMES` it lacks (in place)."""
    for name in METRIC_NAMES:
        if name not in metrics and name != "score":
            metrics[name] = np.full(n, np.nan)
    return metrics


def _rescale(metrics: dict[str, np.ndarray], exponent: int | np.ndarray) -> None:
    """Area and det J (and their quarter-point twins) measured on nodes scaled by
    2^-exponent, in place, back in the nodes' own units."""
    for name in list(metrics):
        if name.split("|")[0] in AREA_METRICS:
            metrics[name] = scaled_lengths(metrics[name], exponent, 2)


def _merge(
    metrics: dict[str, np.ndarray],
    flags: dict[str, np.ndarray],
    rows: np.ndarray,
    part: tuple[dict[str, np.ndarray], dict[str, np.ndarray]],
) -> None:
    """Write the results ``part`` of elements ``rows`` over theirs (in place); a column
    the part does not have (a quarter-point twin) is not defined for those rows."""
    n = len(next(iter(flags.values())))
    for target, values, fill in ((metrics, part[0], np.nan), (flags, part[1], False)):
        for name in dict.fromkeys([*target, *values]):
            dtype = (values[name] if name in values else target[name]).dtype
            whole = target[name].copy() if name in target else np.full(n, fill, dtype)
            whole[rows] = values[name] if name in values else fill
            target[name] = whole


def measure_chunk(
    cell: CellType | str,
    coords3: np.ndarray,
    frame: Frame,
    profile: Profile,
    codes: np.ndarray | None = None,
    region_profiles: Sequence[Profile] = (),
    exponent: int = 0,
) -> tuple[dict[str, np.ndarray], np.ndarray, dict[str, np.ndarray], np.ndarray]:
    """Metrics, flag bits, breach levels and verdicts of one chunk of one cell type.

    ``coords3`` may be the nodes scaled by 2^-``exponent`` (see
    :func:`measure_elements`); the metrics are judged in the nodes' own units.

    Element i is judged under ``profile`` when ``codes[i]`` is 0 (or ``codes`` is None),
    else under ``region_profiles[codes[i] - 1]``. Its score (``metrics["score"]``, see
    :mod:`meshaudit.score`) is worked out here, with the verdict it belongs with.
    Pure: depends only on its arguments, so chunks can be measured in any order or place.
    """
    if isinstance(cell, str):
        cell = CELL_TYPES[cell]
    metrics, flags = measure_elements(cell, coords3, frame, exponent)
    if codes is None:
        codes = np.zeros(len(coords3), dtype=np.int16)
    levels, verdict, score = judge_by_region(
        cell.family, metrics, flags, (profile, *region_profiles), codes
    )
    metrics["score"] = score
    bits = np.zeros(len(verdict), dtype=np.uint32)
    for name, flag in flags.items():
        bits |= flag.astype(np.uint32) << np.uint32(FLAG_BIT[name])
    for name, lvl in levels.items():
        bits |= (lvl > 0).astype(np.uint32) << np.uint32(FLAG_BIT[name])
    return metrics, bits, levels, verdict


def _rows(index: np.ndarray) -> slice | np.ndarray:
    """``index`` as a slice when it is a run of consecutive rows (it always is when the
    mesh came from :func:`meshaudit.reading.load`): slice assignment is much cheaper."""
    if index.size and bool((np.diff(index) == 1).all()):
        return slice(int(index[0]), int(index[-1]) + 1)
    return index


def default_workers() -> int:
    """Threads :func:`audit_elements` uses by default: the CPUs this process may run on,
    at most :data:`MAX_WORKERS`."""
    try:
        cpus = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cpus = os.cpu_count() or 1
    return max(1, min(cpus, MAX_WORKERS))


def audit_elements(
    mesh: ElementMesh,
    profile: Profile | str | os.PathLike[str] | None = None,
    fail_on: str = "fail",
    regions: Mapping[str, Profile | str | os.PathLike[str]] | None = None,
    progress: ProgressCallback | None = None,
    workers: int | None = None,
) -> Report:
    """Audit element arrays already built (see :func:`meshaudit.reading.load`).

    ``regions`` maps a region name (gmsh physical group or element set, see
    :mod:`meshaudit.regions`) to the profile its elements are judged under.
    ``progress`` (see :data:`ProgressCallback`) hears about every chunk measured.
    ``workers``: threads to use (default :func:`default_workers`; 1 runs everything in
    the calling thread). The result does not depend on it.

    Elements are measured in chunks of :data:`CHUNK_SIZE` by :func:`measure_chunk`, a
    pure function of its arguments (no global state, nothing shared between chunks), so
    chunks can be measured in any order or place: here a pool of threads takes them
    (numpy releases the interpreter lock in its loops) while one of the threads also
    runs the mesh-level checks that need only the connectivity
    (:func:`meshaudit.findings.find_topology`); each chunk's results are copied into
    its own rows of the per-element arrays. A distributed array engine could map the
    same function over partitions.
    """
    if fail_on not in ("fail", "warn"):
        raise InputError(f"fail_on must be 'fail' or 'warn', not {fail_on!r}")
    prof = load_profile(profile)
    region_names = tuple(regions or {})
    region_profiles = tuple(load_profile(p) for p in (regions or {}).values())
    codes = region_codes(mesh.n_elements, mesh.cell_sets, region_names)
    # a mesh of extreme size is measured scaled by 2^-exponent (exactly), and its
    # lengths given back in its own units (see meshaudit.frames.normalised)
    mesh, exponent = normalised(mesh)
    frame = choose_frame(mesh)
    n = mesh.n_elements
    cell_types = tuple(dict.fromkeys(b.cell_type for b in mesh.blocks))
    families = tuple(dict.fromkeys(b.family for b in mesh.blocks))
    ids = np.empty(n, dtype=np.int64)
    type_codes = np.empty(n, dtype=np.int8)
    family_codes = np.empty(n, dtype=np.int8)
    for block in mesh.blocks:
        ids[block.index] = block.ids
        type_codes[block.index] = cell_types.index(block.cell_type)
        family_codes[block.index] = families.index(block.family)
    sink = _ChunkSink(n, has_quadratic=any(CELL_TYPES[t].is_quadratic for t in cell_types))
    checks = any(prof.findings.enabled(kind) for kind in MESH_CHECK_KINDS)
    planar = frame.kind == "planar" and frame.axes is not None
    shapes = None
    if planar and checks:
        shapes = PlanarShapes.empty(n, frame.axes, anchor(mesh))

    def measure(block: ElementBlock, sl: slice) -> int:
        rows = _rows(block.index[sl])
        coords3 = mesh.points[block.connectivity[sl]]
        result = measure_chunk(
            block.cell,
            coords3,
            frame,
            prof,
            codes[rows],
            region_profiles,
            exponent,
        )
        centre = centroids(coords3)
        sink.store(rows, result, scaled_lengths(centre, exponent, 1) if exponent else centre)
        if shapes is not None:
            shapes.fill(rows, coords3[:, : block.cell.n_corners])
        return sl.stop - sl.start

    def topology() -> tuple[EdgeTable | None, TopologyPart | None]:
        if not checks and frame.orientation == "+z":  # every finding kind is off
            return None, None
        table = edge_table(mesh)  # shared by the orientation flags and the findings
        if not checks:
            return table, None
        return table, find_topology(mesh, ids, frame, prof.findings, table)

    if progress is not None:
        progress("measure", 0, n)
    chunks = list(mesh.chunks(CHUNK_SIZE))
    workers = default_workers() if workers is None else max(1, int(workers))
    pool = None
    if workers > 1 and len(chunks) > 1:
        pool = ThreadPoolExecutor(max_workers=workers, thread_name_prefix="meshaudit")
    try:
        summing = grid = None
        if pool is None:
            pending = None
            sizes = (measure(block, sl) for block, sl in chunks)
        else:
            pending = pool.submit(topology)
            futures = [pool.submit(measure, block, sl) for block, sl in chunks]
            sizes = (future.result() for future in as_completed(futures))
        for size in sizes:
            sink.done += size
            if progress is not None:
                progress("measure", sink.done, n)
        # the statistics and the overlap check's grid of box centres need only the
        # finished columns: worked out while the other checks finish (where orientation is
        # relative, the statistics wait for the orientation check, which may move scores
        # to warn)
        relative = frame.orientation == "relative"
        if pool is not None:
            if not relative:
                summing = pool.submit(metric_statistics, sink.metrics, sink.ordered_levels())
            if shapes is not None and prof.findings.enabled("overlapping_elements"):
                grid = pool.submit(BoxGrid.build, shapes.boxes)
        table, part = topology() if pending is None else pending.result()
        reversed_ = (sink.bits >> np.uint32(FLAG_BIT["reversed"])) & np.uint32(1) == 1
        orientation = judge_orientation(mesh, frame, reversed_, table)
        notes = [*mesh.numbering.notes, *frame_notes(frame), *nearly_flat_shell_note(mesh, frame)]
        notes += mark_orientation(orientation, sink.bits, sink.verdict, sink.metrics["score"])
        if pool is not None and relative:
            summing = pool.submit(metric_statistics, sink.metrics, sink.ordered_levels())
        mesh_findings = None
        if part is not None:
            grid_result = None if grid is None else grid.result
            mesh_findings = finish(part, mesh, frame, shapes, grid_result, orientation)
        stats = None if summing is None else summing.result()
    finally:
        if pool is not None:
            pool.shutdown(wait=True, cancel_futures=True)
    if mesh_findings is not None and exponent:
        mesh_findings = rescaled_findings(mesh_findings, exponent)
    findings = [] if mesh_findings is None else mesh_findings.findings
    unaudited = unaudited_cells(mesh, prof.findings)
    if unaudited is not None:
        findings.append(unaudited)
    summary = MeshSummary(
        source=mesh.source,
        n_points=mesh.n_points,
        element_counts=mesh.element_counts(),
        skipped=dict(mesh.skipped),
        frame=frame.kind,
        normal=None if frame.normal is None else [float(c) for c in frame.normal],
        orientation=frame.orientation,
        element_numbers=mesh.numbering.elements,
        node_numbers=mesh.numbering.nodes,
    )
    return Report(
        summary=summary,
        profile=prof,
        ids=ids,
        cell_types=cell_types,
        type_codes=type_codes,
        families=family_codes,
        cell_families=families,
        centroids=sink.centre,
        metrics=sink.metrics,
        flag_bits=sink.bits,
        levels=sink.ordered_levels(),
        verdict=sink.verdict,
        fail_on=fail_on,
        notes=notes,
        region_names=region_names,
        region_profiles=region_profiles,
        region_codes=codes,
        findings=findings,
        free_edges=mesh_findings.free_edges if mesh_findings is not None else None,
        precomputed_statistics=stats,
    )


class _ChunkSink:
    """Per-element result arrays that chunks, measured in any order and from several
    threads, copy their results into (each chunk its own rows)."""

    def __init__(self, n: int, has_quadratic: bool) -> None:
        self.n = n
        self.done = 0
        # a linear-only mesh has no midside nodes: those columns are one shared NaN
        self.copied = (
            METRIC_NAMES
            if has_quadratic
            else tuple(m for m in METRIC_NAMES if m not in quadratic.MIDSIDE_METRICS)
        )
        self.metrics = {
            name: np.empty(n) if name in self.copied else _nan_column(n) for name in METRIC_NAMES
        }
        self.bits = np.zeros(n, dtype=np.uint32)
        self.verdict = np.zeros(n, dtype=np.int8)
        self.centre = np.empty((n, 3))
        self.levels: dict[str, np.ndarray] = {}
        self.level_order: dict[int, tuple[str, ...]] = {}
        self._lock = threading.Lock()

    def store(
        self,
        rows: slice | np.ndarray,
        result: tuple[dict[str, np.ndarray], np.ndarray, dict[str, np.ndarray], np.ndarray],
        centre: np.ndarray,
    ) -> None:
        metrics, bits, levels, verdict = result
        for name in self.copied:
            self.metrics[name][rows] = metrics[name]
        self.bits[rows] = bits
        self.verdict[rows] = verdict
        self.centre[rows] = centre
        first = rows.start if isinstance(rows, slice) else int(rows[0])
        with self._lock:
            self.level_order[first] = tuple(levels)
            for name in levels:
                if name not in self.levels:
                    self.levels[name] = np.zeros(self.n, dtype=np.int8)
        for name, lvl in levels.items():
            self.levels[name][rows] = lvl

    def ordered_levels(self) -> dict[str, np.ndarray]:
        """The breach levels in the order the metrics first appear in element order
        (the order is what reports list breaches in, so it must not depend on threads)."""
        names = dict.fromkeys(
            name for first in sorted(self.level_order) for name in self.level_order[first]
        )
        return {name: self.levels[name] for name in names}


def _nan_column(n: int) -> np.ndarray:
    """A read-only (n,) column of NaN that takes no memory."""
    return np.broadcast_to(np.float64(np.nan), (n,))


def mark_orientation(
    orientation: Orientation,
    bits: np.ndarray,
    verdict: np.ndarray,
    score: np.ndarray | None = None,
) -> list[str]:
    """Flag the elements facing against the rest of their patch (in place).

    Only where orientation is relative (shells, planar meshes whose plane contains z;
    see :mod:`meshaudit.orientation`): the smaller orientation group of each patch gets
    ``flipped_normal`` (verdict at least warn; ``score``, when given, moves to the warn
    band with it). Against +z the kernels have flagged the clockwise elements
    ``reversed`` already. Returns report notes (e.g. a patch that cannot be oriented at
    all).
    """
    if orientation.reference != "relative":
        return []
    flipped = orientation.turned
    bits |= flipped.astype(np.uint32) << np.uint32(FLAG_BIT["flipped_normal"])
    raised = np.flatnonzero(flipped & (verdict < WARN))
    if score is not None:
        rebanded(score, raised, verdict[raised], np.full(raised.size, WARN))
    verdict[raised] = WARN
    twisted = int(orientation.twisted.sum())
    if twisted:
        return [f"{twisted} elements lie on a patch that cannot be consistently oriented"]
    return []


def frame_notes(frame: Frame) -> list[str]:
    """Report notes on where a planar mesh lies when that is not the x-y plane."""
    if frame.kind != "planar" or frame.tilt is None or frame.tilt == 0.0:
        return []
    if frame.vertical:
        return [
            "the mesh plane contains the z direction: a 2-D solver reading x and y would "
            "see it edge-on; elements are measured in their plane and orientation is "
            "judged only between neighbours (flipped_normal, opposite_normals)"
        ]
    text = (
        f"the mesh plane is tilted {frame.tilt:.3g} deg from x-y: elements are measured in "
        "their plane, their orientation against +z as a 2-D solver reading x and y sees it"
    )
    if frame.tilt > 45.0:
        text += (
            f" (it would see the mesh squashed to {abs(float(frame.normal[2])):.2g} of its area)"
        )
    return [text]


def audit(
    source: Any,
    profile: Profile | str | os.PathLike[str] | None = None,
    file_format: str | None = None,
    fail_on: str = "fail",
    regions: Mapping[str, Profile | str | os.PathLike[str]] | None = None,
    progress: ProgressCallback | None = None,
    workers: int | None = None,
) -> Report:
    """Audit a mesh file (any format meshio reads) or a ``meshio.Mesh`` in memory.

    ``progress`` (optional) is called as the stages go: see :data:`ProgressCallback`.
    ``workers``: threads, as in :func:`audit_elements`.

    >>> import meshio, numpy as np
    >>> points = np.array([[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]])
    >>> mesh = meshio.Mesh(points, [("quad", [[0, 1, 2, 3]])])
    >>> report = audit(mesh)
    >>> float(report.metrics["det_j_min"][0])   # a 2b x 2h rectangle has det J = b*h
    0.5
    >>> report.passed
    True
    """
    if progress is not None:
        progress("read", 0, 0)
    mesh = load(source, file_format)
    return audit_elements(mesh, profile, fail_on, regions, progress, workers)
