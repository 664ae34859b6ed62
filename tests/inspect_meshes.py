"""Small meshes with planted defects for the inspection tests (invented demo geometry)."""

from __future__ import annotations

import meshio
import numpy as np


def grid(nx: int, ny: int, h: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Nodes (x-y) and counter-clockwise quads of an nx x ny grid of h x h squares."""
    xs, ys = np.meshgrid(np.arange(nx + 1) * h, np.arange(ny + 1) * h, indexing="xy")
    points = np.column_stack([xs.ravel(), ys.ravel()])
    j, i = np.meshgrid(np.arange(ny), np.arange(nx), indexing="ij")
    n0 = (j * (nx + 1) + i).ravel()
    quads = np.column_stack([n0, n0 + 1, n0 + nx + 2, n0 + nx + 1])
    return points, quads


def planted_plate() -> meshio.Mesh:
    """A 6 x 4 grid of unit squares with two planted failures, two triangles on top (one
    of them a warn) and a line block (lines are skipped by the audit).

    - quad id 7 (index 7): node order reversed (clockwise: inverted);
    - quad id 14 (index 14): bow-tie (positions 2 and 3 swapped);
    - triangle id 24 (index 24): flat (height 1/4 on a unit base): warn only.

    Ids are positions from 0 over all cells (the lines come last): the convention of a
    mesh in memory and, written as .vtu, of the VTK cell index.
    """
    points, quads = grid(6, 4)
    points = points.astype(float)
    quads = quads.copy()
    quads[7] = quads[7][[0, 3, 2, 1]]
    quads[14] = quads[14][[0, 2, 1, 3]]
    # two triangles on the top edge: a flat one (warn) and a near-equilateral one (ok)
    extra = np.array([[0.5, 4.25], [1.5, 4.0 + np.sqrt(3.0) / 2.0]])
    base = len(points)
    points = np.vstack([points, extra])
    top_left = 4 * 7
    tris = np.array([[top_left, top_left + 1, base], [top_left + 1, top_left + 2, base + 1]])
    lines = np.array([[0, 1], [1, 2]])
    return meshio.Mesh(points, [("quad", quads), ("triangle", tris), ("line", lines)])


def curved_shell(n_around: int = 12, n_along: int = 4) -> meshio.Mesh:
    """Quads on a quarter cylinder of radius 10 (a shell in 3-D); one quad made a bow-tie."""
    theta = np.linspace(0.0, np.pi / 2, n_around + 1)
    z = np.linspace(0.0, 8.0, n_along + 1)
    tt, zz = np.meshgrid(theta, z, indexing="xy")
    points = np.column_stack([10 * np.cos(tt.ravel()), 10 * np.sin(tt.ravel()), zz.ravel()])
    j, i = np.meshgrid(np.arange(n_along), np.arange(n_around), indexing="ij")
    n0 = (j * (n_around + 1) + i).ravel()
    quads = np.column_stack([n0, n0 + 1, n0 + n_around + 2, n0 + n_around + 1])
    quads[5] = quads[5][[0, 2, 1, 3]]
    return meshio.Mesh(points, [("quad", quads)])
