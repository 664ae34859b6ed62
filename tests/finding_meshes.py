"""Small meshes built in the tests, with defects planted at known places.

Every builder returns plain arrays (points, cells); what each defect is and where it
sits is known by construction.
"""

from __future__ import annotations

import meshio
import numpy as np


def grid_points(nx: int, ny: int, h: float = 1.0) -> np.ndarray:
    """(nx+1)*(ny+1) nodes of a regular grid, node (i, j) at index j*(nx+1)+i."""
    x, y = np.meshgrid(np.arange(nx + 1) * h, np.arange(ny + 1) * h)
    return np.stack([x.ravel(), y.ravel()], axis=1)


def grid_quads(nx: int, ny: int) -> np.ndarray:
    """Counter-clockwise quads of the grid, element (i, j) at row j*nx+i."""
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    n0 = (j * (nx + 1) + i).ravel()
    return np.stack([n0, n0 + 1, n0 + nx + 2, n0 + nx + 1], axis=1)


def quad_grid(nx: int, ny: int, h: float = 1.0) -> meshio.Mesh:
    return meshio.Mesh(grid_points(nx, ny, h), [("quad", grid_quads(nx, ny))])


NX, NY = 6, 4  # the test grid: 24 unit quads, 35 nodes; element (i, j) has id j*NX+i


def node(i: int, j: int, nx: int = NX) -> int:
    return j * (nx + 1) + i


def element_id(i: int, j: int, nx: int = NX) -> int:
    """Id of grid element (i, j): a mesh built in memory numbers its cells by position
    over all cell blocks, from 0 (meshaudit's documented convention)."""
    return j * nx + i


def with_crack(i0: int, i1: int, row: int = 2) -> tuple[meshio.Mesh, np.ndarray, np.ndarray]:
    """The test grid with the nodes i0..i1 of grid line ``row`` duplicated: the elements
    above the line use the copies (appended after the grid nodes), the elements below
    keep the originals. Returns (mesh, original nodes, their copies)."""
    pts, quads = grid_points(NX, NY), grid_quads(NX, NY)
    original = np.array([node(i, row) for i in range(i0, i1 + 1)])
    copy = len(pts) + np.arange(original.size)
    above = quads[row * NX : (row + 1) * NX]
    for o, c in zip(original, copy):
        above[above == o] = c
    return meshio.Mesh(np.vstack([pts, pts[original]]), [("quad", quads)]), original, copy


def polygons(points: np.ndarray, cells: np.ndarray) -> list:
    """shapely polygons of elements (made valid), for reference areas."""
    import shapely

    return [shapely.make_valid(shapely.Polygon(points[c, :2])) for c in cells]


def boxes_meeting(boxes: np.ndarray, tiny: float) -> np.ndarray:
    """(n, n) bool, brute force over all pairs (numpy): boxes (n, 4) xmin, ymin, xmax,
    ymax i and j (i != j) share a strip wider than ``tiny`` on both axes."""
    wx = np.minimum(boxes[:, None, 2], boxes[None, :, 2]) - np.maximum(
        boxes[:, None, 0], boxes[None, :, 0]
    )
    wy = np.minimum(boxes[:, None, 3], boxes[None, :, 3]) - np.maximum(
        boxes[:, None, 1], boxes[None, :, 1]
    )
    meet = (wx > tiny) & (wy > tiny)
    np.fill_diagonal(meet, False)
    return meet
