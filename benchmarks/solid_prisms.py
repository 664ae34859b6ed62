"""CPU time of the solid measuring kernels on synthetic elements.

``python -m benchmarks.solid_prisms --family wedge [--elements N] [--repeat R]`` builds N
elements of the family from a bracket-plate slab (200 x 120 x 10 mm) cut into boxes, each
box split into elements of the family, every node of every element moved by a seeded
random amount (up to a fifth of the box size), and times the family's ``measure`` over
them in chunks of 32768 elements, as the engine passes them. Prints the best-of-R CPU
time (``time.process_time``) and the time per million elements. ``--family all`` times
every family listed.
"""

from __future__ import annotations

import argparse
import importlib
import time

import numpy as np

CHUNK = 32_768
SLAB_MM = (200.0, 120.0, 10.0)
JITTER = 0.2

#: Box corners (unit box) in the order i + 2 j + 4 k, and each family's split of a box.
_BOX = np.array([[i, j, k] for k in (0, 1) for j in (0, 1) for i in (0, 1)], dtype=float)
_CENTRE = np.full((1, 3), 0.5)
SPLITS: dict[str, tuple[str, np.ndarray]] = {
    # two prisms along z: triangles (0, 1, 2) and (1, 3, 2) of the box bottom, then top
    "wedge": ("wedge", np.array([[0, 1, 2, 4, 5, 6], [1, 3, 2, 5, 7, 6]])),
    # six pyramids, one per box face, apex at the box centre (index 8), base facing out:
    # each base wound so that its right-hand normal points to the centre
    "pyramid": (
        "pyramid",
        np.array(
            [
                [0, 1, 3, 2, 8],  # bottom z = 0
                [4, 6, 7, 5, 8],  # top z = 1
                [0, 4, 5, 1, 8],  # y = 0
                [2, 3, 7, 6, 8],  # y = 1
                [0, 2, 6, 4, 8],  # x = 0
                [1, 5, 7, 3, 8],  # x = 1
            ]
        ),
    ),
}
#: Family -> module holding its ``measure``.
MODULES = {
    "wedge": "meshaudit.metrics.solid.wedge",
    "pyramid": "meshaudit.metrics.solid.pyramid",
}


def elements(family: str, n_elements: int, seed: int = 0, jitter: float = JITTER) -> np.ndarray:
    """``n_elements`` elements (n, k, 3) of the family from the slab, every node moved by
    up to ``jitter`` of the box size."""
    split = SPLITS[family][1]
    boxes = -(-n_elements // len(split))
    size = (np.prod(SLAB_MM) / boxes) ** (1.0 / 3.0)
    counts = np.maximum(np.round(np.array(SLAB_MM) / size), 1).astype(int)
    while np.prod(counts) < boxes:
        counts[np.argmin(counts * size - SLAB_MM)] += 1
    grid = np.stack(np.meshgrid(*[np.arange(c) for c in counts], indexing="ij"), -1)
    origins = grid.reshape(-1, 3)[:boxes] * size
    corners = np.concatenate([_BOX, _CENTRE]) * size
    coords = origins[:, None, None, :] + corners[split][None]
    coords = coords.reshape(-1, split.shape[1], 3)[:n_elements]
    rng = np.random.default_rng(seed)
    return coords + rng.uniform(-jitter, jitter, coords.shape) * size


def time_family(family: str, n_elements: int, repeat: int) -> tuple[float, dict[str, int]]:
    """Best-of-``repeat`` CPU seconds of ``measure`` over the elements, and flag counts."""
    cell_type = SPLITS[family][0]
    measure = importlib.import_module(MODULES[family]).measure
    coords = elements(family, n_elements)
    best = np.inf
    for _ in range(repeat):
        start = time.process_time()
        flags = [measure(coords[i : i + CHUNK], cell_type)[1] for i in range(0, len(coords), CHUNK)]
        best = min(best, time.process_time() - start)
    counts = {name: int(sum(part[name].sum() for part in flags)) for name in flags[0]}
    return best, counts


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--family", default="all", choices=[*SPLITS, "all"])
    parser.add_argument("--elements", type=float, default=1e5)
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args(argv)
    families = list(SPLITS) if args.family == "all" else [args.family]
    n = int(args.elements)
    for family in families:
        seconds, counts = time_family(family, n, args.repeat)
        flagged = ", ".join(f"{k} {v}" for k, v in counts.items())
        print(
            f"{family}: {n} elements, {seconds:.3f} s CPU (best of {args.repeat}), "
            f"{seconds / n * 1e6:.2f} s per 10^6; flagged: {flagged}"
        )


if __name__ == "__main__":
    main()
