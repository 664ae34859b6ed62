"""``audit_parts``: a partitioned mesh audited part by part where the parts are read.

Rounds of tasks, each part's task reading the part itself (only paths and the driver's
small decisions travel to the workers; only summaries travel back):

1. :func:`~.work.survey_part` per part: sizes (for the numbering offsets) and node moments;
   the driver decides the measuring frame of the whole mesh (:mod:`.frame`; one more
   round, :func:`~.work.plane_check`, unless every node shares one z);
2. :func:`~.work.part_cut_sizes` per part: the sizes of the elements on its free sides;
   the driver matches them across parts (:mod:`.cut_sizes`) into each cut element's
   size ratio against its neighbours in other parts;
3. :func:`~.work.audit_part` per part: the part audited by the existing engine in that
   frame, with those ratios, summarised (verdict and flag counts, statistics sketches,
   the worst elements, the part's findings, its free edges and free faces), its element
   report written where asked;
4. on the driver: the parts matched along their boundaries (:mod:`.interfaces`,
   :mod:`.solid_cut`) and one report assembled (:mod:`.report`).

A part is a file, or a slice of an XDMF file's elements (:mod:`meshaudit.mesh.slices`).

A worker holds one part at a time (its mesh, and its per-element result arrays while
it summarises them), so its memory is bounded by the largest part it is given.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..errors import InputError
from ..judge.profiles import Profile, load_profile
from ..mesh.frames import frame_notes
from ..mesh.parts import PartSet, is_partitioned, parts_of_pattern, parts_of_pvtu
from ..mesh.slices import XdmfSlice, is_xdmf, read_layout, xdmf_slices
from .cut_sizes import outside_ratios
from .executor import Executor, executor_for
from .frame import whole_frame
from .interfaces import match_parts
from .overlaps import Probes, overlap_finding, probes_for
from .report import PartitionedReport, assemble
from .work import PartTask, audit_part, part_cut_sizes, plane_check, survey_part

#: Not-ok elements a part sends back at most (the worst first); all of them are in the
#: per-part element reports.
KEEP = 100_000


def part_set(source: str | os.PathLike[str] | PartSet, slices: int | None = None) -> PartSet:
    """The parts of a ``.pvtu`` file, of a pattern, ``slices`` slices of an XDMF file
    (:mod:`meshaudit.mesh.slices`), or a :class:`PartSet` as given."""
    if isinstance(source, PartSet):
        return source
    text = str(source)
    if slices is not None:
        if not is_xdmf(text):
            raise InputError(f"{text}: only an XDMF file (.xdmf) can be read in slices")
        return xdmf_slices(text, slices)
    if is_partitioned(text):
        return parts_of_pvtu(text)
    return parts_of_pattern(text)


def audit_parts(
    source: str | os.PathLike[str] | PartSet,
    profile: Profile | str | os.PathLike[str] | None = None,
    fail_on: str = "fail",
    regions: Mapping[str, Profile | str | os.PathLike[str]] | None = None,
    cluster: Any = None,
    file_format: str | None = None,
    element_writer: Any = None,
    keep: int = KEEP,
    workers: int | None = None,
    slices: int | None = None,
) -> PartitionedReport:
    """Audit a partitioned mesh as one mesh (see :mod:`meshaudit.mesh.parts`).

    ``cluster``: None (a local Dask cluster of ``workers`` processes, default the CPUs
    available, started for this call; a local process pool when Dask is not installed;
    ``workers=1``: every part in the calling process, one after the other), the
    address of a running Dask scheduler (``"tcp://host:8786"``), or a
    ``distributed.Client`` already connected.
    ``element_writer``: writes one per-element report per part and their index (a
    :class:`meshaudit.outputs.part_elements.PartWriter`; on a cluster its directory must
    be one every worker can write to); None: no element reports.
    ``slices``: ``source`` is an XDMF file with HDF5 heavy data, audited as this many
    slices of contiguous elements, each worker reading only its slice's rows.
    """
    if fail_on not in ("fail", "warn"):
        raise InputError(f"fail_on must be 'fail' or 'warn', not {fail_on!r}")
    parts = part_set(source, slices)
    prof = load_profile(profile)
    region_profiles = {name: load_profile(p) for name, p in (regions or {}).items()}
    if element_writer is not None:
        element_writer.check()
    with executor_for(cluster, workers, len(parts.parts)) as pool:
        return _run(pool, parts, prof, fail_on, region_profiles, file_format, element_writer, keep)


def _run(
    pool: Executor,
    parts: PartSet,
    profile: Profile,
    fail_on: str,
    regions: dict[str, Profile],
    file_format: str | None,
    writer: Any,
    keep: int,
) -> PartitionedReport:
    paths = list(parts.parts)
    n = len(paths)
    surveys = pool.map(survey_part, paths, [file_format] * n)
    global_ids = all(s.global_ids for s in surveys)

    def check(centre: np.ndarray, normal: np.ndarray) -> Sequence[tuple[float, float, float]]:
        return pool.map(plane_check, paths, [file_format] * n, [centre] * n, [normal] * n)

    frame = whole_frame(surveys, check)
    cell_offsets = _starts([s.cells for s in surveys])
    point_offsets = _starts([s.points for s in surveys])
    element_offsets = _starts([s.elements for s in surveys])
    task = PartTask(
        file_format=file_format,
        frame=frame,
        profile=profile,
        fail_on=fail_on,
        regions=regions,
        keep=keep,
        writer=writer,
    )
    # the size ratio across cuts: the sizes on each part's free sides, matched here (the
    # surveys measured them already when the whole mesh is flat in x-y or has no surface
    # elements, and the parts all have global ids or none has)
    sizes = [s.cut for s in surveys]
    full = [s for s in surveys if s.count]
    flat = not full or min(s.low[2] for s in full) == max(s.high[2] for s in full)
    same_keys = global_ids or not any(s.global_ids for s in surveys)
    if not (flat and same_keys and all(c is not None for c in sizes)):
        sizes = pool.map(
            part_cut_sizes, paths, cell_offsets, point_offsets, [global_ids] * n, [task] * n
        )
    outside = outside_ratios(sizes)
    del sizes
    # overlaps across parts (planar meshes): each part gets the free-edge elements of
    # the other parts near it
    probes: list[Probes | None] = [None] * n
    if frame.kind == "planar" and profile.findings.enabled("overlapping_elements") and n > 1:
        rims = [(s.rim_rows, s.rim_xyz) for s in surveys]
        low, high = [s.low for s in surveys], [s.high for s in surveys]
        probes = list(probes_for(rims, element_offsets, low, high))
    results = []
    try:
        results = pool.map(
            audit_part,
            paths,
            list(range(n)),
            cell_offsets,
            point_offsets,
            element_offsets,
            [task] * n,
            outside,
            probes,
        )
        cross = match_parts([r.boundary for r in results], global_ids, profile.findings, frame)
        found = _overlaps(results, cross.copies, profile)
        if found is not None:
            cross.findings.append(found)
        notes = list(dict.fromkeys(note for r in results for note in r.notes))
        notes = [note for note in notes if note not in frame_notes(frame)]
        notes = [*frame_notes(frame), *notes, *cross.notes]
        if isinstance(paths[0], XdmfSlice):
            how = f"{n} slice(s) of contiguous elements, matched along their boundaries by node row"
        else:
            how = f"{n} part(s), matched along their boundaries by " + (
                "global node id" if global_ids else "node coordinates"
            )
        notes.append(f"partitioned mesh: {how}")
        frame_summary = {
            "frame": frame.kind,
            "normal": None if frame.normal is None else [float(c) for c in frame.normal],
            "orientation": frame.orientation,
        }
        if isinstance(paths[0], XdmfSlice):
            notes.append(
                "read in slices: orphan nodes (node rows no element uses) are not looked for"
            )
        report = assemble(
            parts.source, results, cross, profile, fail_on, regions, frame_summary, notes
        )
        if isinstance(paths[0], XdmfSlice):  # every node row of the file, as read whole
            report.summary.n_points = read_layout(parts.source).n_points
        if writer is not None:
            writer.finish(paths, results, element_offsets)
        return report
    except BaseException:
        if writer is not None:
            writer.discard(n)
        raise


def _overlaps(results: Sequence[Any], copies: np.ndarray, profile: Profile) -> Any:
    """The ``overlapping_elements`` finding across parts, or None (:mod:`.overlaps`)."""
    pairs = [r.overlaps for r in results if r.overlaps.size]
    if not pairs:
        return None
    rims = [r.boundary for r in results if r.boundary is not None]
    known = (
        np.concatenate([r.overlaps[:, 0] for r in results] + [b.rim_index for b in rims]),
        np.concatenate([r.overlap_ids for r in results] + [b.rim_ids for b in rims]),
    )
    return overlap_finding(np.concatenate(pairs), known, copies, profile.findings)


def _starts(sizes: Sequence[int]) -> list[int]:
    return [int(v) for v in np.concatenate([[0], np.cumsum(sizes)[:-1]])]
