"""CPU time of the element kernels alone: the compiled pass against the numpy kernels.

    python -m benchmarks.compiled_pass                 # 10^5 quads and hexahedra, best of 5
    python -m benchmarks.compiled_pass --elements 1e6 --repeat 3

Builds the benchmark's distorted bracket-plate quads and its distorted block of hexahedra
(:mod:`benchmarks.meshgen`), cuts them into chunks of the engine's size and times, in this
process and alternating, the numpy kernel (``meshaudit.metrics.quad.measure``,
``meshaudit.metrics.solid.hexahedron.measure``) and the compiled pass
(:mod:`meshaudit.metrics.fused`) over every chunk. CPU seconds of this process (the
kernels run in the calling thread), so other work on a shared machine disturbs them less
than wall time; best of ``--repeat``. Prints CPU seconds per million elements and the
ratio.
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable

import numpy as np

from meshaudit.engine.memory import return_large_blocks
from meshaudit.engine.run import CHUNK_SIZE
from meshaudit.metrics import fused, quad
from meshaudit.metrics.solid import hexahedron

from .meshgen import distorted_block, distorted_plate


def _chunks(points: np.ndarray, cells: np.ndarray) -> list[np.ndarray]:
    return [
        np.ascontiguousarray(points[cells[s : s + CHUNK_SIZE]])
        for s in range(0, len(cells), CHUNK_SIZE)
    ]


def _best(fn: Callable[[], object], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.process_time()
        fn()
        times.append(time.process_time() - start)
    return min(times)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.compiled_pass", description=__doc__)
    parser.add_argument("--elements", type=float, default=1e5)
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args(argv)
    if not fused.built():
        parser.error("the compiled extension is not built (pip install -e . with a C compiler)")
    return_large_blocks()
    n = int(args.elements)
    plate = distorted_plate(n)
    quads = _chunks(plate.points, plate.cells_dict["quad"])
    planes = [np.ascontiguousarray(c[:, :, :2]) for c in quads]
    block = distorted_block(n, "hexahedron")
    hexes = _chunks(block.points, block.cells_dict["hexahedron"])
    cases = {
        "quad": (
            lambda: [quad.measure(c, p) for c, p in zip(quads, planes)],
            lambda: [fused.measure_quad(c, p) for c, p in zip(quads, planes)],
            sum(map(len, quads)),
        ),
        "hexahedron": (
            lambda: [hexahedron.measure(c, "hexahedron") for c in hexes],
            lambda: [fused.measure_hexahedron(c) for c in hexes],
            sum(map(len, hexes)),
        ),
    }
    print(f"CPU s per 10^6 elements, best of {args.repeat} (alternating):")
    for name, (numpy_pass, compiled_pass, count) in cases.items():
        numpy_runs, compiled_runs = [], []
        for _ in range(args.repeat):  # alternate, so both see the same load
            numpy_runs.append(_best(numpy_pass, 1))
            compiled_runs.append(_best(compiled_pass, 1))
        a, b = min(numpy_runs) * 1e6 / count, min(compiled_runs) * 1e6 / count
        print(f"{name:>10} ({count:,}): numpy {a:.3f} s, compiled {b:.3f} s, x{a / b:.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
