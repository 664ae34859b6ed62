"""Meshes with non-conforming interfaces (hanging nodes) planted at known places.

Every builder returns a meshio mesh plus what is true of it by construction: which
nodes hang (their coordinates), the elements whose edge each lies inside (hosts) and
the elements using them (users), as 0-based ids in block order (how meshaudit numbers
the elements of a mesh in memory).
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
    """0-based ids (block order) of the cells using any of ``nodes``."""
    out, at = [], 0
    for _, conn in cells:
        hit = np.isin(conn, nodes).any(axis=1)
        out += (at + np.flatnonzero(hit)).tolist()
        at += len(conn)
    return sorted(out)


def _ids_with_edge(cells: list[tuple[str, np.ndarray]], a: int, b: int) -> list[int]:
    """0-based ids of the cells having both corner nodes a and b."""
    out, at = [], 0
    for _, conn in cells:
        hit = np.isin(conn, [a]).any(axis=1) & np.isin(conn, [b]).any(axis=1)
        out += (at + np.flatnonzero(hit)).tolist()
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
    hosts = sorted(order.index(ij) for ij in [(1, 0), (2, 1), (1, 2), (0, 1)])
    users = list(range(8, 12))  # the four fine quads, after the eight coarse ones
    xyz = np.column_stack([points[hanging], np.zeros(4)])
    return Planted(meshio.Mesh(points, cells), xyz, hosts, users, {"hanging": hanging})


def quad8_beside_fine(
    bulge: float = 0.0,
    fine: str = "quad",
    split: bool = False,
    ratio: int = 2,
    along: float = 0.0,
) -> Planted:
    """A coarse quad8 on [0, 0.15] x [0, 0.3] whose right side (corners 1 and 2) has its
    midside node 5 at (0.15 + bulge, 0.15 + along); beside it ``ratio`` fine elements reaching
    x = 0.3, their left corners on that side's curve x(t) = a N1 + m N2 + b N3 (the
    quadratic shape functions N1 = (1-t)(1-2t), N2 = 4t(1-t), N3 = t(2t-1)) at
    t = k / ratio. ``fine``: "quad" or "quad8" (midside nodes at the chord midpoints).
    ``split``: the fine corner at t = 1/2 is a node of its own at node 5's place (not
    merged) instead of node 5 itself."""
    a, b = np.array([HALF, 0.0]), np.array([HALF, SIZE])
    m = np.array([HALF + bulge, HALF + along])
    pts = [[0, 0], a, b, [0, SIZE], [HALF / 2, 0], m, [HALF / 2, SIZE], [0, HALF]]
    coarse = np.array([[0, 1, 2, 3, 4, 5, 6, 7]])

    def curve(t: float) -> np.ndarray:
        return a * (1 - t) * (1 - 2 * t) + m * 4 * t * (1 - t) + b * t * (2 * t - 1)

    left = [1]
    hanging = []
    for k in range(1, ratio):
        if 2 * k == ratio and not split:
            left.append(5)
        else:
            left.append(len(pts))
            pts.append(curve(k / ratio).tolist())
        hanging.append(left[-1])
    left.append(2)
    right = []
    for k in range(ratio + 1):
        right.append(len(pts))
        pts.append([SIZE, SIZE * k / ratio])
    quads = np.array([[left[k], right[k], right[k + 1], left[k + 1]] for k in range(ratio)])
    points = np.array(pts, dtype=float)
    if fine == "quad8":
        mids = len(points) + np.arange(4 * len(quads)).reshape(-1, 4)
        sides = 0.5 * (points[quads] + points[np.roll(quads, -1, axis=1)])
        points = np.vstack([points, sides.reshape(-1, 2)])
        quads = np.hstack([quads, mids])
    cells = [("quad8", coarse), (fine, quads)]
    hanging = np.array(hanging)
    xyz = np.column_stack([points[hanging], np.zeros(hanging.size)])
    users = _ids_using(cells[1:], hanging)
    return Planted(
        meshio.Mesh(points, cells), xyz, [0], [u + 1 for u in users], {"hanging": hanging}
    )


def stiffened_plate(kind: str) -> Planted:
    """A flat NX x NY unit-grid plate (z = 0) with a stiffener standing on grid line
    y = 2 (height 1, in the x-z plane): a shell T-joint.

    - "conforming": one stiffener quad per plate edge, on the plate's nodes (non-manifold
      edges, no hanging node);
    - "finer": two stiffener quads per plate edge, on the plate's nodes at whole x and
      nodes of their own at half x: those hang inside shared plate edges;
    - "own": as "finer", but the stiffener has nodes of its own at whole x too, at the
      plate's nodes' places (unmerged): those are coincident nodes, the half-x ones hang;
    - "offset": stiffener nodes of its own at x = 0.5, 1.5, ..., NX - 0.5: the plate's
      nodes at x = 1 .. NX - 1 hang inside the stiffener's free bottom edges.
    """
    nx, ny, line = 6, 4, 2
    x, y = np.meshgrid(np.arange(nx + 1.0), np.arange(ny + 1.0))
    pts = np.column_stack([x.ravel(), y.ravel(), np.zeros(x.size)])
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    n0 = (j * (nx + 1) + i).ravel()
    plate = np.stack([n0, n0 + 1, n0 + nx + 2, n0 + nx + 1], axis=1)
    on_line = line * (nx + 1) + np.arange(nx + 1)

    def add(xyz: np.ndarray) -> np.ndarray:
        nonlocal pts
        idx = len(pts) + np.arange(len(xyz))
        pts = np.vstack([pts, xyz])
        return idx

    if kind == "conforming":
        bottom = on_line
        hanging = np.zeros(0, dtype=np.int64)
    elif kind in ("finer", "own"):
        half = add(np.column_stack([np.arange(nx) + 0.5, np.full(nx, line), np.zeros(nx)]))
        bottom = np.empty(2 * nx + 1, dtype=np.int64)
        bottom[0::2], bottom[1::2] = on_line, half
        if kind == "own":
            bottom[0::2] = add(pts[on_line])
        hanging = half
    else:
        xs = np.arange(nx) + 0.5
        bottom = add(np.column_stack([xs, np.full(nx, line), np.zeros(nx)]))
        hanging = on_line[1:-1]
    top = add(np.column_stack([pts[bottom, 0], np.full(bottom.size, line), np.ones(bottom.size)]))
    stiff = np.stack([bottom[:-1], bottom[1:], top[1:], top[:-1]], axis=1)
    cells = [("quad", plate), ("quad", stiff)]
    if kind in ("finer", "own"):  # hosts: plate elements on both sides of the line
        hosts = sorted(
            {h for k in range(nx) for h in _ids_with_edge(cells[:1], on_line[k], on_line[k + 1])}
        )
        users = [len(plate) + u for u in _ids_using(cells[1:], hanging)]
    elif kind == "offset":
        hosts = [len(plate) + u for u in range(len(stiff))]  # each holds one
        users = _ids_using(cells[:1], hanging)
    else:
        hosts, users = [], []
    return Planted(meshio.Mesh(pts, cells), pts[hanging], hosts, users, {"hanging": hanging})
