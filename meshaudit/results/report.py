"""The audit result: per-element arrays plus the mesh summary and the profile used.

The report is plain data; it never prints. Output modules render it.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..arrays import unique_values
from ..cells.registry import CELL_TYPES
from ..judge.profiles import Profile
from ..judge.verdicts import FAIL, VERDICT_NAMES, WARN
from ..mesh_checks.edges import FreeEdges
from ..mesh_checks.findings import Finding
from ..mesh_checks.surfaces import BoundarySurfaces
from ..metrics import LIMITED_METRICS, METRIC_NAMES, VALIDITY_FLAGS, WARNING_FLAGS
from .percentiles import linear_percentiles

#: Every flag an element can carry, in report order: validity flags, warning flags, then
#: one flag per metric whose limit it breached (warn or fail). Bit i of
#: ``Report.flag_bits`` is ``FLAG_NAMES[i]``.
FLAG_NAMES: tuple[str, ...] = VALIDITY_FLAGS + WARNING_FLAGS + LIMITED_METRICS
FLAG_BIT: dict[str, int] = {name: i for i, name in enumerate(FLAG_NAMES)}
#: The flags are held in one uint32 per element: every bit is in use. A new limited
#: metric or flag needs a wider word here and in the engine's sink.
FLAG_WORD_BITS = 32
if len(FLAG_NAMES) > FLAG_WORD_BITS:  # a silent overflow would drop flags: refuse to load
    raise ImportError(f"{len(FLAG_NAMES)} flags do not fit a {FLAG_WORD_BITS}-bit flag word")

PERCENTILES = (("min", 0.0), ("p5", 5.0), ("median", 50.0), ("p95", 95.0), ("max", 100.0))


@dataclass
class MeshSummary:
    source: str
    n_points: int
    element_counts: dict[str, int]  # cell type -> number audited
    skipped: dict[str, int]  # cell type -> number not audited
    frame: str  # "planar", "shell" or "solid" (no surface elements)
    normal: list[float] | None = None
    #: what element orientation is judged against: "+z", "relative" or "none" (solids
    #: alone; see :mod:`meshaudit.mesh_checks.orientation`)
    orientation: str = "+z"
    #: Which numbers the reports give elements and nodes (see meshaudit.mesh.labels).
    element_numbers: str = ""
    node_numbers: str = ""
    #: Which pass measured the elements: "compiled" (the C pass of
    #: :mod:`meshaudit.metrics.fused`, for the families that have one) or "numpy".
    kernel: str = "numpy"

    @property
    def n_elements(self) -> int:
        return sum(self.element_counts.values())

    def family_counts(self) -> dict[str, int]:
        """Elements audited per family (hexahedron20 counts as a hexahedron), in the
        order the families first appear."""
        counts: dict[str, int] = {}
        for cell_type, n in self.element_counts.items():
            family = CELL_TYPES[cell_type].family
            counts[family] = counts.get(family, 0) + n
        return counts

    @property
    def n_solids(self) -> int:
        """How many audited elements are solids (dimension 3)."""
        return sum(n for t, n in self.element_counts.items() if CELL_TYPES[t].dimension == 3)

    def elements_text(self) -> str:
        """The elements audited in words, by family (a family's cell types in brackets
        when it has others than its namesake), surface and solid families apart when
        both occur: '48 hexahedron, 16 wedge' or 'surface: 20 triangle; solid: 1,200
        hexahedron (1,000 hexahedron, 200 hexahedron20)'."""
        groups: dict[int, list[str]] = {}
        for family, total in self.family_counts().items():
            types = {t: n for t, n in self.element_counts.items() if CELL_TYPES[t].family == family}
            text = f"{total:,} {family}"
            if set(types) != {family}:
                text += " (" + ", ".join(f"{n:,} {t}" for t, n in types.items()) + ")"
            dimension = CELL_TYPES[next(iter(types))].dimension
            groups.setdefault(dimension, []).append(text)
        if len(groups) == 1:
            return ", ".join(next(iter(groups.values())))
        return "; ".join(
            f"{'surface' if d == 2 else 'solid'}: {', '.join(groups[d])}" for d in sorted(groups)
        )

    def skipped_text(self) -> str:
        """The cells not audited, e.g. '120 tetra, 40 line' ('' when every cell was)."""
        return ", ".join(f"{n:,} {t}" for t, n in self.skipped.items())

    def geometry_text(self) -> str:
        """The geometry in words, with what orientation is judged against (for reports)."""
        if self.frame == "solid":
            return (
                "solid (volume elements only, each measured in space against its reference "
                "element; orientation: the sign of each element's own det J, and neighbours "
                "compared across their common faces)"
            )
        solids = self.n_solids
        if self.frame != "planar":
            text = (
                "shell surface in 3-D (each element in its own best-fit plane; orientation "
                "judged between neighbours)"
            )
        elif self.orientation == "+z":
            text = "planar (orientation against +z: clockwise elements are reversed)"
        elif solids:
            text = "planar surface elements (orientation judged between neighbours)"
        else:
            text = "planar, plane contains z (orientation judged between neighbours)"
        if solids:
            text += (
                f", with {solids:,} solid elements measured in space (orientation: the sign "
                "of each one's det J, and neighbours compared across their common faces)"
            )
        return text

    def to_dict(self) -> dict[str, Any]:
        return {
            "source": self.source,
            "nodes": self.n_points,
            "elements": self.n_elements,
            "elements_by_type": dict(self.element_counts),
            "elements_by_family": self.family_counts(),
            "skipped_cells": dict(self.skipped),
            "geometry": self.frame,
            "plane_normal": self.normal,
            "orientation": self.orientation,
            "numbering": {"elements": self.element_numbers, "nodes": self.node_numbers},
            "kernel": self.kernel,
        }


