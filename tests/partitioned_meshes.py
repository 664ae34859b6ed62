"""A bracket-plate quad mesh cut into parts, written as VTU pieces with a .pvtu, and the
same mesh merged into one VTU file: the reference a partitioned audit must reproduce.

Merging is done here, independently of meshaudit: points are numbered by their global
node id, cells are put one after the other in piece order (so a cell's index in the
merged file is its position among all cells of all pieces, the numbering of a .pvtu).
Defects planted by construction: a reversed element inside part 0, a badly distorted
element in the last part, optionally an interface crack (the last part's nodes along
part of the cut from part 0 get ids of their own: distinct nodes at the same place) and
a halo element (a copy of a part-0 element beside the cut written into part 1 too).
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import meshio
import numpy as np


def plate(nx: int, ny: int, seed: int = 7) -> tuple[np.ndarray, np.ndarray]:
    """Points (z = 0) and counter-clockwise quads of an nx x ny plate of unit cells whose
    interior nodes are moved at random by up to a fifth of the spacing."""
    x, y = np.meshgrid(np.arange(nx + 1, dtype=float), np.arange(ny + 1, dtype=float))
    pts = np.stack([x.ravel(), y.ravel(), np.zeros(x.size)], axis=1)
    rng = np.random.default_rng(seed)
    inner = (pts[:, 0] > 0) & (pts[:, 0] < nx) & (pts[:, 1] > 0) & (pts[:, 1] < ny)
    pts[inner, :2] += rng.uniform(-0.2, 0.2, (int(inner.sum()), 2))
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    n0 = (j * (nx + 1) + i).ravel()
    quads = np.stack([n0, n0 + 1, n0 + nx + 2, n0 + nx + 1], axis=1)
    return pts, quads


def write_partitioned(
    folder: Path,
    nx: int = 24,
    ny: int = 10,
    parts: int = 3,
    crack: bool = True,
    halo: bool = True,
    global_ids: bool = True,
) -> tuple[Path, Path]:
    """Write ``parts`` VTU pieces (columns of elements), a .pvtu and the merged VTU;
    returns (pvtu path, merged path)."""
    pts, quads = plate(nx, ny)
    column = np.arange(quads.shape[0]) % nx
    owner = column * parts // nx
    # a reversed element well inside part 0, a distorted one in the last part
    quads[ny // 2 * nx + 1] = quads[ny // 2 * nx + 1][[0, 3, 2, 1]]
    last = (ny // 2) * nx + nx - 2
    moved = quads[last, 2]
    pts = pts.copy()
    pts[moved, :2] += [0.45, 0.55]
    cells = [quads[owner == k].copy() for k in range(parts)]
    points = pts
    if crack:  # part 1's nodes on the cut x = cut, rows 2..5, get ids of their own
        cut = nx // parts
        on_cut = np.arange(2, 6) * (nx + 1) + cut  # node (i, j) is j * (nx + 1) + i
        copies = np.arange(len(pts), len(pts) + on_cut.size)
        remap = np.arange(len(pts))
        remap[on_cut] = copies
        cells[1] = remap[cells[1]]
        points = np.concatenate([pts, pts[on_cut]])
    if halo:  # a copy of a part-0 element beside the cut (row 8), written into part 1
        cut = nx // parts
        cells[1] = np.concatenate([cells[1], quads[[8 * nx + cut - 1]]])
    names = []
    for k, c in enumerate(cells):
        used = np.unique(c)
        local = np.full(len(points), -1)
        local[used] = np.arange(used.size)
        point_data = {"GlobalNodeId": gid_of(used)} if global_ids else {}
        mesh = meshio.Mesh(points[used], [("quad", local[c])], point_data=point_data)
        name = f"plate_{k}.vtu"
        meshio.write(folder / name, mesh)
        names.append(name)
    pvtu = folder / "plate.pvtu"
    pieces = "".join(f'    <Piece Source="{n}"/>\n' for n in names)
    pvtu.write_text(
        '<?xml version="1.0"?>\n<VTKFile type="PUnstructuredGrid" version="0.1">\n'
        '  <PUnstructuredGrid GhostLevel="0">\n'
        '    <PPoints><PDataArray type="Float64" NumberOfComponents="3"/></PPoints>\n'
        f"{pieces}  </PUnstructuredGrid>\n</VTKFile>\n"
    )
    merged = folder / "merged_plate.vtu"
    meshio.write(merged, meshio.Mesh(points, [("quad", np.concatenate(cells))]))
    return pvtu, merged


def gid_of(used: np.ndarray) -> np.ndarray:
    """Global node id of each merged point: its index in the merged file."""
    return used.astype(np.int64)


def write_xdmf_plate(folder: Path, nx: int = 24, ny: int = 10, defects: bool = True) -> Path:
    """The bracket plate of :func:`plate` as ONE XDMF file with HDF5 heavy data (meshio's
    XDMF writer), quads in row order, so that contiguous slices of elements are bands of
    rows cut part-way along a row. ``defects`` plants, by construction: a reversed element
    (row 5, column 1), a distorted one (row 5, column nx - 2), a crack along y = 6 where
    the elements of row 6, columns 17..20, use copies of the nodes at x = 18..20 (three
    distinct nodes at the place of others, four crack edges on each side), and a copy
    of element (row 3, column 10) appended as the last cell."""
    pts, quads = plate(nx, ny)
    if defects:
        quads[5 * nx + 1] = quads[5 * nx + 1][[0, 3, 2, 1]]
        pts[quads[5 * nx + nx - 2, 2], :2] += [0.45, 0.55]
        on_line = 6 * (nx + 1) + np.arange(18, 21)
        copies = np.arange(len(pts), len(pts) + on_line.size)
        remap = np.arange(len(pts))
        remap[on_line] = copies
        row6 = 6 * nx + np.arange(17, 21)
        quads[row6] = remap[quads[row6]]
        pts = np.concatenate([pts, pts[on_line]])
        quads = np.concatenate([quads, quads[[3 * nx + 10]]])
    path = folder / "plate.xdmf"
    meshio.write(path, meshio.Mesh(pts, [("quad", quads)]), file_format="xdmf")
    return path


@contextmanager
def two_worker_client() -> Iterator:
    """A Dask client of a LocalCluster of two single-thread workers in this process
    (threads: starts in about a second, and reads they make can be recorded)."""
    import distributed

    with (
        distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=False, dashboard_address=":0"
        ) as cluster,
        distributed.Client(cluster) as c,
    ):
        yield c
