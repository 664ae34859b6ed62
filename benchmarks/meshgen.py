"""Synthetic distorted meshes for the benchmark: perturbed structured grids.

The sample part is a fictional "bracket plate", 200 x 120 mm, meshed with a structured
grid of four-node quads whose interior nodes are moved by a seeded random amount (at most
a fifth of the grid spacing in x and in y, so every grid element stays convex and a few
tenths of a percent draw a warning under the standard profile). A few
elements are then spoiled on purpose so that the audit has something to find: one
reversed (clockwise), one bow-tie, one collapsed and one non-convex element.

For the solids (:func:`distorted_block`), the plate's 200 x 120 x 40 mm block is meshed
with a structured grid of eight-node hexahedra, or of those cubes each cut into six
tetrahedra along its main diagonal (the same cut in every cube, so neighbours share their
faces' diagonals), interior nodes moved by up to 3 % (hexahedra) or 4 % (tetrahedra) of
the spacing along each axis (in space a random move warps faces: larger moves would make
most solids warn, and the benchmark would time a report of every element rather than the
audit); one element is listed mirrored (inverted) and one has two corners on one node
(degenerate).
"""

from __future__ import annotations

import math
from pathlib import Path

import meshio
import numpy as np

PLATE_MM = (200.0, 120.0)
#: Largest random move of an interior node, as a fraction of the grid spacing.
JITTER = 0.2
#: Names of the planted bad elements, in the order they are planted.
PLANTED = ("reversed", "bow-tie", "collapsed", "non-convex")
#: Written formats: file suffix -> meshio format name and writer options.
FORMATS: dict[str, tuple[str, dict]] = {
    "msh": ("gmsh", {"binary": True}),  # gmsh msh 4.1, binary
    "vtu": ("vtu", {"binary": True}),  # VTU, binary, meshio's default zlib compression
}


def grid_shape(n_elements: int) -> tuple[int, int]:
    """(nx, ny) with nx * ny == n_elements and nx / ny as close to the plate's 5:3 as possible.

    Falls back to a near-square grid of about ``n_elements`` when no divisor pair lies within
    a 1:4 aspect of the plate.
    """
    if n_elements < 1:
        raise ValueError("need at least one element")
    target = PLATE_MM[0] / PLATE_MM[1]
    best: tuple[float, int, int] | None = None
    for ny in range(1, math.isqrt(n_elements) + 1):
        if n_elements % ny:
            continue
        nx = n_elements // ny
        err = abs(math.log((nx / ny) / target))
        if best is None or err < best[0]:
            best = (err, nx, ny)
    if best is None or best[0] > math.log(4.0):
        side = max(1, round(math.sqrt(n_elements)))
        return side, max(1, round(n_elements / side))
    return best[1], best[2]


def distorted_plate(n_elements: int, seed: int = 7) -> meshio.Mesh:
    """A bracket-plate quad mesh of about ``n_elements`` elements with planted bad ones.

    Nodes are (x, y, 0) in mm; connectivity is int64, counter-clockwise except where planted.
    The planted elements are recorded in ``mesh.info["planted"]`` (name -> element index).
    """
    nx, ny = grid_shape(n_elements)
    rng = np.random.default_rng(seed)
    hx, hy = PLATE_MM[0] / nx, PLATE_MM[1] / ny
    x = np.linspace(0.0, PLATE_MM[0], nx + 1)
    y = np.linspace(0.0, PLATE_MM[1], ny + 1)
    points = np.zeros(((ny + 1) * (nx + 1), 3))
    grid = points.reshape(ny + 1, nx + 1, 3)
    grid[:, :, 0] = x[None, :]
    grid[:, :, 1] = y[:, None]
    inner = grid[1:-1, 1:-1]
    inner[..., 0] += rng.uniform(-JITTER, JITTER, inner.shape[:2]) * hx
    inner[..., 1] += rng.uniform(-JITTER, JITTER, inner.shape[:2]) * hy

    node = np.arange((ny + 1) * (nx + 1), dtype=np.int64).reshape(ny + 1, nx + 1)
    cells = np.empty((ny, nx, 4), dtype=np.int64)
    cells[..., 0] = node[:-1, :-1]
    cells[..., 1] = node[:-1, 1:]
    cells[..., 2] = node[1:, 1:]
    cells[..., 3] = node[1:, :-1]
    cells = cells.reshape(-1, 4)

    planted = _plant(cells, points, nx, ny, rng)
    mesh = meshio.Mesh(points, [("quad", cells)])
    mesh.info = {"planted": planted, "grid": (nx, ny)}
    return mesh