@dataclass
class Report:
    """Per-element results of one audit, in read order (index 0..n-1)."""

    summary: MeshSummary
    profile: Profile
    ids: np.ndarray  # (n,) int64 element labels
    cell_types: tuple[str, ...]  # names behind type_codes
    type_codes: np.ndarray  # (n,) int8 index into cell_types
    families: np.ndarray  # (n,) int8 index into cell_families
    cell_families: tuple[str, ...]
    centroids: np.ndarray  # (n, 3)
    metrics: dict[str, np.ndarray]  # metric name -> (n,) float64
    flag_bits: np.ndarray  # (n,) uint32, bit i = FLAG_NAMES[i]
    levels: dict[str, np.ndarray]  # metric -> (n,) int8 breach level 0/1/2
    verdict: np.ndarray  # (n,) int8: 0 ok, 1 warn, 2 fail
    fail_on: str = "fail"  # "fail" or "warn": which verdict fails the mesh
    notes: list[str] = field(default_factory=list)
    #: Per-region limits: names and profiles of the regions asked for, and per element
    #: 0 (judged under ``profile``) or k (under ``region_profiles[k - 1]``).
    region_names: tuple[str, ...] = ()
    region_profiles: tuple[Profile, ...] = ()
    region_codes: np.ndarray | None = None
    #: The regions the file carries (see :mod:`meshaudit.mesh.regions`), for the breakdown:
    #: names, and per element 0 (no region) or j (``file_region_names[j - 1]``).
    file_region_names: tuple[str, ...] = ()
    file_region_codes: np.ndarray | None = None
    #: Mesh-level findings (only kinds that occur; a clean mesh has none).
    findings: list[Finding] = field(default_factory=list)
    #: Free edges chained into loops (None when the checks did not run).
    free_edges: FreeEdges | None = None
    #: the solids' free faces grouped into surfaces (skin, voids, cracks, interfaces; see
    #: :mod:`meshaudit.mesh_checks.surfaces`), None without solids or checks
    boundary_surfaces: BoundarySurfaces | None = None
    #: :meth:`statistics`, when the engine worked it out already (else on first use).
    precomputed_statistics: dict[str, dict[str, Any]] | None = field(
        default=None, repr=False, compare=False
    )
    #: The materials of an audit with one: region name (``default``: the rest) -> its
    #: properties; None without (the stiffness metrics are then NaN).
    materials: dict[str, Any] | None = None

    # -- sizes and selections -------------------------------------------------
    def __len__(self) -> int:
        return int(self.ids.shape[0])

    @property
    def index(self) -> np.ndarray:
        return np.arange(len(self), dtype=np.int64)

    @property
    def score(self) -> np.ndarray:
        return self.metrics["score"]

    @property
    def dimensions(self) -> set[int]:
        """The dimensions of the cell types audited: {2}, {3} or {2, 3}."""
        return {CELL_TYPES[t].dimension for t in self.cell_types}

    @property
    def types(self) -> np.ndarray:
        """Cell type name of every element (object array of str)."""
        return np.asarray(self.cell_types, dtype=object)[self.type_codes]

    @property
    def verdict_names(self) -> np.ndarray:
        return np.asarray(VERDICT_NAMES, dtype=object)[self.verdict]

    def positions(self, rows: np.ndarray) -> np.ndarray:
        """The 0-based positions in the whole mesh of report ``rows`` (the rows
        themselves, except in a report that keeps only some elements of a partitioned
        mesh, see :mod:`meshaudit.distributed.report`)."""
        return rows

    def flag(self, name: str) -> np.ndarray:
        """Boolean array: which elements carry flag ``name``."""
        return (self.flag_bits >> np.uint32(FLAG_BIT[name])) & np.uint32(1) == 1

    def flags_of(self, i: int) -> list[str]:
        bits = int(self.flag_bits[i])
        return [name for k, name in enumerate(FLAG_NAMES) if bits >> k & 1]

    def flag_strings(self, sep: str = ";") -> np.ndarray:
        """Flags of every element joined by ``sep`` (object array), cheap for large meshes."""
        uniq, inverse = np.unique(self.flag_bits, return_inverse=True)
        names = [sep.join(n for k, n in enumerate(FLAG_NAMES) if int(u) >> k & 1) for u in uniq]
        return np.asarray(names, dtype=object)[inverse.ravel()]

    def position_of(self, element_id: int) -> int:
        """Index of the element labelled ``element_id``; KeyError if none."""
        hits = np.flatnonzero(self.ids == element_id)
        if hits.size == 0:
            raise KeyError(element_id)
        return int(hits[0])

    def profile_of(self, i: int) -> Profile:
        """The profile element ``i`` was judged under (its region's, else the main one)."""
        code = 0 if self.region_codes is None else int(self.region_codes[i])
        return self.region_profiles[code - 1] if code else self.profile

    def region_summary(self) -> dict[str, dict[str, Any]]:
        """Per region asked for: its profile name, element count and verdict counts."""
        out = {}
        for k, name in enumerate(self.region_names, start=1):
            mask = self.region_codes == k if self.region_codes is not None else None
            n = int(mask.sum()) if mask is not None else 0
            counts = np.bincount(self.verdict[mask], minlength=3) if n else np.zeros(3, int)
            out[name] = {
                "profile": self.region_profiles[k - 1].to_dict(),
                "elements": n,
                "counts": {v: int(counts[j]) for j, v in enumerate(VERDICT_NAMES)},
            }
        return out

    def file_region_codes_of(self, rows: np.ndarray) -> list[int]:
        """The file region code (0 none, j: ``file_region_names[j - 1]``) of ``rows``."""
        if self.file_region_codes is None:
            return [0] * len(rows)
        return self.file_region_codes[rows].tolist()

    def file_region_labels(self, rows: np.ndarray | slice) -> np.ndarray:
        """The file region name of elements ``rows`` (object array, "" for none)."""
        names = np.asarray(("", *self.file_region_names), dtype=object)
        if self.file_region_codes is None:
            return names[np.zeros(len(self), dtype=np.int64)[rows]]
        return names[self.file_region_codes[rows]]

    def region_breakdown(self) -> list[dict[str, Any]]:
        """The summary per region of the file: one entry per region that has elements
        (plus "(no region)" for elements in none, when the file has regions), with its
        element count, verdict counts, lowest score and the profiles that judged it."""
        if self.file_region_codes is None or not self.file_region_names:
            return []
        k = len(self.file_region_names) + 1
        codes = self.file_region_codes.astype(np.int64)
        counts = np.bincount(codes * 3 + self.verdict, minlength=3 * k).reshape(k, 3)
        worst = np.full(k, np.inf)
        np.minimum.at(worst, codes, self.score)
        judged = self.region_codes if self.region_codes is not None else np.zeros_like(codes)
        pairs = np.unique(codes * (len(self.region_names) + 1) + judged)
        profiles: dict[int, list[str]] = {}
        for pair in pairs.tolist():
            code, by = divmod(pair, len(self.region_names) + 1)
            name = self.region_profiles[by - 1].name if by else self.profile.name
            profiles.setdefault(code, []).append(name)
        out = []
        for j in (*range(1, k), 0):
            n = int(counts[j].sum())
            if n == 0:
                continue
            out.append(
                {
                    "region": self.file_region_names[j - 1] if j else "(no region)",
                    "elements": n,
                    "counts": {v: int(counts[j, m]) for m, v in enumerate(VERDICT_NAMES)},
                    "worst_score": float(worst[j]),
                    "profiles": profiles.get(j, []),
                }
            )
        return out

    # -- verdicts -----------------------------------------------------------------
    @property
    def failing(self) -> np.ndarray:
        """Elements that fail the mesh under ``fail_on``."""
        return self.verdict >= (WARN if self.fail_on == "warn" else FAIL)

    @property
    def failing_findings(self) -> list[Finding]:
        """Findings that fail the mesh under ``fail_on`` (fail severity, or warn too)."""
        gate = ("warn", "fail") if self.fail_on == "warn" else ("fail",)
        return [f for f in self.findings if f.severity in gate]

    @property
    def passed(self) -> bool:
        return not bool(self.failing.any()) and not self.failing_findings

    def verdict_counts(self) -> dict[str, int]:
        # two comparisons are cheaper than a bincount, which widens the int8 codes first
        counts = [0] + [int(np.count_nonzero(self.verdict == k)) for k in (WARN, FAIL)]
        counts[0] = len(self) - counts[1] - counts[2]
        return {name: counts[k] for k, name in enumerate(VERDICT_NAMES)}

    def flag_counts(self) -> dict[str, int]:
        """How many elements carry each flag (only flags that occur).

        One pass over the elements: count each distinct bit pattern among the flagged
        elements (usually few), then add up the patterns that have a flag's bit (there are
        few patterns, however many elements).
        """
        bits = self.flag_bits
        patterns, counts = _pattern_counts(bits[bits != 0])
        out = {}
        for k, name in enumerate(FLAG_NAMES):
            c = int(counts[(patterns >> np.uint64(k)) & np.uint64(1) == 1].sum())
            if c:
                out[name] = c
        return out

    def worst(self, n: int | None = None, only_flagged: bool = True) -> np.ndarray:
        """Indices ordered worst first: by verdict, then by score (lowest first).

        Ties keep read order. With ``only_flagged`` only the elements not ok are sorted,
        usually a small fraction of a large mesh.
        """
        rows = np.flatnonzero(self.verdict > 0) if only_flagged else self.index
        order = rows[np.lexsort((self.score[rows], -self.verdict[rows].astype(np.int16)))]
        return order if n is None else order[:n]

    def breached(self, i: int) -> dict[str, tuple[float, str, float | None]]:
        """Metrics element ``i`` breached: name -> (value, 'warn'|'fail', limit)."""
        family = self.cell_families[int(self.families[i])]
        out = {}
        for metric, lvl in self.levels.items():
            code = int(lvl[i])
            if code:
                lim = self.profile_of(i).limit(family, metric)
                limit = None if lim is None else (lim.fail if code == FAIL else lim.warn)
                out[metric] = (float(self.metrics[metric][i]), VERDICT_NAMES[code], limit)
        return out

    # -- statistics -------------------------------------------------------------
    def statistics(self) -> dict[str, dict[str, Any]]:
        """Distribution of each metric over the elements where it is defined.

        min, 5th percentile, median, 95th percentile and max (non-finite values such as
        an infinite condition number count in 'infinite' and are left out of the
        percentiles), plus how many elements are past the warn limit (those past the fail
        limit included, as in the JUnit warn-limit case) and past the fail limit.
        Worked out once (the engine does it beside the mesh-level checks) and kept:
        after changing :attr:`metrics` by hand, call :func:`metric_statistics` instead.
        """
        if self.precomputed_statistics is None:
            self.precomputed_statistics = metric_statistics(self.metrics, self.levels)
        return self.precomputed_statistics

    def element_record(self, i: int) -> dict[str, Any]:
        """Everything about element ``i`` as plain Python values (non-finite -> None)."""
        return self.element_records(np.array([i]))[0]

    def element_records(self, rows: np.ndarray) -> list[dict[str, Any]]:
        """:meth:`element_record` of each element in ``rows``, built column by column.

        Whole columns are converted to Python values at once, so listing a hundred
        thousand elements costs well under a second.
        """
        rows = np.asarray(rows, dtype=np.int64)
        metrics = {m: json_floats(self.metrics[m][rows]) for m in METRIC_NAMES}
        breaches: list[dict[str, Any]] = [{} for _ in range(rows.size)]
        for metric, lvl in self.levels.items():
            codes = lvl[rows]
            hit = np.flatnonzero(codes)
            if hit.size == 0:
                continue
            limits = self.breached_limits(metric, rows[hit], codes[hit])
            values = metrics[metric]
            for k, level, limit in zip(hit.tolist(), codes[hit].tolist(), limits):
                breaches[k][metric] = {
                    "value": values[k],
                    "level": VERDICT_NAMES[level],
                    "limit": limit,
                }
        bits = self.flag_bits[rows]
        uniq, inverse = np.unique(bits, return_inverse=True)
        flag_lists = [[n for k, n in enumerate(FLAG_NAMES) if int(u) >> k & 1] for u in uniq]
        region_of = [None, *self.region_names]
        region_codes = (
            self.region_codes[rows].tolist() if self.region_codes is not None else [0] * rows.size
        )
        columns = zip(
            self.positions(rows).tolist(),
            self.ids[rows].tolist(),
            [self.cell_types[c] for c in self.type_codes[rows].tolist()],
            [VERDICT_NAMES[v] for v in self.verdict[rows].tolist()],
            inverse.ravel().tolist(),
            self.centroids[rows].astype(np.float64).tolist(),
            zip(*(metrics[m] for m in METRIC_NAMES)),
            breaches,
            region_codes,
            self.file_region_codes_of(rows),
        )
        file_region_of = [None, *self.file_region_names]
        return [
            {
                "index": i,
                "id": label,
                "type": cell_type,
                "verdict": verdict,
                "score": values[SCORE_COLUMN],
                "flags": list(flag_lists[f]),
                "centroid": centroid,
                "metrics": dict(zip(METRIC_NAMES, values)),
                "breaches": breach,
                "region": region_of[region],
                "file_region": file_region_of[in_file],
            }
            for i, label, cell_type, verdict, f, centroid, values, breach, region, in_file in (
                columns
            )
        ]

    def breached_limits(
        self, metric: str, rows: np.ndarray, codes: np.ndarray
    ) -> list[float | None]:
        """The limit each of ``rows`` breached for ``metric`` (fail limit at code 2),
        under the profile each was judged by (see :meth:`profile_of`)."""
        out: list[float | None] = [None] * rows.size
        n_profiles = len(self.region_profiles) + 1
        regions = np.zeros(rows.size, dtype=np.int64)
        if self.region_codes is not None:
            regions = self.region_codes[rows].astype(np.int64)
        keys = self.families[rows].astype(np.int64) * n_profiles + regions
        for key in unique_values(keys).tolist():
            f_code, r_code = divmod(key, n_profiles)
            profile = self.region_profiles[r_code - 1] if r_code else self.profile
            lim = profile.limit(self.cell_families[f_code], metric)
            if lim is None:
                continue
            for k in np.flatnonzero(keys == key).tolist():
                out[k] = lim.fail if codes[k] == FAIL else lim.warn
        return out


