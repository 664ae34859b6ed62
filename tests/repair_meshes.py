"""Small meshes for the repair tests, built in memory (the bracket plate's web as a grid
of squares, a block of hexahedra, a curved flange of quads)."""

from __future__ import annotations

import meshio
import numpy as np


def grid(nx: int, ny: int, size: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Nodes (n, 2) and counter-clockwise quads of an nx x ny grid of squares."""
    xs, ys = np.meshgrid(np.arange(nx + 1) * size, np.arange(ny + 1) * size)
    points = np.column_stack([xs.ravel(), ys.ravel()])
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    a = (j * (nx + 1) + i).ravel()
    quads = np.column_stack([a, a + 1, a + nx + 2, a + nx + 1])
    return points, quads


def outline(points: np.ndarray) -> np.ndarray:
    """(n,) bool: nodes on the outer rectangle of a grid (its boundary, by construction)."""
    lo, hi = points.min(axis=0), points.max(axis=0)
    return ((points == lo) | (points == hi)).any(axis=1)


def quad_mesh(points: np.ndarray, quads: np.ndarray, **kw) -> meshio.Mesh:
    return meshio.Mesh(points, [("quad", quads)], **kw)


def hex_block(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes (m, 3) and positively oriented hexahedra of an n x n x n block of cubes."""
    r = np.arange(n + 1, dtype=float)
    z, y, x = np.meshgrid(r, r, r, indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    k, j, i = np.meshgrid(np.arange(n), np.arange(n), np.arange(n), indexing="ij")
    a = (k * (n + 1) ** 2 + j * (n + 1) + i).ravel()
    s, p = n + 1, (n + 1) ** 2
    base = np.column_stack([a, a + 1, a + 1 + s, a + s])
    return points, np.hstack([base, base + p])


def corner_volumes(points: np.ndarray, hexes: np.ndarray) -> np.ndarray:
    """(n, 8) triple products of the three edges at each hexahedron corner, in the
    right-handed order of the VTK/meshio node numbering (closed form)."""
    triples = [
        (0, 1, 3, 4), (1, 2, 0, 5), (2, 3, 1, 6), (3, 0, 2, 7),
        (4, 7, 5, 0), (5, 4, 6, 1), (6, 5, 7, 2), (7, 6, 4, 3),
    ]  # fmt: skip
    out = []
    for c, a, b, e in triples:
        x = points[hexes]
        u, v, w = x[:, a] - x[:, c], x[:, b] - x[:, c], x[:, e] - x[:, c]
        out.append(np.einsum("ij,ij->i", u, np.cross(v, w)))
    return np.stack(out, axis=1)