def _plant(cells: np.ndarray, points: np.ndarray, nx: int, ny: int, rng) -> dict[str, int]:
    """Spoil a few interior elements in place; returns name -> element index.

    They are picked among elements at rows and columns 1, 4, 7, ... so no two share a
    node. Only the non-convex one moves a node, which also distorts its three neighbours.
    """
    rows, cols = np.arange(1, ny - 1, 3), np.arange(1, nx - 1, 3)
    candidates = (rows[:, None] * nx + cols[None, :]).ravel()
    if candidates.size < len(PLANTED):
        return {}
    picked = rng.choice(candidates, size=len(PLANTED), replace=False)
    chosen = {name: int(i) for name, i in zip(PLANTED, picked)}
    rev, bow, col, conc = (chosen[k] for k in PLANTED)
    cells[rev] = cells[rev][::-1]  # clockwise: every det J negative
    cells[bow] = cells[bow][[0, 2, 1, 3]]  # edges 1-2 and 3-4 cross
    cells[col, 2] = cells[col, 1]  # two nodes coincide: a zero-length edge
    n0, n1, n2, n3 = cells[conc]
    inside = 0.5 * (points[n0] + 0.5 * (points[n1] + points[n3]))  # inside triangle 0-1-3
    points[n2] = inside  # node 3 pushed past the diagonal: a re-entrant corner
    return chosen


def write_mesh(mesh: meshio.Mesh, path: Path) -> Path:
    """Write ``mesh`` in the format its suffix names (see :data:`FORMATS`)."""
    fmt, options = FORMATS[path.suffix.lstrip(".")]
    meshio.write(path, mesh, file_format=fmt, **options)
    return path


BLOCK_MM = (200.0, 120.0, 40.0)
#: Largest random move of an interior node, as a fraction of the spacing, per cell type.
BLOCK_JITTER = {"hexahedron": 0.03, "tetra": 0.04}
#: The six tetrahedra of a cube along its main diagonal 0-7, corners numbered i + 2j + 4k:
#: 0 -> one axis -> two axes -> 7, one per order of the axes (a conforming cut).
_CUBE_TETS = np.array(
    [[0, 1, 3, 7], [0, 1, 5, 7], [0, 2, 3, 7], [0, 2, 6, 7], [0, 4, 5, 7], [0, 4, 6, 7]]
)
#: The cube's corners in meshio's hexahedron order (bottom counter-clockwise, then top).
_HEX_ORDER = np.array([0, 1, 3, 2, 4, 5, 7, 6])


def _block_grid(cubes: int) -> tuple[int, int, int]:
    """(nx, ny, nz) with about ``cubes`` cells, in the block's 5:3:1 proportions."""
    unit = (cubes / (BLOCK_MM[0] * BLOCK_MM[1] * BLOCK_MM[2] / BLOCK_MM[2] ** 3)) ** (1 / 3)
    return tuple(max(1, round(unit * side / BLOCK_MM[2])) for side in BLOCK_MM)


def distorted_block(n_elements: int, cell_type: str = "hexahedron", seed: int = 7) -> meshio.Mesh:
    """The bracket plate's block meshed with about ``n_elements`` hexahedra or tetrahedra
    (``cell_type`` "hexahedron" or "tetra"), interior nodes moved at random, one element
    mirrored and one collapsed (``mesh.info["planted"]``: name -> element index)."""
    per_cube = 6 if cell_type == "tetra" else 1
    nx, ny, nz = _block_grid(max(1, round(n_elements / per_cube)))
    rng = np.random.default_rng(seed)
    axes = [np.linspace(0.0, size, n + 1) for size, n in zip(BLOCK_MM, (nx, ny, nz))]
    z, y, x = np.meshgrid(axes[2], axes[1], axes[0], indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    node = np.arange(points.shape[0], dtype=np.int64).reshape(nz + 1, ny + 1, nx + 1)
    inner = np.ones(node.shape, dtype=bool)
    inner[[0, -1]] = inner[:, [0, -1]] = inner[:, :, [0, -1]] = False
    spacing = np.array([BLOCK_MM[0] / nx, BLOCK_MM[1] / ny, BLOCK_MM[2] / nz])
    jitter = BLOCK_JITTER[cell_type]
    moved = node[inner]
    points[moved] += rng.uniform(-jitter, jitter, (moved.size, 3)) * spacing
    # the 8 corners of every cube, numbered i + 2j + 4k
    corners = np.stack(
        [node[k : nz + k, j : ny + j, i : nx + i] for k in (0, 1) for j in (0, 1) for i in (0, 1)],
        axis=-1,
    ).reshape(-1, 8)
    if cell_type == "tetra":
        cells = corners[:, _CUBE_TETS].reshape(-1, 4)
        a, b, c = (points[cells[:, k]] - points[cells[:, 0]] for k in (1, 2, 3))
        mirrored = np.einsum("ij,ij->i", np.cross(a, b), c) < 0.0
        cells[mirrored] = cells[mirrored][:, [0, 2, 1, 3]]  # every tetrahedron positive
    else:
        cells = corners[:, _HEX_ORDER]
    middle = len(cells) // 2
    planted = {"inverted": middle, "degenerate": middle + len(cells) // 4}
    if cell_type == "tetra":
        cells[middle] = cells[middle][[0, 2, 1, 3]]  # mirrored: det J < 0
    else:
        cells[middle] = np.roll(cells[middle], 4)  # bottom and top swapped: det J < 0
    cells[planted["degenerate"], 1] = cells[planted["degenerate"], 0]  # a zero-length edge
    mesh = meshio.Mesh(points, [(cell_type, cells)])
    mesh.info = {"planted": planted, "grid": (nx, ny, nz)}
    return mesh
