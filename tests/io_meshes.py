"""Small analytic meshes for the reading and report tests, and writers for every format.

Every expected value here follows from plane geometry (stated beside it), not from
meshaudit's own output.
"""

from __future__ import annotations

import contextlib
import io
from pathlib import Path

import meshio
import numpy as np

S60 = np.sqrt(3.0) / 2.0  # sin 60°, the height of a unit equilateral triangle

#: Corner coordinates of each audited element, in the order the mixed mesh lists them.
QUADS = (
    # unit square: area 1
    ((0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.0, 1.0)),
    # 2 x 1 rectangle: area 2
    ((2.0, 0.0), (4.0, 0.0), (4.0, 1.0), (2.0, 1.0)),
    # parallelogram, unit sides, 60° corner: area sin 60°
    ((5.0, 0.0), (6.0, 0.0), (6.5, S60), (5.5, S60)),
)
TRIANGLES = (
    # equilateral, unit side: area sqrt(3)/4
    ((0.0, 2.0), (1.0, 2.0), (0.5, 2.0 + S60)),
    # right isosceles, unit legs: area 1/2
    ((2.0, 2.0), (3.0, 2.0), (2.0, 3.0)),
)

#: Expected per-element values from geometry, quads then triangles (file order).
#: area: shoelace formula; det_j_min: area / 4 for a parallelogram quad (the reference
#: square [-1,1]^2 has area 4) and 2 * area for a triangle (reference triangle area 1/2);
#: angles: interior angles of the shapes; scaled Jacobian: sine of the smallest corner
#: angle (times 2/sqrt(3) for triangles, so the equilateral one reads 1).
EXPECTED = {
    "area": [1.0, 2.0, S60, np.sqrt(3.0) / 4.0, 0.5],
    "det_j_min": [0.25, 0.5, S60 / 4.0, np.sqrt(3.0) / 2.0, 1.0],
    "min_angle": [90.0, 90.0, 60.0, 60.0, 45.0],
    "max_angle": [90.0, 90.0, 120.0, 60.0, 90.0],
    "scaled_jacobian": [1.0, 1.0, S60, 1.0, np.sin(np.pi / 4.0) * 2.0 / np.sqrt(3.0)],
}
EXPECTED_TYPES = ["quad"] * len(QUADS) + ["triangle"] * len(TRIANGLES)
N_LINES = 2


def _points_and_cells() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    corners = [c for shape in QUADS + TRIANGLES for c in shape]
    points = np.array([[x, y, 0.0] for x, y in corners])
    quads = np.arange(4 * len(QUADS)).reshape(-1, 4)
    tris = 4 * len(QUADS) + np.arange(3 * len(TRIANGLES)).reshape(-1, 3)
    lines = np.array([[0, 1], [1, 2]])  # two edges of the unit square
    return points, lines, quads, tris


def mixed_mesh() -> meshio.Mesh:
    """Planar mesh: 2 line cells, 3 quads, 2 triangles (blocks in that order)."""
    points, lines, quads, tris = _points_and_cells()
    return meshio.Mesh(points, [("line", lines), ("quad", quads), ("triangle", tris)])


def mixed_mesh_gmsh41() -> meshio.Mesh:
    """The same mesh with the entity tags meshio's gmsh 4.1 writer needs for mixed blocks.

    Each block gets its own (dimension, entity) pair; each node is put on an entity.
    """
    points, lines, quads, tris = _points_and_cells()
    dim_tags = np.empty((len(points), 2), dtype=int)
    dim_tags[:] = (2, 1)
    dim_tags[tris.ravel()] = (2, 2)
    dim_tags[lines.ravel()] = (1, 1)
    return meshio.Mesh(
        points,
        [("line", lines), ("quad", quads), ("triangle", tris)],
        point_data={"gmsh:dim_tags": dim_tags},
        cell_data={
            "gmsh:physical": [np.full(len(c), k + 1) for k, c in enumerate((lines, quads, tris))],
            "gmsh:geometrical": [np.array([1] * len(lines)), np.ones(len(quads), int), [2, 2]],
        },
    )


#: name -> (file name, meshio format name, writer options, gmsh 4.1 entity tags needed)
FORMATS: dict[str, tuple[str, str, dict, bool]] = {
    "gmsh22-ascii": ("mesh22a.msh", "gmsh22", {"binary": False}, False),
    "gmsh22-binary": ("mesh22b.msh", "gmsh22", {"binary": True}, False),
    "gmsh41-ascii": ("mesh41a.msh", "gmsh", {"binary": False}, True),
    "gmsh41-binary": ("mesh41b.msh", "gmsh", {"binary": True}, True),
    "vtu": ("mesh.vtu", "vtu", {}, False),
    "vtk-ascii": ("mesh_a.vtk", "vtk", {"binary": False}, False),
    "vtk-binary": ("mesh_b.vtk", "vtk", {"binary": True}, False),
    "xdmf": ("mesh.xdmf", "xdmf", {}, False),
    "abaqus": ("mesh.inp", "abaqus", {}, False),
    "nastran": ("mesh.bdf", "nastran", {}, False),
    "med": ("mesh.med", "med", {}, False),
    "medit": ("mesh.mesh", "medit", {}, False),
}


def write_format(directory: Path, name: str) -> Path:
    """Write the mixed mesh in format ``name`` (a key of :data:`FORMATS`); return the path."""
    file_name, fmt, options, gmsh41 = FORMATS[name]
    mesh = mixed_mesh_gmsh41() if gmsh41 else mixed_mesh()
    path = directory / file_name
    with contextlib.redirect_stderr(io.StringIO()):  # meshio's writer chatter
        meshio.write(path, mesh, file_format=fmt, **options)
    return path


def write_vtu(path: Path, points: np.ndarray, cells: list[tuple[str, np.ndarray]]) -> Path:
    """Write a small mesh as .vtu (meshio) and return its path."""
    meshio.write(path, meshio.Mesh(np.asarray(points, dtype=float), cells))
    return path
