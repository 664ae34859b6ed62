"""Small meshes for the configuration, region, batch, compare and hook tests.

Shapes whose quality is known analytically (common practice, Robinson 1987 definitions):
a rectangle w x h has aspect ratio max(w, h)/min(w, h), skew 0, taper 0 and scaled
Jacobian 1; a square is the ideal element; listing a quad's nodes clockwise makes det J
negative everywhere (the element is inverted).
"""

from __future__ import annotations

from pathlib import Path

import meshio
import numpy as np


def strip(widths: list[float], clockwise: frozenset[int] = frozenset()) -> meshio.Mesh:
    """Rectangles of height 1 side by side (a gap of 1 between them); element k has
    aspect ratio widths[k] (or 1/widths[k]); elements in ``clockwise`` are listed
    clockwise, hence inverted."""
    pts, quads, x = [], [], 0.0
    for k, w in enumerate(widths):
        base = len(pts)
        pts += [[x, 0.0], [x + w, 0.0], [x + w, 1.0], [x, 1.0]]
        quad = [base, base + 1, base + 2, base + 3]
        quads.append(quad[::-1] if k in clockwise else quad)
        x += w + 1.0
    return meshio.Mesh(np.array(pts), [("quad", np.array(quads))])


def grid(nx: int, ny: int, shift: tuple[int, float, float] | None = None) -> meshio.Mesh:
    """A grid of unit squares; ``shift = (node, dx, dy)`` moves one node."""
    xs, ys = np.meshgrid(np.arange(nx + 1.0), np.arange(ny + 1.0))
    pts = np.column_stack([xs.ravel(), ys.ravel()])
    if shift is not None:
        node, dx, dy = shift
        pts[node] += (dx, dy)
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    n0 = (j * (nx + 1) + i).ravel()
    quads = np.column_stack([n0, n0 + 1, n0 + nx + 2, n0 + nx + 1])
    return meshio.Mesh(pts, [("quad", quads)])


def write(mesh: meshio.Mesh, path: Path) -> Path:
    """Write with meshio (gmsh files as 2.2 ASCII)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.suffix == ".msh":
        if "gmsh:physical" not in mesh.cell_data:  # the 2.2 format wants both tags
            ones = [np.ones(len(c.data), dtype=int) for c in mesh.cells]
            mesh = meshio.Mesh(
                mesh.points,
                mesh.cells,
                cell_data={"gmsh:physical": ones, "gmsh:geometrical": ones},
                field_data=mesh.field_data,
            )
        meshio.write(path, mesh, file_format="gmsh22", binary=False)
    else:  # other writers want 3-D points
        pts = np.asarray(mesh.points, dtype=float)
        if pts.shape[1] == 2:
            pts = np.column_stack([pts, np.zeros(len(pts))])
        meshio.write(path, meshio.Mesh(pts, mesh.cells, cell_data=mesh.cell_data))
    return path


#: Hand-written gmsh 2.2 ASCII file (format as documented by gmsh): two 6 x 1 rectangles,
#: element 1 in surface group "web" (tag 1), element 2 in surface group "fillet" (tag 2),
#: and a line element in curve group "edge" that reuses tag 2 in dimension 1.
TWO_GROUPS_MSH = """\
$MeshFormat
2.2 0 8
$EndMeshFormat
$PhysicalNames
3
1 2 "edge"
2 1 "web"
2 2 "fillet"
$EndPhysicalNames
$Nodes
8
1 0 0 0
2 6 0 0
3 6 1 0
4 0 1 0
5 7 0 0
6 13 0 0
7 13 1 0
8 7 1 0
$EndNodes
$Elements
3
1 3 2 1 1 1 2 3 4
2 3 2 2 2 5 6 7 8
3 1 2 2 3 1 2
$EndElements
"""
