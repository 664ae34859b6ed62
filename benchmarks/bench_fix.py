"""Time ``meshaudit.fix`` on meshes of about 10^5 elements.

Run from the repository root: ``python -m benchmarks.bench_fix [n_elements]``. Two meshes:

- the benchmark's bracket plate (:func:`benchmarks.meshgen.distorted_plate`: jittered
  quads with a reversed, a bow-tie, a collapsed and a non-convex element planted) with, in
  addition, ``TANGLES`` interior nodes pulled 1.4 spacings along x, across a neighbour
  (folded elements to untangle);
- a block of cubes (the bracket's boss, about n hexahedra), interior nodes moved at random
  by up to a tenth of the spacing, ``TANGLES`` of them pulled 0.8 spacings along the
  block's diagonal (inverted hexahedra) and one hexahedron's node order mirrored.

Each mesh is repaired three ways: the default (node moves around failing elements),
``everywhere`` (``--all``: every free node moves) and topology only (``--no-move``). One
row per run: wall time (both audits included), elements failing before and after, nodes
moved.
"""

from __future__ import annotations

import sys
import time

import meshio
import numpy as np

from benchmarks.meshgen import distorted_plate
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


def hex_block(n_elements: int, seed: int = 5) -> meshio.Mesh:
    """About ``n_elements`` hexahedra in a cube, jittered and tangled (module docstring)."""
    n = max(2, round(n_elements ** (1 / 3)))
    r = np.arange(n + 1, dtype=float)
    z, y, x = np.meshgrid(r, r, r, indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    s, p = n + 1, (n + 1) ** 2
    k, j, i = np.meshgrid(np.arange(n), np.arange(n), np.arange(n), indexing="ij")
    a = (k * p + j * s + i).ravel()
    base = np.column_stack([a, a + 1, a + 1 + s, a + s])
    hexes = np.hstack([base, base + p])
    rng = np.random.default_rng(seed)
    inner = np.flatnonzero(((points > 0) & (points < n)).all(axis=1))
    points[inner] += rng.uniform(-0.1, 0.1, (inner.size, 3))
    pulled = rng.choice(inner, size=min(TANGLES, inner.size), replace=False)
    points[pulled] += 0.8
    hexes[len(hexes) // 2] = hexes[len(hexes) // 2][[0, 3, 2, 1, 4, 7, 6, 5]]
    return meshio.Mesh(points, [("hexahedron", hexes)])


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
    plate = distorted_plate(n)
    _tangle(plate)
    for name, mesh in (("plate quads", plate), ("block hexahedra", hex_block(n))):
        for label, options in (
            ("default", RepairOptions()),
            ("--all", RepairOptions(everywhere=True)),
            ("--no-move", RepairOptions(move=False)),
        ):
            _run(f"{name}, {label}", mesh, options)


if __name__ == "__main__":
    main()
