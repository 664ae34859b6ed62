"""The report of a partitioned mesh: one :class:`~meshaudit.results.report.Report`
assembled from the parts' small results.

It keeps only the elements that are not ok (worst first, at most ``keep`` per part);
its counts, flag counts, statistics and region summary are those of every element
(see :class:`PartitionedReport`). Every report writer takes it as it takes the report
of one file; per-element arrays of every element exist only in the per-part element
reports (:mod:`meshaudit.distributed.elements`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..cells.registry import CELL_TYPES
from ..judge.profiles import Profile
from ..mesh_checks.findings import Finding
from ..metrics import METRIC_NAMES
from ..metrics.fused import kernel_path
from ..results.report import FLAG_NAMES, MeshSummary, Report
from .interfaces import CrossPart
from .sketch import Sketch
from .solid_cut import REDONE
from .work import PartResult


@dataclass
class PartitionedReport(Report):
    """A :class:`Report` whose arrays hold the kept not-ok elements only.

    ``global_index`` (k,): each kept row's position in the whole mesh. ``totals``: verdict
    counts, ``flag_totals``: flag counts and ``region_totals``: per-region counts over
    every element; ``not_ok``: elements not ok in the whole mesh (the rows kept may be
    fewer: see the report notes).
    """

    global_index: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    totals: dict[str, int] = field(default_factory=dict)
    flag_totals: dict[str, int] = field(default_factory=dict)
    region_totals: dict[str, dict[str, Any]] = field(default_factory=dict)
    not_ok: int = 0

    def positions(self, rows: np.ndarray) -> np.ndarray:
        return self.global_index[np.asarray(rows, dtype=np.int64)]

    def verdict_counts(self) -> dict[str, int]:
        return dict(self.totals)

    def flag_counts(self) -> dict[str, int]:
        return dict(self.flag_totals)

    def region_summary(self) -> dict[str, dict[str, Any]]:
        return {k: dict(v) for k, v in self.region_totals.items()}


def assemble(
    source: str,
    results: Sequence[PartResult],
    cross: CrossPart,
    profile: Profile,
    fail_on: str,
    regions: dict[str, Profile],
    frame_summary: dict[str, Any],
    notes: list[str],
) -> PartitionedReport:
    """One report of the whole mesh from the parts' results and the cross-part matching."""
    rows = [r.rows for r in results]
    cell_types = tuple(dict.fromkeys(t for r in rows for t in r["types"]))
    families = tuple(dict.fromkeys(f for r in rows for f in r["families"]))
    level_names = list(dict.fromkeys(m for r in rows for m in r["levels"]))
    k = sum(len(r["ids"]) for r in rows)

    def column(get: Any, dtype: Any, shape: tuple[int, ...] = ()) -> np.ndarray:
        parts = [np.asarray(get(r), dtype=dtype).reshape((-1, *shape)) for r in rows]
        return np.concatenate(parts) if parts else np.zeros((0, *shape), dtype=dtype)

    metrics = {
        m: column(lambda r, m=m: r["metrics"].get(m, np.full(len(r["ids"]), np.nan)), float)
        for m in METRIC_NAMES
    }
    levels = {
        m: column(lambda r, m=m: r["levels"].get(m, np.zeros(len(r["ids"]))), np.int8)
        for m in level_names
    }
    region_codes = None
    if regions:
        region_codes = column(lambda r: r["regions"], np.int64)
    element_counts: dict[str, int] = {}
    skipped: dict[str, int] = {}
    for r in results:
        for t, n in r.element_counts.items():
            element_counts[t] = element_counts.get(t, 0) + n
        for t, n in r.skipped.items():
            skipped[t] = skipped.get(t, 0) + n
    verdicts = sum((r.verdicts for r in results), np.zeros(3, dtype=np.int64))
    patterns: dict[int, int] = {}
    for r in results:
        for p, n in r.patterns.items():
            patterns[p] = patterns.get(p, 0) + n
    flag_totals = {}
    for bit, name in enumerate(FLAG_NAMES):
        n = sum(c for p, c in patterns.items() if p >> bit & 1)
        if n:
            flag_totals[name] = n
    stats = {}
    for m in METRIC_NAMES:
        sketches = [r.sketches[m] for r in results if m in r.sketches]
        stats[m] = Sketch.merged(sketches).statistics() if sketches else _undefined()
    region_totals = {}
    for name in regions:
        counts = sum((r.regions.get(name, np.zeros(3, int)) for r in results), np.zeros(3, int))
        region_totals[name] = {
            "profile": regions[name].to_dict(),
            "elements": int(counts.sum()),
            "counts": dict(zip(("ok", "warn", "fail"), map(int, counts))),
        }
    kept = k
    not_ok = sum(r.not_ok for r in results)
    if kept < not_ok:
        notes = [
            *notes,
            f"{not_ok:,} elements are not ok; this report lists the worst {kept:,} "
            "(see the per-part element reports for all of them)",
        ]
    summary = MeshSummary(
        source=source,
        n_points=sum(r.points for r in results) - cross.shared_nodes,
        element_counts=element_counts,
        skipped=skipped,
        element_numbers=results[0].numbering[0] if results else "",
        node_numbers=results[0].numbering[1] if results else "",
        # the pass this process would take; the workers run the same installation
        kernel=kernel_path(CELL_TYPES[t] for t in element_counts),
        **frame_summary,
    )
    return PartitionedReport(
        summary=summary,
        profile=profile,
        ids=column(lambda r: r["ids"], np.int64),
        cell_types=cell_types,
        type_codes=np.array([cell_types.index(t) for r in rows for t in r["types"]], dtype=np.int8),
        families=np.array([families.index(f) for r in rows for f in r["families"]], dtype=np.int8),
        cell_families=families,
        centroids=column(lambda r: r["centroids"], float, (3,)),
        metrics=metrics,
        flag_bits=column(lambda r: r["bits"], np.uint32),
        levels=levels,
        verdict=column(lambda r: r["verdict"], np.int8),
        fail_on=fail_on,
        notes=notes,
        region_names=tuple(regions),
        region_profiles=tuple(regions.values()),
        region_codes=region_codes,
        findings=merged_findings(
            [f for r in results for f in r.findings],
            cross.findings,
            frame_summary["frame"] == "planar",
            cross.surfaces is not None,
        ),
        free_edges=cross.free,
        boundary_surfaces=cross.surfaces,
        precomputed_statistics=stats,
        global_index=column(lambda r: r["index"], np.int64),
        totals=dict(zip(("ok", "warn", "fail"), map(int, verdicts))),
        flag_totals=flag_totals,
        region_totals=region_totals,
        not_ok=not_ok,
    )


