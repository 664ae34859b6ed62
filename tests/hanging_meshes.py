"""Meshes with non-conforming interfaces (hanging nodes) planted at known places.

Every builder returns a meshio mesh plus what is true of it by construction: which
nodes hang (their coordinates), the elements whose edge each lies inside (hosts) and
the elements using them (users), as 1-based ids in block order (meshaudit's default
element label).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import meshio
import numpy as np

SIZE = 0.3  # the plate: a 0.3 x 0.3 square, perimeter 1.2, area 0.09
HALF = SIZE / 2


@dataclass
class Planted:
    mesh: meshio.Mesh
    hanging_xyz: np.ndarray  # (k, 3) coordinates of the hanging nodes
    hosts: list[int]  # ids of the elements whose edge holds a hanging node
    users: list[int]  # ids of the elements using a hanging node
    extra: dict = field(default_factory=dict)

    @property
    def involved(self) -> list[int]:
        return sorted(set(self.hosts) | set(self.users))


def _split(quads: np.ndarray) -> np.ndarray:
    """Counter-clockwise triangles of counter-clockwise quads, cut along corner 0-2."""
    return np.vstack([quads[:, [0, 1, 2]], quads[:, [0, 2, 3]]])


def _ids_using(cells: list[tuple[str, np.ndarray]], nodes: np.ndarray) -> list[int]:
    """1-based ids (block order) of the cells using any of ``nodes``."""
    out, at = [], 0
    for _, conn in cells:
        hit = np.isin(conn, nodes).any(axis=1)
        out += (at + 1 + np.flatnonzero(hit)).tolist()
        at += len(conn)
    return sorted(out)


def _ids_with_edge(cells: list[tuple[str, np.ndarray]], a: int, b: int) -> list[int]:
    """1-based ids of the cells having both corner nodes a and b."""
    out, at = [], 0
    for _, conn in cells:
        hit = np.isin(conn, [a]).any(axis=1) & np.isin(conn, [b]).any(axis=1)
        out += (at + 1 + np.flatnonzero(hit)).tolist()
        at += len(conn)
    return sorted(out)


def refined_plate(
    ratio: int = 2, rows: int = 1, left: str = "quad", right: str = "quad"
) -> Planted:
    """The 0.3 x 0.3 plate: on the left one column of ``rows`` coarse elements
    (x in [0, 0.15]), on the right a ratio x (ratio * rows) grid of fine elements (x in
    [0.15, 0.3]); the fine nodes on x = 0.15 between the coarse ones are not in any
    coarse element: they hang. ``left``/``right``: "quad" or "triangle" (quads cut
    along a diagonal)."""
    yc = np.linspace(0.0, SIZE, rows + 1)
    coarse = np.array([[x, y] for y in yc for x in (0.0, HALF)])  # node (i, j) at 2j + i
    nf = ratio * rows
    xf, yf = np.linspace(HALF, SIZE, ratio + 1), np.linspace(0.0, SIZE, nf + 1)
    # fine node (i, j), i = 0..ratio, j = 0..nf; those at i = 0 and j % ratio == 0 are
    # the coarse nodes (2 (j / ratio) + 1): merged by construction, not by coordinates
    index = np.empty((nf + 1, ratio + 1), dtype=np.int64)
    pts = [coarse]
    n = len(coarse)
    for j in range(nf + 1):
        for i in range(ratio + 1):
            if i == 0 and j % ratio == 0:
                index[j, i] = 2 * (j // ratio) + 1
            else:
                index[j, i] = n
                pts.append(np.array([[xf[i], yf[j]]]))
                n += 1
    points = np.vstack(pts)
    cq = np.array([[2 * j, 2 * j + 1, 2 * j + 3, 2 * j + 2] for j in range(rows)])
    fq = np.array(
        [
            [index[j, i], index[j, i + 1], index[j + 1, i + 1], index[j + 1, i]]
            for j in range(nf)
            for i in range(ratio)
        ]
    )
    cells = [
        (left, cq if left == "quad" else _split(cq)),
        (right, fq if right == "quad" else _split(fq)),
    ]
    hanging = np.array([index[j, 0] for j in range(nf + 1) if j % ratio])
    hosts = sorted({h for j in range(rows) for h in _ids_with_edge(cells, 2 * j + 1, 2 * j + 3)})
    xyz = np.column_stack([points[hanging], np.zeros(hanging.size)])
    return Planted(
        meshio.Mesh(points, cells),
        xyz,
        hosts,
        _ids_using(cells, hanging),
        {"hanging": hanging},
    )


def bent(planted: Planted, radius: float = 0.3) -> Planted:
    """The same mesh rolled onto a cylinder whose axis is parallel to y (x becomes arc
    length), then turned in space: a shell. Lines x = const stay straight, so hanging
    nodes on x = 0.15 still lie exactly on their host's chord."""
    x, y = planted.mesh.points[:, 0], planted.mesh.points[:, 1]
    theta = x / radius
    xyz = np.column_stack([radius * np.sin(theta), y, radius * (1.0 - np.cos(theta))])
    c, s = np.cos(0.7), np.sin(0.7)
    turn = np.array([[c, 0.0, s], [0.0, 1.0, 0.0], [-s, 0.0, c]]) @ np.array(
        [[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]]
    )
    xyz = xyz @ turn.T + np.array([1.0, -2.0, 0.5])
    hanging = planted.extra["hanging"]
    return Planted(
        meshio.Mesh(xyz, planted.mesh.cells),
        xyz[hanging],
        planted.hosts,
        planted.users,
        planted.extra,
    )


def embedded_patch() -> Planted:
    """The 0.3 x 0.3 plate as a 3 x 3 grid of 0.1 quads whose centre quad is replaced
    by 2 x 2 quads of 0.05: the midpoints of the centre's four sides hang, on edges of
    its four side neighbours. The interface is closed and touches no boundary."""
    h = 0.1
    pts = [[i * h, j * h] for j in range(4) for i in range(4)]  # node (i, j) at 4j + i

    def g(i: int, j: int) -> int:
        return 4 * j + i

    quads = [
        [g(i, j), g(i + 1, j), g(i + 1, j + 1), g(i, j + 1)]
        for j in range(3)
        for i in range(3)
        if (i, j) != (1, 1)
    ]
    # fine nodes: midpoints of the centre's sides and its centre
    mids = {"s": (1.5, 1.0), "e": (2.0, 1.5), "n": (1.5, 2.0), "w": (1.0, 1.5), "c": (1.5, 1.5)}
    at = {}
    for name, (i, j) in mids.items():
        at[name] = len(pts)
        pts.append([i * h, j * h])
    s, e, nn, w, c = (at[k] for k in "senwc")
    fine = [
        [g(1, 1), s, c, w],
        [s, g(2, 1), e, c],
        [c, e, g(2, 2), nn],
        [w, c, nn, g(1, 2)],
    ]
    cells = [("quad", np.array(quads + fine))]
    points = np.array(pts, dtype=float)
    hanging = np.array([s, e, nn, w])
    # side neighbours of the centre, by construction: (1, 0), (2, 1), (1, 2), (0, 1)
    order = [(i, j) for j in range(3) for i in range(3) if (i, j) != (1, 1)]
    hosts = sorted(order.index(ij) + 1 for ij in [(1, 0), (2, 1), (1, 2), (0, 1)])
    users = list(range(9, 13))  # the four fine quads, after the eight coarse ones
    xyz = np.column_stack([points[hanging], np.zeros(4)])
    return Planted(meshio.Mesh(points, cells), xyz, hosts, users, {"hanging": hanging})
