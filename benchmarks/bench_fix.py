"""Time ``meshaudit.fix`` on meshes of about 10^5 elements.

Run from the repository root: ``python -m benchmarks.bench_fix [n_elements]``. The meshes
are the benchmark's bracket plate (:func:`benchmarks.meshgen.distorted_plate`: jittered
quads with a reversed, a bow-tie, a collapsed and a non-convex element planted) with, in
addition, ``TANGLES`` interior nodes pulled 1.4 spacings across a neighbour (folded
elements to untangle), and the distorted hexahedral block
(:func:`benchmarks.meshgen.distorted_block`) with the same number of interior nodes
pulled across. Each mesh is repaired three ways: the default (node moves around failing
elements), ``everywhere`` (every free node moves, ``--all``) and topology only. Prints one
row per run: wall time (the two audits included), elements failing before and after,
nodes moved.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from benchmarks.meshgen import distorted_block, distorted_plate
from meshaudit.repair import RepairOptions, repair

#: Interior nodes pulled across a neighbour in each mesh.
TANGLES = 200


def _tangle(mesh, seed: int = 3) -> None:
    """Pull ``TANGLES`` interior nodes (in place) across a neighbour: each moves by 1.4
    times the median edge length along x (the block: through the third dimension
    too, only x is moved)."""
    points = mesh.points
    lo, hi = points.min(axis=0), points.max(axis=0)
    span = hi - lo
    away = (points > lo + 0.05 * span) & (points < hi - 0.05 * span)
    inner = np.flatnonzero(away[:, :2].all(axis=1))
    rng = np.random.default_rng(seed)
    chosen = rng.choice(inner, size=min(TANGLES, inner.size), replace=False)
    conn = mesh.cells[0].data
    first = conn[:, :2]
    step = np.median(np.linalg.norm(points[first[:, 0]] - points[first[:, 1]], axis=1))
    points[chosen, 0] += 1.4 * step


def _run(label: str, mesh, options: RepairOptions) -> None:
    t0 = time.perf_counter()
    result = repair(mesh, options=options)
    dt = time.perf_counter() - t0
    before = result.before.verdict_counts()["fail"]
    after = result.after.verdict_counts()["fail"]
    print(
        f"| {label} | {result.before.summary.n_elements:,} | {before} | {after} | "
        f"{result.moved_nodes:,} | {dt:.2f} |"
    )


def main() -> None:
    n = int(float(sys.argv[1])) if len(sys.argv) > 1 else 100_000
    print("| mesh, repair | elements | failing before | failing after | nodes moved | s |")
    print("|---|---|---|---|---|---|")
    for name, make in (("plate quads", distorted_plate), ("block hexahedra", distorted_block)):
        mesh = make(n)
        _tangle(mesh)
        for label, options in (
            ("default", RepairOptions()),
            ("--all", RepairOptions(everywhere=True)),
            ("--no-move", RepairOptions(move=False)),
        ):
            _run(f"{name}, {label}", mesh, options)


if __name__ == "__main__":
    main()
