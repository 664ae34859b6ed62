"""Time the mesh-level checks on a 1000 x 1000 quad grid (a million elements).

Run from the repository root: ``python benchmarks/bench_findings.py [n]``. Prints the
time of the whole audit and of the mesh-level checks alone; shuffles the node and
element numbering so the sorts do not start from sorted input.
"""

from __future__ import annotations

import sys
import time

import meshio
import numpy as np

from meshaudit.engine.run import audit_elements
from meshaudit.mesh.frames import choose_frame
from meshaudit.mesh.reading import build_elements
from meshaudit.mesh_checks.findings import find


def shuffled_grid(n: int, seed: int = 0) -> meshio.Mesh:
    x, y = np.meshgrid(np.arange(n + 1.0), np.arange(n + 1.0))
    pts = np.stack([x.ravel(), y.ravel()], axis=1)
    i, j = np.meshgrid(np.arange(n), np.arange(n))
    n0 = (j * (n + 1) + i).ravel()
    quads = np.stack([n0, n0 + 1, n0 + n + 2, n0 + n + 1], axis=1)
    rng = np.random.default_rng(seed)
    new_of_old = rng.permutation(len(pts))
    pts_new = np.empty_like(pts)
    pts_new[new_of_old] = pts
    quads = new_of_old[quads][rng.permutation(len(quads))]
    return meshio.Mesh(pts_new, [("quad", quads)])


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    mesh = build_elements(shuffled_grid(n))
    t0 = time.perf_counter()
    report = audit_elements(mesh)
    t1 = time.perf_counter()
    ids = report.ids
    frame = choose_frame(mesh)
    t2 = time.perf_counter()
    found = find(mesh, ids, frame)
    t3 = time.perf_counter()
    print(f"{mesh.n_elements:,} elements, {mesh.n_points:,} nodes")
    print(f"whole audit (with findings): {t1 - t0:.2f} s")
    print(f"mesh-level checks alone:      {t3 - t2:.2f} s ({100 * (t3 - t2) / (t1 - t0):.0f}%)")
    print(f"findings: {[f.kind for f in found.findings]}, loops: {found.free_edges.n_loops}")


if __name__ == "__main__":
    main()
