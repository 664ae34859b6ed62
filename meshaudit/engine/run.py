"""``audit_elements``: element arrays in, :class:`~meshaudit.results.report.Report` out.

The engine measures the elements chunk by chunk (:func:`meshaudit.engine.measure.measure_chunk`,
a pure function of its arguments) on a runner (:mod:`meshaudit.engine.pool`), copies each
chunk's results into its own rows (:mod:`meshaudit.engine.sink`) and runs the mesh-level
checks beside the chunks. Results do not depend on the number of threads.

Solids are measured like any element. The measuring plane and the checks of surface
elements look at the surface elements only
(:meth:`meshaudit.mesh.elements.ElementMesh.surface_part`), their findings mapped back to
report positions; the checks of the solids look at their face table
(:mod:`meshaudit.mesh_checks.solid_findings`), and the node checks (orphans, coincident
nodes) at every node.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from ..judge.finding_kinds import MESH_CHECK_KINDS, SOLID_FACE_KINDS
from ..judge.profiles import Profile, load_profile
from ..judge.score import rebanded
from ..judge.verdicts import WARN
from ..mesh.elements import ElementBlock, ElementMesh
from ..mesh.faces import SolidEdges
from ..mesh.frames import Frame, anchor, centroids, choose_frame, frame_notes
from ..mesh.neighbours import SideGroups, edge_groups, face_groups
from ..mesh.regions import region_codes
from ..mesh.scale import normalised, rescaled_findings, scaled_lengths
from ..mesh.topology import EdgeTable, edge_table
from ..mesh_checks.findings import (
    MeshFindings,
    TopologyPart,
    at_report_positions,
    find_topology,
    finish,
    unaudited_cells,
)
from ..mesh_checks.orientation import Orientation, nearly_flat_shell_note
from ..mesh_checks.orientation import judge as judge_orientation
from ..mesh_checks.overlap import BoxGrid, PlanarShapes
from ..mesh_checks.solid_findings import find_solid_topology, finish_solid, merged
from ..mesh_checks.stiffness import material_notes, stiffness_findings
from ..metrics.fused import kernel_path
from ..results.report import FLAG_BIT, MeshSummary, Report, metric_statistics
from .materials import MaterialMap, MaterialSpec
from .measure import measure_chunk
from .pool import Pending, SerialRunner, ThreadRunner, runner
from .sink import ChunkSink, rows_of
from .size_pass import apply_size_ratio

#: Elements measured per kernel call. Chunking bounds the kernels' temporaries (a few
#: dozen (n,) float64 arrays) whatever the mesh size, so peak memory is the mesh plus the
#: per-element result arrays plus a constant; 32768 elements keep those temporaries in the
#: CPU cache (256 KiB each), which measured about twice as fast as 200000.
CHUNK_SIZE = 32_768

#: ``progress(stage, done, total)``: told before a stage starts (done 0) and as it goes.
#: Stages: "read" (total 0: size unknown) and "measure" (total = elements). The core never
#: prints; the command line turns these calls into a progress bar on a terminal.
ProgressCallback = Callable[[str, int, int], None]


def audit_elements(
    mesh: ElementMesh,
    profile: Profile | str | os.PathLike[str] | None = None,
    fail_on: str = "fail",
    regions: Mapping[str, Profile | str | os.PathLike[str]] | None = None,
    progress: ProgressCallback | None = None,
    workers: int | None = None,
    material: MaterialSpec = None,
    frame: Frame | None = None,
    outside_ratio: tuple[np.ndarray, np.ndarray] | None = None,
) -> Report:
    """Audit element arrays already built (see :func:`meshaudit.mesh.reading.load`).

    ``regions`` maps a region name (gmsh physical group or element set, see
    :mod:`meshaudit.mesh.regions`) to the profile its elements are judged under.
    ``progress`` (see :data:`ProgressCallback`) hears about every chunk measured.
    ``workers``: threads to use (default :func:`meshaudit.engine.pool.default_workers`;
    1 runs everything in the calling thread). The result does not depend on it.
    ``frame``: the measuring frame to use instead of the one the mesh's own nodes give
    (a part of a partitioned mesh is measured in the frame of the whole mesh, see
    :mod:`meshaudit.distributed`).
    ``outside_ratio``: (element positions, size ratios) against neighbours that are not
    in ``mesh`` (a part's neighbours across its cut, worked out by
    :mod:`meshaudit.distributed`): each of those elements' ``size_ratio`` is the larger of
    its own and this one, judged with the rest.

    Elements are measured in chunks of :data:`CHUNK_SIZE` by
    :func:`~meshaudit.engine.measure.measure_chunk`, a pure function of its arguments (no
    global state, nothing shared between chunks), so chunks can be measured in any order
    or place: here a pool of threads takes them (numpy releases the interpreter lock in
    its loops) while one of the threads also runs the mesh-level checks that need only
    the connectivity (:func:`meshaudit.mesh_checks.findings.find_topology`); each chunk's
    results are copied into its own rows of the per-element arrays. A distributed array
    engine could map the same function over partitions.

    ``material``: a :class:`meshaudit.material.Material` for every element, or a mapping
    region name -> material (``"default"``: every element no listed region covers; see
    :mod:`meshaudit.engine.materials`). With it the stiffness metrics are measured
    (:mod:`meshaudit.metrics.stiffness`) and the findings ``constant_strain_failure`` and
    ``small_time_step`` looked for; without it nothing of that runs.
    """
    if fail_on not in ("fail", "warn"):
        raise InputError(f"fail_on must be 'fail' or 'warn', not {fail_on!r}")
    run = _Run.prepare(mesh, profile, regions, material, frame)
    run.outside_ratio = outside_ratio
    n = run.mesh.n_elements
    if progress is not None:
        progress("measure", 0, n)
    chunks = list(run.mesh.chunks(CHUNK_SIZE))
    pool = runner(workers, len(chunks))
    try:
        pending = pool.later(run.topology)
        for size in pool.each(run.measure, chunks):
            run.sink.done += size
            if progress is not None:
                progress("measure", run.sink.done, n)
        notes, mesh_findings, stats = run.finish(pool, pending)
    finally:
        pool.shutdown()
    return run.report(fail_on, notes, mesh_findings, stats)


@dataclass
class _Run:
    """One audit: what its chunks and checks share, worked out once before measuring."""

    mesh: ElementMesh  # normalised: nodes scaled by 2^-exponent
    exponent: int
    #: The surface elements alone (the mesh itself when it has no solids), numbered
    #: 0..m-1, what the mesh-level checks look at; ``positions`` (m,) their report
    #: positions and ``surface_row`` (n,) the inverse (-1 for a solid), both None
    #: without solids.
    surface: ElementMesh
    positions: np.ndarray | None
    surface_row: np.ndarray | None
    frame: Frame
    profile: Profile
    region_names: tuple[str, ...]
    region_profiles: tuple[Profile, ...]
    codes: np.ndarray  # (n,) region of each element (0: the base profile)
    ids: np.ndarray
    cell_types: tuple[str, ...]
    type_codes: np.ndarray
    families: tuple[str, ...]
    family_codes: np.ndarray
    sink: ChunkSink
    checks: bool  # some mesh-level finding kind is enabled
    shapes: PlanarShapes | None  # planar corner polygons for the overlap check
    materials: MaterialMap | None = None  # None: no material, no stiffness metrics
    outside_ratio: tuple[np.ndarray, np.ndarray] | None = None  # see audit_elements

    @classmethod
    def prepare(
        cls,
        mesh: ElementMesh,
        profile: Profile | str | os.PathLike[str] | None,
        regions: Mapping[str, Profile | str | os.PathLike[str]] | None,
        material: MaterialSpec = None,
        frame: Frame | None = None,
    ) -> _Run:
        prof = load_profile(profile)
        materials = MaterialMap.prepare(material, mesh.n_elements, mesh.cell_sets)
        region_names = tuple(regions or {})
        region_profiles = tuple(load_profile(p) for p in (regions or {}).values())
        codes = region_codes(mesh.n_elements, mesh.cell_sets, region_names)
        # a mesh of extreme size is measured scaled by 2^-exponent (exactly), and its
        # lengths given back in its own units (see meshaudit.mesh.scale.normalised)
        mesh, exponent = normalised(mesh)
        surface, positions = mesh.surface_part()
        surface_row = None
        if positions is not None:
            surface_row = np.full(mesh.n_elements, -1, dtype=np.int64)
            surface_row[positions] = np.arange(positions.size)
        # the surface elements decide: solids have no plane
        if frame is None:
            frame = choose_frame(surface, beside_solids=mesh.has_solids)
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
        sink = ChunkSink(
            n,
            has_quadratic=any(b.cell.is_quadratic for b in mesh.blocks),
            has_solids=mesh.has_solids,
            has_material=materials is not None,
        )
        checks = any(prof.findings.enabled(kind) for kind in MESH_CHECK_KINDS)
        shapes = None
        if frame.kind == "planar" and frame.axes is not None and checks:
            shapes = PlanarShapes.empty(surface.n_elements, frame.axes, anchor(surface))
        return cls(
            mesh,
            exponent,
            surface,
            positions,
            surface_row,
            frame,
            prof,
            region_names,
            region_profiles,
            codes,
            ids,
            cell_types,
            type_codes,
            families,
            family_codes,
            sink,
            checks,
            shapes,
            materials,
        )

    def measure(self, block: ElementBlock, sl: slice) -> int:
        """Measure, judge and store elements ``sl`` of ``block``; returns how many."""
        rows = rows_of(block.index[sl])
        coords3 = self.mesh.points[block.connectivity[sl]]
        material = None
        if self.materials is not None:
            material = self.materials.constants(rows, block.cell.dimension)
        result = measure_chunk(
            block.cell,
            coords3,
            self.frame,
            self.profile,
            self.codes[rows],
            self.region_profiles,
            self.exponent,
            material,
        )
        centre = centroids(coords3)
        if self.exponent:
            centre = scaled_lengths(centre, self.exponent, 1)
        self.sink.store(rows, result, centre)
        if self.shapes is not None and block.cell.dimension == 2:
            if self.surface_row is not None:  # the surface part numbers its own rows
                rows = rows_of(self.surface_row[block.index[sl]])
            self.shapes.fill(rows, coords3[:, : block.cell.n_corners])
        return sl.stop - sl.start

    def topology(self) -> tuple[EdgeTable, TopologyPart | None, list[SideGroups]]:
        """The edge table, the mesh-level checks that need only the connectivity (of the
        surface elements, and of the solids' faces when there are solids: ``part.solid``)
        and the side groups the size ratio compares neighbours across (edges, solids'
        faces)."""
        surface = self.surface  # the surface checks look at the surface elements only
        table = edge_table(surface)  # shared by orientation, findings and the size ratio
        sides = [edge_groups(table, self.positions)]
        part = None
        if self.checks:
            ids = self.ids if self.positions is None else self.ids[self.positions]
            settings = self.profile.findings
            solids = SolidEdges.of(self.mesh) if self.mesh.has_solids else None
            part = find_topology(surface, ids, self.frame, settings, table, solids)
            if solids is not None and any(settings.enabled(k) for k in SOLID_FACE_KINDS):
                rep = part.clusters.rep if part.clusters is not None else np.arange(0)
                part.solid = find_solid_topology(
                    self.mesh, self.ids, settings, rep, surface, self.positions
                )
        if self.mesh.has_solids:
            # the checks' face table when it holds every solid: built once, not twice
            solid = None if part is None else part.solid
            if solid is not None and solid.whole:
                sides.append(face_groups(self.mesh, solid.table, solid.positions))
            else:
                sides.append(face_groups(self.mesh))
        return table, part, sides

    def finish(
        self, pool: SerialRunner | ThreadRunner, pending: Pending
    ) -> tuple[list[str], MeshFindings | None, dict | None]:
        """After the last chunk: orientation, the rest of the mesh-level checks and (on a
        pool of threads, meanwhile) the statistics. Returns (notes, findings, statistics)."""
        mesh, frame, sink = self.surface, self.frame, self.sink
        # the statistics and the overlap check's grid of box centres need only the
        # finished columns: worked out while the other checks finish (where orientation is
        # relative, the statistics wait for the orientation check, which may move scores
        # to warn)
        relative = frame.orientation == "relative"
        summing = grid = None
        if pool.parallel and self.shapes is not None:
            if self.profile.findings.enabled("overlapping_elements"):
                grid = pool.later(BoxGrid.build, self.shapes.boxes)
        table, part, sides = pending.result()
        reversed_ = (sink.bits >> np.uint32(FLAG_BIT["reversed"])) & np.uint32(1) == 1
        if self.positions is not None:
            reversed_ = reversed_[self.positions]
        orientation = judge_orientation(mesh, frame, reversed_, table)
        # the rest of the mesh-level checks read no per-element column the size ratio
        # and the orientation marks write: on a pool they run beside them
        checking = None
        if part is not None:
            inverted = (sink.bits >> np.uint32(FLAG_BIT["inverted"])) & np.uint32(1) == 1
            grid_result = None if grid is None else grid.result
            checking = pool.later(self._mesh_findings, part, grid_result, orientation, inverted)
        apply_size_ratio(
            sink,
            sides,
            self.families,
            self.family_codes,
            self.codes,
            (self.profile, *self.region_profiles),
            self.outside_ratio,
        )
        if pool.parallel and not relative:
            summing = pool.later(metric_statistics, sink.metrics, sink.ordered_levels())
        notes = [*mesh.numbering.notes, *frame_notes(frame), *nearly_flat_shell_note(mesh, frame)]
        notes += mark_orientation(
            widened(orientation, self.positions, len(sink.verdict)),
            sink.bits,
            sink.verdict,
            sink.metrics["score"],
        )
        if pool.parallel and relative:
            summing = pool.later(metric_statistics, sink.metrics, sink.ordered_levels())
        mesh_findings = None if checking is None else checking.result()
        stats = None if summing is None else summing.result()
        return notes, mesh_findings, stats

    def _mesh_findings(
        self,
        part: TopologyPart,
        grid: Callable[[], BoxGrid] | None,
        orientation: Orientation,
        inverted: np.ndarray,
    ) -> MeshFindings:
        """The mesh-level checks that need each element's winding and shape (and the
        solids' inverted flags, ``inverted`` (n,)), at report positions."""
        found = finish(part, self.surface, self.frame, self.shapes, grid, orientation)
        found = at_report_positions(found, self.positions)
        if part.solid is not None:
            solid_found, surfaces = finish_solid(part.solid, inverted[part.solid.positions])
            found = merged(found, solid_found, surfaces)
        return found

    def report(
        self,
        fail_on: str,
        notes: list[str],
        mesh_findings: MeshFindings | None,
        stats: dict | None,
    ) -> Report:
        mesh, frame, sink = self.mesh, self.frame, self.sink
        if mesh_findings is not None and self.exponent:
            mesh_findings = rescaled_findings(mesh_findings, self.exponent)
        findings = [] if mesh_findings is None else mesh_findings.findings
        unaudited = unaudited_cells(mesh, self.profile.findings)
        if unaudited is not None:
            findings.append(unaudited)
        if self.materials is not None:
            findings += stiffness_findings(
                sink.metrics["stable_time_step"], sink.strain_failed, self.ids, self.profile
            )
            notes = [*notes, *material_notes(self.materials)]
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
            kernel=kernel_path(b.cell for b in mesh.blocks),
        )
        return Report(
            summary=summary,
            profile=self.profile,
            ids=self.ids,
            cell_types=self.cell_types,
            type_codes=self.type_codes,
            families=self.family_codes,
            cell_families=self.families,
            centroids=sink.centre,
            metrics=sink.metrics,
            flag_bits=sink.bits,
            levels=sink.ordered_levels(),
            verdict=sink.verdict,
            fail_on=fail_on,
            notes=notes,
            region_names=self.region_names,
            region_profiles=self.region_profiles,
            region_codes=self.codes,
            file_region_names=() if mesh.file_regions is None else mesh.file_regions[0],
            file_region_codes=None if mesh.file_regions is None else mesh.file_regions[1],
            findings=findings,
            free_edges=mesh_findings.free_edges if mesh_findings is not None else None,
            boundary_surfaces=mesh_findings.surfaces if mesh_findings is not None else None,
            precomputed_statistics=stats,
            materials=None if self.materials is None else self.materials.to_dict(),
        )


def widened(orientation: Orientation, positions: np.ndarray | None, n: int) -> Orientation:
    """The orientation of a mesh's surface part (elements at report ``positions``) over
    all ``n`` elements: no solid is turned or twisted. ``positions`` None: as it is."""
    if positions is None:
        return orientation
    turned, twisted = np.zeros(n, dtype=bool), np.zeros(n, dtype=bool)
    turned[positions] = orientation.turned
    twisted[positions] = orientation.twisted
    return replace(orientation, turned=turned, twisted=twisted)


def mark_orientation(
    orientation: Orientation,
    bits: np.ndarray,
    verdict: np.ndarray,
    score: np.ndarray | None = None,
) -> list[str]:
    """Flag the elements facing against the rest of their patch (in place).

    Only where orientation is relative (shells, planar meshes whose plane contains z;
    see :mod:`meshaudit.mesh_checks.orientation`): the smaller orientation group of each patch gets
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
