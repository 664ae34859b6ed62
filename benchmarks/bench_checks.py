"""Time the mesh-level pieces of an audit one by one, best of N, in this process.

    python -m benchmarks.bench_checks                  # 10^6 quads, local numbering
    python -m benchmarks.bench_checks --elements 1e7 --repeat 2
    python -m benchmarks.bench_checks --shuffled       # node and element numbers shuffled

The mesh is the benchmark's distorted bracket plate (:func:`benchmarks.meshgen.distorted_plate`,
built in memory; ``--shuffled`` renumbers its nodes and elements at random, so no sort
starts from ordered input). Timed, each the least CPU time (seconds) of ``--repeat``
runs: the edge table
(:func:`meshaudit.mesh.topology.edge_table`), the coincident-node search
(``meshaudit.mesh_checks.findings._coincident`` with every finding kind on), the overlap
grid (:meth:`meshaudit.mesh_checks.overlap.BoxGrid.build`) and its query for the elements
on free edges (``pairs_near``), and the size ratio (:func:`meshaudit.mesh.neighbours.size_ratio`
over the edge groups). The allocator is set as ``meshaudit check`` sets it. To compare
two revisions, run this script in each checkout on the same machine, alternating.
"""

from __future__ import annotations

import argparse
import json
import time
from collections.abc import Callable
from typing import Any

import numpy as np

from meshaudit.engine.memory import return_large_blocks
from meshaudit.judge.finding_kinds import FindingSettings
from meshaudit.mesh.frames import choose_frame
from meshaudit.mesh.neighbours import edge_groups, size_ratio
from meshaudit.mesh.reading import load
from meshaudit.mesh.topology import edge_table
from meshaudit.mesh_checks import edges, findings, overlap

from .meshgen import distorted_plate


def best_of(repeat: int, fn: Callable[[], Any]) -> tuple[float, Any]:
    """(least CPU time of this process over ``repeat`` calls, the last result). CPU time
    rather than wall time: on a machine shared with other work it moves less."""
    best, out = float("inf"), None
    for _ in range(repeat):
        start = time.process_time()
        out = fn()
        best = min(best, time.process_time() - start)
    return best, out


def shuffled(mesh: Any, seed: int = 0) -> Any:
    """The same mesh with node and element numbers permuted at random."""
    rng = np.random.default_rng(seed)
    quads = mesh.cells[0].data
    new_of_old = rng.permutation(len(mesh.points))
    points = np.empty_like(mesh.points)
    points[new_of_old] = mesh.points
    mesh.points = points
    mesh.cells[0].data = new_of_old[quads][rng.permutation(len(quads))]
    return mesh


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--elements", type=float, default=1e6)
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--shuffled", action="store_true")
    args = parser.parse_args()
    return_large_blocks()
    raw = distorted_plate(int(args.elements))
    mesh = load(shuffled(raw) if args.shuffled else raw)
    del raw
    times: dict[str, float] = {}
    times["edge table"], table = best_of(args.repeat, lambda: edge_table(mesh))
    free_use = edges.free_uses(table)
    settings = FindingSettings()
    times["coincident nodes"], _ = best_of(
        args.repeat, lambda: findings._coincident(mesh, table, settings, free_use, False)
    )
    frame = choose_frame(mesh)
    shapes = overlap.planar_shapes(mesh, frame.axes)
    times["overlap grid"], grid = best_of(args.repeat, lambda: overlap.BoxGrid.build(shapes.boxes))
    around = np.unique(table.element[free_use]).astype(np.int64)
    times["overlap query"], _ = best_of(args.repeat, lambda: grid.pairs_near(around))
    h = np.sqrt(np.abs(np.random.default_rng(1).uniform(0.5, 2.0, mesh.n_elements)))
    side = edge_groups(table, None)
    times["size ratio"], _ = best_of(args.repeat, lambda: size_ratio(h, [side]))
    print(
        json.dumps(
            {
                "elements": mesh.n_elements,
                "shuffled": args.shuffled,
                "seconds": {k: round(v, 4) for k, v in times.items()},
            }
        )
    )


if __name__ == "__main__":
    main()
