"""Generate the solid sample meshes of a fictional bracket lug.

The part is the mounting lug of the bracket plate: a block 60 mm x 40 mm x 10 mm (x from 0
to 60, y from 0 to 40, z from 0 to 10) with a stiffening fillet on top along its left edge:
a right-triangle section (x from 0 to 20 at z = 10, up to z = 30 at x = 0) running the full
40 mm in y. The block is meshed with 6 x 4 x 2 eight-node hexahedra (10 mm x 10 mm x 5 mm);
the fillet with six-node wedges: its section is cut into 4 triangles (each side halved),
extruded in 4 layers of 10 mm along y. The wedges' quadrilateral faces on z = 10 are the top
faces of the hexahedra below them: the mesh is conforming, nodes are shared.

Files written next to this script (VTU, which keeps every cell type as such):

``bracket_lug.vtu``
    48 hexahedra and 16 wedges; every element passes the `standard` limits.
``bracket_lug_defects.vtu``
    The same mesh with three planted defects (VTK cell index, from 0). The inverted
    hexahedron fails on validity under any profile; the other two are valid elements of
    poor shape, which fail once the profile limits the solid families' shape metrics
    (scaled Jacobian, angles, warp, edge ratio):

    =====  ==========  ============================================================
    index  type        what was done
    =====  ==========  ============================================================
       46  hexahedron  the top layer's cell at x 40..50, y 30..40: its top corner
                       (50, 40, 10) pulled down to z = -2, below the cell's own
                       bottom face: det J negative at that corner (inverted; two
                       of its faces now cross: self-intersecting too)
        5  hexahedron  bottom layer, x 50..60, y 0..10: its free corner
                       (60, 0, 0) moved to (75, 0, 0), a sheared, tapered cell
                       (the node is the block's corner, used by no other cell:
                       moved in place, so no node is left unused)
       48  wedge       the first fillet wedge (x 0..10, y 0..10): its node
                       (0, 0, 20) dropped to (0, 0, 10.5), just above the block:
                       a sliver wedge
    =====  ==========  ============================================================

Wedges use meshio's node order (gmsh's prism order): the first triangle (0, 1, 2) with its
right-hand normal pointing towards the second triangle (3, 4, 5); meshio writes VTK's own
order to the file. Hexahedra: bottom face (0, 1, 2, 3)
counter-clockwise seen from the top face (4, 5, 6, 7).

Rerun from the repository root with ``python samples/make_solid_samples.py``; the output
is deterministic. Each file is written to a temporary file in the same folder, read back
and compared, then renamed into place.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import meshio
import numpy as np

OUT_DIR = Path(__file__).resolve().parent
NX, NY, NZ = 6, 4, 2
DX, DY, DZ = 10.0, 10.0, 5.0


def _node_index() -> tuple[np.ndarray, dict[tuple[float, float, float], int]]:
    """Block nodes on the grid, then the fillet's nodes above z = 10."""
    points: list[tuple[float, float, float]] = []
    index: dict[tuple[float, float, float], int] = {}

    def add(p: tuple[float, float, float]) -> int:
        if p not in index:
            index[p] = len(points)
            points.append(p)
        return index[p]

    for k in range(NZ + 1):
        for j in range(NY + 1):
            for i in range(NX + 1):
                add((i * DX, j * DY, k * DZ))
    for j in range(NY + 1):  # fillet section nodes (x, z) above the block, per y layer
        for x, z in ((0.0, 20.0), (10.0, 20.0), (0.0, 30.0)):
            add((x, j * DY, z))
    return np.array(points, dtype=float), index


def lug() -> meshio.Mesh:
    points, index = _node_index()

    def at(x: float, y: float, z: float) -> int:
        return index[(x, y, z)]

    hexes = []
    for k in range(NZ):
        for j in range(NY):
            for i in range(NX):
                x0, y0, z0 = i * DX, j * DY, k * DZ
                x1, y1, z1 = x0 + DX, y0 + DY, z0 + DZ
                hexes.append(
                    [
                        at(x0, y0, z0),
                        at(x1, y0, z0),
                        at(x1, y1, z0),
                        at(x0, y1, z0),
                        at(x0, y0, z1),
                        at(x1, y0, z1),
                        at(x1, y1, z1),
                        at(x0, y1, z1),
                    ]
                )
    # Fillet section (x, z): corners (0, 10), (20, 10), (0, 30), sides halved: 4 triangles.
    section = [
        ((0.0, 10.0), (10.0, 10.0), (0.0, 20.0)),
        ((10.0, 10.0), (20.0, 10.0), (10.0, 20.0)),
        ((10.0, 10.0), (10.0, 20.0), (0.0, 20.0)),
        ((0.0, 20.0), (10.0, 20.0), (0.0, 30.0)),
    ]
    wedges = []
    for j in range(NY):
        y0, y1 = j * DY, (j + 1) * DY
        for tri in section:
            # (x, z) listed clockwise seen from -y: the first triangle at y0 has its
            # right-hand normal along +y, towards the second triangle at y1 (meshio's
            # wedge order, gmsh's prism order; meshio swaps to VTK's on writing a VTU)
            first = [at(x, y0, z) for x, z in tri[::-1]]
            second = [at(x, y1, z) for x, z in tri[::-1]]
            wedges.append(first + second)
    return meshio.Mesh(points, [("hexahedron", np.array(hexes)), ("wedge", np.array(wedges))])


def lug_defects() -> meshio.Mesh:
    mesh = lug()
    points = np.array(mesh.points)
    hexes = np.array(mesh.cells[0].data)
    wedges = np.array(mesh.cells[1].data)
    extra: list[np.ndarray] = []

    def own_copy(cells: np.ndarray, row: int, position: int, where: tuple) -> None:
        """Give cell ``row`` its own copy of its node at ``position``, moved to ``where``
        (so that no neighbour changes shape)."""
        extra.append(np.array(where, dtype=float))
        cells[row, position] = len(points) + len(extra) - 1

    # hexahedron 46: layer k = 1, j = 3, i = 4; its top corner (50, 40, 10) is position 6
    own_copy(hexes, 46, 6, (50.0, 40.0, -2.0))
    # hexahedron 5: layer k = 0, j = 0, i = 5; corner (60, 0, 0) is position 1, the
    # block's corner: no other cell uses it, so it moves in place (no unused node left)
    points[hexes[5, 1]] = (75.0, 0.0, 0.0)
    # wedge 0 (cell 48): section triangle 0 at y 0..10; its node (0, 0, 20) is position 0
    own_copy(wedges, 0, 0, (0.0, 0.0, 10.5))
    points = np.vstack([points, *extra])
    return meshio.Mesh(points, [("hexahedron", hexes), ("wedge", wedges)])


def _write(path: Path, mesh: meshio.Mesh) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=".vtu")
    os.close(fd)
    try:
        meshio.write(tmp, mesh)
        back = meshio.read(tmp)
        assert np.array_equal(back.points, mesh.points)
        for a, b in zip(back.cells, mesh.cells):
            assert a.type == b.type and np.array_equal(a.data, b.data)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)


def main() -> None:
    _write(OUT_DIR / "bracket_lug.vtu", lug())
    _write(OUT_DIR / "bracket_lug_defects.vtu", lug_defects())


if __name__ == "__main__":
    main()
