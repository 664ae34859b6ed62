"""Time of the element stiffness and of the metrics built on it.

    python -m benchmarks.stiffness                   # 10^6 quads of the bracket plate
    python -m benchmarks.stiffness --elements 1e5 --repeat 3

Builds the distorted bracket plate of about N quads (:func:`benchmarks.meshgen.distorted_plate`)
and reports, best of ``--repeat`` wall and processor times (the machine may be shared:
the processor time of this process counts none of the other work), for the whole
mesh in chunks of :data:`meshaudit.engine.run.CHUNK_SIZE` elements, one thread:

- element stiffness: the shape gradients at the 2x2 Gauss points and the 8 x 8 stiffness
  matrices of every element (:mod:`meshaudit.metrics.stiffness.element`);
- stable time step: the same plus the lumped masses and the largest eigenvalue of each
  M^-1/2 K M^-1/2 (numpy.linalg.eigvalsh on the stack);
- bending error alone: the Gauss geometry, det J at the fine points and both bending
  metrics (the element and its undistorted twin), what the bending pass costs;
- all stiffness metrics: :func:`meshaudit.metrics.stiffness.measure` (time step, bending
  error of the element and of its undistorted twin, constant-strain check);
- the audit in memory (:func:`meshaudit.audit_elements`, one worker) without a material and
  with one: the difference is what the material costs; without one nothing of it runs.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from benchmarks.meshgen import distorted_plate

STEEL = {"E": 210000.0, "nu": 0.3, "rho": 7.85e-9, "t": 2.0}  # N, mm, tonne: seconds


def _best(fn, repeat: int) -> tuple[float, float]:
    """(best wall time, best processor time of this process, all its threads) of
    ``repeat`` runs: on a shared machine the wall time also counts the other work."""
    best, cpu = float("inf"), float("inf")
    for _ in range(repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        fn()
        best = min(best, time.perf_counter() - start)
        cpu = min(cpu, time.process_time() - start_cpu)
    return best, cpu


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--elements", type=float, default=1e6, help="about this many quads")
    parser.add_argument("--repeat", type=int, default=1, help="best of this many runs")
    args = parser.parse_args(argv)

    import meshaudit
    from meshaudit.cells.registry import CELL_TYPES
    from meshaudit.engine.run import CHUNK_SIZE
    from meshaudit.mesh.reading import load
    from meshaudit.metrics import stiffness
    from meshaudit.metrics.stiffness import element, rules

    plate = distorted_plate(int(args.elements))
    coords = plate.points[plate.cells_dict["quad"]]
    local = np.ascontiguousarray(coords[:, :, :2])
    n = len(coords)
    cell, tab = CELL_TYPES["quad"], rules.tables("quad")
    material = meshaudit.Material(**STEEL)
    lam, mu = material.lame(2)
    lam_n, mu_n, rho_n = np.full(n, lam), np.full(n, mu), np.full(n, material.rho)
    chunks = [slice(s, min(n, s + CHUNK_SIZE)) for s in range(0, n, CHUNK_SIZE)]

    def stiffness_only() -> None:
        for sl in chunks:
            geo = element.geometry(tab, local[sl])
            element.stiffness(element.geometric_part(tab, geo), lam_n[sl], mu_n[sl])

    def time_step() -> None:
        for sl in chunks:
            geo = element.geometry(tab, local[sl])
            k = element.stiffness(element.geometric_part(tab, geo), lam_n[sl], mu_n[sl])
            masses = element.lumped_masses(tab, element.fine_det(tab, local[sl]))
            2.0 / np.sqrt(element.largest_eigenvalue(k, masses) / rho_n[sl])

    def bending_alone() -> None:
        for sl in chunks:
            xn, _ = stiffness._normalised(local[sl])
            geo = element.geometry(tab, xn)
            fine = element.fine_det(tab, xn)
            stiffness._bending(cell, tab, xn, geo, fine, lam_n[sl], mu_n[sl])

    def all_metrics() -> None:
        valid = np.zeros(CHUNK_SIZE, dtype=bool)
        for sl in chunks:
            m = sl.stop - sl.start
            stiffness.measure_nodes(cell, local[sl], valid[:m], lam_n[sl], mu_n[sl], rho_n[sl])

    mesh = load(plate)
    rows = [
        ("element stiffness (8 x 8, 2x2 Gauss)", _best(stiffness_only, args.repeat)),
        ("stable time step (+ mass, eigvalsh)", _best(time_step, args.repeat)),
        (
            "bending error alone (geometry, det J, element and twin)",
            _best(bending_alone, args.repeat),
        ),
        ("all stiffness metrics", _best(all_metrics, args.repeat)),
        (
            "audit, no material",
            _best(lambda: meshaudit.audit_elements(mesh, workers=1), args.repeat),
        ),
        (
            "audit, with a material",
            _best(
                lambda: meshaudit.audit_elements(mesh, workers=1, material=material), args.repeat
            ),
        ),
    ]
    print(f"{n:,} quads, chunks of {CHUNK_SIZE:,}, best of {args.repeat}")
    print("| stage | wall time (s) | per 10^6 elements (s) | processor time per 10^6 (s) |")
    print("| --- | ---: | ---: | ---: |")
    for name, (seconds, cpu) in rows:
        print(f"| {name} | {seconds:.3g} | {seconds * 1e6 / n:.3g} | {cpu * 1e6 / n:.3g} |")


if __name__ == "__main__":
    main()
