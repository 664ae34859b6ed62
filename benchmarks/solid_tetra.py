"""CPU time of the solid element kernels (``meshaudit.metrics.solid``).

``python -m benchmarks.solid_tetra --family tetra [--elements N] [--repeat R]`` builds
samples of one family from a block of the fictional bracket plate (200 x 120 x 10 mm)
meshed with a jittered grid of cubes, measures them in chunks of 32768 elements as the
engine does, and prints the best-of-R CPU time (``time.process_time``) and the wall time
per sample. Each family adds one entry to :data:`FAMILIES`: a function of (N, rng)
returning {sample name: (coords (n, k, 3), cell type)}, and the kernel to time.
"""

from __future__ import annotations

import argparse
import itertools
import math
import time
from collections.abc import Callable

import numpy as np

CHUNK = 32_768
BLOCK_MM = (200.0, 120.0, 10.0)
#: Largest random move of a grid node, as a fraction of the spacing (keeps every
#: tetrahedron of the cube split valid).
JITTER = 0.15


def jittered_cubes(n_cubes: int, rng: np.random.Generator) -> np.ndarray:
    """Corners (c, 8, 3) of about ``n_cubes`` grid cubes filling the block, in the cube's
    binary corner order (corner b at offset (b & 1, b >> 1 & 1, b >> 2 & 1))."""
    h = (np.prod(BLOCK_MM) / n_cubes) ** (1.0 / 3.0)
    shape = [max(1, math.ceil(side / h)) for side in BLOCK_MM]
    axes = [np.linspace(0.0, side, m + 1) for side, m in zip(BLOCK_MM, shape)]
    grid = np.stack(np.meshgrid(*axes, indexing="ij"), axis=-1)
    grid += JITTER * h * rng.uniform(-1.0, 1.0, size=grid.shape)
    i, j, k = np.meshgrid(*(np.arange(m) for m in shape), indexing="ij")
    offsets = [(b & 1, b >> 1 & 1, b >> 2 & 1) for b in range(8)]
    return np.stack([grid[i + a, j + b, k + c] for a, b, c in offsets], axis=-2).reshape(-1, 8, 3)


def kuhn_tetrahedra(cubes: np.ndarray) -> np.ndarray:
    """Each cube cut into 6 tetrahedra along its main diagonal, positively oriented."""
    tets = []
    for perm in itertools.permutations(range(3)):
        path = [0]
        for axis in perm:
            path.append(path[-1] | 1 << axis)
        even = sum(perm[a] > perm[b] for a in range(3) for b in range(a + 1, 3)) % 2 == 0
        tets.append(cubes[:, path if even else [path[0], path[2], path[1], path[3]]])
    out = np.stack(tets, axis=1).reshape(-1, 4, 3)
    det = np.linalg.det(out[:, 1:] - out[:, :1])
    assert (det > 0).all(), "a tetrahedron of the cube split is not positively oriented"
    return out


def tetra_samples(n: int, rng: np.random.Generator) -> dict[str, tuple[np.ndarray, str]]:
    from meshaudit.metrics.solid.tet_reference import EDGES

    tets = kuhn_tetrahedra(jittered_cubes(max(1, -(-n // 6)), rng))[:n]
    mids = 0.5 * (tets[:, EDGES[:, 0]] + tets[:, EDGES[:, 1]])
    chord = np.linalg.norm(tets[:, EDGES[:, 1]] - tets[:, EDGES[:, 0]], axis=2)[..., None]
    curved = mids + 0.03 * chord * rng.uniform(-1.0, 1.0, size=mids.shape)
    # every element needs cutting: one planted curved element (valid, first Bernstein
    # bound negative) turned, scaled and moved at random
    from meshaudit.metrics.solid.tet_reference import CORNERS

    planted = np.vstack(
        [
            CORNERS,
            [[0.5, 0, 0], [0.5, 0.5, 0], [-0.33, 0.24, 0.36], [-0.14, -0.53, 0.35]],
            [[0.5, 0, 0.5], [0, 0.5, 0.5]],
        ]
    )
    q = np.linalg.qr(rng.normal(size=(len(tets), 3, 3)))[0]
    q *= np.sign(np.linalg.det(q))[:, None, None]
    cut = np.einsum("nij,kj->nki", q, planted) * rng.uniform(1, 5, (len(tets), 1, 1))
    return {
        "tetra": (tets, "tetra"),
        "tetra10 straight": (np.concatenate([tets, mids], axis=1), "tetra10"),
        "tetra10 curved 3%": (np.concatenate([tets, curved], axis=1), "tetra10"),
        "tetra10 all cut": (cut, "tetra10"),
    }


def tetra_kernel() -> Callable:
    from meshaudit.metrics.solid.tetra import measure

    return measure


#: family -> (samples, kernel)
FAMILIES: dict[str, tuple[Callable, Callable]] = {
    "tetra": (tetra_samples, tetra_kernel),
}


def measure_all(kernel: Callable, coords: np.ndarray, cell_type: str) -> None:
    for start in range(0, len(coords), CHUNK):
        kernel(coords[start : start + CHUNK], cell_type)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--family", choices=sorted(FAMILIES), required=True)
    parser.add_argument("--elements", type=int, default=100_000)
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args(argv)
    make, kernel_of = FAMILIES[args.family]
    kernel = kernel_of()
    for name, (coords, cell_type) in make(args.elements, np.random.default_rng(1)).items():
        cpu = wall = np.inf
        for _ in range(args.repeat):
            start, start_wall = time.process_time(), time.perf_counter()
            measure_all(kernel, coords, cell_type)
            cpu = min(cpu, time.process_time() - start)
            wall = min(wall, time.perf_counter() - start_wall)
        ms = f"{cpu * 1000:9.1f} ms CPU {wall * 1000:9.1f} ms wall"
        print(f"{name:20s} {ms}  ({len(coords)} elements)")


if __name__ == "__main__":
    main()
