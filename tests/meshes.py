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
