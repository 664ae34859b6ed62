"""Time the stages of one audit in this process and print them as JSON (run as a child).

``python -m benchmarks.stages MESH OUTDIR [--plot]`` reads MESH, reads the file's own
element and node numbers where meshio drops them (the label pass of
:mod:`meshaudit.mesh.labels`: gmsh tags, Abaqus labels), builds the element arrays, measures
and judges every element, computes the statistics, writes the JSON
report and (with ``--plot``, when the plot module exists) draws the mesh, timing each.

The engine runs here in one thread (``workers=1``) so that its stages add up; the
``meshaudit check`` command the benchmark times runs them on a thread pool. The metric
kernels and the verdicts run interleaved, chunk by chunk, inside
``meshaudit.engine.run.audit_elements``; their shares are told apart by timing the functions
that do the work (``measure_elements``, ``judge_by_region``, and for "mesh checks" the
edge table and the two parts of the mesh-level findings, of surface elements and of
solids (their face table included); "size ratio" the pass after the chunks,
:func:`meshaudit.engine.size_pass.apply_size_ratio`, and the solids' face groups it
reads) through thin wrappers
installed for this run only. "engine other" is the rest of ``audit_elements``: choosing
the frame, gathering node coordinates per chunk, the planar shapes the overlap check
uses and copying chunk results into the per-element arrays.
"""

from __future__ import annotations

import argparse
import importlib
import json
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any


def _timed(totals: dict[str, float], key: str, fn: Callable[..., Any]) -> Callable[..., Any]:
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        start = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            totals[key] += time.perf_counter() - start

    return wrapper


def _instrument(totals: dict[str, float]) -> None:
    """Wrap the kernel and verdict functions that ``audit_elements`` calls, where present
    (in the engine's modules, where the engine looks them up)."""
    for module in ("meshaudit.engine.measure", "meshaudit.engine.run"):
        engine = importlib.import_module(module)
        for attr, key in (
            ("measure_elements", "metrics"),
            ("judge_by_region", "verdicts"),
            ("judge", "verdicts"),
            ("edge_table", "mesh checks"),
            ("find_topology", "mesh checks"),
            ("finish", "mesh checks"),
            ("find_solid_topology", "mesh checks"),
            ("finish_solid", "mesh checks"),
            ("face_groups", "size ratio"),
            ("apply_size_ratio", "size ratio"),
        ):
            if hasattr(engine, attr):
                totals.setdefault(key, 0.0)
                setattr(engine, attr, _timed(totals, key, getattr(engine, attr)))


def _plot_module() -> Any | None:
    try:
        return importlib.import_module("meshaudit.outputs.plot")
    except ImportError:
        return None


def run(mesh: Path, outdir: Path, plot: bool) -> dict[str, Any]:
    """Stage times in seconds (and a few counts) of one in-process audit of ``mesh``."""
    t0 = time.perf_counter()
    import meshio  # noqa: F401  (imported here so that "read" is the reading alone)

    from meshaudit.engine.memory import return_large_blocks
    from meshaudit.engine.run import audit_elements
    from meshaudit.mesh import labels, reading
    from meshaudit.outputs import atomic, json_report

    return_large_blocks()  # the allocator settings `meshaudit check` makes

    times: dict[str, float] = {"import": time.perf_counter() - t0}
    inner: dict[str, float] = {}
    _instrument(inner)

    t = time.perf_counter()
    raw, said = reading.read_meshio_said(mesh)
    times["read"] = time.perf_counter() - t

    t = time.perf_counter()
    numbering = labels.for_file(mesh, None, raw, said)
    times["labels"] = time.perf_counter() - t

    t = time.perf_counter()
    elements = reading.build_elements(raw, str(mesh), numbering)
    times["elements"] = time.perf_counter() - t

    t = time.perf_counter()
    report = audit_elements(elements, workers=1)
    engine = time.perf_counter() - t
    times["metrics"] = inner.get("metrics", 0.0)
    times["verdicts"] = inner.get("verdicts", 0.0)
    times["mesh checks"] = inner.get("mesh checks", 0.0)
    times["size ratio"] = inner.get("size ratio", 0.0)
    measured = times["metrics"] + times["verdicts"] + times["mesh checks"] + times["size ratio"]
    times["engine other"] = engine - measured

    t = time.perf_counter()
    dest = outdir / f"{mesh.stem}.{mesh.suffix.lstrip('.')}.stages.json"
    atomic.write_all([(dest, lambda p: atomic.write_text(p, json_report.render(report)))])
    times["reports"] = time.perf_counter() - t

    plot_module = _plot_module() if plot else None
    if plot_module is not None:
        t = time.perf_counter()
        plot_module.render(outdir / f"{mesh.stem}.png", report, elements)
        times["plot"] = time.perf_counter() - t
    return {
        "times": times,
        "elements": len(report),
        "verdicts": report.verdict_counts(),
        "plot_available": _plot_module() is not None,
        "numbering": numbering.as_dict(),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("mesh", type=Path)
    parser.add_argument("outdir", type=Path)
    parser.add_argument("--plot", action="store_true")
    args = parser.parse_args()
    print(json.dumps(run(args.mesh, args.outdir, args.plot)))


if __name__ == "__main__":
    main()