def _undefined() -> dict[str, Any]:
    return Sketch.merged([]).statistics()


#: The order the checks of one file add their findings in (see
#: :func:`meshaudit.mesh_checks.findings.find_topology` and ``finish``).
CHECK_ORDER = (
    "orphan_nodes",
    "duplicate_elements",
    "coincident_nodes",
    "hanging_nodes",
    "crack_edges",
    "non_manifold_edges",
    "inconsistent_winding",
    "opposite_normals",
    "overlapping_elements",
    "unaudited_cells",
)


def merged_findings(
    from_parts: list[Finding], across: list[Finding], planar: bool = True, solids: bool = False
) -> list[Finding]:
    """One finding per kind: the parts' own and those across parts, in the order in
    which the checks of one file report them. The parts' crack edges are left out, and
    on a planar mesh their hanging nodes: both are worked out again over the free edges
    of the whole mesh (on a shell the parts' hanging nodes stay, for the corner nodes
    away from free edges, and a node found both ways counts once)."""
    redone = ("crack_edges", "hanging_nodes") if planar else ("crack_edges",)
    if solids:  # worked out again over the free faces of the whole mesh
        redone = (*redone, *REDONE)
    by_kind: dict[str, list[Finding]] = {}
    for f in from_parts:
        if f.kind not in redone:
            by_kind.setdefault(f.kind, []).append(f)
    for f in across:
        by_kind.setdefault(f.kind, []).append(f)
    out = []
    for kind in sorted(by_kind, key=lambda k: CHECK_ORDER.index(k) if k in CHECK_ORDER else 99):
        group = by_kind[kind]
        if len(group) == 1:
            out.append(group[0])
            continue
        index = np.concatenate([f.element_index for f in group])
        ids = np.concatenate([f.element_ids for f in group])
        index, first = np.unique(index, return_index=True)
        count = sum(f.count for f in group)
        if kind == "hanging_nodes":  # counted by node: once, however found
            count = int(np.unique(np.concatenate([f.node_ids for f in group])).size)
        elif kind == "opposite_normals":  # by element: once, in a part or on a cut
            count = int(index.size)
        out.append(
            replace(
                group[0],
                count=count,
                element_index=index,
                element_ids=ids[first],
                node_ids=np.unique(np.concatenate([f.node_ids for f in group])),
                pairs=np.concatenate([f.pairs for f in group]),
                edges=np.concatenate([f.edges for f in group]),
                node_xyz=np.concatenate([f.node_xyz for f in group]),
                edge_xyz=np.concatenate([f.edge_xyz for f in group]),
                message=f"{count:,} in all; "
                + "; ".join(f.message for f in group[:4])
                + ("; ..." if len(group) > 4 else ""),
            )
        )
    return out
