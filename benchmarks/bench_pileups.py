"""Time the audit of pathological meshes: piles of coincident nodes and of elements.

``python -m benchmarks.bench_pileups [CASE ...]`` runs each case in a fresh child
process (so each peak memory is its own) with the full audit (every mesh-level check at
its default severity) and prints one row per case: elements, nodes, wall time of the
audit (the mesh is built in memory first, not timed), the child's peak resident memory
and what came out: the findings' counts, or the one-line refusal. Cases:

- ``identical-K``: K nodes at one point, K / 4 quads on nodes of their own;
- ``grid-at-point-N``: an N x N quad grid (nodes shared) with every node at one point;
- ``jittered-K``: K / 4 unit squares on nodes of their own, moved by up to 1e-9 (distinct
  nodes within the merge tolerance: 4 places of K / 4 nodes);
- ``random-K``: K quads with random corners in the unit square (a pile of elements);
- ``graded-N``: an N x N grid of unit squares beside one square 3N across (no defect: a
  grid sized by the largest element puts every fine element in one cell).
"""

from __future__ import annotations

import argparse
import resource
import subprocess
import sys
import time

import meshio
import numpy as np

CASES = (
    "identical-10000",
    "identical-16000",
    "identical-40000",
    "identical-100000",
    "identical-1000000",
    "grid-at-point-100",
    "grid-at-point-1000",
    "jittered-1600",
    "random-300",
    "random-1000",
    "random-4000",
    "graded-1000",
)


def separate_quads(points: np.ndarray) -> meshio.Mesh:
    return meshio.Mesh(points, [("quad", np.arange(len(points)).reshape(-1, 4))])


def grid(n: int) -> tuple[np.ndarray, np.ndarray]:
    x, y = np.meshgrid(np.arange(n + 1.0), np.arange(n + 1.0))
    i, j = np.meshgrid(np.arange(n), np.arange(n))
    n0 = (j * (n + 1) + i).ravel()
    quads = np.stack([n0, n0 + 1, n0 + n + 2, n0 + n + 1], axis=1)
    return np.stack([x.ravel(), y.ravel()], axis=1), quads


def build(case: str) -> meshio.Mesh:
    kind, _, size = case.rpartition("-")
    k = int(size)
    rng = np.random.default_rng(0)
    if kind == "identical":
        return separate_quads(np.ones((k, 2)))
    if kind == "grid-at-point":
        pts, quads = grid(k)
        return meshio.Mesh(np.ones_like(pts), [("quad", quads)])
    if kind == "jittered":
        square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
        return separate_quads(np.tile(square, (k // 4, 1)) + rng.uniform(-1e-9, 1e-9, (k, 2)))
    if kind == "random":
        return separate_quads(rng.random((4 * k, 2)))
    if kind == "graded":
        pts, quads = grid(k)
        big = np.array([[k + 1, 0], [4 * k + 1, 0], [4 * k + 1, 3 * k], [k + 1, 3 * k]], float)
        return meshio.Mesh(
            np.vstack([pts, big]), [("quad", np.vstack([quads, len(pts) + np.arange(4)]))]
        )
    raise SystemExit(f"unknown case {case!r}")


def child(case: str) -> None:
    from meshaudit import audit
    from meshaudit.errors import InputError

    mesh = build(case)
    start = time.perf_counter()
    try:
        report = audit(mesh)
        outcome = ", ".join(f"{f.kind} {f.count:,}" for f in report.findings) or "no findings"
    except InputError as err:
        outcome = f"refused: {err}"
    seconds = time.perf_counter() - start
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    cells = len(mesh.cells[0].data)
    print(f"| {case} | {cells:,} | {len(mesh.points):,} | {seconds:.2f} | {peak:.0f} | {outcome} |")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("cases", nargs="*", default=list(CASES))
    parser.add_argument("--child", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        child(args.cases[0])
        return
    print("| case | elements | nodes | audit s | peak MB | outcome |")
    print("|---|---|---|---|---|---|")
    for case in args.cases:
        done = subprocess.run(
            [sys.executable, "-m", "benchmarks.bench_pileups", "--child", case],
            capture_output=True,
            text=True,
        )
        print(done.stdout.strip() or f"| {case} | failed: {done.stderr.strip()[-200:]} |")
        sys.stdout.flush()


if __name__ == "__main__":
    main()
