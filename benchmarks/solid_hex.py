"""CPU time of the solid element kernels on a distorted block of the bracket plate.

``python -m benchmarks.solid_hex --family hexahedron [--elements N] [--repeat R]``
builds a structured block of about N hexahedra (the plate 200 x 120 mm, 10 mm thick),
moves every interior node at random by up to a fifth of the spacing, adds the midside
(and face and centre) nodes for ``hexahedron20`` / ``hexahedron27`` (each moved at random
by up to 3 per cent of the smallest spacing off its straight-sided place, so the edges
are curved a little), and times the
family's ``measure`` over it in chunks of 32768 elements, as the engine passes them.
Prints the best-of-R CPU time (``time.process_time``) per cell type.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

CHUNK = 32_768
FAMILIES = {"hexahedron": ("hexahedron", "hexahedron20", "hexahedron27")}


def hex_block(n_elements: int, seed: int = 0) -> np.ndarray:
    """Corners (n, 8, 3) of about ``n_elements`` distorted hexahedra, meshio's order."""
    nz = max(1, round((n_elements / 15.0) ** (1 / 3) / 2))
    nx = max(1, round(np.sqrt(n_elements / nz * 5 / 3)))
    ny = max(1, n_elements // (nx * nz))
    axes = [np.linspace(0, size, k + 1) for size, k in ((200.0, nx), (120.0, ny), (10.0, nz))]
    grid = np.stack(np.meshgrid(*axes, indexing="ij"), -1)
    rng = np.random.default_rng(seed)
    spacing = np.array([a[1] - a[0] for a in axes])
    inner = grid[1:-1, 1:-1, 1:-1]
    inner += rng.uniform(-0.2, 0.2, size=inner.shape) * spacing
    i, j, k = np.meshgrid(np.arange(nx), np.arange(ny), np.arange(nz), indexing="ij")
    i, j, k = i.ravel(), j.ravel(), k.ravel()
    offsets = [
        (0, 0, 0),
        (1, 0, 0),
        (1, 1, 0),
        (0, 1, 0),
        (0, 0, 1),
        (1, 0, 1),
        (1, 1, 1),
        (0, 1, 1),
    ]
    return np.stack([grid[i + a, j + b, k + c] for a, b, c in offsets], axis=1)


def samples(family: str, n_elements: int) -> dict[str, np.ndarray]:
    """Node coordinates of each cell type of the family."""
    if family != "hexahedron":
        raise SystemExit(f"unknown family {family!r}")
    from meshaudit.metrics.solid.hex_reference import REFERENCE

    corners = hex_block(n_elements)
    trilinear = REFERENCE["hexahedron"].shape_functions
    rng = np.random.default_rng(1)
    out = {"hexahedron": corners}
    for name in ("hexahedron20", "hexahedron27"):
        weights = trilinear(REFERENCE[name].nodes)  # straight-sided nodes
        nodes = np.einsum("qk,nkd->nqd", weights, corners)
        shortest = np.linalg.norm(corners[:, 1] - corners[:, 0], axis=1).min()
        nodes[:, 8:] += rng.uniform(-0.03, 0.03, size=nodes[:, 8:].shape) * shortest
        out[name] = nodes
    return out


def measure_all(family: str, cell_type: str, coords: np.ndarray) -> None:
    from meshaudit.metrics.solid import hexahedron

    kernels = {"hexahedron": hexahedron.measure}
    for start in range(0, len(coords), CHUNK):
        kernels[family](coords[start : start + CHUNK], cell_type)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--family", default="hexahedron", choices=sorted(FAMILIES))
    parser.add_argument("--elements", type=float, default=1e5)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    for cell_type, coords in samples(args.family, int(args.elements)).items():
        best = np.inf
        for _ in range(args.repeat):
            start = time.process_time()
            measure_all(args.family, cell_type, coords)
            best = min(best, time.process_time() - start)
        count = f"{len(coords):>9,d}"
        print(f"{cell_type:14s} {count} elements  {best:7.2f} s CPU (best of {args.repeat})")


if __name__ == "__main__":
    main()
