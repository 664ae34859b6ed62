"""Small structured solid meshes built with numpy for the tests of the solids' mesh-level
findings: a block of hexahedra, the same cubes cut into six tetrahedra each, and the
defects planted in them."""

from __future__ import annotations

import itertools

import meshio
import numpy as np

#: The 8 corners of the unit cube in meshio's hexahedron order: bottom face
#: counter-clockwise seen from the top, then the top face above it.
CUBE = np.array(
    [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]]
)


def grid(shape: tuple[int, int, int], size: tuple[float, float, float] = (1.0, 1.0, 1.0)):
    """(points, index): the nodes of a block of shape[0] x shape[1] x shape[2] cells of
    size ``size``, and index(i, j, k) -> node number."""
    _, ny, nz = shape
    axes = [np.arange(n + 1) * s for n, s in zip(shape, size)]
    x, y, z = np.meshgrid(*axes, indexing="ij")
    points = np.stack([x.ravel(), y.ravel(), z.ravel()], axis=1)

    def index(i, j, k):
        return (np.asarray(i) * (ny + 1) + np.asarray(j)) * (nz + 1) + np.asarray(k)

    return points, index


def cells_of(shape: tuple[int, int, int]) -> np.ndarray:
    """(n, 3) the (i, j, k) of every cell, i slowest."""
    return np.array(list(itertools.product(*(range(n) for n in shape))))


def hex_block(
    shape: tuple[int, int, int] = (3, 3, 3), size: tuple[float, float, float] = (1.0, 1.0, 1.0)
) -> tuple[np.ndarray, np.ndarray]:
    """(points, hexahedra) of the block, cell (i, j, k) at row (i * ny + j) * nz + k."""
    points, index = grid(shape, size)
    ijk = cells_of(shape)
    hexes = np.stack([index(*(ijk + c).T) for c in CUBE], axis=1)
    return points, hexes


#: The six tetrahedra of a cube along its main diagonal 0 -> 6: for each order of the
#: three axes, the path of corners stepping along them one after another.
def _kuhn() -> np.ndarray:
    out = []
    for order in itertools.permutations(range(3)):
        path = [np.zeros(3, dtype=int)]
        for axis in order:
            step = path[-1].copy()
            step[axis] = 1
            path.append(step)
        corners = [int(np.flatnonzero((CUBE == p).all(axis=1))[0]) for p in path]
        a, b, c, d = (CUBE[i] for i in corners)
        if np.linalg.det(np.stack([b - a, c - a, d - a])) < 0:  # positively oriented
            corners[1], corners[2] = corners[2], corners[1]
        out.append(corners)
    return np.array(out)


KUHN = _kuhn()


def tet_block(
    shape: tuple[int, int, int] = (3, 3, 3), size: tuple[float, float, float] = (1.0, 1.0, 1.0)
) -> tuple[np.ndarray, np.ndarray]:
    """(points, tetrahedra): the cubes of :func:`hex_block` each cut into six tetrahedra
    along its main diagonal (the same diagonal everywhere, so the cut faces match):
    cube c's tetrahedra at rows 6c .. 6c + 5."""
    points, hexes = hex_block(shape, size)
    return points, hexes[:, KUHN].reshape(-1, 4)


def mesh(points: np.ndarray, *blocks: tuple[str, np.ndarray]) -> meshio.Mesh:
    return meshio.Mesh(points, [(name, np.asarray(cells)) for name, cells in blocks])


def cracked(points: np.ndarray, cells: np.ndarray, centres: np.ndarray, index, n: int):
    """Duplicate the inner nodes of the plane x = 1 (j, k in 1..n-1) for the cells whose
    centre has x > 1: (points, cells, the duplicated node numbers, their copies)."""
    j, k = np.meshgrid(np.arange(1, n), np.arange(1, n), indexing="ij")
    inner = index(1, j.ravel(), k.ravel())
    copies = np.arange(points.shape[0], points.shape[0] + inner.size)
    points = np.vstack([points, points[inner]])
    renumber = np.arange(points.shape[0])
    renumber[inner] = copies
    cells = cells.copy()
    right = centres[:, 0] > 1.0
    cells[right] = renumber[cells[right]]
    return points, cells, inner, copies


def centres(points: np.ndarray, cells: np.ndarray) -> np.ndarray:
    return points[cells].mean(axis=1)


def merged(points: np.ndarray, cells: list[np.ndarray]) -> tuple[np.ndarray, list[np.ndarray]]:
    """Nodes at exactly the same coordinates made one (the first), cells renumbered."""
    _, first, inverse = np.unique(points, axis=0, return_index=True, return_inverse=True)
    keep = np.sort(first)
    new_of_kept = np.full(points.shape[0], -1)
    new_of_kept[keep] = np.arange(keep.size)
    renumber = new_of_kept[first[inverse.ravel()]]
    return points[keep], [renumber[c] for c in cells]


def refined_beside_coarse() -> tuple[np.ndarray, np.ndarray]:
    """One unit hexahedron (cell 0) and beside it, on x from 1 to 2, a 2 x 2 x 2 block of
    half-size hexahedra (cells 1..8) sharing the coarse cell's four corners at x = 1 only:
    five fine nodes on that face hang (four on its edges, one at its centre)."""
    coarse = CUBE.astype(float)
    fine_points, fine = hex_block((2, 2, 2), (0.5, 0.5, 0.5))
    fine_points = fine_points + np.array([1.0, 0.0, 0.0])
    points = np.vstack([coarse, fine_points])
    (points, (hexes,)) = merged(points, [np.vstack([np.arange(8)[None], fine + 8])])
    return points, hexes


def hex_beside_tets() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One unit hexahedron and beside it, on x from 1 to 2, the same cube cut into six
    tetrahedra: the hexahedron's face x = 1 meets two triangles, no pyramid between."""
    tet_points, tets = tet_block((1, 1, 1))
    points = np.vstack([CUBE.astype(float), tet_points + np.array([1.0, 0.0, 0.0])])
    points, (hexes, tets) = merged(points, [np.arange(8)[None], tets + 8])
    return points, hexes, tets


def with_midside_nodes(
    points: np.ndarray, cells: np.ndarray, midside: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Linear cells made quadratic: one node at the middle of each distinct edge, shared
    by the cells on that edge. ``midside`` (s, 3): corner a, corner b, midside column
    (the cell type's ``midside_edges``)."""
    a, b = cells[:, midside[:, 0]], cells[:, midside[:, 1]]
    pairs = np.stack([np.minimum(a, b).ravel(), np.maximum(a, b).ravel()], axis=1)
    edges, inverse = np.unique(pairs, axis=0, return_inverse=True)
    middle = 0.5 * (points[edges[:, 0]] + points[edges[:, 1]])
    out = np.zeros((cells.shape[0], cells.shape[1] + midside.shape[0]), dtype=np.int64)
    out[:, : cells.shape[1]] = cells
    out[:, midside[:, 2]] = points.shape[0] + inverse.reshape(cells.shape[0], -1)
    return np.vstack([points, middle]), out
