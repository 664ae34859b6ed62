"""Generate the quadratic sample meshes of the fictional bracket plate.

Files written next to this script (VTU, which keeps quad8 and triangle6 as such):

``bracket_crack_tip.vtu``
    Planar, in mm: a disc of radius 12 mm around the tip of a crack that runs along the
    negative x axis from the origin (the crack faces are duplicated nodes at 180 degrees).
    The innermost ring is 8 triangle6 elements whose midside nodes on the rays sit at the
    quarter point towards the tip (the singular crack-tip construction); around them 4 rings
    of 8 quad8 elements with curved (arc) edges. Expected: the 8 tip elements warn with
    ``quarter_point``, everything else is ok.
``bracket_flange_shell.vtu``
    A 3-D shell: a quarter-cylinder flange (radius 40 mm, height 30 mm) of 6 x 3 quad8
    elements, midside nodes on the cylinder. Element id 7 (the VTK cell index) is wound the
    other way round. Expected: that one element warns with ``flipped_normal`` (and the
    edges around it are reported as opposite normals); nothing is inverted, no node is
    unused.

Run ``python samples/make_quadratic_samples.py``; it checks the files read back unchanged.
"""

from __future__ import annotations

import itertools
import os
import tempfile
from pathlib import Path

import meshio
import numpy as np

OUT_DIR = Path(__file__).resolve().parent
SECTORS = 8  # elements around the crack tip
RING_RADII = (2.0, 4.0, 6.5, 9.0, 12.0)  # mm: tip ring, then the quad8 rings


def _polar(r: np.ndarray, t: np.ndarray) -> np.ndarray:
    return np.column_stack([r * np.cos(t), r * np.sin(t), np.zeros(np.size(r))])


def crack_tip() -> meshio.Mesh:
    """Crack-tip rosette of quarter-point triangle6 and curved quad8 rings."""
    # Angles from -180 to 180 degrees: the two ends are the two crack faces.
    corners_t = np.linspace(-np.pi, np.pi, SECTORS + 1)
    mid_t = (corners_t[:-1] + corners_t[1:]) / 2
    points = [np.zeros((1, 3))]  # node 0: the tip

    def add(p: np.ndarray) -> np.ndarray:
        start = sum(len(q) for q in points)
        points.append(p)
        return start + np.arange(len(p))

    rings = [add(_polar(np.full(SECTORS + 1, r), corners_t)) for r in RING_RADII]
    arc_mids = [add(_polar(np.full(SECTORS, r), mid_t)) for r in RING_RADII]
    # Quarter-point nodes on the tip rays; midpoints on the rays between the rings.
    quarter = add(_polar(np.full(SECTORS + 1, RING_RADII[0] / 4), corners_t))
    ray_mids = [
        add(_polar(np.full(SECTORS + 1, (a + b) / 2), corners_t))
        for a, b in itertools.pairwise(RING_RADII)
    ]
    s = np.arange(SECTORS)
    r0 = rings[0]
    tris = np.column_stack(
        [np.zeros(SECTORS, int), r0[s], r0[s + 1], quarter[s], arc_mids[0][s], quarter[s + 1]]
    )
    quads = []
    for k in range(len(RING_RADII) - 1):
        a, b = rings[k], rings[k + 1]
        quads.append(
            np.column_stack(
                [
                    a[s],
                    b[s],
                    b[s + 1],
                    a[s + 1],
                    ray_mids[k][s],
                    arc_mids[k + 1][s],
                    ray_mids[k][s + 1],
                    arc_mids[k][s],
                ]
            )
        )
    return meshio.Mesh(np.vstack(points), [("triangle6", tris), ("quad8", np.vstack(quads))])


def flange_shell(flipped: int = 7) -> meshio.Mesh:
    """Quarter-cylinder flange of quad8 elements, one of them wound the other way."""
    n_t, n_z, radius, height = 6, 3, 40.0, 30.0
    t, z = np.meshgrid(np.linspace(0, np.pi / 2, 2 * n_t + 1), np.linspace(0, height, 2 * n_z + 1))
    points = np.column_stack([radius * np.cos(t).ravel(), radius * np.sin(t).ravel(), z.ravel()])
    m = 2 * n_t + 1
    i, j = np.meshgrid(np.arange(n_t), np.arange(n_z))
    c = (2 * j * m + 2 * i).ravel()
    cells = np.column_stack(
        [c, c + 2, c + 2 * m + 2, c + 2 * m, c + 1, c + m + 2, c + 2 * m + 1, c + m]
    )
    cells[flipped] = cells[flipped][[0, 3, 2, 1, 7, 6, 5, 4]]
    # quad8 has no centre node: keep only the grid points the cells use.
    used, renumbered = np.unique(cells, return_inverse=True)
    return meshio.Mesh(points[used], [("quad8", renumbered.reshape(cells.shape))])


def write_checked(path: Path, mesh: meshio.Mesh) -> None:
    """Write through a temporary file in the same folder, verify the read-back, rename."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".vtu", dir=path.parent)
    os.close(fd)
    try:
        os.chmod(tmp, 0o644)
        meshio.write(tmp, mesh, file_format="vtu")
        back = meshio.read(tmp, file_format="vtu")
        if not np.array_equal(back.points, mesh.points):
            raise SystemExit(f"{path.name}: points changed on read-back")
        for got, want in zip(back.cells, mesh.cells, strict=True):
            if got.type != want.type or not np.array_equal(got.data, want.data):
                raise SystemExit(f"{path.name}: {want.type} cells changed on read-back")
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def main() -> None:
    write_checked(OUT_DIR / "bracket_crack_tip.vtu", crack_tip())
    write_checked(OUT_DIR / "bracket_flange_shell.vtu", flange_shell())
    print("wrote bracket_crack_tip.vtu and bracket_flange_shell.vtu")


if __name__ == "__main__":
    main()