def _pattern_counts(bits: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct values of ``bits`` (as uint64) and how often each occurs."""
    if bits.size == 0:
        return np.zeros(0, dtype=np.uint64), np.zeros(0, dtype=np.int64)
    top = int(bits.max())
    if top < 1 << 22 and bits.size >= top >> 3:  # a bincount, not mostly empty: no sort
        counts = np.bincount(bits.astype(np.int64, copy=False), minlength=top + 1)
        patterns = np.flatnonzero(counts)
        return patterns.astype(np.uint64), counts[patterns]
    patterns, counts = np.unique(bits, return_counts=True)
    return patterns.astype(np.uint64), counts


def json_floats(values: np.ndarray) -> list[float | str | None]:
    """The JSON values of ``values``: Python floats (-0.0 as 0.0), None where not defined
    (NaN), the string "inf" or "-inf" where infinite (JSON has no infinite number; the
    CSV report writes the same words, and an empty cell where JSON has null)."""
    values = values.astype(np.float64) + 0.0
    out: list[float | str | None] = values.tolist()
    for k in np.flatnonzero(~np.isfinite(values)).tolist():
        v = values[k]
        out[k] = None if np.isnan(v) else ("inf" if v > 0 else "-inf")
    return out


def json_text(doc: Any, **options: Any) -> str:
    """``json.dumps(doc, **options)`` with every number valid JSON: a non-finite float
    anywhere in ``doc`` (a free-edge loop's area past the largest double, say) is written
    by the rule of :func:`json_floats`, and numpy numbers as Python ones. Never writes
    NaN or Infinity, which are not JSON."""
    try:
        return json.dumps(doc, allow_nan=False, **options)
    except (ValueError, TypeError):  # rare: walk the document only then
        return json.dumps(json_safe(doc), allow_nan=False, **options)


def json_safe(value: Any) -> Any:
    """``value`` (dicts, lists, tuples, numbers, numpy scalars and arrays) copied with
    every float written by the rule of :func:`json_floats` and numpy scalars as Python
    ones."""
    if isinstance(value, dict):
        return {k: json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_safe(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        x = float(value)
        if math.isnan(x):
            return None
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        return x + 0.0
    return value


def json_float(x: Any) -> float | str | None:
    """One value as :func:`json_floats` writes it."""
    return json_floats(np.array([x], dtype=np.float64))[0]


SCORE_COLUMN = METRIC_NAMES.index("score")


def finite_or_none(x: Any) -> float | None:
    """A float, or None for NaN and infinity (JSON has no such numbers)."""
    x = float(x)
    return x if np.isfinite(x) else None


def metric_statistics(
    metrics: dict[str, np.ndarray], levels: dict[str, np.ndarray]
) -> dict[str, dict[str, Any]]:
    """:meth:`Report.statistics` from the per-element ``metrics`` and breach ``levels``
    alone (a pure function, so the engine can run it beside other work)."""
    n = len(next(iter(metrics.values()))) if metrics else 0
    scratch = np.empty(n)  # one buffer for every metric's finite values
    return {name: _one_metric(metrics[name], levels.get(name), scratch) for name in METRIC_NAMES}


def _one_metric(values: np.ndarray, lvl: np.ndarray | None, scratch: np.ndarray) -> dict[str, Any]:
    """Statistics of one metric column; ``scratch`` holds at least ``values.size`` floats."""
    is_finite = np.isfinite(values)
    n_finite = int(np.count_nonzero(is_finite))
    n_infinite = 0 if n_finite == values.size else int(np.count_nonzero(np.isinf(values)))
    entry: dict[str, Any] = {"count": n_finite, "infinite": n_infinite}
    if n_finite:
        work = scratch[: values.size]
        np.add(values, 0.0, out=work)  # the copy, with -0.0 made 0.0 (sign-free ties)
        if n_finite < values.size:  # NaN and infinities move past the finite values
            np.copyto(work, np.inf, where=~is_finite)
        qs = linear_percentiles(work, [q for _, q in PERCENTILES], count=n_finite)
        entry.update(zip((k for k, _ in PERCENTILES), qs))
    else:
        entry.update({k: None for k, _ in PERCENTILES})
    entry["past_warn"] = int(np.count_nonzero(lvl >= WARN)) if lvl is not None else 0
    entry["past_fail"] = int(np.count_nonzero(lvl == FAIL)) if lvl is not None else 0
    return entry
